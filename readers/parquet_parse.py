"""Reading one table from Parquet: a file, or for the forces table a folder of Parquet files.

Parquet columns are typed, so there is no text to parse; each mapped column's type is checked
instead. Identifiers may be text (also dictionary-encoded) or whole numbers, which are read as
their decimal text exactly (``7`` is the id "7"); a column of decimal numbers cannot name an id
exactly and is refused. Numbers may be integers, floating point or decimals, read as float64
(floating point values as stored); text, booleans or dates in a number column are refused. A
null is an empty cell. NaN and infinities are kept aside with their printed value, as the CSV
reader keeps unparsed cells, for :func:`flangewise.readers.tables.numeric` to report.

Records are numbered as in a CSV export of the same table: the first record is row 2 (the
column names being row 1), so that a problem names the same row whichever format was read. In
a folder of files (a dataset), each problem names the file and the row within it.
"""

from __future__ import annotations

import re
from dataclasses import replace
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
from flangewise.readers.csv_parse import DICTIONARY, ORIGIN_KEY, Unparsed, all_finite
from flangewise.readers.errors import Problem, ProblemList
from flangewise.readers.settings import OPTIONAL_TABLES, Settings

#: File name endings read as Parquet (any case).
PARQUET_SUFFIXES = frozenset({".parquet", ".pq"})

#: What a required table without records lacks.
NO_RECORDS = "records: the Parquet data has none"

#: Why a file could not be opened or read as Parquet (no library wording reaches the user).
NOT_PARQUET = (
    "a Parquet file (this one cannot be read as Parquet: another kind of file named .parquet, "
    "or a damaged or incomplete one)"
)


def is_parquet(path: Path) -> bool:
    """Whether a file's name says Parquet: it ends in ``.parquet`` or ``.pq`` (any case)."""
    return path.suffix.lower() in PARQUET_SUFFIXES


class ParquetOrigin:
    """Where a Parquet table came from: its mapped columns as stored, to print cells from.

    For a folder of files it also knows which records each file holds, to name the file and
    the row within it in problems (:meth:`relocate`).
    """

    __slots__ = ("columns", "name", "parts", "starts")

    def __init__(
        self,
        name: str,
        columns: dict[str, pa.ChunkedArray],
        parts: list[str] | None = None,
        starts: np.ndarray | None = None,
    ) -> None:
        self.name = name
        self.columns = columns
        self.parts = parts or []
        self.starts = starts if starts is not None else np.zeros(1, dtype=np.int64)

    def __deepcopy__(self, memo: dict[int, Any]) -> ParquetOrigin:
        return self  # shared by every frame derived from the table, like the CSV origin

    def has(self, ours: str) -> bool:
        """Whether the file has our column ``ours``."""
        return ours in self.columns

    def cells(self, ours: str, records: np.ndarray) -> list[str]:
        """Return the cells of our column ``ours`` at ``records``, printed from their values."""
        return printed(self.columns[ours].take(pa.array(records, pa.int64())))

    def relocate(self, problem: Problem) -> Problem:
        """Name the file of a folder and the row within it; other problems stay as they are."""
        if not self.parts or problem.file != self.name or problem.row is None:
            return problem
        record = problem.row - 2
        part = int(np.searchsorted(self.starts, record, side="right")) - 1
        row = record - int(self.starts[part]) + 2
        return replace(problem, file=f"{self.name.rstrip('/')}/{self.parts[part]}", row=row)


def printed(values: pa.Array | pa.ChunkedArray) -> list[str]:
    """Return values as text: numbers as Arrow prints them ("50", "0.1", "nan"), nulls as ""."""
    if pa.types.is_dictionary(values.type):
        values = values.cast(values.type.value_type)
    try:
        text = pc.cast(values, pa.string()).to_pylist()
    except (pa.ArrowException, ValueError):
        # Not UTF-8, or a type that does not print (nested): shown with escapes or as its type.
        try:
            raw = pc.cast(values, pa.binary()).to_pylist()
            text = [None if v is None else v.decode("utf-8", "backslashreplace") for v in raw]
        except (pa.ArrowException, ValueError):
            text = [f"({values.type})"] * len(values)
    return ["" if v is None else v for v in text]


