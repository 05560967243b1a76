"""Parsing one CSV file strictly with pyarrow: every row, every field count, every cell as written.

pyarrow's CSV reader parses the file (multi-threaded). It refuses any row whose number of fields
differs from the header's, whether its columns are mapped or not; such rows are then located one
by one and reported with their spreadsheet row. Numbers are read as float64; when a numeric
column holds anything but finite numbers, its cells are read again as text and parsed here
(:func:`parse_numbers`), so that each bad cell can be reported with its row and its text as
written. :func:`cell_text` reads any column again as text, for messages that quote cells. Empty
lines keep their row, so row numbers stay those of a spreadsheet. Every cell read as text is
checked to be UTF-8 by the parser; the whole file is scanned only to say where it is not.
"""

from __future__ import annotations

import csv
import io
import mmap
import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Protocol, runtime_checkable

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pcsv
from flangewise.readers.errors import MAX_PROBLEMS, ProblemList

#: Rows with the wrong number of fields (or empty lines) listed per table; the rest are counted.
MAX_LISTED_ROWS = 5

#: Longest row text quoted in a problem.
MAX_QUOTED = 120

#: A plain decimal number; ``{d}`` is the decimal mark. No thousands separators, no words.
_NUMBER = r"^[+-]?([0-9]+({d}[0-9]*)?|{d}[0-9]+)([eE][+-]?[0-9]+)?$"

#: Words a parser may take for a non-finite number (after an optional sign, any case).
_NON_FINITE_WORDS = frozenset({"nan", "inf", "infinity"})

#: Where :func:`read_table` leaves what :func:`cell_text` needs to find a cell's text.
ORIGIN_KEY = "flangewise_origin"

#: Identifiers of a small table, read as text.
STRING = pa.string()

#: Identifiers of a big table, encoded as they are read: one string per distinct value.
DICTIONARY = pa.dictionary(pa.int32(), pa.string())


@contextmanager
def file_bytes(path: Path) -> Iterator[bytes | mmap.mmap]:
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


def content_end(data: bytes | mmap.mmap) -> int:
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


def is_utf8_text(data: bytes | mmap.mmap, end: int, name: str, problems: ProblemList) -> bool:
    """Check the whole file is UTF-8 text (not a binary file, not another encoding).

    Called when the header line is no UTF-8 text, or when the parser finds a cell it reads as
    text that is not: the parser checks every cell it reads as text, so a valid file never pays
    for a pass over its whole bytes here.
    """
    expected = "UTF-8 text (save or export the table as CSV in UTF-8)"
    if data.find(b"\x00", 0, end) >= 0:
        problems.add(
            name, None, None, None, f"{expected}; this looks like a binary file or UTF-16 text"
        )
        return False
    if utf8(pa.py_buffer(data).slice(0, end)):
        return True
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


def utf8(buffer: pa.Buffer) -> bool:
    """Whether the bytes are UTF-8 (a cast of one value holding them all: compiled code)."""
    offsets = pa.py_buffer(np.array([0, buffer.size], dtype=np.int64))
    try:
        pa.Array.from_buffers(pa.large_binary(), 1, [None, offsets, buffer]).cast(pa.large_string())
        return True
    except pa.ArrowInvalid:
        return False


def header_row(
    data: bytes | mmap.mmap, start: int, end: int, delimiter: str
) -> tuple[list[str], int] | None:
    """Return the header row's fields as written (quotes resolved) and where its line ends.

    ``None`` when the line is no UTF-8 text (or holds a NUL byte: a binary file, or UTF-16).
    """
    newline = data.find(b"\n", start, end)
    stop = end if newline < 0 else newline
    carriage = data.find(b"\r", start, stop)  # only within the first line: no full scan
    stop = stop if carriage < 0 else carriage
    raw = bytes(data[start:stop])
    if b"\x00" in raw:
        return None
    try:
        line = raw.decode("utf-8")
    except UnicodeDecodeError:
        return None
    return next(csv.reader(io.StringIO(line), delimiter=delimiter), []), stop


class NotUtf8(Exception):
    """A cell the parser read as text is not UTF-8: :func:`is_utf8_text` says where."""


class Source:
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


