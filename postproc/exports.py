"""Result tables for people: engineer's units in the column names, governing rows, a summary."""

from __future__ import annotations

import dataclasses
import json
import os
import shutil
import tempfile
from collections.abc import Callable, Sequence
from concurrent.futures import ThreadPoolExecutor
from importlib.metadata import version
from pathlib import Path
from typing import IO, Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
from flangewise.engine.buckling import EXACT_NOTES
from flangewise.engine.check import EXACT_MARGIN, CheckResult
from flangewise.engine.flags import FLAGS
from flangewise.postproc.full_table import write_parquet
from flangewise.postproc.shown_units import BY_SYSTEM, SI, ShownUnits

CAUTION = (
    "CAUTION: results are an aid to design, not a design. They must be verified by a competent "
    "engineer; the local design code and licensed practice govern."
)

#: Result files written by a check of a model of ordinary size, in the order they are written (a
#: large one writes its full table as segments.parquet: see :mod:`postproc.full_table`).
RESULT_FILES = ("segments.csv", "governing.csv", "flagged.csv", "summary.json")

#: Every file name a check may write into its output folder. A run removes those it did not
#: write this time, so the folder never mixes one run's files with an earlier run's.
OUR_FILES = (*RESULT_FILES, "segments.parquet", "report.html")

#: Flags that change no number of the check: they inform, and stay in the full table's ``flags``
#: column. ``flagged.csv`` and the report's sections are for the flags that change a result or
#: question it.
INFORMATIVE = ("sign-change", "not-end-moments")

METHOD_WORDS = {
    "end_moment": "end-moment ω2 (SANS 10162-1 cl. 13.6(a))",
    "quarter_point": "quarter-point ω2 (CSA S16-14 cl. 13.6(a)(ii))",
    "cb": "Cb (AISC 360-16 Eq. F1-1)",
    "exact": "exact factor: Mcr from a rational elastic buckling analysis of each segment's own "
    "moment diagram (Vlasov beam theory, fork supports), not a code formula; its acceptance as a "
    "design basis is for the engineer and the local design code to confirm",
}

#: Status words of the pairs whose utilization was worked out.
CHECKED = ("ok", "over", "verify length")

#: How the worst pair (and each member's governing pair) is chosen among equals.
WORST_RULE = (
    "highest utilization; among equal utilizations, the member first in natural order (M2 before "
    "M10), then the segment first in natural order, then the load combination first in the model"
)

#: Signed end moments: the header says which sign is which (the segment's own flange; an
#: "either" segment of a steep member keeps the model's sign, + compressing the top flange).
SIGN = "+ compresses segment's flange, top if either"


def m_start_header(units: ShownUnits) -> str:
    """The signed start moment's header: its unit and which sign is which."""
    return f"M start [{units.moment}, {SIGN}]"


def m_end_header(units: ShownUnits) -> str:
    """The signed end moment's header: its unit and which sign is which."""
    return f"M end [{units.moment}, {SIGN}]"


M_START = m_start_header(SI)
M_END = m_end_header(SI)

#: The axial force column's header: the largest |N| of the pair ÷ the squash load.
AXIAL = "|N|/(A·fy)"

#: The share of |M|max column's header: a dimensionless share, named for what it divides by.
DEPARTURE = "departure from line [share of |M| max]"