class _Source:
    """One Parquet file or folder: its column names, and a reader of some of its columns."""

    def __init__(self, path: Path, name: str) -> None:
        import pyarrow.dataset as ds  # only for Parquet input
        import pyarrow.parquet as pq

        self.path = path
        self.name = name
        if path.is_dir():
            self.keys = _folder_keys(path)
            self.schema = ds.dataset(path, format="parquet", partitioning=self.keys).schema
        else:
            self.schema = pq.read_schema(path)
        self.names: list[str] = list(self.schema.names)

    def read(self, columns: list[str], dictionary: list[str]) -> tuple[pa.Table, ParquetOrigin]:
        """Read ``columns`` (those in ``dictionary`` as dictionaries), with the origin to keep."""
        import pyarrow.dataset as ds
        import pyarrow.parquet as pq

        # Only text can be read as a dictionary; whole numbers are encoded after reading.
        dictionary = [c for c in dictionary if _is_text(self.schema.field(c).type)]
        if not self.path.is_dir():
            table = pq.read_table(self.path, columns=columns, read_dictionary=dictionary)
            return table, ParquetOrigin(self.name, {})
        fmt = ds.ParquetFileFormat(read_options={"dictionary_columns": dictionary})
        dataset = ds.dataset(self.path, format=fmt, partitioning=self.keys)
        pieces, parts = [], []
        # One fragment per file, in the natural order of their paths ("C2" before "C10"):
        # the order in which the combinations of a folder per combination are reported.
        fragments = sorted(dataset.get_fragments(), key=lambda f: _natural(f.path))
        for fragment in fragments:
            pieces.append(fragment.to_table(schema=dataset.schema, columns=columns))
            parts.append(Path(fragment.path).relative_to(self.path).as_posix())
        if not pieces:
            return pa.table({c: pa.array([], pa.string()) for c in columns}), ParquetOrigin(
                self.name, {}
            )
        starts = np.cumsum([0] + [len(p) for p in pieces])[:-1]
        return pa.concat_tables(pieces), ParquetOrigin(self.name, {}, parts, starts)


def _natural(path: str) -> list[tuple[int, int | str]]:
    """Sort key of a path with its runs of digits compared as numbers ("C2" before "C10")."""
    return [(0, int(p)) if p.isdigit() else (1, p) for p in re.split(r"(\d+)", path) if p]


def _folder_keys(path: Path) -> Any:
    """Folder names ``key=value`` give a column ``key`` of text ("combination=007" is "007").

    The keys are found first; then their values are read as text (left alone, the folder names
    "007" and "7" would both be read as the number 7).
    """
    import pyarrow.dataset as ds

    found = ds.dataset(path, format="parquet", partitioning="hive").partitioning
    keys = [] if found is None else found.schema.names
    return ds.HivePartitioning.discover(schema=pa.schema([(k, DICTIONARY) for k in keys]))


