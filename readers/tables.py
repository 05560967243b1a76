"""Reading one table: the user's column names in, ours out, every cell read exactly.

A CSV file is parsed by :mod:`flangewise.readers.csv_parse`; here its columns are mapped to ours
(:mod:`flangewise.readers.columns`) and turned into a table. A Parquet file, or for the forces
table a folder of Parquet files, is read by :mod:`flangewise.readers.parquet_parse` into the
same table. Identifier columns are read as text exactly as written, blanks around them
stripped: "007", "7" and "7.0" are three ids, "NA" or "null" is a name, and only an empty cell
is missing. Numeric columns are read as float64; cells holding no finite number are kept as
written and :func:`numeric` reports them. Empty lines keep their row (so row numbers stay those
of a spreadsheet); an empty line inside a table is a problem, empty lines at the end of the file
are ignored.
"""

from __future__ import annotations

import mmap
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from flangewise.readers.columns import (
    CATEGORY_TABLES,
    ID_COLUMNS,
    UNPARSED_KEY,
    categorical,
    finite_everywhere,
    map_columns,
    text_ids,
)
from flangewise.readers.csv_parse import (
    DICTIONARY,
    MAX_LISTED_ROWS,
    ORIGIN_KEY,
    STRING,
    NotUtf8,
    Origin,
    Source,
    Unparsed,
    all_finite,
    content_end,
    file_bytes,
    header_row,
    is_utf8_text,
    parse,
    parse_numbers,
)
from flangewise.readers.errors import MAX_PROBLEMS, ProblemList
from flangewise.readers.parquet_parse import is_parquet, read_parquet
from flangewise.readers.settings import COLUMNS, OPTIONAL_TABLES, Settings

#: Tables that may be a folder of Parquet files (a dataset), not only one file.
DATASET_TABLES = frozenset({"forces"})

#: What a required table without data rows lacks.
NO_DATA_ROWS = "data rows below the header: the file has no data rows"

#: Problems of one kind listed per table before the rest are only counted.
MAX_LISTED = 60


def spreadsheet_rows(index: pd.Index | np.ndarray) -> np.ndarray:
    """Return spreadsheet row numbers for record labels (header = row 1, first record = row 2)."""
    return np.asarray(index, dtype=np.int64) + 2


def read_table(settings: Settings, table: str, problems: ProblemList) -> pd.DataFrame | None:
    """Read one table into our column names, or note in ``problems`` why it cannot be read.

    A CSV file is parsed by :mod:`csv_parse`; a ``.parquet`` or ``.pq`` file (or, for the
    forces table, a folder of them) is read by :mod:`parquet_parse`, with the same result.
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
    if path.is_dir() and table in DATASET_TABLES:
        return read_parquet(settings, table, path, problems)
    if not path.is_file():
        if table in OPTIONAL_TABLES and table not in settings.named_files and not path.exists():
            return pd.DataFrame({c: pd.Series(dtype=object) for c, req in COLUMNS[table] if req})
        folder = f" ({path} is a folder)" if path.is_dir() else ""
        problems.add(
            name,
            None,
            None,
            None,
            f"the {table} table as a file at {path} (mapped by [files] {table}){folder}",
        )
        return None
    if is_parquet(path):
        return read_parquet(settings, table, path, problems)
    with file_bytes(path) as data:
        return _read(settings, table, path, data, problems)


def _read(
    settings: Settings, table: str, path: Path, data: bytes | mmap.mmap, problems: ProblemList
) -> pd.DataFrame | None:
    name = settings.files[table]
    start = 3 if data[:3] == b"\xef\xbb\xbf" else 0
    end = content_end(data)
    if end <= start:
        problems.add(name, None, None, None, "a header row naming the columns; the file is empty")
        return None
    found = header_row(data, start, end, settings.delimiter)
    if found is None:
        _not_text(data, end, name, problems)
        return None
    header, header_end = found
    mapped = map_columns(settings, table, header, problems)
    if mapped is None:
        return None
    if header_end >= end:
        if table in OPTIONAL_TABLES:
            return pd.DataFrame({c: pd.Series(dtype=object) for c in mapped.values()})
        problems.add(name, None, None, None, NO_DATA_ROWS)
        return None
    source = Source(
        pa.py_buffer(data).slice(0, end), len(header), settings.delimiter, settings.decimal
    )
    id_type = DICTIONARY if table in CATEGORY_TABLES else STRING
    try:
        read = parse(source, mapped, ID_COLUMNS[table], name, problems, id_type)
    except NotUtf8:
        _not_text(data, end, name, problems)
        return None
    if read is None:
        return None
    arrow, as_text = read
    return _frame(source, path, table, mapped, arrow, as_text, name, problems)


def _not_text(data: bytes | mmap.mmap, end: int, name: str, problems: ProblemList) -> None:
    """Record where the file stops being UTF-8 text."""
    if is_utf8_text(data, end, name, problems):
        # Cannot happen (the parser or the header found bytes that are not UTF-8): a safeguard.
        problems.add(
            name, None, None, None, "UTF-8 text (save or export the table as CSV in UTF-8)"
        )


def _frame(
    source: Source,
    path: Path,
    table: str,
    mapped: dict[int, str],
    arrow: pa.Table,
    as_text: bool,
    name: str,
    problems: ProblemList,
) -> pd.DataFrame | None:
    """Turn the parsed columns into our table; ``None`` once empty rows are noted."""
    position = {ours: i for i, ours in mapped.items()}
    order = [ours for ours, _ in COLUMNS[table] if ours in position]
    columns: dict[str, Any] = {}
    empties: dict[str, Any] = {}
    unparsed: dict[str, Unparsed] = {}
    needs_text = []
    ids = [ours for ours in order if ours in ID_COLUMNS[table]]
    encode = categorical if table in CATEGORY_TABLES else text_ids
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
            columns[ours], empties[ours], unparsed[ours] = parse_numbers(col, source.decimal)
        else:
            values = col.to_numpy()
            # Empty cells are nulls, NaN here; any other NaN or infinity was written in the file.
            if finite_everywhere(values) or all_finite(col):
                columns[ours] = values
                empties[ours] = col
            else:
                needs_text.append(ours)
    if needs_text:
        # Infinities or NaN in the file: read those columns again as text to quote each cell.
        text = source.read({position[c]: pa.string() for c in needs_text})
        for ours in needs_text:
            col = text.column(source.names[position[ours]])
            columns[ours], empties[ours], unparsed[ours] = parse_numbers(col, source.decimal)
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
    df.attrs[ORIGIN_KEY] = Origin(
        path, source.delimiter, source.decimal, len(source.names), position
    )
    return df


def _rows_with_values(
    empties: dict[str, Any], rows: int, name: str, problems: ProblemList
) -> int | None:
    """Return how many rows to keep, or ``None`` once empty rows inside the table are noted.

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

    Returns:
        The values; the column itself when every value is a finite number (no copy: do not
        modify it in place).
    """
    s = df[column]
    if s.dtype == np.float64 and finite_everywhere(s.to_numpy()):
        return s
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
        values, _, cells = parse_numbers(pa.array(text, pa.string()), ".")
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
