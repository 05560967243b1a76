"""Reading one CSV table strictly: the user's column names in, ours out, every cell read exactly.

pyarrow's CSV reader parses the file (multi-threaded). It refuses any row whose number of fields
differs from the header's, whether its columns are mapped or not; such rows are then located one
by one and reported with their spreadsheet row. Identifier columns are read as text exactly as
written, blanks around them stripped: "007", "7" and "7.0" are three ids, "NA" or "null" is a
name, and only an empty cell is missing. Numeric columns are read as float64. When a numeric
column holds anything but finite numbers, its cells are read again as text and parsed here, so
that each bad cell is reported with its row and its text as written; :func:`numeric` reports
them. Empty lines keep their row (so row numbers stay those of a spreadsheet); an empty line
inside a table is a problem, empty lines at the end of the file are ignored.
"""

from __future__ import annotations

import csv
import io
import mmap
import os
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pcsv
from flangewise.readers.errors import MAX_PROBLEMS, ProblemList
from flangewise.readers.settings import COLUMNS, OPTIONAL_TABLES, Settings

#: Columns that hold identifiers (read as text, compared as text).
ID_COLUMNS: dict[str, tuple[str, ...]] = {
    "nodes": ("id",),
    "elements": ("id", "start", "end", "section", "member"),
    "sections": ("name",),
    "forces": ("element", "combination"),
    "braces": ("node", "flange"),
    "supports": ("node", "restrains"),
}

#: Tables big enough that identifiers are stored as categories rather than text.
CATEGORY_TABLES = frozenset({"forces"})

#: Rows with the wrong number of fields (or empty lines) listed per table; the rest are counted.
MAX_LISTED_ROWS = 5

#: What a required table without data rows lacks.
NO_DATA_ROWS = "data rows below the header: the file has no data rows"

#: Longest row text quoted in a problem.
MAX_QUOTED = 120

#: Where :func:`read_table` leaves the unparsed cells of numeric columns in ``DataFrame.attrs``.
UNPARSED_KEY = "flangewise_unparsed"

#: A plain decimal number; ``{d}`` is the decimal mark. No thousands separators, no words.
_NUMBER = r"^[+-]?([0-9]+({d}[0-9]*)?|{d}[0-9]+)([eE][+-]?[0-9]+)?$"

#: Words a parser may take for a non-finite number (after an optional sign, any case).
_NON_FINITE_WORDS = frozenset({"nan", "inf", "infinity"})


#: Where :func:`read_table` leaves what :func:`cell_text` needs to find a cell's text.
ORIGIN_KEY = "flangewise_origin"


class Unparsed:
    """The cells of one numeric column that hold no finite number, as the file wrote them.

    Attributes:
        records: record numbers (0 = first data row), ascending.
        texts: each cell's text exactly as in the file (an Arrow array: no Python string per
            cell, a whole column of "inf" stays cheap).
        non_finite: per cell, whether it reads as "inf", "nan" or a number too big for float64
            (else it is text that is no number at all).
    """

    __slots__ = ("non_finite", "records", "texts")

    def __init__(self, records: np.ndarray, texts: pa.Array, non_finite: np.ndarray) -> None:
        self.records = records
        self.texts = texts
        self.non_finite = non_finite

    def __deepcopy__(self, memo: dict[int, Any]) -> Unparsed:
        # pandas deep-copies ``attrs`` into every frame or column derived from a table; this
        # record never changes, so all of them can share it (a copy could hold millions of cells).
        return self


def spreadsheet_rows(index: pd.Index | np.ndarray) -> np.ndarray:
    """Return spreadsheet row numbers for record labels (header = row 1, first record = row 2)."""
    return np.asarray(index, dtype=np.int64) + 2


