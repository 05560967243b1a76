"""Reading one CSV table: the user's column names in, ours out; values checked whole-column."""

from __future__ import annotations

import csv
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv

from readers.errors import ProblemList
from readers.settings import COLUMNS, OPTIONAL_TABLES, Settings

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

#: Block size for pyarrow's CSV reader: large blocks mean few chunks to merge afterwards.
_ARROW_BLOCK = 1 << 24


def spreadsheet_rows(index: pd.Index | np.ndarray) -> np.ndarray:
    """Return spreadsheet row numbers for record labels (header = row 1, first record = row 2)."""
    return np.asarray(index, dtype=np.int64) + 2


def read_table(settings: Settings, table: str, problems: ProblemList) -> pd.DataFrame | None:
    """Read one table into our column names, or record why it cannot be read.

    Identifier columns come back as text (as categories for the forces table), stripped of
    surrounding blanks, empty cells missing; other columns as the parser found them (numbers are
    checked by :func:`numeric`). The index holds the record number (0 for the first data row).

    Returns:
        The table, an empty table for an absent optional file, or ``None`` when the file or a
        required column is missing (recorded in ``problems``).
    """
    path = settings.path(table)
    name = settings.files[table]
    if not path.is_file():
        if table in OPTIONAL_TABLES:
            return pd.DataFrame({c: pd.Series(dtype=object) for c, req in COLUMNS[table] if req})
        problems.add(name, None, None, None, f"the {table} table as a file at {path}")
        return None
    usecols = _map_header(settings, table, path, problems)
    if usecols is None:
        return None
    ids = [ours for ours in usecols.values() if ours in ID_COLUMNS[table]]
    errors = (pd.errors.ParserError, UnicodeDecodeError, csv.Error, ValueError)
    if table in CATEGORY_TABLES:
        try:
            return _read_arrow(path, settings, usecols, ids)
        except (pa.ArrowInvalid, *errors):
            # pyarrow refuses some files pandas reads (values with line breaks in quotes, ragged
            # rows it cannot place); fall back to the slower parser rather than refuse the file.
            pass
    try:
        df = pd.read_csv(
            path,
            sep=settings.delimiter,
            decimal=settings.decimal,
            usecols=list(usecols),
            dtype={theirs: str for theirs, ours in usecols.items() if ours in ids},
            encoding="utf-8-sig",
        )
    except errors as exc:
        problems.add(name, None, None, None, f"a readable CSV file ({exc})")
        return None
    df = df.rename(columns=usecols)
    for col in ids:
        text = df[col].astype("str").str.strip()
        df[col] = text.where(df[col].notna() & (text != ""))
        if table in CATEGORY_TABLES:
            df[col] = df[col].astype("category")
    return df


def _map_header(
    settings: Settings, table: str, path: Path, problems: ProblemList
) -> dict[str, str] | None:
    """Return {their column: our column} for the columns present, or ``None`` if one is missing."""
    name = settings.files[table]
    mapping = settings.columns[table]
    try:
        header = pd.read_csv(path, sep=settings.delimiter, nrows=0, encoding="utf-8-sig")
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, csv.Error) as exc:
        problems.add(name, 1, None, None, f"a CSV header row ({exc})")
        return None
    present = {str(c).strip(): str(c) for c in header.columns}
    usecols: dict[str, str] = {}
    missing = False
    for ours, required in COLUMNS[table]:
        theirs = mapping[ours]
        if theirs in present:
            usecols[present[theirs]] = ours
        elif required:
            missing = True
            problems.add(
                name,
                1,
                theirs,
                None,
                f"a column '{theirs}' (our '{ours}'); the header has {list(present)}",
            )
    return None if missing else usecols