def segment_table(result: CheckResult, units: ShownUnits = SI) -> pd.DataFrame:
    """Every (segment, combination) pair with all the numbers, in ``units``.

    Every header carries its unit (``Mr [kip·ft]``); dimensionless columns carry none.
    """
    r = result.results
    k = r["segment_row"].to_numpy()
    table = result.layout.segments.table
    nodes = pd.Categorical(table["node_start"].to_numpy())
    nodes_end = pd.Categorical(table["node_end"].to_numpy())
    per_m, per_l = units.moment_nmm, units.length_mm  # internal units per shown unit
    lu, mu = units.length, units.moment  # unit names in the headers
    return pd.DataFrame(
        {
            "member": r["member"].array,
            "segment": r["segment"].array,
            "flange": r["flange"].array,
            "combination": r["combination"].array,
            "section": r["section"].array,
            "class": r["section_class"].to_numpy(),
            "from node": pd.Categorical.from_codes(nodes.codes[k], nodes.categories),
            "to node": pd.Categorical.from_codes(nodes_end.codes[k], nodes_end.categories),
            f"start [{lu}]": table["s_start"].to_numpy()[k] / per_l,
            f"end [{lu}]": table["s_end"].to_numpy()[k] / per_l,
            f"Lu [{lu}]": r["length"].to_numpy() / per_l,
            m_start_header(units): r["M_start"].to_numpy() / per_m + 0.0,
            m_end_header(units): r["M_end"].to_numpy() / per_m + 0.0,
            f"|M| max [{mu}]": r["M_max"].to_numpy() / per_m,
            f"|M| larger end [{mu}]": np.maximum(
                np.abs(r["M_start"]), np.abs(r["M_end"])
            ).to_numpy()
            / per_m,
            f"|M| inside peak [{mu}]": r["inside_peak"].to_numpy() / per_m,
            f"inside peak at [{lu}]": r["inside_peak_at"].to_numpy() / per_l,
            f"|M| L/4 [{mu}]": r["M_a"].to_numpy() / per_m,
            f"|M| L/2 [{mu}]": r["M_b"].to_numpy() / per_m,
            f"|M| 3L/4 [{mu}]": r["M_c"].to_numpy() / per_m,
            "κ": r["kappa"].to_numpy(),
            "ω2 end-moment": r["omega2_end"].to_numpy(),
            "ω2 quarter-point": r["omega2_qp"].to_numpy(),
            "Cb": r["cb"].to_numpy(),
            "exact factor": r["exact_factor"].to_numpy(),
            DEPARTURE: r["line_departure"].to_numpy(),
            "jump inside": pd.Categorical.from_codes(
                r["inside_jump"].to_numpy().astype(np.int8), categories=pd.Index(["no", "yes"])
            ),
            "basis": r["method"].array,
            "factor basis": r["factor_basis"].to_numpy(),
            "factor used": r["factor"].to_numpy(),
            f"Mcr [{mu}]": r["Mcr"].to_numpy() / per_m,
            f"Mcr exact [{mu}]": r["Mcr_exact"].to_numpy() / per_m,
            f"Mp or My [{mu}]": r["M_base"].to_numpy() / per_m,
            f"Mr [{mu}]": r["Mr"].to_numpy() / per_m,
            f"Mr exact [{mu}]": r["Mr_exact"].to_numpy() / per_m,
            f"demand [{mu}]": r["demand"].to_numpy() / per_m,
            AXIAL: r["axial_share"].to_numpy(),
            "utilization": r["utilization"].to_numpy(),
            "utilization exact": r["utilization_exact"].to_numpy(),
            "status": r["status"].array,
            "flags": r["flags"].array,
            "exact note": r["exact_note"].array,
        }
    )


def reading_columns(units: ShownUnits) -> list[str]:
    """The columns a reviewer reads first: which pair, its diagram's ends, factor and result.

    ``flagged.csv`` of a run whose full table is Parquet holds only these (every number of those
    pairs is in the Parquet file); a CSV a person reads stays narrow enough to read.
    """
    return [
        "member",
        "segment",
        "flange",
        "combination",
        "from node",
        "to node",
        f"Lu [{units.length}]",
        m_start_header(units),
        m_end_header(units),
        f"|M| max [{units.moment}]",
        "factor used",
        "exact factor",
        f"Mr [{units.moment}]",
        f"demand [{units.moment}]",
        "utilization",
        "status",
        "flags",
    ]


def select_members(result: CheckResult, members: Sequence[str]) -> CheckResult:
    """The results of ``members`` only: what every output of a ``--member`` run describes."""
    r = result.results
    keep = r["member"].isin(list(members)).to_numpy()
    return dataclasses.replace(result, results=r[keep])