def read_table(settings: Settings, table: str, problems: ProblemList) -> pd.DataFrame | None:
    """Read one table into our column names, or record why it cannot be read.

    Identifier columns come back as text (object dtype; categories for the forces table),
    stripped of surrounding blanks, empty cells missing. Numeric columns come back as float64,
    NaN where a cell is empty or holds no finite number; the latter are kept in
    ``df.attrs[UNPARSED_KEY]`` for :func:`numeric` to report. The index holds the record number
    (0 for the first data row).

    Returns:
        The table, an empty table for an absent optional file that the settings do not name, or
        ``None`` when the table cannot be used (every reason recorded in ``problems``).
    """
    path = settings.path(table)
    name = settings.files[table]
    if not path.is_file():
        if table in OPTIONAL_TABLES and table not in settings.named_files:
            return pd.DataFrame({c: pd.Series(dtype=object) for c, req in COLUMNS[table] if req})
        problems.add(
            name,
            None,
            None,
            None,
            f"the {table} table as a file at {path} (mapped by [files] {table})",
        )
        return None
    with _file_bytes(path) as data:
        return _read(settings, table, path, data, problems)


def cell_text(
    df: pd.DataFrame, column: str, rows: np.ndarray, limit: int = MAX_PROBLEMS
) -> list[str]:
    """Return cells of a table exactly as the file wrote them, for messages.

    Numeric columns hold float64 (``50`` reads as 50.0); a problem should quote ``50``.

    Args:
        df: a table from :func:`read_table`, possibly filtered (the index holds record numbers).
        column: our column name.
        rows: a boolean mask over ``df``'s rows, or positions in ``df``.
        limit: the most cells returned (the first ones); :meth:`ProblemList.add_many` lists no
            more than :data:`MAX_PROBLEMS`, so the default is enough for it.
    """
    pos = np.asarray(rows)
    pos = (np.flatnonzero(pos) if pos.dtype == bool else pos.astype(np.int64))[:limit]
    origin = df.attrs.get(ORIGIN_KEY)
    if not isinstance(origin, _Origin) or column not in origin.positions:
        return [str(v) for v in df[column].to_numpy()[pos]]
    records = np.asarray(df.index[pos], dtype=np.int64)
    return origin.column(column).take(pa.array(records)).to_pylist()


@contextmanager
def _file_bytes(path: Path) -> Iterator[bytes | mmap.mmap]:
    """Yield the file's bytes, memory-mapped (no copy of a big forces file)."""
    with path.open("rb") as fh:
        if os.fstat(fh.fileno()).st_size == 0:
            yield b""
            return
        data = mmap.mmap(fh.fileno(), 0, access=mmap.ACCESS_READ)
    try:
        yield data
    finally:
        try:
            data.close()
        except BufferError:
            pass  # an Arrow buffer still refers to it: it closes when that is collected


def _read(
    settings: Settings, table: str, path: Path, data: bytes | mmap.mmap, problems: ProblemList
) -> pd.DataFrame | None:
    name = settings.files[table]
    start = 3 if data[:3] == b"\xef\xbb\xbf" else 0
    end = _content_end(data)
    if end <= start:
        problems.add(name, None, None, None, "a header row naming the columns; the file is empty")
        return None
    if not _is_utf8_text(data, end, name, problems):
        return None
    header, header_end = _header(data, start, end, settings.delimiter)
    mapped = _map_columns(settings, table, header, problems)
    if mapped is None:
        return None
    if header_end >= end:
        if table in OPTIONAL_TABLES:
            return pd.DataFrame({c: pd.Series(dtype=object) for c in mapped.values()})
        problems.add(name, None, None, None, NO_DATA_ROWS)
        return None
    source = _Source(
        pa.py_buffer(data).slice(0, end), len(header), settings.delimiter, settings.decimal
    )
    read = _parse(source, table, mapped, name, problems)
    if read is None:
        return None
    arrow, as_text = read
    return _frame(source, path, table, mapped, arrow, as_text, name, problems)


def _content_end(data: bytes | mmap.mmap) -> int:
    """Return the end of the last line holding anything but blanks (empty last lines are fine)."""
    end = len(data)
    while end > 0:
        while end > 0 and data[end - 1] in b"\r\n":
            end -= 1
        newline = data.rfind(b"\n", 0, end)
        # A "\r" alone ends a line too; look for one only after the last "\n" (no full scan).
        start = max(newline, data.rfind(b"\r", max(newline, 0), end)) + 1
        if data[start:end].strip(b" \t"):
            break
        end = start
    return end


