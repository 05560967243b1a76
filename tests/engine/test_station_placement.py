"""Force stations along members: element ends on the member's nodes, whatever the rounding.

Stations are placed on their element's own span along the member in proportion to their position,
so element ends land exactly on the member's node positions; stations closer than the merge
tolerance are one station; x never runs backwards along a member. Models are invented; units as in
``conftest.py`` (m, kN·m).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from flangewise.engine import gradient
from flangewise.engine.check import check_model


def runs_of(built) -> gradient.Runs:
    d = built.layout.diagrams
    length = built.layout.segments.table["length"].to_numpy()[d.pairs["segment"].to_numpy()]
    return gradient.Runs(x=d.x, m=d.m, offsets=d.offsets, length=length)


def exact_inside_counts(built) -> dict[tuple[str, str], int]:
    """Per (segment, combination): distinct inside x, compared exactly (no tolerance)."""
    d = built.layout.diagrams
    seg = built.layout.segments.table
    out = {}
    for k, (s, c) in enumerate(zip(d.pairs["segment"], d.pairs["combination"], strict=True)):
        x = d.x[d.offsets[k] : d.offsets[k + 1]]
        length = seg["length"].iloc[s]
        out[(seg.index[s], d.combinations[c])] = len(np.unique(x[(x > 0.0) & (x < length)]))
    return out


def kinked_beam(frame, rng, *, kink: bool, rounded: bool, ends_only: bool = False):
    """A continuous beam along x of 3 to 5 elements, with optional kinks and rounded positions.

    Interior nodes are lifted by up to L·tan(0.2°), so two neighbouring elements meet at an angle
    below 0.4°, inside the default 0.5° tolerance: still one straight member. Positions are
    rounded to the mm when ``rounded`` (as programs export them).
    """
    n = int(rng.integers(3, 6))
    lengths = rng.uniform(2.0, 5.0, n)
    x = np.r_[0.0, np.cumsum(lengths)]
    lift = rng.uniform(-1.0, 1.0, n + 1) * lengths.min() * math.tan(math.radians(0.2))
    lift[[0, -1]] = 0.0
    f = frame()
    for i, xi in enumerate(x):
        f.node(f"N{i}", xi, 0.0, 3.0 + (lift[i] if kink else 0.0))
    braced = [i for i in range(1, n) if rng.random() < 0.4]
    for i in range(n):
        # Some elements drawn backwards: placement must not depend on it.
        a, b = (f"N{i}", f"N{i + 1}") if rng.random() < 0.7 else (f"N{i + 1}", f"N{i}")
        f.element(f"E{i}", a, b)
    f.support("N0").support(f"N{n}")
    for i in braced:
        f.brace(f"N{i}", "both")
    span = x[-1]
    for combo, field in (
        ("C1", lambda s: 40.0 * math.sin(math.pi * s / span)),
        ("C2", lambda s: -25.0 + 30.0 * s / span),
    ):
        for i in range(n):
            _, a, b, _, _ = f._element(f"E{i}")
            start_x = f.nodes[a][0]
            length = f.length(f"E{i}")
            stations = [0.0, 1.0] if ends_only else [0.0, 0.25, 0.5, 0.75, 1.0]
            pos = [t * length for t in stations]
            where = [start_x + (1 if a == f"N{i}" else -1) * p for p in pos]
            if rounded:
                pos = [round(p, 3) for p in pos]
            f.moments(f"E{i}", combo, pos, [field(w) for w in where])
    return f


@pytest.mark.parametrize("seed", range(12))
def test_kinks_and_rounding_keep_x_rising_and_the_inside_stations_unchanged(frame, seed):
    clean = kinked_beam(frame, np.random.default_rng(seed), kink=False, rounded=False).build()
    messy = kinked_beam(frame, np.random.default_rng(seed), kink=True, rounded=True).build()

    d = messy.layout.diagrams
    for k in range(len(d.pairs)):
        x = d.x[d.offsets[k] : d.offsets[k + 1]]
        assert (np.diff(x) >= 0.0).all(), f"x runs backwards in run {k}: {x}"
    # The same stations inside every segment: a node seen through rounding or a kink is still one.
    assert exact_inside_counts(messy) == exact_inside_counts(clean)
    np.testing.assert_array_equal(
        gradient.distinct_inside_stations(runs_of(messy)),
        gradient.distinct_inside_stations(runs_of(clean)),
    )


def test_member_x_never_runs_backwards_across_a_kinked_node(frame):
    # Two 5 m elements meeting at N2 lifted 15 mm (0.17° each way, 0.34° between them): one
    # member. Each element's own length is a little longer than its span along the member, so a
    # station at its end placed by its own length would pass the node.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 5, 0, 3.015).node("N3", 10, 0, 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3")
    f.support("N1").support("N3")
    for e in ("E1", "E2"):
        length = f.length(e)
        f.moments(e, "C1", [0.0, length / 2, length], [0.0, 10.0, 0.0])
    built = f.build()
    st = built.layout.diagrams.stations
    assert (np.diff(st.s) >= 0.0).all()
    # The two element ends at N2 sit exactly on the node's position along the member.
    node_s = built.layout.members.stations.set_index("node").loc["N2", "s"]
    assert (st.s == node_s).sum() == 2


def test_rounded_positions_at_nodes_do_not_count_as_extra_inside_stations(frame):
    # Three elements of about 4 m with node coordinates to the 0.1 mm, moments only at element
    # ends, positions exported rounded to the mm: E1's end is written 4.000 for a length of
    # 4000.4 mm. Inside the one unbraced segment there are two stations (N2, N3): fewer than the
    # 3 the end-moment rule needs, so ω2 = 1.0 and the few-stations flag, whatever the rounding
    # (common practice: a node is one station).
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4.0004, 0, 3).node("N3", 8.0008, 0, 3).node("N4", 12, 0, 3)
    for i in range(3):
        f.element(f"E{i + 1}", f"N{i + 1}", f"N{i + 2}")
    f.support("N1").support("N4")
    for i, (m0, m1) in enumerate(((60.0, 40.0), (40.0, 20.0), (20.0, 0.0))):
        length = round(f.length(f"E{i + 1}"), 3)
        f.moments(f"E{i + 1}", "C1", [0.0, length], [m0, m1])
    result = check_model(f.load()).results
    top = result[result["flange"] == "top"].iloc[0]
    assert top["omega2_end"] == 1.0
    assert "few-stations" in top["flags"]


def test_stations_closer_than_the_merge_tolerance_are_one_station(frame):
    # E1 (4 m) exported with the same midspan station twice, 0.3 mm apart (below the 0.5 mm
    # merge tolerance of readers/model.py): one x, the moment jumping there as at a node.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4, 0, 3)
    f.element("E1", "N1", "N2")
    f.support("N1").support("N2")
    f.moments("E1", "C1", [0.0, 1.0, 2.0, 2.0003, 3.0, 4.0], [0.0, 30.0, 40.0, 40.0, 30.0, 0.0])
    built = f.build()
    x, _ = built.diagram(built.layout.segments.table.index[0], "C1")
    np.testing.assert_array_equal(x * 1000.0, [0.0, 1000.0, 2000.0, 2000.0, 3000.0, 4000.0])
    assert gradient.distinct_inside_stations(runs_of(built)).tolist() == [3, 3]