def natural_rank(names: Sequence[str] | pd.Index) -> np.ndarray:
    """Rank of each name in natural order: M2 before M10, M4-top-2 before M4-top-10.

    Each name is split into runs of text and runs of digits; runs of text compare as text, runs
    of digits as numbers, and a name that ends sooner comes first (M4 before M4-top-1). Names
    equal in that order (M07 and M7) fall back to plain text order, so the ranks are a strict
    order. Vectorized over the distinct names (a table's categories), not its rows.

    Returns:
        int64 ranks 0..n-1, one per name, in the order given.
    """
    text = pd.Series(np.asarray(names, dtype=object), dtype=object).astype(str)
    if text.empty:
        return np.zeros(0, dtype=np.int64)
    parts = text.str.split(r"(\d+)", regex=True, expand=True)
    keys = []
    for i, column in enumerate(parts.columns):
        part = parts[column]
        if i % 2:  # digits: compared as numbers; a missing run sorts before any number
            keys.append(pd.to_numeric(part, errors="coerce").fillna(-1.0).to_numpy(np.float64))
        else:  # text: compared as text; a missing run is "" and sorts first
            keys.append(pd.factorize(part.fillna(""), sort=True)[0])
    keys.append(pd.factorize(text, sort=True)[0])
    order = np.lexsort(keys[::-1])  # lexsort's last key is the primary one
    rank = np.empty(len(text), dtype=np.int64)
    rank[order] = np.arange(len(text), dtype=np.int64)
    return rank


def _rank_of(column: pd.Series) -> np.ndarray:
    """Per row, the natural rank of its text (through the categories when there are).

    Only the categories the rows use are ranked: a few tied rows of a large table do not pay
    for ranking every name of the model.
    """
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = column.cat.codes.to_numpy()
        used, inverse = np.unique(codes, return_inverse=True)
        ranks = natural_rank(column.cat.categories[np.maximum(used, 0)])
        return np.where(codes >= 0, ranks[inverse.reshape(-1)], -1)
    values = column.astype(str).to_numpy()
    unique, inverse = np.unique(values, return_inverse=True)
    return natural_rank(unique)[inverse]


def _file_order(column: pd.Series) -> np.ndarray:
    """Per row, the combination's place in the model (its category code), else text order."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        return column.cat.codes.to_numpy()
    return pd.factorize(column.astype(str), sort=True)[0]


def worst_order(segments: pd.DataFrame) -> np.ndarray:
    """Row positions from worst to least: the stated tie-break of every "worst" and "governing".

    Highest utilization first (missing ones last), then members in natural order, then segments
    in natural order, then load combinations in the order the model gives them.
    """
    util = segments["utilization"].to_numpy(dtype=np.float64)
    return np.lexsort(
        (
            _file_order(segments["combination"]),
            _rank_of(segments["segment"]),
            _rank_of(segments["member"]),
            -np.nan_to_num(util, nan=-np.inf),
        )
    )


def worst_row(segments: pd.DataFrame, among: np.ndarray) -> int:
    """Position of the worst row of those ``among`` marks, by :func:`worst_order`'s tie-break.

    Only the rows at the highest utilization are ordered (usually one), not the whole table.
    """
    util = np.where(among, segments["utilization"].to_numpy(dtype=np.float64), np.nan)
    finite = np.isfinite(util)
    if finite.any():
        tied = np.flatnonzero(finite & (util == np.nanmax(util)))
    else:
        tied = np.flatnonzero(among)
    return int(tied[worst_order(segments.iloc[tied])[0]])


def _names_present(column: pd.Series) -> set[str]:
    """The distinct names of a column, through its categories when it has them."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = np.unique(column.cat.codes.to_numpy())
        return set(column.cat.categories[codes[codes >= 0]].astype(str))
    return set(pd.unique(column.astype(str)))


