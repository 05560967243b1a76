"""Stations along the elements: where each force row lies, and a station at each element end.

Positions are checked against their element, converted to mm and snapped onto the ends; then
every element needs a station at each end in every combination that has it.

This runs over every force row (millions): each step is one vectorized pass, per-element values
are computed once per element and gathered, and the end stations are counted with one
``np.bincount`` over a dense (element, combination, place) key, with no sort and no group-by.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pandas as pd
from flangewise.readers import units
from flangewise.readers.csv_parse import cell_text
from flangewise.readers.errors import ProblemList
from flangewise.readers.model import (
    POSITION_TOLERANCE,
    POSITION_TOLERANCE_MM,
    position_tolerance,
)
from flangewise.readers.settings import Settings
from flangewise.readers.tables import MAX_LISTED, spreadsheet_rows

#: Where a row's station lies on its element (the last digit of the counting key).
INSIDE, AT_START, AT_END = 0, 1, 2
PLACES = 3

#: Rows per block of the row-wise passes: a block's temporaries stay in the CPU's cache, which
#: makes the dozen passes over millions of rows several times faster than whole-column ones.
BLOCK = 1 << 17


def station_positions(
    df: pd.DataFrame,
    pos_written: np.ndarray,
    ecode: np.ndarray,
    broken: np.ndarray,
    elements: pd.DataFrame,
    settings: Settings,
    file: str,
    problems: ProblemList,
) -> np.ndarray:
    """Return each force row's position in mm from its element's start, snapped onto the ends.

    Positions outside their element are reported; then every element's stations are checked
    (:func:`station_checks`), except those of elements that already have a problem.

    Args:
        df: the forces table.
        pos_written: the positions as read (file units, or fractions of the length).
        ecode: per row, the element's row number in ``elements`` (-1: unknown element).
        broken: per element, whether it has a problem its forces depend on.
        elements: the elements table (``length`` in mm).
        settings: the settings (positions as distances or fractions, the length unit).
        file: the forces file's name.
        problems: where problems go.
    """
    col = lambda ours: settings.columns["forces"][ours]  # noqa: E731
    # Per element, and a last entry for the code -1 of an unknown element: the length, NaN where
    # the element already has a problem (its rows get no length: no follow-on problems).
    lengths = np.append(
        np.where(broken, np.nan, elements["length"].to_numpy(dtype=np.float64)), np.nan
    )
    length_unit = settings.units.length
    if settings.positions == "fraction":
        scale = None
        given_as = "a fraction from 0 to 1 of the element's length"
    else:
        scale = units.factor("length", length_unit)
        given_as = f"a distance from 0 to the element's length ({length_unit})"
    ccode = df["combination"].cat.codes.to_numpy()
    ncomb = len(df["combination"].cat.categories)
    n = len(ecode)
    pos = np.empty(n)
    outside = np.empty(n, dtype=bool)
    skip = len(elements) * ncomb * PLACES  # the counting key of a row not counted
    key = np.empty(n, dtype=np.int32 if skip < np.iinfo(np.int32).max else np.int64)
    # Whether any row may go uncounted (an unknown or broken element, no combination).
    gaps = bool(np.isnan(lengths[:-1]).any() or (n and (ecode.min() < 0 or ccode.min() < 0)))

    def place(lo: int) -> None:
        hi = min(lo + BLOCK, n)
        _place(
            pos_written[lo:hi],
            ecode[lo:hi],
            ccode[lo:hi],
            lengths,
            scale,
            ncomb,
            skip if gaps else None,
            pos[lo:hi],
            outside[lo:hi],
            key[lo:hi],
        )

    starts = range(0, n, BLOCK)
    workers = min(len(starts), os.cpu_count() or 1)
    if workers > 1:
        # numpy lets go of the GIL inside each pass: blocks are placed side by side.
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(place, starts))
    else:
        for lo in starts:
            place(lo)
    if outside.any():
        rows = spreadsheet_rows(df.index[outside])
        problems.add_many(file, rows, col("position"), cell_text(df, "position", outside), given_as)
    # An element with a bad position row (reported above or where read) may lack an end station
    # because of it: its stations are not checked further.
    checked = np.isfinite(lengths[:-1])
    with np.errstate(over="ignore", invalid="ignore"):
        nonfinite = not np.isfinite(pos.sum())
    if nonfinite or outside.any():
        bad_row = np.isfinite(lengths[ecode]) & (outside | ~np.isfinite(pos))
        checked &= np.bincount(ecode[bad_row], minlength=len(elements)) == 0
    station_checks(
        key, skip, checked, pos_written, df, elements, settings, file, col("element"), problems
    )
    return pos


def _place(
    written: np.ndarray,
    ecode: np.ndarray,
    ccode: np.ndarray,
    lengths: np.ndarray,
    scale: float | None,
    ncomb: int,
    skip: int | None,
    pos: np.ndarray,
    outside: np.ndarray,
    key: np.ndarray,
) -> None:
    """Place one block of force rows on their elements, filling ``pos``, ``outside`` and ``key``.

    Args:
        written: the positions as read.
        ecode: element row numbers (-1: unknown element).
        ccode: combination codes (-1: none).
        lengths: per element and one more (NaN) for the code -1: the length [mm], NaN where the
            element's rows are not placed.
        scale: the factor from the file's length unit to mm, ``None`` for fractions.
        ncomb: the number of combinations.
        skip: the counting key of a row not counted (no length, or no combination); ``None``
            when every row is counted.
        pos: out: the position [mm], snapped onto an end within the tolerance.
        outside: out: whether the position lies beyond an end by more than the tolerance.
        key: out: the counting key ``(e * ncomb + c) * PLACES + place``, or ``skip``.
    """
    length = lengths.take(ecode)  # -1 takes the last entry, NaN
    tol = position_tolerance(length)  # NaN where the length is
    with np.errstate(over="ignore", invalid="ignore"):
        np.multiply(written, length if scale is None else scale, out=pos)
        # Every comparison is False where the length is NaN.
        np.logical_or(pos < -tol, pos > length + tol, out=outside)
        at_start = pos <= tol
        at_end = pos >= length - tol
    # Within the tolerance of an end a station is that end, exactly: element ends then land on
    # the member's node positions, and every element has its end stations (checked below). The
    # start wins where both hold (an element shorter than twice the tolerance).
    np.copyto(pos, length, where=at_end)
    np.copyto(pos, 0.0, where=at_start)
    np.multiply(ecode, key.dtype.type(ncomb * PLACES), out=key)
    key += ccode * key.dtype.type(PLACES)
    key += at_start
    key += (at_end & ~at_start) * np.int8(AT_END)
    if skip is not None:
        gone = np.isnan(length) | (ccode < 0)
        key[gone] = skip


def station_checks(
    key: np.ndarray,
    skip: int,
    checked: np.ndarray,
    written: np.ndarray,
    forces: pd.DataFrame,
    elements: pd.DataFrame,
    settings: Settings,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record elements without a station at each end in a combination, or missing from one.

    Positions are already snapped onto the ends within the tolerance. Only rows of ``checked``
    elements count. One problem per element, at the first pair that fails, quoting its first
    and last positions as ``forces`` (the table) wrote them.

    Args:
        key: per row, ``(e * ncomb + c) * PLACES + place``, where ``place`` is :data:`INSIDE`,
            :data:`AT_START` or :data:`AT_END`; ``skip`` for a row not counted.
        skip: the key of a row not counted (``n_el * ncomb * PLACES``).
        checked: per element, whether its stations are checked.
        written: per row, the position as read (for the first and last positions).
        forces: the forces table (index = record number).
        elements: the elements table.
        settings: the settings (how positions are given, for the expectation).
        file: the forces file's name.
        element_col: the file's own element column name.
        problems: where problems go.
    """
    combos = forces["combination"].cat.categories
    ncomb, n_el = len(combos), len(elements)
    if ncomb == 0 or n_el == 0:
        return
    found = _pairs(key, skip, checked, ncomb)
    if found is None:
        return
    pair, places = found
    el_of = pair // ncomb
    failing = pair[~places[:, AT_START] | ~places[:, AT_END]]
    if len(failing):
        _no_end_station(
            failing, key, written, forces, elements, settings, file, element_col, problems
        )
    _missing_combinations(pair, el_of, n_el, ncomb, elements, combos, file, element_col, problems)


