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
    copy here). Where the forces table already is in this order the arrays are its own columns,
    not copies.

    Attributes:
        combination: load combination code (the forces' categorical codes, smallest integer type).
        element: row in ``Members.elements`` (member order).
        s: distance from the member's start [mm].
        M: moment [N·mm], positive when it compresses the top flange.
        N: axial force [N] with the file's own sign; ``None`` where the forces have no N column.
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
            |N| of the run: the file's sign of N is not known; NaN without an N column),
            ``m_highest``, ``m_lowest`` [N·mm] (the run's largest and smallest moment, signed
            as ``m``).
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
    n_el = len(el)
    # Per element code (row of model.elements): its row in members.elements (member order) and
    # what the placement needs, so that each force row costs one gather per quantity.
    row_of = np.full(len(model.elements), -1, dtype=np.int64)
    row_of[model.elements.index.get_indexer(el.index)] = np.arange(n_el)
    ecode = f["element"].cat.codes.to_numpy()
    erow = _small_int(row_of, n_el)[ecode]
    # Fraction along the element in the member's direction. Positions at the ends are exactly 0
    # and exactly the length (the readers snap them), so t is exactly 0 or 1 there, and the
    # interpolation below (written so that t = 0 gives s0 and t = 1 gives s1 bit for bit) puts
    # them on the member's node positions.
    t = f["position"].to_numpy() / model.elements["length"].to_numpy()[ecode]
    reversed_ = el["reversed"].to_numpy()[row_of]
    t = np.where(reversed_[ecode], 1.0 - t, t)
    s = el["s0"].to_numpy()[row_of][ecode] * (1.0 - t) + el["s1"].to_numpy()[row_of][ecode] * t
    ccode = f["combination"].cat.codes.to_numpy()
    order = _station_order(ccode, erow, n_el, s, reversed_[ecode])
    if order is not None:
        ccode, erow, s, t = ccode[order], erow[order], s[order], t[order]
    at_node = (t == 0.0) | (t == 1.0)
    member = _small_int(pd.factorize(el["member"].to_numpy())[0], n_el)[erow]
    group_start = np.r_[True, (ccode[1:] != ccode[:-1]) | (member[1:] != member[:-1])]
    moment = f["M"].to_numpy()
    axial = f["N"].to_numpy(dtype=np.float64) if "N" in f else None
    return Stations(
        combination=ccode,
        element=erow,
        s=_merge_close(s, at_node, group_start),
        M=moment if order is None else moment[order],
        N=axial if axial is None or order is None else axial[order],
    )


def _small_int(values: np.ndarray, top: int) -> np.ndarray:
    """``values`` as int32 when every value fits (half the memory of each per-row gather)."""
    return values.astype(np.int32) if top < 2**31 - 1 else values


def _station_order(
    ccode: np.ndarray, erow: np.ndarray, n_el: int, s: np.ndarray, backwards: np.ndarray
) -> np.ndarray | None:
    """The order that sorts force rows by (combination, element row, s), ties in file order.

    The same order as ``np.lexsort((s, key))`` (stable), found with one stable sort on the integer
    key (combination, element row): an export lists the stations of one element in one
    combination along the element, so within each key the file order already is the order of s,
    turned round for an element drawn against its member. Only the groups where it is not (rows
    out of order in the file) are sorted by s, on their own. ``None`` when the rows are in order.
    """
    n = len(s)
    key = ccode.astype(np.int64) * (n_el + 1) + erow
    if n == 0 or ((np.diff(key) >= 0).all() and not backwards.any()):
        order = None
        key_sorted, s_sorted = key, s
    else:
        order = np.argsort(key, kind="stable")
        key_sorted = key[order]
        if backwards.any():
            # Each backwards element's block runs from its far end: turn the block round.
            new = np.r_[True, key_sorted[1:] != key_sorted[:-1]]
            starts = np.flatnonzero(new)
            ends = np.r_[starts[1:], n] - 1
            block = np.cumsum(new) - 1
            pos = np.arange(n)
            flip = backwards[order]
            mirrored = starts[block] + ends[block] - pos
            order = order[np.where(flip, mirrored, pos)]
        s_sorted = s[order]
    same = key_sorted[1:] == key_sorted[:-1]
    ds = np.diff(s_sorted)
    # Out of order: s falls within a key, or ties whose file order was turned round.
    rows = np.arange(n) if order is None else order
    bad = same & ((ds < 0.0) | ((ds == 0.0) & (rows[1:] < rows[:-1])))
    if not bad.any():
        return order
    order = rows.copy()
    fix = np.flatnonzero(np.isin(key_sorted, key_sorted[1:][bad]))
    sub = np.sort(order[fix])  # in file order, which lexsort keeps among ties
    order[fix] = sub[np.lexsort((s[sub], key[sub]))]
    return order


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
    combos = [str(c) for c in model.forces["combination"].cat.categories]
    flange = table["flange"].to_numpy()
    sign = np.where(flange == "bottom", -1.0, 1.0)
    either = flange == "either"
    s_start = table["s_start"].to_numpy()
    # Stations are sorted by (combination, member order); segment numbers grow along a member
    # within each flange set, so each set's runs are already contiguous: no sort is needed. Each
    # set is cut straight into its slice of x and m; a station is gathered only where a set
    # leaves some out (steep members have no second set).
    sets: list[tuple[np.ndarray | None, np.ndarray]] = []
    for column in ("first", "second"):
        seg = segments.element_segments[column].to_numpy()[st.element]
        held = seg >= 0
        if held.all():
            sets.append((None, seg))
        elif held.any():
            kept = np.flatnonzero(held)
            sets.append((kept, seg[kept]))
    total = sum(len(seg) for _, seg in sets)
    x = np.empty(total)
    m = np.empty(total)
    n_abs: np.ndarray | None = None if st.N is None else np.empty(total)
    run_parts, seg_parts, combo_parts = [], [], []
    at = 0
    for rows, seg in sets:
        part = slice(at, at + len(seg))
        combo = _pick(st.combination, rows)
        new_run = np.r_[True, (seg[1:] != seg[:-1]) | (combo[1:] != combo[:-1])]
        starts = np.flatnonzero(new_run)
        np.subtract(_pick(st.s, rows), s_start[seg], out=x[part])
        np.multiply(_pick(st.M, rows), sign[seg], out=m[part])
        if n_abs is not None and st.N is not None:
            np.abs(_pick(st.N, rows), out=n_abs[part])
        run_parts.append(starts + at)
        seg_parts.append(seg[starts])
        combo_parts.append(combo[starts])
        at += len(seg)
    starts = np.concatenate(run_parts) if run_parts else np.zeros(0, dtype=np.int64)
    offsets = np.r_[starts, total].astype(np.int64)
    seg_of_run = np.concatenate(seg_parts).astype(np.int64) if seg_parts else starts
    if len(starts):
        peak_pos = np.maximum.reduceat(m, starts)
        peak_neg = np.minimum.reduceat(m, starts)
    else:
        peak_pos = peak_neg = np.zeros(0)
    # The largest |M| without a second copy of m: max(max M, −min M), exact; + 0.0 turns a −0.0
    # into the 0.0 that a maximum of |M| gives.
    peak_abs = np.maximum(peak_pos, -peak_neg) + 0.0
    demand = np.where(either[seg_of_run], peak_abs, np.maximum(peak_pos, 0.0))
    if n_abs is None:
        axial = np.full(len(starts), np.nan)
    else:
        axial = np.fmax.reduceat(n_abs, starts) if len(starts) else np.zeros(0)  # NaN skipped
    pairs = pd.DataFrame(
        {
            "segment": seg_of_run,
            "combination": (
                np.concatenate(combo_parts).astype(np.int64) if combo_parts else starts
            ),
            "compressed": demand > 0.0,
            "demand": demand,
            "axial": axial,
            "m_highest": peak_pos,
            "m_lowest": peak_neg,
        }
    )
    return SegmentDiagrams(pairs=pairs, x=x, m=m, offsets=offsets, combinations=combos, stations=st)


def _pick(values: np.ndarray, rows: np.ndarray | None) -> np.ndarray:
    """``values`` at ``rows``; all of them (no copy) where ``rows`` is ``None``."""
    return values if rows is None else values[rows]


def station_key(diagrams: SegmentDiagrams, members: Members) -> np.ndarray:
    """The sort key of the stations, for repeated :func:`member_diagram` look-ups."""
    st = diagrams.stations
    return st.combination.astype(np.int64) * (len(members.elements) + 1) + st.element


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