def governing_table(segments: pd.DataFrame) -> pd.DataFrame:
    """The governing row of each member, members in natural order (M2 before M10).

    A member's governing row is its checked pair of highest utilization, ties going as in
    :func:`worst_order`. A member with no checked pair keeps one row saying why (not checked,
    else not critical).
    """
    checked = _status_in(segments, *CHECKED)
    unchecked = _status_in(segments, "not checked")
    # One class per row: checked rows first, then "not checked", then "not critical"; within a
    # class, rows in worst order. The first row of each member in that order governs. Only the
    # candidates are ordered: per member, the rows of its best class at its highest utilization.
    kind = np.where(checked, 0, np.where(unchecked, 1, 2)).astype(np.int8)
    member, n_members = _codes(segments["member"])
    best = np.full(n_members, 3, dtype=np.int8)
    np.minimum.at(best, member, kind)
    in_best = kind == best[member]
    util = segments["utilization"].to_numpy(dtype=np.float64)
    util = np.where(in_best & np.isfinite(util), util, -np.inf)
    top = np.full(n_members, -np.inf)
    np.maximum.at(top, member, util)
    candidates = np.flatnonzero(in_best & (util == top[member]))
    part = segments.iloc[candidates]
    order = worst_order(part)
    order = order[np.argsort(kind[candidates][order], kind="stable")]
    rank = _rank_of(part["member"])
    first = order[~pd.Series(rank[order]).duplicated().to_numpy()]
    gov = part.iloc[first[np.argsort(rank[first], kind="stable")]]
    return gov.reset_index(drop=True)


