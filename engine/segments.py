"""Brace points and unbraced segments per flange.

The rule (README, "Which flange is braced where"): lateral-torsional buckling is checked between
points that hold the *compression* flange. A brace on the tension flange does not hold the
compression flange, and an inflection point is not a brace. So each member gets two sets of
segments: top-flange segments between consecutive nodes that brace the top flange (top or both),
and bottom-flange segments between nodes that brace the bottom flange (bottom or both). A member
steeper than 45° has no top or bottom flange: only supports, braces of both flanges and member
ends split it, into segments of flange "either".

Brace sources at a node of a member: a support (both flanges); a member end that connects to
another element or a support (both flanges, unless ``connected_ends_brace`` is off); the braces
table (top, bottom or both); optionally, an element framing in at a large angle (the flange
``infer_flange``, marked as assumed).

A member end is free for a flange when it connects to nothing, is no support and the braces table
lists no brace of that flange there (a cantilever tip held by an edge member the analysis leaves
out is listed as a brace and is then braced, not free). Free ends and the ``cantilever`` flag are
therefore per flange.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from flangewise.engine.flags import join_words
from flangewise.engine.members import Members
from flangewise.readers.model import Model
from flangewise.readers.settings import MemberSettings

#: Flanges a segment can be checked for.
FLANGES = ("top", "bottom", "either")


@dataclass(frozen=True)
class Segments:
    """Unbraced segments of every member (lengths in mm).

    Attributes:
        stations: ``Members.stations`` plus ``top``, ``bottom`` (braced?), ``top_by``,
            ``bottom_by`` (what braces it: words joined by "+"), ``top_assumed``,
            ``bottom_assumed`` (held only by an inferred brace), ``top_free``, ``bottom_free``
            (a member end that connects to nothing, is no support and has no listed brace of
            that flange; on a steep member both mean "no brace of both flanges"), ``free``
            (free for at least one flange).
        table: one row per segment, index ``segment`` (id such as "M3-top-2"): ``member``,
            ``flange`` ("top", "bottom" or "either"), ``s_start``, ``s_end``, ``length``,
            ``node_start``, ``node_end``, ``braced_start``, ``braced_end`` (the flange is held
            there), ``free_start``, ``free_end`` (a member end free for the segment's flange),
            ``cantilever`` (an end is free for the segment's flange), ``assumed`` (an end is
            held only by an inferred brace).
        element_segments: per element (index as ``Members.elements``): ``first`` (the top or
            "either" segment number holding it) and ``second`` (the bottom segment number, -1 on
            steep members); numbers are row positions in ``table``.
        ignored: one-flange braces on steep members, which cannot hold a flange there:
            ``member``, ``node``, ``flange``, ``reason``.
    """

    stations: pd.DataFrame
    table: pd.DataFrame
    element_segments: pd.DataFrame
    ignored: pd.DataFrame


def brace_stations(model: Model, members: Members, settings: MemberSettings) -> pd.DataFrame:
    """Return the stations of every member with which flange is braced there and by what."""
    st = members.stations.copy()
    n = len(st)
    steep = members.table["steep"].reindex(st["member"]).to_numpy()
    is_end = st["end"].to_numpy() != ""
    supported = st["supported"].to_numpy()
    connected_end = is_end & (st["others"].to_numpy() > 0) & settings.connected_ends_brace

    nodes = pd.Index(st["node"].to_numpy(dtype=object))
    braces = model.braces
    said = {}
    for word in ("top", "bottom", "both"):
        hit = nodes.get_indexer_for(braces["node"].to_numpy(dtype=object)[braces["flange"] == word])
        flag = np.zeros(n, dtype=bool)
        flag[hit[hit >= 0]] = True
        said[word] = flag

    inferred_top = np.zeros(n, dtype=bool)
    inferred_bottom = np.zeros(n, dtype=bool)
    if settings.infer_braces:
        framed = _framed_at_angle(model, members, st, settings.infer_min_angle) & ~is_end
        inferred_top = framed & (settings.infer_flange in ("top", "both"))
        inferred_bottom = framed & (settings.infer_flange in ("bottom", "both"))

    one_flange = said["top"] | said["bottom"]
    # Connects to nothing and is no support: free unless a listed brace holds the flange there.
    loose = is_end & (st["others"].to_numpy() == 0) & ~supported
    for flange, listed_one, inferred in (
        ("top", said["top"], inferred_top),
        ("bottom", said["bottom"], inferred_bottom),
    ):
        # On a steep member only what holds both flanges counts.
        brace = said["both"] | (listed_one & ~steep)
        assumed = np.where(steep, inferred_top & inferred_bottom, inferred)
        firm = supported | connected_end | brace
        st[flange] = firm | assumed
        st[f"{flange}_by"] = join_words(
            {
                "support": supported,
                "connected end": connected_end,
                "brace": brace,
                "assumed": assumed,
            }
        )
        st[f"{flange}_assumed"] = assumed & ~firm
        st[f"{flange}_free"] = loose & ~brace
    st["free"] = st["top_free"].to_numpy() | st["bottom_free"].to_numpy()
    # One-flange braces on steep members hold nothing; list each (member, node, flange) where the
    # node is not already held on both flanges by something else (a connected end, a support).
    lost = steep & one_flange & ~(supported | connected_end | said["both"])
    st.attrs["ignored"] = pd.concat(
        [
            pd.DataFrame(
                {
                    "member": st["member"].to_numpy()[lost & said[word]],
                    "node": st["node"].to_numpy()[lost & said[word]],
                    "flange": word,
                }
            )
            for word in ("top", "bottom")
        ],
        ignore_index=True,
    )
    return st


def _framed_at_angle(
    model: Model, members: Members, st: pd.DataFrame, min_angle: float
) -> np.ndarray:
    """Per station, whether an element of another member frames in at ``min_angle`` or more."""
    el = model.elements
    xyz = model.nodes[["x", "y", "z"]]
    d = xyz.loc[el["end"]].to_numpy() - xyz.loc[el["start"]].to_numpy()
    unit = d / el["length"].to_numpy()[:, None]
    ends = pd.DataFrame(
        {
            "node": np.concatenate([el["start"].to_numpy(), el["end"].to_numpy()]),
            "element": np.concatenate([el.index.to_numpy(), el.index.to_numpy()]),
            "ux": np.tile(unit[:, 0], 2),
            "uy": np.tile(unit[:, 1], 2),
            "uz": np.tile(unit[:, 2], 2),
        }
    )
    ends["of_member"] = members.elements["member"].reindex(ends["element"]).to_numpy()
    t = members.table
    axis = np.column_stack([t["x1"] - t["x0"], t["y1"] - t["y0"], t["z1"] - t["z0"]])
    axis /= np.linalg.norm(axis, axis=1)[:, None]
    ax = pd.DataFrame(axis, columns=["ax", "ay", "az"], index=t.index)
    probe = st[["member", "node"]].reset_index(names="station")
    joined = probe.merge(ends, on="node")
    joined = joined[joined["of_member"].to_numpy() != joined["member"].to_numpy()]
    a = ax.reindex(joined["member"]).to_numpy()
    cos = np.abs(a[:, 0] * joined["ux"] + a[:, 1] * joined["uy"] + a[:, 2] * joined["uz"])
    hit = joined["station"].to_numpy()[cos.to_numpy() <= np.cos(np.radians(min_angle))]
    out = np.zeros(len(st), dtype=bool)
    out[hit] = True
    return out


def build_segments(model: Model, members: Members, settings: MemberSettings) -> Segments:
    """Split every member into unbraced segments per flange (see the module docstring)."""
    st = brace_stations(model, members, settings)
    steep_of = members.table["steep"]
    steep = steep_of.reindex(st["member"]).to_numpy()
    is_end = st["end"].to_numpy() != ""
    parts = []
    for flange in FLANGES:
        if flange == "either":
            rows = steep & (st["top"].to_numpy() | is_end)
        else:
            rows = ~steep & (st[flange].to_numpy() | is_end)
        key = "top" if flange == "either" else flange
        braced = st[key].to_numpy()
        assumed = st[f"{key}_assumed"].to_numpy()
        free = st[f"{key}_free"].to_numpy()
        parts.append(_segments_between(st, np.flatnonzero(rows), braced, assumed, free, flange))
    table = pd.concat(parts, ignore_index=True)
    mem_rank = pd.Series(np.arange(len(members.table)), index=members.table.index)
    table["rank"] = mem_rank.reindex(table["member"]).to_numpy()
    table["fl"] = table["flange"].map({"top": 0, "either": 0, "bottom": 1})
    table = table.sort_values(["rank", "fl", "s_start"], kind="stable").reset_index(drop=True)
    number = table.groupby(["member", "flange"], sort=False).cumcount() + 1
    table.index = pd.Index(
        table["member"].astype(str) + "-" + table["flange"] + "-" + number.astype(str),
        name="segment",
    )
    element_segments = _element_segments(members, table, mem_rank)
    table = table.drop(columns=["rank", "fl"])
    return Segments(
        stations=st,
        table=table,
        element_segments=element_segments,
        ignored=st.attrs["ignored"].assign(
            reason="a one-flange brace cannot hold a member steeper than 45° (no top or bottom)",
        ),
    )


def _segments_between(
    st: pd.DataFrame,
    rows: np.ndarray,
    braced: np.ndarray,
    assumed: np.ndarray,
    free: np.ndarray,
    flange: str,
) -> pd.DataFrame:
    """Segments between consecutive boundary stations ``rows`` of one member.

    ``braced``, ``assumed`` and ``free`` are per station, for the segments' flange.
    """
    member = st["member"].to_numpy()[rows]
    same = member[1:] == member[:-1]
    a, b = rows[:-1][same], rows[1:][same]
    s = st["s"].to_numpy()
    node = st["node"].to_numpy()
    return pd.DataFrame(
        {
            "member": member[:-1][same],
            "flange": flange,
            "s_start": s[a],
            "s_end": s[b],
            "length": s[b] - s[a],
            "node_start": node[a],
            "node_end": node[b],
            "braced_start": braced[a],
            "braced_end": braced[b],
            "free_start": free[a],
            "free_end": free[b],
            "cantilever": free[a] | free[b],
            "assumed": assumed[a] | assumed[b],
        }
    )


def _element_segments(members: Members, table: pd.DataFrame, mem_rank: pd.Series) -> pd.DataFrame:
    """Which segment (row number of ``table``) holds each element, per flange set."""
    el = members.elements
    span = float(members.table["length"].max()) + 1.0 if len(members.table) else 1.0
    el_key = mem_rank.reindex(el["member"]).to_numpy() * span + el["s0"].to_numpy()
    out = {}
    for column, flanges in (("first", ("top", "either")), ("second", ("bottom",))):
        rows = np.flatnonzero(table["flange"].isin(flanges).to_numpy())
        if len(rows) == 0:
            out[column] = np.full(len(el), -1)
            continue
        # Keys of one flange set are sorted: the table is sorted by member rank, then s.
        seg_key = table["rank"].to_numpy()[rows] * span + table["s_start"].to_numpy()[rows]
        pos = np.searchsorted(seg_key, el_key + 1.0e-6, side="right") - 1
        seg = rows[np.maximum(pos, 0)]
        mine = (pos >= 0) & (table["member"].to_numpy()[seg] == el["member"].to_numpy())
        out[column] = np.where(mine, seg, -1)
    return pd.DataFrame(out, index=el.index)