def _is_utf8_text(data: bytes | mmap.mmap, end: int, name: str, problems: ProblemList) -> bool:
    """Check the whole file is UTF-8 text (not a binary file, not another encoding)."""
    expected = "UTF-8 text (save or export the table as CSV in UTF-8)"
    if data.find(b"\x00", 0, end) >= 0:
        problems.add(
            name, None, None, None, f"{expected}; this looks like a binary file or UTF-16 text"
        )
        return False
    whole = pa.py_buffer(data).slice(0, end)
    offsets = pa.py_buffer(np.array([0, end], dtype=np.int64))
    try:
        # One value holding the whole file: the cast validates UTF-8 in compiled code.
        pa.Array.from_buffers(pa.large_binary(), 1, [None, offsets, whole]).cast(pa.large_string())
        return True
    except pa.ArrowInvalid:
        pass
    raw = bytes(data[:end])
    try:
        raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        first = raw.rfind(b"\n", 0, exc.start) + 1
        last = raw.find(b"\n", exc.start)
        text = raw[first : last if last >= 0 else len(raw)].rstrip(b"\r")
        problems.add(name, line, None, _quote(text.decode("utf-8", "backslashreplace")), expected)
    return False


def _header(data: bytes | mmap.mmap, start: int, end: int, delimiter: str) -> tuple[list[str], int]:
    """Return the header row's fields as written (quotes resolved) and where its line ends."""
    newline = data.find(b"\n", start, end)
    stop = end if newline < 0 else newline
    carriage = data.find(b"\r", start, stop)  # only within the first line: no full scan
    stop = stop if carriage < 0 else carriage
    line = bytes(data[start:stop]).decode("utf-8")
    return next(csv.reader(io.StringIO(line), delimiter=delimiter), []), stop


def _map_columns(
    settings: Settings, table: str, header: list[str], problems: ProblemList
) -> dict[int, str] | None:
    """Return {position of the file column: our column}, or ``None`` after recording why not.

    Names are compared without surrounding blanks. A mapped name the header holds twice is a
    problem (which one is meant?); unmapped columns may repeat.
    """
    name = settings.files[table]
    names = [h.strip() for h in header]
    where: dict[str, list[int]] = {}
    for i, h in enumerate(names):
        where.setdefault(h, []).append(i)
    mapped: dict[int, str] = {}
    ok = True
    for ours, required in COLUMNS[table]:
        theirs = settings.columns[table][ours]
        key = f"(mapped by [columns.{table}] {ours})"
        found = where.get(theirs.strip(), [])
        if len(found) > 1:
            ok = False
            places = ", ".join(str(i + 1) for i in found)
            problems.add(
                name,
                1,
                theirs,
                None,
                f"the column '{theirs.strip()}' once {key}; the header has it in columns "
                f"{places} (rename the others)",
            )
        elif found:
            mapped[found[0]] = ours
        elif required:
            ok = False
            problems.add(
                name, 1, theirs, None, f"a column '{theirs}' {key}; the header has {names}"
            )
    return mapped if ok else None


class _Source:
    """One file's bytes and dialect, to parse as often as the careful paths need."""

    def __init__(self, buffer: pa.Buffer, width: int, delimiter: str, decimal: str) -> None:
        self.buffer = buffer
        self.names = [f"c{i}" for i in range(width)]
        self.delimiter = delimiter
        self.decimal = decimal

    def read(
        self,
        types: dict[int, pa.DataType],
        *,
        threads: bool = True,
        newlines_in_values: bool = False,
        handler: Any = None,
    ) -> pa.Table:
        """Parse the columns at the positions in ``types`` (header skipped, empty lines kept)."""
        return pcsv.read_csv(
            pa.BufferReader(self.buffer),
            read_options=pcsv.ReadOptions(
                column_names=self.names, skip_rows=1, use_threads=threads
            ),
            parse_options=pcsv.ParseOptions(
                delimiter=self.delimiter,
                ignore_empty_lines=False,
                newlines_in_values=newlines_in_values,
                invalid_row_handler=handler,
            ),
            convert_options=pcsv.ConvertOptions(
                include_columns=[self.names[i] for i in types],
                column_types={self.names[i]: t for i, t in types.items()},
                # Only an empty cell is missing: "NA", "null" or "nan" are text here.
                null_values=[""],
                strings_can_be_null=False,
                decimal_point=self.decimal,
            ),
        )


