"""Reading one CSV table: the user's column names in, ours out; values checked whole-column."""

from __future__ import annotations

import csv
from importlib.util import find_spec
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

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

_HAS_PYARROW = find_spec("pyarrow") is not None


def spreadsheet_rows(index: pd.Index | np.ndarray) -> np.ndarray:
    """Return spreadsheet row numbers for record labels (header = row 1, first record = row 2)."""
    return np.asarray(index, dtype=np.int64) + 2


def _engine(settings: Settings) -> str:
    # pyarrow's parser reads on both cores and is several times faster on the forces table; it has
    # no decimal-comma option, so such files go through pandas' own C parser.
    return "pyarrow" if _HAS_PYARROW and settings.decimal == "." else "c"


def read_table(settings: Settings, table: str, problems: ProblemList) -> pd.DataFrame | None:
    """Read one table into our column names, or record why it cannot be read.

    Identifier columns come back as text (or categories for the forces table), stripped of
    surrounding blanks; other columns as the parser found them (numbers are checked by
    :func:`numeric`). The index holds the record number (0 for the first data row).

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
    mapping = settings.columns[table]
    try:
        header = pd.read_csv(path, sep=settings.delimiter, nrows=0, encoding="utf-8-sig")
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, csv.Error) as exc:
        problems.add(name, 1, None, None, f"a CSV header row ({exc})")
        return None
    present = {str(c).strip(): c for c in header.columns}
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
    if missing:
        return None
    ids = set(ID_COLUMNS[table])
    id_kind: str | type[str] = "category" if table in CATEGORY_TABLES else str
    dtype: dict[str, Any] = {theirs: id_kind for theirs, ours in usecols.items() if ours in ids}
    engine = _engine(settings)
    try:
        df = _parse(path, settings, list(usecols), dtype, engine)
    except (pd.errors.ParserError, UnicodeDecodeError, csv.Error, ValueError) as exc:
        df = None
        error = exc
    if df is None and engine == "pyarrow":
        # The fast parser rejects some files the C parser reads (ragged quoting, odd bytes);
        # retry with that one rather than refuse a usable file.
        try:
            df = _parse(path, settings, list(usecols), dtype, "c")
        except (pd.errors.ParserError, UnicodeDecodeError, csv.Error, ValueError) as exc:
            error = exc
    if df is None:
        problems.add(name, None, None, None, f"a readable CSV file ({error})")
        return None
    return _finish(df.rename(columns=usecols), ids)


def _parse(
    path: Path, settings: Settings, usecols: list[str], dtype: dict[str, Any], engine: str
) -> pd.DataFrame:
    return pd.read_csv(  # type: ignore[call-overload, no-any-return]
        path,
        sep=settings.delimiter,
        decimal=settings.decimal,
        usecols=usecols,
        dtype=dtype,
        encoding="utf-8-sig",
        engine=engine,
    )


def _finish(df: pd.DataFrame, ids: set[str]) -> pd.DataFrame:
    for col in df.columns:
        if col not in ids:
            continue
        s = df[col]
        if isinstance(s.dtype, pd.CategoricalDtype):
            cats = s.cat.categories.astype(str).str.strip()
            if cats.has_duplicates:
                s = s.astype(str).str.strip().astype("category")
            else:
                s = s.cat.rename_categories(list(cats))
            df[col] = s
        else:
            df[col] = s.astype("str").str.strip().where(s.notna())
    return df


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
