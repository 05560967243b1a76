"""Reading one CSV table: the user's column names in, ours out; values checked whole-column."""

from __future__ import annotations

import csv
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from flangewise.readers.errors import ProblemList
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
    header = _map_header(settings, table, path, problems)
    if header is None:
        return None
    usecols, width = header
    ids = [ours for ours in usecols.values() if ours in ID_COLUMNS[table]]
    if table in CATEGORY_TABLES:
        # Big table: parse with inferred types (the parser's fast path) and encode ids afterwards;
        # forcing text dtypes while parsing costs several times the whole read.
        dtype = None
    else:
        dtype = {theirs: str for theirs, ours in usecols.items() if ours in ids}
    try:
        df = pd.read_csv(
            path,
            sep=settings.delimiter,
            decimal=settings.decimal,
            # Naming the columns costs the parser its fastest path; only do it when there are
            # columns to skip.
            usecols=list(usecols) if len(usecols) < width else None,
            dtype=dtype,
            encoding="utf-8-sig" if _has_bom(path) else "utf-8",
        )
    except (pd.errors.ParserError, UnicodeDecodeError, csv.Error, ValueError) as exc:
        _unreadable(name, width, settings, exc, problems)
        return None
    df = df.rename(columns=usecols)[list(usecols.values())]
    for col in ids:
        if table in CATEGORY_TABLES:
            df[col] = _categorical(df[col])
        else:
            text = df[col].astype("str").str.strip()
            df[col] = text.where(df[col].notna() & (text != ""))
    return df


def _map_header(
    settings: Settings, table: str, path: Path, problems: ProblemList
) -> tuple[dict[str, str], int] | None:
    """Return ({their column: our column}, number of columns in the file), or ``None``.

    ``None`` when the header cannot be read or a required column is missing (recorded).
    """
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
    return None if missing else (usecols, len(header.columns))


def _unreadable(
    name: str, width: int, settings: Settings, exc: Exception, problems: ProblemList
) -> None:
    """Record why the parser gave up, with the row where it can be found in its message."""
    text = " ".join(str(exc).split())
    ragged = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", text)
    if ragged:
        problems.add(
            name,
            int(ragged.group(2)),
            None,
            f"{ragged.group(3)} fields",
            f"{width} fields as in the header (delimiter '{settings.delimiter}'; a decimal "
            "comma in a comma-delimited file splits numbers: see [csv] in the settings)",
        )
    else:
        problems.add(name, None, None, None, f"a readable CSV file ({text})")


def _has_bom(path: Path) -> bool:
    with path.open("rb") as fh:
        return fh.read(3) == b"\xef\xbb\xbf"


def _categorical(column: pd.Series) -> pd.Categorical:
    """Encode an id column as a categorical with stripped, non-empty text labels.

    Arrow-backed text is dictionary-encoded by pyarrow (no Python string per row); other columns
    (ids the parser took for numbers, object text) go through ``pandas.factorize``. Integral
    numbers get integer labels ("101", not "101.0").
    """
    if isinstance(column.dtype, pd.StringDtype) and column.dtype.storage == "pyarrow":
        encoded = pc.dictionary_encode(pa.array(column.array))
        if isinstance(encoded, pa.ChunkedArray):
            encoded = encoded.combine_chunks()
        codes = pc.fill_null(encoded.indices, -1).to_numpy(zero_copy_only=False)
        uniques = pd.Index(encoded.dictionary.to_pylist(), dtype=object)
    else:
        codes, uniques = pd.factorize(column)
        uniques = pd.Index(uniques)
    if pd.api.types.is_float_dtype(uniques.dtype):
        integral = np.isfinite(uniques) & (uniques == np.round(uniques))
        labels = pd.Index(
            np.where(integral, uniques.astype(np.int64).astype(str), uniques.astype(str)),
            dtype=object,
        )
    else:
        labels = pd.Index(uniques.astype(str).str.strip(), dtype=object)
    codes = np.asarray(codes, dtype=np.int32)
    if labels.is_unique and not (labels == "").any():
        return pd.Categorical.from_codes(codes, categories=labels)
    # Labels equal after stripping (" B1" and "B1") share one code; blank labels mean "missing".
    merged, remap = np.unique(np.asarray(labels, dtype=object), return_inverse=True)
    keep = merged != ""
    renumber = np.where(keep, np.cumsum(keep) - 1, -1)[remap].astype(np.int32)
    codes = np.where(codes >= 0, renumber[np.maximum(codes, 0)], -1).astype(np.int32)
    return pd.Categorical.from_codes(codes, categories=pd.Index(merged[keep], dtype=object))


def numeric(
    df: pd.DataFrame,
    column: str,
    file: str,
    their_name: str,
    problems: ProblemList,
    *,
    required: bool = True,
) -> pd.Series:
    """Return ``df[column]`` as float64, noting every empty or non-numeric cell.

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