def _codes(column: pd.Series) -> tuple[np.ndarray, int]:
    """Per row, a code 0..n-1 of its name, and n (through the categories when there are)."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        return column.cat.codes.to_numpy().astype(np.int64), len(column.cat.categories)
    codes, uniques = pd.factorize(column)
    return codes.astype(np.int64), len(uniques)


def flagged_table(segments: pd.DataFrame, columns: Sequence[str] | None = None) -> pd.DataFrame:
    """Every pair carrying a flag that changes or questions its result (not :data:`INFORMATIVE`).

    Worked out once per distinct combination of flags (the categories), not per row.

    Args:
        segments: the segment table.
        columns: the columns to keep (:func:`reading_columns`); all by default.
    """
    flags = segments["flags"]
    if not isinstance(flags.dtype, pd.CategoricalDtype):
        flags = flags.astype("category")
    acting = np.array(
        [any(n not in INFORMATIVE for n in str(t).split()) for t in flags.cat.categories],
        dtype=bool,
    )
    codes = flags.cat.codes.to_numpy()
    keep = np.where(codes >= 0, acting[np.maximum(codes, 0)] if len(acting) else False, False)
    picked = segments.loc[keep, list(columns) if columns is not None else segments.columns]
    return picked.reset_index(drop=True)


def _status_in(segments: pd.DataFrame, *words: str) -> np.ndarray:
    """Rows whose status is one of ``words`` (through the categorical codes when there are)."""
    status = segments["status"]
    if isinstance(status.dtype, pd.CategoricalDtype):
        wanted = np.isin(np.asarray(status.cat.categories, dtype=object), list(words))
        codes = status.cat.codes.to_numpy()
        return np.where(codes >= 0, wanted[np.maximum(codes, 0)], False)
    return status.isin(list(words)).to_numpy()


def summary(
    result: CheckResult,
    segments: pd.DataFrame,
    model_folder: Path,
    members: Sequence[str] | None = None,
    units: ShownUnits = SI,
) -> dict[str, Any]:
    """Counts, the worst result, the flags and the outcome, as a JSON-ready dict.

    Everything is counted from ``segments``, the table the run writes, so that the summary
    describes the same (possibly filtered) set as the CSV files.

    Args:
        result: the check's results (for the members and the settings).
        segments: the run's segment table (:func:`segment_table`, after any filter).
        model_folder: the model checked.
        members: the members the run covers (``--member``); all of the model's by default.
        units: the units ``segments`` is in (its headers name them).
    """
    # Masks and a few picked rows only: no copy of the (possibly million-row) table.
    checked = _status_in(segments, *CHECKED)
    worst: dict[str, Any] | None = None
    if checked.any():
        w = segments.iloc[worst_row(segments, checked)]
        worst = {
            "member": str(w["member"]),
            "segment": str(w["segment"]),
            "combination": str(w["combination"]),
            "utilization": float(significant(w["utilization"])),
            f"Mr [{units.moment}]": float(significant(w[f"Mr [{units.moment}]"])),
            f"demand [{units.moment}]": float(significant(w[f"demand [{units.moment}]"])),
            "chosen by": WORST_RULE,
        }
    # Members whose elements have no force rows at all: say so rather than skip them silently.
    scope = list(result.layout.members.table.index.astype(str)) if members is None else members
    with_forces = _names_present(segments["member"])
    no_forces = [m for m in scope if m not in with_forces]  # a few names: natural order below
    no_forces = [no_forces[i] for i in np.argsort(natural_rank(no_forces), kind="stable")]
    counts = pair_counts(segments)
    return {
        "tool": f"flangewise {version('flangewise')}",
        "model": str(model_folder),
        "design basis": METHOD_WORDS[result.settings.gradient],
        "output units": units.system,
        "units": units.words,
        f"E [{units.stress}]": float(significant(units.to_stress(result.settings.E))),
        f"G [{units.stress}]": float(significant(units.to_stress(result.settings.G))),
        "phi": result.settings.phi,
        "load height": result.settings.load_height,
        "limit to exact": result.settings.limit_to_exact,
        "exact analysis": exact_counts(segments, checked),
        "result": outcome(counts),
        "members": int(segments["member"].nunique()),
        "segments": int(segments["segment"].nunique()),
        "load combinations": int(segments["combination"].nunique()),
        **counts,
        "members without forces (not checked)": no_forces,
        "worst": worst,
        "flags": flag_counts(segments),
        "flag meanings": FLAGS,
        "caution": CAUTION,
    }


def pair_counts(segments: pd.DataFrame) -> dict[str, int]:
    """The pairs of each outcome (checked, not critical, over 1.0 ...): what :func:`outcome` weighs.

    Counts add up: the counts of a table split in parts are the sums of the parts' counts.
    """
    checked = _status_in(segments, *CHECKED)
    util = segments["utilization"].to_numpy(dtype=np.float64)
    return {
        "pairs checked": int(checked.sum()),
        "pairs not critical": int(_status_in(segments, "not critical").sum()),
        "pairs not checked (class 4)": int(_status_in(segments, "not checked").sum()),
        "pairs over 1.0": int(_status_in(segments, "over").sum()),
        "pairs to verify (cantilever effective length)": int(
            _status_in(segments, "verify length").sum()
        ),
        "pairs without a finite utilization": int((checked & ~np.isfinite(util)).sum()),
    }


#: What each load height means, in the words the outputs use.
LOAD_HEIGHT_WORDS = {
    "shear_centre": "loads at the shear centre (neither destabilising nor stabilising)",
    "top_flange": "loads on the top flange (destabilising where they act downwards on a beam "
    "whose top flange is in compression)",
    "bottom_flange": "loads on the bottom flange (stabilising where they hang below a beam whose "
    "top flange is in compression)",
}


def exact_counts(segments: pd.DataFrame, checked: np.ndarray) -> dict[str, Any]:
    """How many checked pairs have an exact factor, and why the others have none.

    Args:
        segments: the segment table.
        checked: per row, whether the pair was checked (status in :data:`CHECKED`).
    """
    has = np.isfinite(segments["exact factor"].to_numpy(dtype=np.float64))
    # Count the few distinct notes of the rows without (a categorical: no string per row).
    why = segments["exact note"][checked & ~has].value_counts()
    return {
        "pairs with an exact factor": int(has.sum()),
        "pairs without": {str(k) or "no exact factor": int(v) for k, v in why.items() if v},
    }


def outcome(counts: dict[str, int]) -> dict[str, Any]:
    """Whether the run shows every pair to pass, and if not, why not.

    A run is *shown to pass* only when something was checked and nothing stands against it: no
    checked pair over 1.0, no cantilever pair whose effective length is still to be verified, no
    pair with its flange in compression left unchecked (class 4), and no checked pair without a
    finite utilization. Anything else is *not shown to pass* (exit
    status 1): a run that checked nothing has shown nothing.
    """
    reasons = []
    if counts["pairs over 1.0"]:
        reasons.append(f"{counts['pairs over 1.0']} pair(s) over 1.0")
    if counts["pairs to verify (cantilever effective length)"]:
        reasons.append(
            f"{counts['pairs to verify (cantilever effective length)']} cantilever pair(s) at or "
            "below 1.0 with the actual length taken as the effective length: verify it (status "
            "'verify length')"
        )
    if counts["pairs not checked (class 4)"]:
        reasons.append(
            f"{counts['pairs not checked (class 4)']} pair(s) with the flange in compression "
            "not checked (class 4 section)"
        )
    if counts["pairs without a finite utilization"]:
        reasons.append(
            f"{counts['pairs without a finite utilization']} checked pair(s) without a finite "
            "utilization"
        )
    if not counts["pairs checked"]:
        reasons.append(
            "nothing was checked (no segment has its flange in compression in the load "
            "combinations and members of this run, or no member has forces)"
        )
    return {"shown to pass": not reasons, "reasons": reasons}


def flag_counts(segments: pd.DataFrame) -> dict[str, int]:
    """Pairs carrying each flag, counted from the table's ``flags`` column (names joined by ' ')."""
    # Count each distinct combination of flags once (a handful), then split it into names.
    per_text = segments["flags"].astype("category").value_counts()
    counts = dict.fromkeys(FLAGS, 0)
    for text, n in per_text.items():
        for name in str(text).split():
            counts[name] += int(n)
    return counts