def _parse(
    source: _Source, table: str, mapped: dict[int, str], name: str, problems: ProblemList
) -> tuple[pa.Table, bool] | None:
    """Parse the mapped columns; return (table, whether numbers were read as text) or ``None``.

    Numbers are read as float64 first; a cell the parser cannot convert sends every numeric column
    of this table to text, parsed by :func:`_parse_numbers`.
    """
    ids = ID_COLUMNS[table]
    as_text = False
    newlines = False
    while True:
        types = {
            i: pa.string() if ours in ids or as_text else pa.float64() for i, ours in mapped.items()
        }
        try:
            return source.read(types, newlines_in_values=newlines), as_text
        except pa.ArrowInvalid as exc:
            if "conversion error" in str(exc) and not as_text:
                as_text = True
            elif _report_ragged(source, name, problems):
                return None
            elif not newlines:
                # No row is ragged when read in order: a quoted line break split the parallel
                # read. Read again with line breaks allowed inside values (slower, so not first).
                newlines = True
            else:
                problems.add(
                    name,
                    None,
                    None,
                    None,
                    f"a CSV table readable with the delimiter '{source.delimiter}' (check [csv] "
                    "delimiter, and that every opening double quote is closed)",
                )
                return None


def _report_ragged(source: _Source, name: str, problems: ProblemList) -> bool:
    """Record the rows whose number of fields differs from the header's; return whether any."""
    width = len(source.names)
    listed: list[tuple[int, int, str]] = []
    count = 0

    def note(row: Any) -> str:
        nonlocal count
        count += 1
        if len(listed) < MAX_LISTED_ROWS:
            listed.append((row.number, row.actual_columns, row.text))
        return "skip"

    # In order, one thread: the parser then knows each row's number (header = row 1).
    try:
        source.read({0: pa.string()}, threads=False, newlines_in_values=True, handler=note)
    except pa.ArrowInvalid:
        return False  # not a matter of field counts (e.g. a quote never closed)
    for row, got, text in listed:
        problems.add(name, row, None, _quote(text), _ragged_expected(width, got, text, source))
    problems.more += count - len(listed)
    return count > 0


def _ragged_expected(width: int, got: int, text: str, source: _Source) -> str:
    """Say how many fields a row needs, how many it has, and the likely causes."""
    d = source.delimiter
    if not text.strip():
        causes = "an empty line holding only blanks (delete it)"
    elif got > width:
        causes = f"a '{d}' inside an unquoted name (put the name in double quotes)"
        if d == ",":
            causes = (
                "a decimal comma splitting a number in two (set [csv] delimiter and decimal "
                f"to the file's), or {causes}"
            )
    else:
        causes = (
            "a missing field (each row needs a place for every column, even an empty one), "
            "or a line break inside an unquoted name"
        )
    if '"' in text:
        causes = (
            'a double quote opened and never closed (a quote inside a quoted name is written "")'
            f", or {causes}"
        )
    return f"{width} fields as in the header row, but this row has {got}: likely {causes}"


def _quote(text: str) -> str:
    return text if len(text) <= MAX_QUOTED else text[: MAX_QUOTED - 1] + "…"


class _Origin:
    """Where a table came from: enough to read any of its columns again as text.

    Kept in the table's ``attrs``; the file is read again only when a message quotes a cell.
    """

    __slots__ = ("decimal", "delimiter", "path", "positions", "texts", "width")

    def __init__(
        self, path: Path, delimiter: str, decimal: str, width: int, positions: dict[str, int]
    ) -> None:
        self.path = path
        self.delimiter = delimiter
        self.decimal = decimal
        self.width = width
        self.positions = positions
        self.texts: dict[str, pa.Array] = {}

    def __deepcopy__(self, memo: dict[int, Any]) -> _Origin:
        return self  # shared by every frame derived from the table, like Unparsed

    def column(self, ours: str) -> pa.Array:
        """Return one of our columns as the file's text, one value per record."""
        if ours not in self.texts:
            with _file_bytes(self.path) as data:
                self.texts[ours] = self._read_text(data, self.positions[ours])
        return self.texts[ours]

    def _read_text(self, data: bytes | mmap.mmap, position: int) -> pa.Array:
        buffer = pa.py_buffer(data).slice(0, _content_end(data))
        source = _Source(buffer, self.width, self.delimiter, self.decimal)
        return (
            source.read({position: pa.string()}, newlines_in_values=True).column(0).combine_chunks()
        )