def read_parquet(
    settings: Settings, table: str, path: Path, problems: ProblemList
) -> pd.DataFrame | None:
    """Read one table from Parquet into our column names, as :func:`read_table` does from CSV.

    Returns:
        The table (index = record number, ids as text or categories, numbers as float64 with NaN
        where missing or not finite), or ``None`` when it cannot be used (every reason recorded).
    """
    name = settings.files[table]
    try:
        source = _Source(path, name)
    except (pa.ArrowException, OSError, ValueError):
        problems.add(name, None, None, None, _not_parquet(path))
        return None
    holder = "the folder's files' schema" if path.is_dir() else "the file's schema"
    mapped = map_columns(settings, table, source.names, problems, holder)
    if mapped is None:
        return None
    theirs = {ours: source.names[i] for i, ours in mapped.items()}
    ids = [ours for ours in theirs if ours in ID_COLUMNS[table]]
    big = table in CATEGORY_TABLES
    try:
        arrow, origin = source.read(list(theirs.values()), [theirs[c] for c in ids] if big else [])
    except (pa.ArrowException, OSError, ValueError):
        problems.add(name, None, None, None, _not_parquet(path))
        return None
    if arrow.num_rows == 0:
        if table in OPTIONAL_TABLES:
            return pd.DataFrame({c: pd.Series(dtype=object) for c in theirs})
        problems.add(name, None, None, None, NO_RECORDS)
        return None
    columns: dict[str, Any] = {}
    unparsed: dict[str, Unparsed] = {}
    for ours, their_name in theirs.items():
        col = arrow.column(their_name)
        origin.columns[ours] = col
        if ours in ids:
            if not _text_or_whole(col.type):
                _wrong_type(col, origin, their_name, _ID_EXPECTED, problems)
                continue
            bad = _not_utf8(col)
            if bad is not None:
                _add(origin, problems, bad[0], their_name, bad[1], "text in UTF-8")
                continue
            text = _id_text(col, big)
            if big:
                # The order of combinations is reported; element codes are re-based onto the
                # elements table when the forces are checked, so their order never shows.
                columns[ours] = categorical(text, by_appearance=ours != "element")[0]
            else:
                columns[ours] = text_ids(text)[0]
        else:
            number = _number(col)
            if number is None:
                _wrong_type(col, origin, their_name, _NUMBER_EXPECTED, problems)
                continue
            columns[ours], cells = _finite(number, col)
            if len(cells.records):
                unparsed[ours] = cells
    if len(columns) < len(theirs):
        return None
    df = pd.DataFrame(columns, index=pd.RangeIndex(arrow.num_rows), copy=False)
    if unparsed:
        df.attrs[UNPARSED_KEY] = unparsed
    df.attrs[ORIGIN_KEY] = origin
    return df


def _not_parquet(path: Path) -> str:
    if path.is_dir():
        return (
            "a folder of Parquet files (a dataset; key=value folder names give a column) "
            "holding the same columns; a file in it cannot be read as Parquet, or the files' "
            "columns do not agree"
        )
    return NOT_PARQUET


_ID_EXPECTED = (
    "identifiers as text or whole numbers (a column of decimal numbers, true/false or dates "
    "cannot name an id exactly)"
)
_NUMBER_EXPECTED = "a number (the column must hold integer, floating point or decimal numbers)"


def _text_or_whole(kind: pa.DataType) -> bool:
    """Whether a column type can hold ids exactly: text or whole numbers (or only nulls)."""
    if pa.types.is_dictionary(kind):
        kind = kind.value_type
    return _is_text(kind) or pa.types.is_integer(kind) or pa.types.is_null(kind)


def _id_text(col: pa.ChunkedArray, big: bool) -> pa.ChunkedArray:
    """Return an id column (text, UTF-8 checked, or whole numbers) as text.

    Whole numbers become their decimal text exactly. For a big table the result is a dictionary
    of text: only the distinct values are turned into text.
    """
    if big:
        if not pa.types.is_dictionary(col.type):
            col = pc.dictionary_encode(col)
        return col.cast(DICTIONARY)
    return col.cast(pa.string())


def _is_text(kind: pa.DataType) -> bool:
    return (
        pa.types.is_string(kind)
        or pa.types.is_large_string(kind)
        or pa.types.is_string_view(kind)
        or pa.types.is_binary(kind)
        or pa.types.is_large_binary(kind)
        or pa.types.is_binary_view(kind)
    )


