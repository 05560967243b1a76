"""Stations along the elements: where each force row lies, and a station at each element end.

Positions are checked against their element, converted to mm and snapped onto the ends; then
every element needs a station at each end in every combination that has it.
"""

from __future__ import annotations

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
    rows_of = lambda mask: spreadsheet_rows(df.index[mask])  # noqa: E731
    # Rows of an element that already has a problem get no length: no follow-on problems.
    usable = np.append(~broken, False)[ecode]
    length = np.where(usable, np.append(elements["length"].to_numpy(), np.nan)[ecode], np.nan)
    length_unit = settings.units.length
    with np.errstate(over="ignore", invalid="ignore"):
        if settings.positions == "fraction":
            pos = pos_written * length
            given_as = "a fraction from 0 to 1 of the element's length"
        else:
            pos = pos_written * units.factor("length", length_unit)
            given_as = f"a distance from 0 to the element's length ({length_unit})"
    tol = position_tolerance(length)
    with np.errstate(invalid="ignore"):
        outside = (pos < -tol) | (pos > length + tol)  # False where length is NaN
    if outside.any():
        problems.add_many(
            file, rows_of(outside), col("position"), cell_text(df, "position", outside), given_as
        )
    # Within the tolerance of an end a station is that end, exactly: element ends then land on
    # the member's node positions, and every element has its end stations (checked below).
    with np.errstate(invalid="ignore"):
        pos = np.where(pos <= tol, 0.0, np.where(pos >= length - tol, length, pos))

    ccode = df["combination"].cat.codes.to_numpy()
    # An element with a bad position row (reported above) may lack an end station because of it:
    # its stations are not checked further.
    bad_row = usable & (outside | ~np.isfinite(pos))
    spoilt = np.append(np.bincount(ecode[bad_row], minlength=len(elements)) > 0, True)
    good = usable & (ccode >= 0) & ~spoilt[ecode]
    everything = bool(good.all())
    station_checks(
        ecode if everything else ecode[good],
        ccode if everything else ccode[good],
        pos if everything else pos[good],
        pos_written if everything else pos_written[good],
        df.index if everything else df.index[good],
        df,
        elements,
        df["combination"],
        settings,
        file,
        col("element"),
        problems,
    )
    return pos


def station_checks(
    ecode: np.ndarray,
    ccode: np.ndarray,
    pos: np.ndarray,
    written: np.ndarray,
    records: pd.Index,
    forces: pd.DataFrame,
    elements: pd.DataFrame,
    combos: pd.Series,
    settings: Settings,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record elements without a station at each end in a combination, or missing from one.

    Positions are already snapped onto the ends within the tolerance, so "a station at the start"
    is ``pos == 0`` and "at the end" is ``pos == length``. Counted with ``np.bincount`` over a
    dense (element, combination) key: one pass per statistic, no sort and no group-by, which
    matters at millions of rows. One problem per element, at the first pair that fails, quoting
    its first and last positions as ``forces`` (the table) wrote them.
    """
    if len(ecode) == 0:
        return
    cats = combos.cat.categories
    ncomb = len(cats)
    n_el = len(elements)
    size = n_el * ncomb
    key = ecode.astype(np.int64) * ncomb + ccode.astype(np.int64)
    length = elements["length"].to_numpy()
    count = np.bincount(key, minlength=size)
    at_start = np.bincount(key, weights=pos == 0.0, minlength=size)
    at_end = np.bincount(key, weights=pos == length[ecode], minlength=size)
    failing = np.flatnonzero((count > 0) & ((at_start == 0) | (at_end == 0)))
    ids = elements.index.to_numpy()
    if len(failing):
        # One problem per element: its first failing combination, with a count of the others.
        el_of, first_of, n_of = np.unique(failing // ncomb, return_index=True, return_counts=True)
        listed = failing[first_of[:MAX_LISTED]]
        hit = np.isin(key, listed)
        found = (
            pd.DataFrame(
                {"key": key[hit], "row": spreadsheet_rows(records[hit]), "pos": written[hit]}
            )
            .groupby("key")
            .agg(row=("row", "min"), lo=("pos", "idxmin"), hi=("pos", "idxmax"), n=("pos", "size"))
        )
        # The first and last positions of each pair, quoted as written ("0.40", not 0.4).
        at = forces.index.get_indexer(records[hit])
        lo_at, hi_at = found["lo"].to_numpy(), found["hi"].to_numpy()
        ends_at = np.concatenate([at[lo_at], at[hi_at]])
        texts = cell_text(forces, "position", ends_at, limit=len(ends_at))
        found["lo_text"] = texts[: len(found)]
        found["hi_text"] = texts[len(found) :]
        found["same"] = written[hit][lo_at] == written[hit][hi_at]
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
                f"mm) in combination '{cats[c]}', which has {what}{also}",
            )
        problems.more += max(0, len(el_of) - MAX_LISTED)
    present = (count > 0).reshape(n_el, ncomb)
    used = np.asarray(present.any(axis=1))
    missing = np.argwhere(~present & used[:, None])
    for e, c in missing[:MAX_LISTED].tolist():
        problems.add(
            file,
            None,
            element_col,
            ids[e],
            f"rows for combination '{cats[c]}', which other elements have",
        )
    problems.more += max(0, len(missing) - MAX_LISTED)