def _frame(
    source: _Source,
    path: Path,
    table: str,
    mapped: dict[int, str],
    arrow: pa.Table,
    as_text: bool,
    name: str,
    problems: ProblemList,
) -> pd.DataFrame | None:
    """Turn the parsed columns into our table; ``None`` after recording empty rows."""
    position = {ours: i for i, ours in mapped.items()}
    order = [ours for ours, _ in COLUMNS[table] if ours in position]
    columns: dict[str, Any] = {}
    empties: dict[str, Any] = {}
    unparsed: dict[str, Unparsed] = {}
    needs_text = []
    ids = [ours for ours in order if ours in ID_COLUMNS[table]]
    encode = _categorical if table in CATEGORY_TABLES else _text
    with ThreadPoolExecutor(max_workers=max(1, len(ids))) as pool:
        # pyarrow releases the GIL while it encodes: big id columns are encoded side by side.
        encoded = dict(
            zip(
                ids,
                pool.map(encode, [arrow.column(source.names[position[c]]) for c in ids]),
                strict=True,
            )
        )
    for ours in order:
        col = arrow.column(source.names[position[ours]])
        if ours in encoded:
            columns[ours], empties[ours] = encoded[ours]
        elif as_text:
            columns[ours], empties[ours], unparsed[ours] = _parse_numbers(col, source.decimal)
        elif _all_finite(col):
            columns[ours] = col.to_numpy()
            empties[ours] = col
        else:
            needs_text.append(ours)
    if needs_text:
        # Infinities or NaN in the file: read those columns again as text to quote each cell.
        text = source.read({position[c]: pa.string() for c in needs_text})
        for ours in needs_text:
            col = text.column(source.names[position[ours]])
            columns[ours], empties[ours], unparsed[ours] = _parse_numbers(col, source.decimal)
    n = _rows_with_values(empties, arrow.num_rows, name, problems)
    if n is None:
        return None
    if n == 0 and table not in OPTIONAL_TABLES:
        problems.add(name, None, None, None, NO_DATA_ROWS)
        return None
    df = pd.DataFrame(
        {c: (v[:n] if len(v) != n else v) for c, v in columns.items()},
        index=pd.RangeIndex(n),
        copy=False,
    )
    kept = {c: u for c, u in unparsed.items() if len(u.records)}
    if kept:
        df.attrs[UNPARSED_KEY] = kept
    df.attrs[ORIGIN_KEY] = _Origin(
        path, source.delimiter, source.decimal, len(source.names), position
    )
    return df


def _rows_with_values(
    empties: dict[str, Any], rows: int, name: str, problems: ProblemList
) -> int | None:
    """Return how many rows to keep, or ``None`` after recording empty rows inside the table.

    Empty rows at the end are dropped.
    ``empties`` holds per column either an Arrow column (empty = missing) or a boolean array.
    A row counts as empty when every column read is empty: an empty line, or only empty cells.
    """
    if rows == 0:
        return 0
    # Cheap first: a column with no empty cell rules every row out without building masks.
    for e in empties.values():
        if isinstance(e, pa.ChunkedArray) and e.null_count == 0:
            return rows
        if isinstance(e, np.ndarray) and not e.any():
            return rows
    empty = np.ones(rows, dtype=bool)
    for e in empties.values():
        empty &= e if isinstance(e, np.ndarray) else pc.is_null(e).to_numpy(zero_copy_only=False)
    filled = np.flatnonzero(~empty)
    keep = int(filled[-1]) + 1 if len(filled) else 0
    inside = np.flatnonzero(empty[:keep])
    for record in inside[:MAX_LISTED_ROWS].tolist():
        problems.add(
            name,
            record + 2,
            None,
            "",
            "a row of values, not an empty line (delete it; empty lines may only end the file)",
        )
    problems.more += max(0, len(inside) - MAX_LISTED_ROWS)
    return None if len(inside) else keep