def _pairs(
    key: np.ndarray, skip: int, checked: np.ndarray, ncomb: int
) -> tuple[np.ndarray, np.ndarray] | None:
    """Return the pairs of checked elements having rows, and per pair where it has rows.

    Pairs are (element, combination) keys ``e * ncomb + c``, ascending; the places (shape
    (pairs, 3)) say whether the pair has a row inside, at the start and at the end. ``None``
    when nothing fails: every checked element has a station at each end in every combination,
    or has no rows at all.

    Marked densely with one scatter when the pairs fit in a few times the rows (every valid
    table: each element in every combination); else (a table naming, say, a new combination on
    each row) by sorting, so that memory stays bounded by the rows.
    """
    if skip <= 4 * len(key) + 4096:
        seen = np.zeros(skip + 1, dtype=bool)
        seen[key] = True
        flat = seen[:skip].reshape(-1, ncomb, PLACES)
        start, end = flat[..., AT_START], flat[..., AT_END]
        present = (flat[..., INSIDE] | start | end) & checked[:, None]
        # The usual case, settled on the dense table: no present pair lacks an end station, and
        # each element has rows in every combination or in none.
        whole = present.all(axis=1) | ~present.any(axis=1)
        if whole.all() and not (present & ~(start & end)).any():
            return None
        pair = np.flatnonzero(present)
        return pair, flat.reshape(-1, PLACES)[pair]
    found = np.unique(key[key != skip])
    pair, at = np.unique(found // PLACES, return_inverse=True)
    places = np.zeros((len(pair), PLACES), dtype=bool)
    places[at, found % PLACES] = True
    mine = checked[pair // ncomb]
    return pair[mine], places[mine]


def _no_end_station(
    failing: np.ndarray,
    key: np.ndarray,
    written: np.ndarray,
    forces: pd.DataFrame,
    elements: pd.DataFrame,
    settings: Settings,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record, per element, its first pair without a station at each end (the others counted)."""
    combos = forces["combination"].cat.categories
    ncomb = len(combos)
    length = elements["length"].to_numpy()
    ids = elements.index.to_numpy()
    el_of, first_of, n_of = np.unique(failing // ncomb, return_index=True, return_counts=True)
    listed = failing[first_of[:MAX_LISTED]]
    pair_of = key // PLACES  # a row not counted gets a pair past every real one
    hit = np.flatnonzero(np.isin(pair_of, listed))
    found = (
        pd.DataFrame(
            {"key": pair_of[hit], "row": spreadsheet_rows(forces.index[hit]), "pos": written[hit]}
        )
        .groupby("key")
        .agg(row=("row", "min"), lo=("pos", "idxmin"), hi=("pos", "idxmax"), n=("pos", "size"))
    )
    # The first and last positions of each pair, quoted as written ("0.40", not 0.4).
    lo_at, hi_at = hit[found["lo"].to_numpy()], hit[found["hi"].to_numpy()]
    texts = cell_text(forces, "position", np.concatenate([lo_at, hi_at]), limit=2 * len(found))
    found["lo_text"] = texts[: len(found)]
    found["hi_text"] = texts[len(found) :]
    found["same"] = written[lo_at] == written[hi_at]
    if settings.positions == "fraction":
        ends = "0 and 1 as fractions of its length"
    else:
        f = units.factor("length", settings.units.length)
    for k, others in zip(listed.tolist(), n_of[:MAX_LISTED].tolist(), strict=True):
        e, c = divmod(k, ncomb)
        rec = found.loc[k]
        if settings.positions != "fraction":
            ends = f"0 and {length[e] / f:g} {settings.units.length}"
        also = f" (and {others - 1} more combination(s) like it)" if others > 1 else ""
        lo, hi = rec["lo_text"].strip(), rec["hi_text"].strip()
        what = (
            f"only position {lo}"
            if rec["same"]
            else f"positions from {lo} to {hi} ({int(rec['n'])} rows)"
        )
        problems.add(
            file,
            int(rec["row"]),
            element_col,
            ids[e],
            f"a station at each end of the element ({ends}, within "
            f"{POSITION_TOLERANCE:.1%} of its length and at least {POSITION_TOLERANCE_MM:g} "
            f"mm) in combination '{combos[c]}', which has {what}{also}",
        )
    problems.more += max(0, len(el_of) - MAX_LISTED)


def _missing_combinations(
    pair: np.ndarray,
    el_of: np.ndarray,
    n_el: int,
    ncomb: int,
    elements: pd.DataFrame,
    combos: pd.Index,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record each (element, combination) without rows where the element has rows in others.

    ``pair`` holds the pairs having rows (ascending keys ``e * ncomb + c``), ``el_of`` their
    elements.
    """
    present = np.bincount(el_of, minlength=n_el)
    lacking = np.where(present > 0, ncomb - present, 0)
    total = int(lacking.sum())
    if total == 0:
        return
    ids = elements.index.to_numpy()
    listed = 0
    # Pairs are sorted by key, so each element's combinations are one slice of ``pair``.
    for e in np.flatnonzero(lacking).tolist():
        lo, hi = np.searchsorted(el_of, [e, e + 1])
        has = np.zeros(ncomb, dtype=bool)
        has[pair[lo:hi] - e * ncomb] = True
        for c in np.flatnonzero(~has)[: MAX_LISTED - listed].tolist():
            problems.add(
                file,
                None,
                element_col,
                ids[e],
                f"rows for combination '{combos[c]}', which other elements have",
            )
            listed += 1
        if listed >= MAX_LISTED:
            break
    problems.more += total - listed