def _count(n: int, noun: str) -> str:
    """'1 member', '2 members'."""
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def summary_text(info: dict[str, Any]) -> str:
    """A short summary for the terminal."""
    lines = [
        f"Model          : {info['model']}",
        f"Design basis   : {info['design basis']}",
        f"Units          : {info['units']}",
        f"Checked        : {_count(info['members'], 'member')}, "
        f"{_count(info['segments'], 'segment')}, "
        f"{_count(info['load combinations'], 'load combination')} "
        f"({info['pairs checked']} segment-combination pairs with the flange in compression, "
        f"{info['pairs not critical']} not critical)",
    ]
    w = info["worst"]
    if w:
        mu = BY_SYSTEM[info["output units"]].moment
        lines.append(
            f"Worst          : utilization {w['utilization']:.3f} in member {w['member']}, "
            f"segment {w['segment']}, {w['combination']} "
            f"(demand {w[f'demand [{mu}]']:.1f} {mu}, Mr {w[f'Mr [{mu}]']:.1f} {mu})"
        )
    lines.append(f"Over 1.0       : {info['pairs over 1.0']}")
    missing = info["members without forces (not checked)"]
    if missing:
        shown = ", ".join(missing[:10]) + (
            f" and {len(missing) - 10} more" if len(missing) > 10 else ""
        )
        lines.append(f"NO FORCES      : {len(missing)} member(s) not checked: {shown}")
    if info["pairs to verify (cantilever effective length)"]:
        lines.append(
            f"VERIFY LENGTH  : {info['pairs to verify (cantilever effective length)']} cantilever "
            "pair(s): the actual length was taken as the effective length"
        )
    if info["pairs not checked (class 4)"]:
        lines.append(f"NOT CHECKED    : {info['pairs not checked (class 4)']} (class 4 sections)")
    flagged = {k: v for k, v in info["flags"].items() if v}
    lines.append(
        "Flags          : "
        + (", ".join(f"{k} {v}" for k, v in flagged.items()) if flagged else "none")
    )
    lines.extend(exact_lines(info))
    lines.append(outcome_line(info["result"]))
    return "\n".join(lines)