def _all_finite(col: pa.ChunkedArray) -> bool:
    """Whether every non-missing value of a float column is finite."""
    finite = pc.sum(pc.is_finite(col)).as_py() or 0
    return finite == len(col) - col.null_count


def _text(col: pa.ChunkedArray) -> tuple[pd.Series, np.ndarray]:
    """Return an id column as object text, blanks stripped, empty cells missing; and the empties."""
    stripped = pc.utf8_trim_whitespace(col)
    empty = pc.equal(stripped, "").to_numpy(zero_copy_only=False)
    values = stripped.to_numpy(zero_copy_only=False)
    values[empty] = None
    return pd.Series(values, dtype=object), empty


def _categorical(col: pa.ChunkedArray) -> tuple[pd.Categorical, np.ndarray]:
    """Encode a text id column as a categorical of stripped, non-empty labels.

    Encoded by pyarrow (faster than having the CSV parser build dictionaries); only the dictionary
    (one entry per distinct text) is stripped and compared: no Python string per row. Labels equal
    after stripping (" B1" and "B1") share one code; a blank one is missing.
    """
    if col.num_chunks == 0:
        codes = np.zeros(0, dtype=np.int32)
        labels = np.zeros(0, dtype=object)
    else:
        encoded = pc.dictionary_encode(col).unify_dictionaries().combine_chunks()
        indices = encoded.indices  # never null: empty cells are read as ""
        codes = indices.to_numpy(zero_copy_only=indices.null_count == 0)
        labels = np.asarray(pc.utf8_trim_whitespace(encoded.dictionary).to_pylist(), dtype=object)
    codes = np.asarray(codes, dtype=np.int32)
    if len(set(labels.tolist())) == len(labels) and not (labels == "").any():
        cat = pd.Categorical.from_codes(codes, categories=pd.Index(labels, dtype=object))
        return cat, codes < 0
    merged, remap = np.unique(labels, return_inverse=True)
    keep = merged != ""
    renumber = np.where(keep, np.cumsum(keep) - 1, -1)[remap].astype(np.int32)
    codes = np.where(codes >= 0, renumber[np.maximum(codes, 0)], -1).astype(np.int32)
    cat = pd.Categorical.from_codes(codes, categories=pd.Index(merged[keep], dtype=object))
    return cat, codes < 0


def _parse_numbers(
    col: pa.ChunkedArray | pa.Array, decimal: str
) -> tuple[np.ndarray, np.ndarray, Unparsed]:
    """Parse numbers written as text; return (values, empty cells, cells holding no finite number).

    Accepted: optional sign, digits with the decimal mark ``decimal``, optional exponent, blanks
    around. Anything else (words, "TRUE", thousands separators, the other decimal mark, "inf",
    "nan", a number too big for float64) is NaN in the values and listed in the result.
    """
    stripped = pc.utf8_trim_whitespace(col)
    empty = pc.equal(stripped, "").to_numpy(zero_copy_only=False)
    pattern = _NUMBER.format(d=r"\." if decimal == "." else decimal)
    ok = pc.match_substring_regex(stripped, pattern)
    plain = stripped if decimal == "." else pc.replace_substring(stripped, decimal, ".")
    values = pc.cast(pc.if_else(ok, plain, pa.scalar(None, pa.string())), pa.float64())
    values = np.array(values.to_numpy(zero_copy_only=False), dtype=np.float64)  # writable
    records = np.flatnonzero(~np.isfinite(values) & ~empty)
    values[records] = np.nan  # "1e309" parses to inf: no infinity passes on
    texts = pc.take(col, records)
    if isinstance(texts, pa.ChunkedArray):
        texts = texts.combine_chunks()
    words = pc.utf8_lower(pc.utf8_ltrim(pc.take(stripped, records), characters="+-"))
    non_finite = pc.or_(pc.take(ok, records), pc.is_in(words, pa.array(sorted(_NON_FINITE_WORDS))))
    flags = np.asarray(non_finite.to_numpy(zero_copy_only=False), dtype=bool)
    return values, empty, Unparsed(records.astype(np.int64), texts, flags)