def _read_arrow(
    path: Path, settings: Settings, usecols: dict[str, str], ids: list[str]
) -> pd.DataFrame:
    """Read a big table with pyarrow's multi-threaded parser, ids dictionary-encoded as read.

    Dictionary encoding while parsing avoids building millions of Python strings; on the forces
    table this is what keeps the readers close to a plain ``pandas.read_csv`` (see
    tests/benchmarks/bench_readers.py).
    """
    dict_type = pa.dictionary(pa.int32(), pa.string())
    their_ids = [theirs for theirs, ours in usecols.items() if ours in ids]
    table = pacsv.read_csv(
        path,
        read_options=pacsv.ReadOptions(block_size=_ARROW_BLOCK, encoding="utf8"),
        parse_options=pacsv.ParseOptions(delimiter=settings.delimiter),
        convert_options=pacsv.ConvertOptions(
            column_types={c: dict_type for c in their_ids},
            include_columns=list(usecols),
            decimal_point=settings.decimal,
        ),
    ).unify_dictionaries()
    data: dict[str, Any] = {}
    for theirs, ours in usecols.items():
        column = table.column(theirs)
        if ours in ids:
            data[ours] = _categorical(column)
        elif pa.types.is_floating(column.type) or pa.types.is_integer(column.type):
            data[ours] = column.to_numpy().astype(np.float64, copy=False)
        else:
            # Not all numbers (text in a number column): keep the text, numeric() reports it.
            data[ours] = pd.Series(column.to_pandas(), copy=False)
    return pd.DataFrame(data)


def _categorical(column: pa.ChunkedArray) -> pd.Categorical:
    """Turn a dictionary-encoded arrow column into a categorical with stripped, non-empty labels."""
    if column.num_chunks == 0:
        return pd.Categorical([])
    dictionary = pd.Index(column.chunk(0).dictionary.to_pylist(), dtype=object)
    codes = np.concatenate(
        [c.indices.to_numpy(zero_copy_only=False) for c in column.chunks]
    ).astype(np.int32, copy=False)
    nulls = column.null_count
    if nulls:
        valid = np.concatenate([c.is_valid().to_numpy(zero_copy_only=False) for c in column.chunks])
        codes = np.where(valid, codes, -1).astype(np.int32)
    labels = dictionary.astype(str).str.strip()
    empty = np.asarray(labels == "")
    # Labels equal after stripping (" B1" and "B1") share one code; blank labels mean "missing".
    uniques, remap = np.unique(np.asarray(labels, dtype=object), return_inverse=True)
    remap = np.where(empty, -1, remap)
    keep = uniques != ""
    renumber = np.cumsum(keep) - 1
    final = np.where(remap >= 0, renumber[np.maximum(remap, 0)], -1).astype(np.int32)
    codes = np.where(codes >= 0, final[np.maximum(codes, 0)], -1).astype(np.int32)
    return pd.Categorical.from_codes(codes, categories=pd.Index(uniques[keep], dtype=object))


def numeric(
    df: pd.DataFrame,
    column: str,
    file: str,
    their_name: str,
    problems: ProblemList,
    *,
    required: bool = True,
) -> pd.Series:
    """Return ``df[column]`` as float64, recording every empty or non-numeric cell.

    Args:
        df: the table (index = record number).
        column: our column name.
        file: the file name for messages.
        their_name: the file's own column name for messages.
        problems: where problems go.
        required: whether an empty cell is a problem (optional columns may have gaps).
    """
    s = df[column]
    if pd.api.types.is_numeric_dtype(s.dtype) and not pd.api.types.is_bool_dtype(s.dtype):
        out = s.astype(np.float64)
        bad_text = np.zeros(len(s), dtype=bool)
    else:
        out = pd.to_numeric(s, errors="coerce").astype(np.float64)
        bad_text = (out.isna() & s.notna()).to_numpy()
    empty = (s.isna()).to_numpy()
    if bad_text.any():
        idx = np.flatnonzero(bad_text)
        problems.add_many(
            file, spreadsheet_rows(df.index[idx]), their_name, s.iloc[idx], "a number"
        )
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
