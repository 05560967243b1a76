"""What every table reader shares, CSV or Parquet: column mapping and identifier columns.

The user's column names are mapped onto ours; identifier columns become exact text or
categories.

Identifiers are compared as text exactly as written, blanks around them stripped: "007", "7"
and "7.0" are three ids, "NA" or "null" is a name, and only an empty cell is missing.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from flangewise.readers.errors import ProblemList
from flangewise.readers.settings import COLUMNS, Settings

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

#: Where a reader leaves the cells of numeric columns that hold no finite number, per our
#: column (:class:`flangewise.readers.csv_parse.Unparsed`), in ``DataFrame.attrs``.
UNPARSED_KEY = "flangewise_unparsed"


def map_columns(
    settings: Settings,
    table: str,
    header: list[str],
    problems: ProblemList,
    holder: str = "the header",
) -> dict[int, str] | None:
    """Return {position of the file column: our column}, or ``None`` once the reason is noted.

    Names are compared without surrounding blanks. A mapped name the header holds twice is a
    problem (which one is meant?); unmapped columns may repeat. ``holder`` names what holds the
    column names in messages (a CSV file's header, a Parquet file's columns).
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
                f"the column '{theirs.strip()}' once {key}; {holder} has it in columns "
                f"{places} (rename the others)",
            )
        elif found:
            mapped[found[0]] = ours
        elif required:
            ok = False
            problems.add(name, 1, theirs, None, f"a column '{theirs}' {key}; {holder} has {names}")
    return mapped if ok else None


def finite_everywhere(values: np.ndarray) -> bool:
    """Whether every value is a finite number (no NaN: no empty or unparsed cell; no infinity).

    A finite sum proves it in one pass without a temporary array; a sum that overflows (huge but
    finite values) answers no, and the caller takes the long way.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        return bool(np.isfinite(values.sum()))


def text_ids(col: pa.ChunkedArray) -> tuple[pd.Series, np.ndarray]:
    """Return an id column as object text, blanks stripped, empty cells missing; and the empties.

    ``col`` holds text, or a dictionary of text; a missing value (a Parquet null) is empty.
    """
    if pa.types.is_dictionary(col.type):
        col = col.cast(col.type.value_type)
    stripped = pc.fill_null(pc.utf8_trim_whitespace(col), "")
    empty = pc.equal(stripped, "").to_numpy(zero_copy_only=False)
    values = stripped.to_numpy(zero_copy_only=False)
    values[empty] = None
    return pd.Series(values, dtype=object), empty


def categorical(
    col: pa.ChunkedArray, by_appearance: bool = False
) -> tuple[pd.Categorical, np.ndarray]:
    """Encode an id column as a categorical of stripped, non-empty labels; and the empties.

    ``col`` holds text or a dictionary of text (the CSV parser encodes big tables' ids as it
    reads them). Only the dictionary (one entry per distinct text) is stripped and compared: no
    Python string per row. Labels equal after stripping (" B1" and "B1") share one code; a blank
    one is missing, like a missing value. Categories keep the order in which the file first
    names them (the order of load combinations in the results).

    Args:
        col: the column.
        by_appearance: whether the dictionaries may hold values no row uses, or hold them in
            another order than the rows first name them (a Parquet file's own dictionaries, or
            the values of a folder's key=value names); such categories are dropped and the
            others put in the order of first appearance. The CSV parser's dictionaries already
            are.
    """
    if not pa.types.is_dictionary(col.type):
        col = pc.dictionary_encode(col)
    col = col.unify_dictionaries()
    if col.num_chunks == 0:
        codes = np.zeros(0, dtype=np.int32)
        labels = np.zeros(0, dtype=object)
    else:
        indices = pa.chunked_array([c.indices for c in col.chunks], type=col.type.index_type)
        if indices.null_count:
            indices = pc.fill_null(indices, -1)
        codes = np.asarray(indices.to_numpy(), dtype=np.int32)
        dictionary = pc.fill_null(col.chunk(0).dictionary, "")
        labels = np.asarray(pc.utf8_trim_whitespace(dictionary).to_pylist(), dtype=object)
        if by_appearance:
            codes, labels = _by_appearance(codes, labels)
    if len(set(labels.tolist())) == len(labels) and not (labels == "").any():
        cat = pd.Categorical.from_codes(
            codes, categories=pd.Index(labels, dtype=object), validate=False
        )
        return cat, codes < 0
    # Labels equal once stripped share one code; first appearances keep their order.
    remap, merged = pd.factorize(labels)
    merged = np.asarray(merged, dtype=object)
    keep = merged != ""
    renumber = np.where(keep, np.cumsum(keep) - 1, -1)[remap].astype(np.int32)
    codes = np.where(codes >= 0, renumber[np.maximum(codes, 0)], -1).astype(np.int32)
    cat = pd.Categorical.from_codes(codes, categories=pd.Index(merged[keep], dtype=object))
    return cat, codes < 0


def _by_appearance(codes: np.ndarray, labels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Keep only the labels some row uses, in the order the rows first use them.

    Only the first row of each run of equal codes can be a first use: rows come grouped (by
    element, by combination), so the ordered unique pass looks at few rows.
    """
    if len(codes) == 0:
        return codes, labels[:0]
    heads = codes[np.concatenate([[0], np.flatnonzero(np.diff(codes)) + 1])]
    order = pd.unique(heads)
    order = order[order >= 0]
    if len(order) == len(labels) and (order == np.arange(len(labels))).all():
        return codes, labels
    renumber = np.full(len(labels) + 1, -1, dtype=np.int32)  # the last entry keeps -1 at -1
    renumber[order] = np.arange(len(order), dtype=np.int32)
    return renumber[codes], labels[order]
