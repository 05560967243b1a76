"""Physical members: collinear elements of one section chained end to end.

An analysis model splits a girder at every node where anything connects. Two elements continue one
member through a node when they meet end to end there, are collinear within the angle tolerance,
carry the same section, the node is not a member break, and their user member ids (if any) agree.
A member therefore runs straight through T and X junctions and ends at free ends, corners (a portal
knee), section changes, listed breaks and changes of user member id.

Everything here is vectorized over elements, in numpy: the chains are labelled by a vectorized
union-find, and nodes lying on elements are found through a grid of cells. networkx (the frame as
a graph) and scipy's k-d tree are imported only where a caller asks for a graph or the grid gives
up on a very uneven model: a check does not pay their import.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from flangewise.engine.proximity import near_segment_pairs
from flangewise.readers.errors import InputError, Problem
from flangewise.readers.model import COINCIDENT_MM, Model, drawn_backwards
from flangewise.readers.settings import MemberSettings

if TYPE_CHECKING:
    import networkx as nx

#: Members steeper than this from horizontal [degrees] have no top or bottom flange (common
#: practice: a column's flanges face sideways, "top" means nothing there).
STEEP_DEGREES = 45.0


@dataclass(frozen=True)
class Members:
    """Members of a model and where their elements lie along them (all lengths in mm).

    Attributes:
        table: one row per member, index ``member`` (id): ``section``, ``length``, ``n_elements``,
            ``x0, y0, z0`` / ``x1, y1, z1`` (start / end point), ``steep`` (bool),
            ``user_id`` (the elements' own member id, or missing).
        elements: one row per chained element, index ``element`` (id), in member order:
            ``member``, ``order`` (0 at the member's start), ``s0``, ``s1`` (distances of the
            element's ends from the member's start, s0 < s1), ``reversed`` (drawn against the
            member's direction).
        stations: one row per node along a member, in order: ``member``, ``node``, ``s``,
            ``end`` ("start", "end" or ""), ``others`` (how many elements of other members meet
            there), ``supported`` (the node is in the supports table).
        continuations: (k, 2) element row numbers (positions in ``model.elements``), one row per
            pair of elements that continue one member through a node; the chains they make are
            the members (:meth:`chain_graph`).
    """

    table: pd.DataFrame
    elements: pd.DataFrame
    stations: pd.DataFrame
    continuations: np.ndarray

    def chain_graph(self, n_elements: int) -> nx.Graph:
        """The networkx graph of the chains: element row numbers joined by continuations.

        Each connected component is one member. Args: ``n_elements``, the model's element count.
        """
        import networkx as nx  # only for a caller who wants the graph: a check does not

        graph = nx.Graph()
        graph.add_nodes_from(range(n_elements))
        graph.add_edges_from(self.continuations.tolist())
        return graph


def frame_graph(model: Model) -> nx.MultiGraph:
    """Return the frame as a multigraph: node ids as nodes, one edge per element (key = its id)."""
    import networkx as nx  # only for a caller who wants the graph: a check does not

    graph = nx.MultiGraph()
    graph.add_nodes_from(model.nodes.index)
    e = model.elements
    graph.add_edges_from(zip(e["start"], e["end"], e.index, strict=True))
    return graph


def build_members(model: Model, settings: MemberSettings) -> Members:
    """Chain the model's elements into straight members.

    Args:
        model: the validated model.
        settings: tolerance, breaks and bracing choices (``[members]``).

    Raises:
        InputError: two elements overlap, or elements given one user member id do not form one
            straight chain (named by file, row and column).
    """
    el = model.elements
    n = len(el)
    xyz = model.nodes[["x", "y", "z"]].to_numpy()
    si = model.nodes.index.get_indexer(pd.Index(el["start"]))
    ei = model.nodes.index.get_indexer(pd.Index(el["end"]))
    vec = xyz[ei] - xyz[si]
    unit = vec / el["length"].to_numpy()[:, None]

    _collinear_overlaps(model, settings, si, ei, unit)
    pairs = _continuations(model, settings, si, ei, unit)
    label = _chains(n, pairs)
    _check_user_ids(model, label)
    n_members = int(label.max()) + 1 if n else 0

    # Member direction: orient every element like the first element of its chain, add the
    # oriented vectors, and point the sum "forwards" (+x, else +y, else up). Independent of the
    # direction elements were drawn in and of row order (up to that first choice's sign).
    first = np.full(n_members, n, dtype=np.int64)
    np.minimum.at(first, label, np.arange(n))
    sign = np.where((unit * unit[first[label]]).sum(axis=1) >= 0.0, 1.0, -1.0)
    total = np.zeros((n_members, 3))
    np.add.at(total, label, vec * sign[:, None])
    back = drawn_backwards(total[:, 0], total[:, 1], total[:, 2])
    total[back] *= -1.0
    axis = total / np.linalg.norm(total, axis=1)[:, None]

    # Distances along the member axis from a common origin, then from the member's start.
    origin = xyz[si[first]]
    t_start = ((xyz[si] - origin[label]) * axis[label]).sum(axis=1)
    t_end = ((xyz[ei] - origin[label]) * axis[label]).sum(axis=1)
    lo, hi = np.minimum(t_start, t_end), np.maximum(t_start, t_end)
    t0 = np.full(n_members, np.inf)
    np.minimum.at(t0, label, lo)
    t1 = np.full(n_members, -np.inf)
    np.maximum.at(t1, label, hi)

    members = _member_table(model, label, first, origin, axis, t0, t1)
    rank = members["rank"].to_numpy()
    mem_rank = rank[label]
    s0, s1 = lo - t0[label], hi - t0[label]
    order = np.lexsort((s0, mem_rank))
    names = members.index.to_numpy()
    elements = pd.DataFrame(
        {
            "member": names[label][order],
            "s0": s0[order],
            "s1": s1[order],
            "reversed": (t_start > t_end)[order],
        },
        index=pd.Index(el.index[order], name="element"),
    )
    counts = np.bincount(mem_rank, minlength=n_members)
    starts = np.repeat(np.cumsum(counts) - counts, counts)
    elements.insert(1, "order", np.arange(n) - starts)
    members = members.sort_values("rank").drop(columns="rank")
    members.insert(2, "n_elements", counts)

    stations = _stations(model, elements, si, ei, order)
    return Members(table=members, elements=elements, stations=stations, continuations=pairs)


def _continuations(
    model: Model,
    settings: MemberSettings,
    si: np.ndarray,
    ei: np.ndarray,
    unit: np.ndarray,
) -> np.ndarray:
    """Return (k, 2) element index pairs that continue one member through a shared node.

    Every pair of element ends at one node is looked at once (a self-join on the node): opposite
    directions within the tolerance continue; equal directions within it are overlapping elements.
    """
    el = model.elements
    n = len(el)
    end_node = np.concatenate([si, ei])
    end_elem = np.concatenate([np.arange(n), np.arange(n)])
    # Direction pointing from the node into the element.
    end_dir = np.concatenate([unit, -unit])
    ends = pd.DataFrame({"node": end_node, "end": np.arange(2 * n)})
    joined = ends.merge(ends, on="node", suffixes=("_a", "_b"))
    joined = joined[joined["end_a"].to_numpy() < joined["end_b"].to_numpy()]
    a, b = joined["end_a"].to_numpy(), joined["end_b"].to_numpy()
    cos = (end_dir[a] * end_dir[b]).sum(axis=1)
    tol = np.cos(np.radians(settings.angle_tolerance))
    ea, eb = end_elem[a], end_elem[b]

    overlap = cos >= tol
    if overlap.any():
        raise InputError(
            [
                _element_problem(
                    model,
                    y,
                    f"no overlap with element '{el.index[x]}': both leave node "
                    f"'{model.nodes.index[end_node[i]]}' in the same direction (remove one, or "
                    "split them at common nodes)",
                )
                for x, y, i in zip(ea[overlap], eb[overlap], a[overlap], strict=True)
            ]
        )
    section = el["section"].to_numpy()
    user = el["member"].astype(object).where(el["member"].notna(), "").to_numpy()
    breaks = np.zeros(len(model.nodes), dtype=bool)
    listed = model.nodes.index.get_indexer(pd.Index(list(settings.breaks)))
    breaks[listed[listed >= 0]] = True
    keep = (
        (cos <= -tol) & (section[ea] == section[eb]) & (user[ea] == user[eb]) & ~breaks[end_node[a]]
    )
    a, b = a[keep], b[keep]
    # An element end continues into at most one other element; more means three or more collinear
    # elements at one node, which overlap.
    used = np.bincount(np.concatenate([a, b]), minlength=2 * n)
    if (used > 1).any():
        raise InputError(
            [
                _element_problem(
                    model,
                    end_elem[e],
                    "one element continuing it in line at node "
                    f"'{model.nodes.index[end_node[e]]}', not several (collinear elements overlap)",
                )
                for e in np.flatnonzero(used > 1)
            ]
        )
    return np.column_stack([end_elem[a], end_elem[b]])


def _collinear_overlaps(
    model: Model,
    settings: MemberSettings,
    si: np.ndarray,
    ei: np.ndarray,
    unit: np.ndarray,
) -> None:
    """Raise when a node lies inside an element and an element there runs along it (overlap).

    Overlaps through a shared node are found in :func:`_continuations`; this finds the ones that
    share no node (two elements partly on top of each other). A node lying on an element that
    nothing runs along from is left alone: it only means the element is not split there, and a
    brace at such a node is then not seen, which lengthens the segment (conservative).
    """
    el = model.elements
    n = len(el)
    if n == 0:
        return
    xyz = model.nodes[["x", "y", "z"]].to_numpy()
    length = el["length"].to_numpy()
    elem, node = _nodes_near(xyz, si, ei, unit, length)
    if len(elem) == 0:
        return
    rel = xyz[node] - xyz[si[elem]]
    t = (rel * unit[elem]).sum(axis=1)
    perp = np.linalg.norm(rel - t[:, None] * unit[elem], axis=1)
    inside = (perp < COINCIDENT_MM) & (t > COINCIDENT_MM) & (t < length[elem] - COINCIDENT_MM)
    if not inside.any():
        return
    elem, node = elem[inside], node[inside]
    ends = pd.DataFrame({"node": np.concatenate([si, ei]), "other": np.tile(np.arange(n), 2)})
    cand = pd.DataFrame({"node": node, "elem": elem}).merge(ends, on="node")
    a, b = cand["elem"].to_numpy(), cand["other"].to_numpy()
    tol = np.cos(np.radians(settings.angle_tolerance))
    along = np.abs((unit[a] * unit[b]).sum(axis=1)) >= tol
    if along.any():
        raise InputError(
            [
                _element_problem(
                    model,
                    int(y),
                    f"no overlap with element '{el.index[x]}': it runs along that element from "
                    f"node '{model.nodes.index[p]}', which lies inside it (split the elements at "
                    "common nodes or remove one)",
                )
                for x, y, p in zip(a[along], b[along], cand["node"].to_numpy()[along], strict=True)
            ]
        )


def _nodes_near(
    xyz: np.ndarray, si: np.ndarray, ei: np.ndarray, unit: np.ndarray, length: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(element, node) pairs that include every node within ``COINCIDENT_MM`` of an element.

    Through the grid of :func:`near_segment_pairs`; on a model too uneven for it, every node
    within half an element's length of its midpoint, by a k-d tree (imported only then).
    """
    found = near_segment_pairs(xyz, xyz[si], unit, length, COINCIDENT_MM)
    if found is not None:
        return found
    from scipy.spatial import cKDTree  # a third of a second: only where the grid gave up

    near = cKDTree(xyz).query_ball_point(
        (xyz[si] + xyz[ei]) / 2.0, r=length / 2.0, return_sorted=True
    )
    counts = np.fromiter((len(c) for c in near), dtype=np.int64, count=len(si))
    elem = np.repeat(np.arange(len(si)), counts)
    node = np.concatenate([np.asarray(c, dtype=np.int64) for c in near] + [np.zeros(0, np.int64)])
    return elem, node


def _chains(n: int, pairs: np.ndarray) -> np.ndarray:
    """Return each element's chain (member) number: the connected components of ``pairs``.

    Chains are numbered in the order of their first element, as a graph library numbers its
    connected components when the elements are added in row order. Vectorized union-find: every
    pair hooks the larger of its two labels onto the smaller, then labels jump to their label's
    label until they settle; an element's label ends as the smallest row of its chain.
    """
    label = np.arange(n, dtype=np.int64)
    a, b = pairs[:, 0].astype(np.int64), pairs[:, 1].astype(np.int64)
    while len(a):
        la, lb = label[a], label[b]
        apart = la != lb
        if not apart.any():
            break
        low = np.minimum(la[apart], lb[apart])
        np.minimum.at(label, np.maximum(la[apart], lb[apart]), low)
        while True:
            jumped = label[label]
            if np.array_equal(jumped, label):
                break
            label = jumped
    return np.unique(label, return_inverse=True)[1].astype(np.int64)


def _check_user_ids(model: Model, label: np.ndarray) -> None:
    """Elements that share a user member id must chain into one member."""
    user = model.elements["member"]
    if user.isna().all():
        return
    frame = pd.DataFrame({"user": user.to_numpy(), "comp": label}).dropna()
    spread = frame.groupby("user")["comp"].nunique()
    bad = spread[spread > 1]
    if len(bad):
        rows = model.elements.reset_index().groupby("member")["row"].min()
        raise InputError(
            [
                Problem(
                    model.settings.files["elements"],
                    int(rows[u]),
                    model.settings.columns["elements"]["member"],
                    str(u),
                    "elements of one member id to form one straight chain of one section (they "
                    "split at a corner, a section change, a gap or a break node)",
                )
                for u in bad.index
            ]
        )


def _element_problem(model: Model, e: int, expected: str) -> Problem:
    """A problem located at element row ``e`` of the elements file."""
    return Problem(
        model.settings.files["elements"],
        int(model.elements["row"].to_numpy()[e]),
        model.settings.columns["elements"]["id"],
        str(model.elements.index[e]),
        expected,
    )


def _member_table(
    model: Model,
    label: np.ndarray,
    first: np.ndarray,
    origin: np.ndarray,
    axis: np.ndarray,
    t0: np.ndarray,
    t1: np.ndarray,
) -> pd.DataFrame:
    """One row per member, named and ranked independently of row order and node numbering."""
    el = model.elements
    p0 = origin + axis * t0[:, None]
    p1 = origin + axis * t1[:, None]
    horizontal = np.hypot(axis[:, 0], axis[:, 1])
    steep = np.degrees(np.arctan2(np.abs(axis[:, 2]), horizontal)) > STEEP_DEGREES
    # Rank by geometry rounded to 0.1 mm: row order and numbering cannot change it.
    r0, r1 = np.round(p0, 1), np.round(p1, 1)
    rank_order = np.lexsort((r1[:, 2], r1[:, 1], r1[:, 0], r0[:, 2], r0[:, 1], r0[:, 0]))
    rank = np.empty(len(first), dtype=np.int64)
    rank[rank_order] = np.arange(len(first))
    user = el["member"].to_numpy()[first]
    has_user = pd.notna(user)
    generated = np.array([f"M{r + 1}" for r in rank], dtype=object)
    names = np.where(has_user, user.astype(object), generated)
    return pd.DataFrame(
        {
            "rank": rank,
            "section": el["section"].to_numpy()[first],
            "length": t1 - t0,
            "x0": p0[:, 0],
            "y0": p0[:, 1],
            "z0": p0[:, 2],
            "x1": p1[:, 0],
            "y1": p1[:, 1],
            "z1": p1[:, 2],
            "steep": steep,
            "user_id": np.where(has_user, user.astype(object), None),
        },
        index=pd.Index(names, name="member"),
    )


def _stations(
    model: Model,
    elements: pd.DataFrame,
    si: np.ndarray,
    ei: np.ndarray,
    order: np.ndarray,
) -> pd.DataFrame:
    """The nodes along each member, in order, with which ends connect to anything else."""
    node_ids = model.nodes.index.to_numpy()
    rev = elements["reversed"].to_numpy()
    first_node = np.where(rev, ei[order], si[order])  # node at s0
    last_node = np.where(rev, si[order], ei[order])  # node at s1
    member = elements["member"].to_numpy()
    is_first = elements["order"].to_numpy() == 0
    st = pd.DataFrame(
        {
            "member": np.concatenate([member[is_first], member]),
            "node": np.concatenate([node_ids[first_node[is_first]], node_ids[last_node]]),
            "s": np.concatenate([elements["s0"].to_numpy()[is_first], elements["s1"].to_numpy()]),
        }
    )
    seq = np.concatenate([np.flatnonzero(is_first) * 2, np.arange(len(member)) * 2 + 1])
    st_order = np.argsort(seq, kind="stable")
    st = st.iloc[st_order].reset_index(drop=True)
    mem = st["member"].to_numpy()
    starts = np.r_[True, mem[1:] != mem[:-1]]
    ends = np.r_[mem[1:] != mem[:-1], True]
    st["end"] = np.where(starts, "start", np.where(ends, "end", ""))
    # Elements meeting at each node (the node's degree in the frame graph).
    deg_of_node = np.bincount(np.concatenate([si, ei]), minlength=len(node_ids))
    deg = deg_of_node[np.concatenate([first_node[is_first], last_node])][st_order]
    own = np.where(st["end"].to_numpy() == "", 2, 1)  # this member's own elements at the node
    st["others"] = deg - own
    supported = np.zeros(len(node_ids), dtype=bool)
    hit = model.nodes.index.get_indexer(pd.Index(model.supports["node"].to_numpy(dtype=object)))
    supported[hit[hit >= 0]] = True
    st["supported"] = supported[np.concatenate([first_node[is_first], last_node])][st_order]
    return st
