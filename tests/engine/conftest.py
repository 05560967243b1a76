"""A small frame-model builder for the engine tests.

A test describes a frame (nodes, elements, sections, braces, supports, moment diagrams), the builder
writes it as canonical CSV files to a folder under ``tmp_path`` (units: coordinates and positions in
m, moments in kN·m, section dimensions in mm, stresses in MPa), loads it with
:func:`readers.load_model` and builds the layout with :func:`engine.layout.build_layout`. The
returned :class:`Built` answers the questions the tests ask, in metres and kN·m, so that expected
values can be written the way they were worked out by hand.

Every model here is invented.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from flangewise import readers
from flangewise.engine.layout import Layout, build_layout

#: Invented I-sections: name -> (d, b, tf, tw, r [mm], fy [MPa]).
SECTIONS: dict[str, tuple[float, float, float, float, float, float]] = {
    "S1": (407.0, 178.0, 12.8, 7.7, 10.0, 350.0),
    "S2": (310.0, 165.0, 9.7, 5.8, 8.0, 350.0),
}

MM_PER_M = 1000.0
NMM_PER_KNM = 1.0e6

#: A moment diagram given as a function of the global point (x, y, z) [m] -> M [kN·m].
MomentField = Callable[[float, float, float], float]


class FrameBuilder:
    """An editable frame model, written as canonical CSV files on demand."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.nodes: dict[str, tuple[float, float, float]] = {}
        self.elements: list[tuple[str, str, str, str, str | None]] = []
        self.sections = dict(SECTIONS)
        self.forces: list[tuple[str, str, float, float]] = []
        self.braces: list[tuple[str, str]] = []
        self.supports: list[tuple[str, str]] = []
        self.settings: str | None = None

    # ---- describing the frame -------------------------------------------------------------

    def node(self, node_id: str, x: float, y: float, z: float) -> FrameBuilder:
        """Add a node at (x, y, z) [m]."""
        self.nodes[node_id] = (float(x), float(y), float(z))
        return self

    def element(
        self,
        element_id: str,
        start: str,
        end: str,
        section: str = "S1",
        member: str | None = None,
    ) -> FrameBuilder:
        """Add an element drawn from ``start`` to ``end`` (optionally with a user member id)."""
        self.elements.append((element_id, start, end, section, member))
        return self

    def brace(self, node_id: str, flange: str) -> FrameBuilder:
        """Brace ``flange`` ("top", "bottom" or "both") at a node."""
        self.braces.append((node_id, flange))
        return self

    def support(self, node_id: str, restrains: str = "all") -> FrameBuilder:
        """Support a node."""
        self.supports.append((node_id, restrains))
        return self

    def length(self, element_id: str) -> float:
        """Return an element's length [m] from its node coordinates."""
        _, start, end, _, _ = self._element(element_id)
        return math.dist(self.nodes[start], self.nodes[end])

    def moments(
        self,
        element_id: str,
        combination: str,
        positions: Sequence[float],
        values: Sequence[float],
    ) -> FrameBuilder:
        """Add force rows: M [kN·m] at positions [m] from the element's start node as drawn."""
        for p, m in zip(positions, values, strict=True):
            self.forces.append((element_id, combination, float(p), float(m)))
        return self

    def moment_field(
        self,
        combination: str,
        field: MomentField,
        elements: Iterable[str] | None = None,
        stations: int = 5,
    ) -> FrameBuilder:
        """Add force rows sampled from a moment field of the global point.

        Each element gets ``stations`` equally spaced positions measured from its start node as
        drawn; the moment at a position is ``field`` at that point in space. An element drawn
        backwards therefore gets the same diagram in space as one drawn forwards.
        """
        chosen = [e[0] for e in self.elements] if elements is None else list(elements)
        for element_id in chosen:
            _, start, end, _, _ = self._element(element_id)
            a, b = np.array(self.nodes[start]), np.array(self.nodes[end])
            length = float(np.linalg.norm(b - a))
            for t in np.linspace(0.0, 1.0, stations):
                x, y, z = a + t * (b - a)
                m = field(float(x), float(y), float(z))
                self.forces.append((element_id, combination, float(t * length), float(m)))
        return self

    def _element(self, element_id: str) -> tuple[str, str, str, str, str | None]:
        for row in self.elements:
            if row[0] == element_id:
                return row
        raise KeyError(element_id)

    # ---- writing and loading --------------------------------------------------------------

    def write(self, shuffle: np.random.Generator | None = None) -> Path:
        """Write every table (and ``flangewise.toml`` if settings are given); return the folder.

        Elements with no force rows at all get zero moments at both ends in every combination
        (``C0`` when there is none), so that member-only tests need not invent diagrams.
        With ``shuffle``, the data rows of every table are written in a random order.
        """
        self.folder.mkdir(parents=True, exist_ok=True)
        combos = list(dict.fromkeys(c for _, c, _, _ in self.forces)) or ["C0"]
        with_forces = {e for e, _, _, _ in self.forces}
        forces = list(self.forces)
        for element_id, *_ in self.elements:
            if element_id not in with_forces:
                length = self.length(element_id)
                forces += [(element_id, c, p, 0.0) for c in combos for p in (0.0, length)]
        has_member = any(e[4] is not None for e in self.elements)
        tables: dict[str, tuple[list[str], list[list[str]]]] = {
            "nodes": (
                ["id", "x", "y", "z"],
                [[n, *map(repr, xyz)] for n, xyz in self.nodes.items()],
            ),
            "elements": (
                ["id", "start", "end", "section"] + (["member"] if has_member else []),
                [
                    [i, s, e, sec] + ([m or ""] if has_member else [])
                    for i, s, e, sec, m in self.elements
                ],
            ),
            "sections": (
                ["name", "d", "b", "tf", "tw", "r", "fy"],
                [[name, *map(repr, dims)] for name, dims in self.sections.items()],
            ),
            "forces": (
                ["element", "combination", "position", "M"],
                [[e, c, repr(p), repr(m)] for e, c, p, m in forces],
            ),
            "braces": (["node", "flange"], [list(b) for b in self.braces]),
            "supports": (["node", "restrains"], [list(s) for s in self.supports]),
        }
        for table, (header, rows) in tables.items():
            if shuffle is not None:
                rows = [rows[i] for i in shuffle.permutation(len(rows))]
            with open(self.folder / f"{table}.csv", "w", newline="", encoding="utf-8") as fh:
                out = csv.writer(fh)
                out.writerow(header)
                out.writerows(rows)
        if self.settings is not None:
            (self.folder / "flangewise.toml").write_text(self.settings, encoding="utf-8")
        return self.folder

    def load(self, shuffle: np.random.Generator | None = None) -> readers.Model:
        """Write the files and load them."""
        return readers.load_model(self.write(shuffle))

    def build(self, shuffle: np.random.Generator | None = None) -> Built:
        """Write, load and lay out the model."""
        model = self.load(shuffle)
        return Built(model, build_layout(model))