def _number(col: pa.ChunkedArray) -> pa.ChunkedArray | None:
    """Return a number column as float64 (nulls kept), or ``None`` when it holds no numbers."""
    if pa.types.is_dictionary(col.type):
        col = col.cast(col.type.value_type)
    kind = col.type
    if pa.types.is_floating(kind) or pa.types.is_integer(kind) or pa.types.is_decimal(kind):
        # Integers beyond 2**53 are rounded to the nearest float64, as a CSV number is parsed.
        return pc.cast(col, pa.float64(), safe=False)
    if pa.types.is_null(kind):
        return pc.cast(col, pa.float64())
    return None


def _finite(number: pa.ChunkedArray, stored: pa.ChunkedArray) -> tuple[np.ndarray, Unparsed]:
    """Return the values (NaN where missing or not finite) and the cells not finite."""
    values = number.to_numpy()
    if finite_everywhere(values) or all_finite(number):
        return values, Unparsed(np.zeros(0, np.int64), pa.array([], pa.string()), np.zeros(0, bool))
    values = np.array(values, dtype=np.float64)  # writable
    records = np.flatnonzero(~np.isfinite(values) & ~pc.is_null(number).to_numpy())
    texts = pa.array(printed(stored.take(pa.array(records, pa.int64()))), pa.string())
    values[records] = np.nan
    return values, Unparsed(records.astype(np.int64), texts, np.ones(len(records), dtype=bool))


def _not_utf8(col: pa.ChunkedArray) -> tuple[int, str] | None:
    """Return (record, value with escapes) of the first id that is not UTF-8 text, or ``None``.

    Parquet readers do not check that text is UTF-8. Of a dictionary only the values are
    checked, not every row.
    """
    start = 0
    for chunk in col.chunks:
        dictionary = isinstance(chunk, pa.DictionaryArray)
        values = chunk.dictionary if dictionary else chunk
        if _is_text(values.type) and not _utf8(values):
            at, shown = _undecodable(values)
            if dictionary:
                at = max(pc.index(chunk.indices, at).as_py(), 0)
            return start + at, shown
        start += len(chunk)
    return None


def _utf8(values: pa.Array) -> bool:
    """Whether every value of a text or binary array is UTF-8."""
    try:
        if pa.types.is_string(values.type) or pa.types.is_large_string(values.type):
            values.validate(full=True)
        else:
            values.cast(pa.string())  # the cast checks UTF-8
        return True
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return False


def _undecodable(values: pa.Array) -> tuple[int, str]:
    """Return the position of the first value that is not UTF-8, and the value with escapes.

    Only for an array known to hold one: the values are looked at one by one.
    """
    raw = values.view(_AS_BYTES.get(values.type, values.type)).to_pylist()
    for i, value in enumerate(raw):
        if value is not None:
            try:
                value.decode("utf-8")
            except UnicodeDecodeError:
                return i, value.decode("utf-8", "backslashreplace")
    return 0, ""


#: The binary type each text type's values can be viewed as, byte for byte.
_AS_BYTES = {
    pa.string(): pa.binary(),
    pa.large_string(): pa.large_binary(),
    pa.string_view(): pa.binary_view(),
}


def _wrong_type(
    col: pa.ChunkedArray,
    origin: ParquetOrigin,
    their_name: str,
    expected: str,
    problems: ProblemList,
) -> None:
    """Record a column of the wrong type, at its first value (the column's type said)."""
    first = pc.index(pc.is_valid(col), True).as_py()
    record = max(first, 0)
    value = printed(col.slice(record, 1))[0] if first >= 0 else ""
    _add(
        origin, problems, record, their_name, value, f"{expected}; the column's type is {col.type}"
    )


def _add(
    origin: ParquetOrigin,
    problems: ProblemList,
    record: int,
    their_name: str,
    value: str,
    expected: str,
) -> None:
    """Record a problem at a record (0 = first), named in its file of a folder."""
    problem = origin.relocate(Problem(origin.name, record + 2, their_name, value, expected))
    problems.add(problem.file, problem.row, their_name, value, expected)