def parse(
    source: Source,
    mapped: dict[int, str],
    ids: tuple[str, ...],
    name: str,
    problems: ProblemList,
    id_type: pa.DataType = STRING,
) -> tuple[pa.Table, bool] | None:
    """Parse the mapped columns; return (table, whether numbers were read as text) or ``None``.

    Identifiers are read as ``id_type``: text, or :data:`DICTIONARY` (the parser encodes them
    as it reads, so that a big table holds no string per row). Numbers are read as float64
    first; a cell the parser cannot convert sends every numeric column of this table to text,
    parsed by :func:`parse_numbers`.
    """
    as_text = False
    newlines = False
    while True:
        types = {
            i: id_type if ours in ids else STRING if as_text else pa.float64()
            for i, ours in mapped.items()
        }
        try:
            return source.read(types, newlines_in_values=newlines), as_text
        except pa.ArrowInvalid as exc:
            if "invalid UTF8" in str(exc):
                raise NotUtf8 from None
            if "conversion error" in str(exc) and not as_text:
                as_text = True
            elif not utf8(source.buffer):
                # Rows are located with their text, which must be UTF-8: say that first.
                raise NotUtf8 from None
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


def _report_ragged(source: Source, name: str, problems: ProblemList) -> bool:
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


def _ragged_expected(width: int, got: int, text: str, source: Source) -> str:
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


def parse_numbers(
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


def all_finite(col: pa.ChunkedArray) -> bool:
    """Whether every non-missing value of a float column is finite."""
    finite = pc.sum(pc.is_finite(col)).as_py() or 0
    return finite == len(col) - col.null_count


@runtime_checkable
class CellSource(Protocol):
    """Where a table came from, able to give any of its cells as the file holds it."""

    def has(self, ours: str) -> bool:
        """Whether the file has our column ``ours``."""
        ...

    def cells(self, ours: str, records: np.ndarray) -> list[str]:
        """Return the cells of our column ``ours`` at ``records`` (0 = first record), as text."""
        ...


class Origin:
    """Where a CSV table came from: enough to read any of its columns again as text.

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

    def __deepcopy__(self, memo: dict[int, Any]) -> Origin:
        return self  # shared by every frame derived from the table, like Unparsed

    def has(self, ours: str) -> bool:
        """Whether the file has our column ``ours``."""
        return ours in self.positions

    def cells(self, ours: str, records: np.ndarray) -> list[str]:
        """Return the cells of our column ``ours`` at ``records``, exactly as written."""
        return self.column(ours).take(pa.array(records, pa.int64())).to_pylist()

    def column(self, ours: str) -> pa.Array:
        """Return one of our columns as the file's text, one value per record."""
        if ours not in self.texts:
            with file_bytes(self.path) as data:
                self.texts[ours] = self._read_text(data, self.positions[ours])
        return self.texts[ours]

    def _read_text(self, data: bytes | mmap.mmap, position: int) -> pa.Array:
        buffer = pa.py_buffer(data).slice(0, content_end(data))
        source = Source(buffer, self.width, self.delimiter, self.decimal)
        return (
            source.read({position: pa.string()}, newlines_in_values=True).column(0).combine_chunks()
        )


def cell_text(
    df: pd.DataFrame, column: str, rows: np.ndarray, limit: int = MAX_PROBLEMS
) -> list[str]:
    """Return cells of a table exactly as the file holds them, for messages.

    Numeric columns hold float64 (``50`` reads as 50.0); a problem should quote ``50``. A CSV
    file's cells are quoted as written; a Parquet file's as its typed values print.

    Args:
        df: a table from :func:`read_table`, possibly filtered (the index holds record numbers).
        column: our column name.
        rows: a boolean mask over ``df``'s rows, or positions in ``df``.
        limit: the most cells returned (the first ones); :meth:`ProblemList.add_many` lists no
            more than :data:`MAX_PROBLEMS`, so the default is enough for it.
    """
    pos = np.asarray(rows)
    pos = (np.flatnonzero(pos) if pos.dtype == bool else pos.astype(np.int64))[:limit]
    if len(pos) == 0:
        return []  # no problem to quote: the file is not read again
    origin = df.attrs.get(ORIGIN_KEY)
    if not isinstance(origin, CellSource) or not origin.has(column):
        return [str(v) for v in df[column].to_numpy()[pos]]
    return origin.cells(column, np.asarray(df.index[pos], dtype=np.int64))