def exact_lines(info: dict[str, Any]) -> list[str]:
    """The exact analysis in the terminal summary: its reach, load height and the limit."""
    exact = info["exact analysis"]
    without = "; ".join(f"{n} {why}" for why, n in exact["pairs without"].items())
    high = info["flags"].get("code-factor-high", 0)
    limit = (
        "limited to the exact factor ([check] limit_to_exact)"
        if info["limit to exact"]
        else "NOT limited ([check] limit_to_exact = false): the code factor is used"
    )
    off = EXACT_NOTES[3]
    if exact["pairs without"].get(off):
        lines = [
            "Exact analysis : SWITCHED OFF for this run (--no-exact): the code factors were NOT "
            "compared with an elastic buckling analysis of each diagram (no code-factor-high check)"
        ]
        return [*lines, f"Load height    : {LOAD_HEIGHT_WORDS[info['load height']]}"]
    lines = [
        f"Exact analysis : {exact['pairs with an exact factor']} of {info['pairs checked']} "
        "checked pairs (elastic buckling analysis, Vlasov beam theory, fork supports)"
        + (f"; without: {without}" if without else ""),
        f"Load height    : {LOAD_HEIGHT_WORDS[info['load height']]}",
    ]
    if high:
        lines.append(
            f"Code factor    : more than {EXACT_MARGIN * 100:.0f} % above the exact factor in "
            f"{high} pair(s) (flag code-factor-high): {limit}"
        )
    return lines


def outcome_line(result: dict[str, Any]) -> str:
    """The run's outcome in one line: passes, or NOT SHOWN TO PASS and why."""
    if result["shown to pass"]:
        return "Result         : passes (every checked pair at or below 1.0)"
    return "Result         : NOT SHOWN TO PASS: " + "; ".join(result["reasons"])


def write_results(
    out: Path,
    tables: dict[str, pd.DataFrame | None],
    info: dict[str, Any],
    before_replace: Callable[[str], None] | None = None,
    texts: dict[str, str] | None = None,
    notes: dict[str, str] | None = None,
    stage: Path | None = None,
) -> list[Path]:
    """Write every result file into ``out`` so that a failure leaves the old results intact.

    All files are first written completely into a staging folder inside ``out``; only then is
    each moved over its old version with an atomic rename, the old one parked in the staging
    folder. Any other file of ours (:data:`OUR_FILES`) that this run does not write, such as an
    earlier run's ``report.html``, is parked there too, so that ``out`` ends up holding exactly
    this run's files; files that are not ours are never touched. A failure at any point puts the
    parked files back: ``out`` holds either the complete earlier set or the complete new one, and
    nothing half-written is ever visible there.

    Args:
        out: the results folder (created if needed).
        tables: file name -> table: a CSV file, or a Parquet file for a name ending in
            ``.parquet``; ``None``: the file (or folder) is already complete in ``stage``.
        info: the summary, written as JSON.
        before_replace: called with each file name just before it replaces (or, for an earlier
            file this run does not write, removes) the old one (a hook for tests that inject a
            failure).
        texts: file name -> text, for other files (the HTML report).
        notes: key -> text stored in a Parquet file's metadata (units, sign convention, caution).
        stage: the staging folder (:func:`make_stage`) when some files were written into it
            beforehand; it is removed in the end, whatever happens.
    """
    stage = stage if stage is not None else make_stage(out)
    moved: list[str] = []  # old files parked in the staging folder, to put back on failure
    texts = texts or {}
    names = [*tables, *texts, "summary.json"]
    stale = [n for n in OUR_FILES if n not in names and (out / n).exists()]
    try:
        for name, table in tables.items():
            if table is None:
                continue  # written into the staging folder already
            if name.endswith(".parquet"):
                write_parquet(stage / name, table, notes or {})
            else:
                write_csv(stage / name, table)
        for name, text in texts.items():
            _write(stage / name, lambda fh, t=text: fh.write(t))
        _write(
            stage / "summary.json",
            lambda fh: json.dump(info, fh, indent=2, ensure_ascii=False, default=_json_default),
        )
        try:
            for name in names:
                if before_replace is not None:
                    before_replace(name)
                if (out / name).exists():
                    os.replace(out / name, stage / f"old-{name}")
                    moved.append(name)
                os.replace(stage / name, out / name)
            for name in stale:
                if before_replace is not None:
                    before_replace(name)
                os.replace(out / name, stage / f"old-{name}")
                moved.append(name)
        except BaseException:
            for name in names:
                if name not in moved and not (stage / name).exists():
                    _remove(out / name)
            for name in moved:  # put the earlier results back, as a set
                os.replace(stage / f"old-{name}", out / name)
            raise
        return [out / name for name in names]
    finally:
        shutil.rmtree(stage, ignore_errors=True)


