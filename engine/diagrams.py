"""Moment diagrams of segments, per load combination, as flat arrays with offsets.

Every force station is placed at its distance along its member (an element drawn backwards is
turned round), sorted by (combination, member, element order, position). At a node where the
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
from flangewise.readers.model import Model


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
    """

    combination: np.ndarray
    element: np.ndarray
    s: np.ndarray
    M: np.ndarray


@dataclass(frozen=True)
class SegmentDiagrams:
    """Diagrams of every (segment, combination) pair that has forces.

    Attributes:
        pairs: one row per pair, in the order of the runs: ``segment`` (row number in
            ``Segments.table``), ``combination`` (code into ``combinations``), ``compressed``
            (the segment's flange is in compression somewhere), ``demand`` [N·mm] (the largest
            moment that compresses that flange, 0 when none does).
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
    pos = f["position"].to_numpy()
    s0 = el["s0"].to_numpy()[erow]
    length = (el["s1"] - el["s0"]).to_numpy()[erow]
    rev = el["reversed"].to_numpy()[erow]
    s = np.where(rev, s0 + length - pos, s0 + pos)
    ccode = f["combination"].cat.codes.to_numpy().astype(np.int64)
    # Within one element, stations sorted by s; at a shared node the earlier element comes first.
    key = ccode * (len(el) + 1) + erow
    order = np.lexsort((s, key))
    return Stations(
        combination=ccode[order],
        element=erow[order],
        s=s[order],
        M=f["M"].to_numpy()[order],
    )


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
    pairs = pd.DataFrame(
        {
            "segment": seg_of_run,
            "combination": combo[starts],
            "compressed": demand > 0.0,
            "demand": demand,
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