@dataclass(frozen=True)
class Built:
    """A loaded model and its layout, with questions answered in m and kN·m."""

    model: readers.Model
    layout: Layout

    @property
    def member_names(self) -> list[str]:
        """Member ids in the order of the members table."""
        return [str(m) for m in self.layout.members.table.index]

    def member_of(self, element_id: str) -> str:
        """The member an element belongs to."""
        return str(self.layout.members.elements.loc[element_id, "member"])

    def elements_of(self, member: str) -> list[str]:
        """The member's elements in member order."""
        el = self.layout.members.elements
        own = el[el["member"] == member].sort_values("order")
        return [str(e) for e in own.index]

    def chains(self) -> set[tuple[str, ...]]:
        """Every member as the tuple of its elements in order."""
        return {tuple(self.elements_of(m)) for m in self.member_names}

    def length_m(self, member: str) -> float:
        """A member's length [m]."""
        return float(self.layout.members.table.loc[member, "length"]) / MM_PER_M

    def segments(self, member: str, flange: str | None = None) -> pd.DataFrame:
        """Segments of a member (optionally one flange's), with start, end and length in m added."""
        t = self.layout.segments.table
        t = t[t["member"] == member]
        if flange is not None:
            t = t[t["flange"] == flange]
        return t.assign(
            start_m=t["s_start"] / MM_PER_M,
            end_m=t["s_end"] / MM_PER_M,
            length_m=t["length"] / MM_PER_M,
        )

    def bounds(self, member: str, flange: str) -> list[tuple[float, float]]:
        """(start, end) [m] of a member's segments of one flange, in order along the member."""
        s = self.segments(member, flange)
        return list(zip(s["start_m"].tolist(), s["end_m"].tolist(), strict=True))

    def pair(self, segment: str, combination: str) -> pd.Series:
        """The diagram record (compressed, demand [N·mm]) of one segment in one combination."""
        d = self.layout.diagrams
        row = self.layout.segments.table.index.get_loc(segment)
        code = d.combinations.index(combination)
        hit = d.pairs[(d.pairs["segment"] == row) & (d.pairs["combination"] == code)]
        assert len(hit) == 1, f"{len(hit)} diagram runs for {segment} in {combination}"
        return hit.iloc[0]

    def demand_knm(self, segment: str, combination: str) -> float:
        """A segment's demand [kN·m] in one combination (0 when its flange is not compressed)."""
        return float(self.pair(segment, combination)["demand"]) / NMM_PER_KNM

    def compressed(self, segment: str, combination: str) -> bool:
        """Whether the segment's flange is in compression in the combination."""
        return bool(self.pair(segment, combination)["compressed"])

    def diagram(self, segment: str, combination: str) -> tuple[np.ndarray, np.ndarray]:
        """A segment's diagram: x [m from the segment's start] and m [kN·m, + compresses flange]."""
        d = self.layout.diagrams
        row = self.layout.segments.table.index.get_loc(segment)
        code = d.combinations.index(combination)
        runs = np.flatnonzero(
            (d.pairs["segment"].to_numpy() == row) & (d.pairs["combination"].to_numpy() == code)
        )
        assert len(runs) == 1, f"{len(runs)} diagram runs for {segment} in {combination}"
        lo, hi = d.offsets[runs[0]], d.offsets[runs[0] + 1]
        return d.x[lo:hi] / MM_PER_M, d.m[lo:hi] / NMM_PER_KNM


@pytest.fixture
def frame(tmp_path: Path) -> Callable[..., FrameBuilder]:
    """Return a factory of empty frame builders, each writing to its own sub-folder."""
    count = iter(range(10_000))
    return lambda name=None: FrameBuilder(tmp_path / (name or f"model{next(count)}"))