def make_stage(out: Path) -> Path:
    """Make a staging folder inside ``out`` (created if needed) for :func:`write_results`."""
    out.mkdir(parents=True, exist_ok=True)
    return Path(tempfile.mkdtemp(prefix=".flangewise-", dir=out))


def _remove(path: Path) -> None:
    """Remove a file, or a folder of result files (a dataset), if it is there."""
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path)
    else:
        path.unlink(missing_ok=True)


#: Significant figures of every number in the result CSV files.
DIGITS = 6

#: UTF-8 byte-order mark: a spreadsheet opened by double-click then reads κ, ω2 and kN·m right.
BOM = b"\xef\xbb\xbf"


def significant(values: np.ndarray, digits: int = DIGITS) -> np.ndarray:
    """Round every value to ``digits`` significant figures (vectorized; NaN, ±inf and 0 kept).

    A utilization of 0.001857 stays 0.001857, where rounding to decimal places would print 0.0019.
    The result is the double nearest the rounded decimal, so a shortest-form writer prints it with
    no more than ``digits`` figures.
    """
    x = np.asarray(values, dtype=np.float64)
    finite = np.isfinite(x) & (x != 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        places = digits - 1 - np.floor(np.log10(np.abs(np.where(finite, x, 1.0))))
    places = places.astype(np.int64)
    # Powers of ten up to 1e22 are exact doubles; divide (or multiply) by one so the result is the
    # correctly rounded double of the decimal. Values beyond that range keep their own digits.
    up = finite & (places >= 0) & (places <= 22)
    down = finite & (places < 0) & (places >= -22)
    scale = 10.0 ** np.clip(np.abs(places), 0, 22)
    with np.errstate(over="ignore", invalid="ignore"):
        out = np.where(up, np.round(x * scale) / scale, x)
        out = np.where(down, np.round(x / scale) * scale, out)
    return out + 0.0  # + 0.0: no "-0"


def write_csv(path: Path, table: pd.DataFrame, digits: int = DIGITS, chunk: int = 100_000) -> None:
    """Write a table as UTF-8 CSV with a byte-order mark, floats to ``digits`` significant figures.

    pandas formats every float in Python when given a format; at a million result rows that
    takes tens of seconds, pyarrow's C++ writer a few. Formatting text is what costs, so chunks of
    rows are formatted on all cores at once (pyarrow lets go of the GIL) and written in order; only
    a few chunks are ever held in memory. Missing values are empty cells.
    """
    starts = list(range(0, max(len(table), 1), chunk))

    def formatted(i: int) -> bytes:
        return csv_text(table.iloc[starts[i] : starts[i] + chunk], i == 0, digits)

    workers = os.cpu_count() or 1
    with path.open("wb") as fh, ThreadPoolExecutor(max_workers=workers) as pool:
        fh.write(BOM)
        for first in range(0, len(starts), 2 * workers):
            batch = range(first, min(first + 2 * workers, len(starts)))
            for text in pool.map(formatted, batch):
                fh.write(text)


def csv_text(part: pd.DataFrame, header: bool, digits: int = DIGITS) -> bytes:
    """Rows of a result table as CSV text (UTF-8), floats to ``digits`` significant figures.

    The text of rows does not depend on the rows around them: tables written in parts and joined
    read the same as one written whole.
    """
    part = part.copy()
    for column in part.columns:
        if pd.api.types.is_float_dtype(part[column].dtype):
            part[column] = significant(part[column].to_numpy(dtype=np.float64), digits)
    sink = pa.BufferOutputStream()
    options = pacsv.WriteOptions(include_header=header)
    pacsv.write_csv(pa.Table.from_pandas(part, preserve_index=False), sink, options)
    return sink.getvalue().to_pybytes()


def _write(path: Path, write: Callable[[IO[str]], None]) -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        write(fh)


def _json_default(value: object) -> object:
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.floating):
        return float(value)
    raise TypeError(type(value))
