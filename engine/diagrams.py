"""Moment diagrams of segments, per load combination, as flat arrays with offsets.

Every force station is placed along its member in proportion to its position on its element:
the element spans [s0, s1] along the member (its end nodes projected onto the member's axis), and
a station at ``position`` of an element of length L lies at s0 + position / L · (s1 - s0) (an
element drawn backwards is turned round). Element ends therefore land exactly on the member's node
positions, whatever the rounding of the exported positions or a small kink (within the angle
tolerance) makes of the element's own length. Stations are sorted by (combination, member, element
order, position); stations of one member closer than ``STATION_MERGE_MM`` are merged onto one x
(a member node where one is among them), and x never decreases along a member. At a node where the
moment jumps, the two elements meeting there each keep their own value, and since segments end at
nodes each segment sees only the values of its own elements: the value on its own side.

A segment's diagram for one combination is then one contiguous run of the sorted stations: the
arrays ``x`` (distance from the segment's start, mm) and ``m`` (moment, N·mm, positive when it
compresses the segment's flange) hold all runs back to back, and ``offsets`` says where each run
starts. No Python loop runs per segment or per combination.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from flangewise.engine.members import Members
from flangewise.engine.segments import Segments
from flangewise.readers.model import STATION_MERGE_MM, Model


@dataclass(frozen=True)
class Stations:
    """Every force station placed along its member, sorted by (combination, element row, s).

    Plain arrays, one entry per station (a table of millions of rows is not worth a DataFrame's
    copy here).

    Attributes:
        combination: load combination code.
        element: row in ``Members.elements`` (member order).
        s: distance from the member's start [mm].
        M: moment [N·mm], positive when it compresses the top flange.
        N: axial force [N] with the file's own sign; NaN where the forces have no N column.
    """

    combination: np.ndarray
    element: np.ndarray
    s: np.ndarray
    M: np.ndarray
    N: np.ndarray | None = None


@dataclass(frozen=True)
class SegmentDiagrams:
    """Diagrams of every (segment, combination) pair that has forces.

    Attributes:
        pairs: one row per pair, in the order of the runs: ``segment`` (row number in
            ``Segments.table``), ``combination`` (code into ``combinations``), ``compressed``
            (the segment's flange is in compression somewhere), ``demand`` [N·mm] (the largest
            moment that compresses that flange, 0 when none does), ``axial`` [N] (the largest
            |N| of the run: the file's sign of N is not known; NaN without an N column).
        x: distance from the segment's start [mm], per station, runs back to back.
        m: moment [N·mm] per station, positive when it compresses the segment's flange (for a
            steep member's "either" segment: the model's own sign).
        offsets: start of each run in ``x`` and ``m``; ``len(pairs) + 1`` entries.
        combinations: the load combination names.
        stations: every force station along its member (see :func:`member_stations`), for
            drawing whole-member diagrams.
    """

    pairs: pd.DataFrame
    x: np.ndarray
    m: np.ndarray
    offsets: np.ndarray
    combinations: list[str]
    stations: Stations


def member_stations(model: Model, members: Members) -> Stations:
    """Return every force row placed along its member, sorted for segment runs."""
    f = model.forces
    el = members.elements
    # Element code (row of model.elements) -> row of members.elements (member order).
    order_of = np.full(len(model.elements) + 1, -1, dtype=np.int64)
    order_of[model.elements.index.get_indexer(el.index)] = np.arange(len(el))
    ecode = f["element"].cat.codes.to_numpy()
    erow = order_of[ecode]
    # Fraction along the element in the member's direction. Positions at the ends are exactly 0
    # and exactly the length (the readers snap them), so t is exactly 0 or 1 there, and the
    # interpolation below (written so that t = 0 gives s0 and t = 1 gives s1 bit for bit) puts
    # them on the member's node positions.
    t = f["position"].to_numpy() / model.elements["length"].to_numpy()[ecode]
    t = np.where(el["reversed"].to_numpy()[erow], 1.0 - t, t)
    s = el["s0"].to_numpy()[erow] * (1.0 - t) + el["s1"].to_numpy()[erow] * t
    at_node = (t == 0.0) | (t == 1.0)
    ccode = f["combination"].cat.codes.to_numpy().astype(np.int64)
    # Within one element, stations sorted by s; at a shared node the earlier element comes first.
    key = ccode * (len(el) + 1) + erow
    order = np.lexsort((s, key))
    ccode, erow, s, at_node = ccode[order], erow[order], s[order], at_node[order]
    member = pd.factorize(el["member"].to_numpy())[0][erow]
    group_start = np.r_[True, (ccode[1:] != ccode[:-1]) | (member[1:] != member[:-1])]
    return Stations(
        combination=ccode,
        element=erow,
        s=_merge_close(s, at_node, group_start),
        M=f["M"].to_numpy()[order],
        N=(f["N"].to_numpy(dtype=np.float64) if "N" in f else np.full(len(f), np.nan))[order],
    )


def _merge_close(s: np.ndarray, at_node: np.ndarray, group_start: np.ndarray) -> np.ndarray:
    """Merge sorted stations closer than ``STATION_MERGE_MM`` within each group; keep x rising.

    A cluster of close stations takes the position of a member node in it (exact, shared with
    the next element), else of its first station. Groups (one member in one combination) start
    where ``group_start`` is true.
    """
    if len(s) == 0:
        return s
    gap = np.diff(s)
    # Stations at one x already are one station: only gaps in (0, tolerance] need merging, and a
    # clean export has none (no pass over the clusters then).
    if ((gap > 0.0) & (gap <= STATION_MERGE_MM) & ~group_start[1:]).any():
        new = group_start.copy()
        new[1:] |= gap > STATION_MERGE_MM
        starts = np.flatnonzero(new)
        cluster = np.cumsum(new) - 1
        node_s = np.fmax.reduceat(np.where(at_node, s, np.nan), starts)
        s = np.where(np.isnan(node_s), s[starts], node_s)[cluster]
    falls = np.flatnonzero((np.diff(s) < 0.0) & ~group_start[1:])
    if len(falls):
        # Only where a member bends far along its length can a later element start before the
        # earlier one ends; never let x run backwards along a member.
        group = np.cumsum(group_start)
        s = pd.Series(s).groupby(group).cummax().to_numpy()
    return s


def segment_diagrams(model: Model, members: Members, segments: Segments) -> SegmentDiagrams:
    """Cut the member diagrams into per-segment, per-combination runs (see module docstring)."""
    st = member_stations(model, members)
    table = segments.table
    n_seg = len(table)
    combos = [str(c) for c in model.forces["combination"].cat.categories]
    # Stations are sorted by (combination, member order); segment numbers grow along a member
    # within each flange set, so each set's runs are already contiguous: no sort is needed.
    combo_st = st.combination
    seg_parts, row_parts = [], []
    for column in ("first", "second"):
        seg = segments.element_segments[column].to_numpy()[st.element]
        rows = np.flatnonzero(seg >= 0)
        seg_parts.append(seg[rows])
        row_parts.append(rows)
    seg_all = np.concatenate(seg_parts)
    row_all = np.concatenate(row_parts)
    combo = combo_st[row_all]
    run_key = combo * n_seg + seg_all
    new_run = np.r_[True, run_key[1:] != run_key[:-1]]
    if len(row_parts[0]) and len(row_parts[1]):
        new_run[len(row_parts[0])] = True  # the second set starts new runs
    starts = np.flatnonzero(new_run)
    offsets = np.r_[starts, len(run_key)]

    flange = table["flange"].to_numpy()
    sign = np.where(flange == "bottom", -1.0, 1.0)
    seg_of_run = seg_all[starts]
    m = st.M[row_all] * np.repeat(sign[seg_of_run], np.diff(offsets))
    x = st.s[row_all] - np.repeat(table["s_start"].to_numpy()[seg_of_run], np.diff(offsets))
    either = flange[seg_of_run] == "either"
    peak_pos = np.maximum.reduceat(m, starts) if len(m) else np.zeros(0)
    peak_abs = np.maximum.reduceat(np.abs(m), starts) if len(m) else np.zeros(0)
    demand = np.where(either, peak_abs, np.maximum(peak_pos, 0.0))
    n_abs = np.abs(st.N[row_all]) if st.N is not None else np.full(len(row_all), np.nan)
    axial = np.fmax.reduceat(n_abs, starts) if len(n_abs) else np.zeros(0)  # fmax: NaN skipped
    pairs = pd.DataFrame(
        {
            "segment": seg_of_run,
            "combination": combo[starts],
            "compressed": demand > 0.0,
            "demand": demand,
            "axial": axial,
        }
    )
    return SegmentDiagrams(pairs=pairs, x=x, m=m, offsets=offsets, combinations=combos, stations=st)


def station_key(diagrams: SegmentDiagrams, members: Members) -> np.ndarray:
    """The sort key of the stations, for repeated :func:`member_diagram` look-ups."""
    st = diagrams.stations
    return st.combination * (len(members.elements) + 1) + st.element


def member_diagram(
    diagrams: SegmentDiagrams,
    members: Members,
    member: str,
    combination: str,
    key: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (s [mm], M [N·mm]) of one member in one combination, in member order.

    Stations are sorted by (combination, element row) and a member's elements are consecutive
    rows of ``members.elements``, so the block is found by binary search, not by a scan.
    """
    el = members.elements
    rows = np.flatnonzero(el["member"].to_numpy() == member)
    if len(rows) == 0 or combination not in diagrams.combinations:
        return np.zeros(0), np.zeros(0)
    c = diagrams.combinations.index(combination)
    st = diagrams.stations
    if key is None:
        key = station_key(diagrams, members)
    lo = np.searchsorted(key, c * (len(el) + 1) + rows[0], side="left")
    hi = np.searchsorted(key, c * (len(el) + 1) + rows[-1], side="right")
    return st.s[lo:hi], st.M[lo:hi]