def _positions(df: pd.DataFrame, records: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (positions in ``df`` of the records still in it, which of ``records`` those are)."""
    if len(df) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(len(records), dtype=bool)
    if df.index.is_monotonic_increasing:
        labels = np.asarray(df.index, dtype=np.int64)
        pos = np.minimum(np.searchsorted(labels, records), len(labels) - 1)
        hit = labels[pos] == records
    else:
        pos = df.index.get_indexer(pd.Index(records))
        hit = pos >= 0
    return pos[hit], hit


def _unparsed_cells(df: pd.DataFrame, column: str) -> Unparsed:
    """Return the column's cells holding no finite number, ``records`` as positions in ``df``.

    Only cells of rows still in ``df`` count (a caller may have filtered the table).
    """
    info = df.attrs.get(UNPARSED_KEY, {}).get(column)
    if info is None:
        return Unparsed(np.zeros(0, np.int64), pa.array([], pa.string()), np.zeros(0, bool))
    pos, hit = _positions(df, info.records)
    return Unparsed(pos, info.texts.filter(pa.array(hit)), info.non_finite[hit])


def numeric(
    df: pd.DataFrame,
    column: str,
    file: str,
    their_name: str,
    problems: ProblemList,
    *,
    required: bool = True,
) -> pd.Series:
    """Return ``df[column]`` as float64, noting every empty cell and every cell that is no number.

    A cell that is no number (text, "TRUE", "1,5" under a decimal point) is reported with its
    text exactly as written and "a number" expected; "inf", "nan" or a number too big for float64
    with "a finite number" expected. Either is NaN in the result.

    Args:
        df: the table (index = record number), as :func:`read_table` returns it; a column of
            text (a table made some other way) is parsed here the same way.
        column: our column name.
        file: the file name for messages.
        their_name: the file's own column name for messages.
        problems: where problems go.
        required: whether an empty cell is a problem (optional columns may have gaps).
    """
    s = df[column]
    if pd.api.types.is_float_dtype(s.dtype) or (
        pd.api.types.is_integer_dtype(s.dtype) and not pd.api.types.is_bool_dtype(s.dtype)
    ):
        out = s.astype(np.float64)
        cells = _unparsed_cells(df, column)
        # Non-finite values in a frame not read by read_table carry no text: quote the value.
        stray = ~np.isfinite(out.to_numpy()) & out.notna().to_numpy()
        stray[cells.records] = False
        if stray.any():
            extra = np.flatnonzero(stray)
            cells = Unparsed(
                np.concatenate([cells.records, extra]),
                pa.concat_arrays([cells.texts, pa.array(out.to_numpy()[extra].astype(str))]),
                np.concatenate([cells.non_finite, np.ones(len(extra), dtype=bool)]),
            )
            out = out.where(np.isfinite(out.to_numpy()))
    else:
        text = ["" if v is None or (isinstance(v, float) and np.isnan(v)) else str(v) for v in s]
        values, _, cells = _parse_numbers(pa.array(text, pa.string()), ".")
        out = pd.Series(values, index=df.index)
    bad = np.zeros(len(s), dtype=bool)
    bad[cells.records] = True
    for wanted, pick in (("a number", ~cells.non_finite), ("a finite number", cells.non_finite)):
        idx = np.flatnonzero(pick)
        if len(idx):
            # Only the cells that will be listed become Python strings.
            shown = cells.texts.take(pa.array(idx[:MAX_PROBLEMS])).to_pylist()
            problems.add_many(
                file, spreadsheet_rows(df.index[cells.records[idx]]), their_name, shown, wanted
            )
    empty = out.isna().to_numpy() & ~bad
    if required and empty.any():
        idx = np.flatnonzero(empty)
        problems.add_many(
            file, spreadsheet_rows(df.index[idx]), their_name, [""] * len(idx), "a number"
        )
    return out


def required_text(
    df: pd.DataFrame, column: str, file: str, their_name: str, problems: ProblemList
) -> None:
    """Record every empty cell of an identifier column."""
    empty = df[column].isna().to_numpy()
    if empty.any():
        idx = np.flatnonzero(empty)
        problems.add_many(
            file, spreadsheet_rows(df.index[idx]), their_name, [""] * len(idx), "a value"
        )
