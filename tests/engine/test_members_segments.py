"""Members and unbraced segments of small invented frames, every expectation worked out by hand.

Conventions in the comments: coordinates and distances in m; a member points "forwards" (towards
+x, else +y, else up: README, "Sign convention"), so a beam along x starts at its smallest x and a
column at its foot; ``s`` is the distance along a member from its start; M is in kN·m, positive
when it compresses the top flange. A node braces a flange when it is a support, a member end that
connects to another element, or a listed brace of that flange (README, "Which flange is braced
where"); the top-flange segments run between consecutive top-braced nodes, the bottom-flange ones
between bottom-braced nodes, and a member steeper than 45° gets only "either" segments.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from flangewise.engine.diagrams import member_stations
from flangewise.readers import InputError

FLANGES = ("top", "bottom", "either")


@dataclass(frozen=True)
class Expect:
    """One member as worked out by hand.

    ``top``, ``bottom`` and ``either`` list the (start, end) of that flange's segments [m from the
    member's start] in order; ``cantilever`` names the segments that reach a free end as
    (flange, index along the member from 0).
    """

    elements: tuple[str, ...]
    length: float
    top: tuple[tuple[float, float], ...] = ()
    bottom: tuple[tuple[float, float], ...] = ()
    either: tuple[tuple[float, float], ...] = ()
    steep: bool = False
    cantilever: frozenset[tuple[str, int]] = field(default_factory=frozenset)


def assert_bounds(actual: list[tuple[float, float]], expected, what: str) -> None:
    assert len(actual) == len(expected), f"{what}: {actual} != {list(expected)}"
    if expected:
        np.testing.assert_allclose(np.array(actual), np.array(expected), atol=1e-6, err_msg=what)


def check_layout(built, expected: list[Expect]) -> dict[tuple[str, ...], str]:
    """Compare members and segments with the hand-worked ones; return member id per chain."""
    assert len(built.member_names) == len(expected)
    assert built.chains() == {e.elements for e in expected}
    names = {}
    for e in expected:
        member = built.member_of(e.elements[0])
        names[e.elements] = member
        assert built.elements_of(member) == list(e.elements)
        assert built.length_m(member) == pytest.approx(e.length, abs=1e-6)
        assert bool(built.layout.members.table.loc[member, "steep"]) is e.steep
        for flange in FLANGES:
            assert_bounds(built.bounds(member, flange), getattr(e, flange), f"{member} {flange}")
            cantilever = built.segments(member, flange)["cantilever"].tolist()
            assert cantilever == [(flange, k) in e.cantilever for k in range(len(cantilever))], (
                f"{member} {flange} cantilever flags"
            )
    return names


def segment_ids(built, member: str, flange: str) -> list[str]:
    return [str(s) for s in built.segments(member, flange).index]


# ---------------------------------------------------------------------------------------------
# 1. T junction
# ---------------------------------------------------------------------------------------------


def test_t_junction_beam_runs_through_the_node_and_the_framing_element_is_its_own_member(frame):
    # Plan at z = 3: main beam N1 (0,0) - N2 (4,0) - N3 (8,0), elements E1, E2 along +x.
    # A secondary beam E3 frames in at N2, square to it, along +y to N4 (4,3).
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4, 0, 3).node("N3", 8, 0, 3).node("N4", 4, 3, 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3").element("E3", "N2", "N4")
    f.support("N1").support("N3").support("N4")
    built = f.build()

    # E1 and E2 meet end to end at N2, in line (0°), same section: one member of 8 m.
    # E3 meets them at 90°: its own member, 3 m, running +y from N2.
    # Main beam: braced at N1 and N3 (supports). At N2 E3 frames in, but a framing element is not a
    # brace (infer_braces is off by default) -> one segment per flange, s = 0 .. 8.
    # E3: its start N2 is a member end connected to E1, E2 (braced), its end N4 a support -> 0 .. 3.
    names = check_layout(
        built,
        [
            Expect(("E1", "E2"), 8.0, top=((0, 8),), bottom=((0, 8),)),
            Expect(("E3",), 3.0, top=((0, 3),), bottom=((0, 3),)),
        ],
    )
    main = built.segments(names[("E1", "E2")])
    assert set(main["node_start"]) == {"N1"} and set(main["node_end"]) == {"N3"}
    secondary = built.segments(names[("E3",)])
    assert set(secondary["node_start"]) == {"N2"} and secondary["braced_start"].all()


# ---------------------------------------------------------------------------------------------
# 2. X junction
# ---------------------------------------------------------------------------------------------


def test_x_junction_two_crossing_beams_are_two_members_of_two_elements(frame):
    # Plan at z = 3: beam A along x from N1 (0,0) through N5 (3,0) to N2 (6,0): A1, A2.
    # Beam B along y from N3 (3,-2) through N5 to N4 (3,2): B1, B2. A "both" brace at N5.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 6, 0, 3).node("N3", 3, -2, 3).node("N4", 3, 2, 3)
    f.node("N5", 3, 0, 3)
    f.element("A1", "N1", "N5").element("A2", "N5", "N2")
    f.element("B1", "N3", "N5").element("B2", "N5", "N4")
    for n in ("N1", "N2", "N3", "N4"):
        f.support(n)
    f.brace("N5", "both")
    built = f.build()

    # At N5 four element ends meet: A1/A2 are in line (180°), B1/B2 are in line, A and B are square.
    # So two members: A1 A2 (6 m, along +x), B1 B2 (4 m, along +y from y = -2).
    # Each is braced at its supported ends and, for both flanges, at N5 (s = 3 on A, s = 2 on B).
    check_layout(
        built,
        [
            Expect(("A1", "A2"), 6.0, top=((0, 3), (3, 6)), bottom=((0, 3), (3, 6))),
            Expect(("B1", "B2"), 4.0, top=((0, 2), (2, 4)), bottom=((0, 2), (2, 4))),
        ],
    )


# ---------------------------------------------------------------------------------------------
# 3. Portal knee, and the 45° line between a beam and a steep member
# ---------------------------------------------------------------------------------------------


def test_portal_knee_column_and_rafter_are_separate_and_the_column_has_no_top_flange(frame):
    # Column: N1 (0,0,0) - N2 (0,0,3) - N3 (0,0,6), elements C1, C2; a girt with fly braces to both
    # flanges at N2. Rafter from the knee N3 at 10° up along +x: N4 at 5 m run, N5 at 10 m run.
    rise = math.tan(math.radians(10.0))
    f = frame()
    f.node("N1", 0, 0, 0).node("N2", 0, 0, 3).node("N3", 0, 0, 6)
    f.node("N4", 5, 0, 6 + 5 * rise).node("N5", 10, 0, 6 + 10 * rise)
    f.element("C1", "N1", "N2").element("C2", "N2", "N3")
    f.element("R1", "N3", "N4").element("R2", "N4", "N5")
    f.support("N1").support("N5")
    f.brace("N2", "both")
    built = f.build()

    # At the knee N3 the column (vertical) and rafter (10°) meet at 80°: not collinear -> two
    # members.
    # Column: 6 m, 90° > 45° -> steep, flange "either" only, split by the support N1, the "both"
    # brace N2 (s = 3) and its connected end N3 -> (0,3), (3,6).
    # Rafter: 10 m run at 10° -> 10 / cos 10° along the slope; braced at N3 (connected end) and N5
    # (support); N4 is not braced -> one top and one bottom segment over the whole length.
    rafter = 10.0 / math.cos(math.radians(10.0))
    names = check_layout(
        built,
        [
            Expect(("C1", "C2"), 6.0, either=((0, 3), (3, 6)), steep=True),
            Expect(("R1", "R2"), rafter, top=((0, rafter),), bottom=((0, rafter),)),
        ],
    )
    column = built.segments(names[("C1", "C2")])
    assert set(column["flange"]) == {"either"}
    assert column["braced_end"].iloc[-1]  # the knee: a connected member end
    assert len(built.layout.segments.ignored) == 0


@pytest.mark.parametrize(
    ("degrees", "steep"),
    [(44.0, False), (46.0, True)],
)
def test_members_steeper_than_45_degrees_have_only_either_segments(frame, degrees, steep):
    # One 4 m element from N1 (0,0,0) rising at `degrees` along +x; supports at both ends.
    a = math.radians(degrees)
    f = frame()
    f.node("N1", 0, 0, 0).node("N2", 4 * math.cos(a), 0, 4 * math.sin(a))
    f.element("E1", "N1", "N2")
    f.support("N1").support("N2")
    built = f.build()
    # 44° is a sloping beam with a top and a bottom flange; 46° is steeper than 45°: "either".
    whole = ((0.0, 4.0),)
    expect = (
        Expect(("E1",), 4.0, either=whole, steep=True)
        if steep
        else Expect(("E1",), 4.0, top=whole, bottom=whole)
    )
    check_layout(built, [expect])


# ---------------------------------------------------------------------------------------------
# 4. Elements drawn backwards
# ---------------------------------------------------------------------------------------------


def _three_element_beam(frame, name: str, middle_backwards: bool):
    # Beam at z = 3 along x: N1 (0) - N2 (2) - N3 (5) - N4 (9); elements of 2, 3 and 4 m (unequal,
    # so that a wrong order would show). Supports N1, N4; top brace N2, bottom brace N3.
    # Moment: simple span L = 9 m under w = 8 kN/m, M(x) = w x (L - x) / 2 = 4 x (9 - x), sampled at
    # 7 stations per element (for E2 every 0.5 m, so midspan x = 4.5 is a station).
    f = frame(name)
    f.node("N1", 0, 0, 3).node("N2", 2, 0, 3).node("N3", 5, 0, 3).node("N4", 9, 0, 3)
    f.element("E1", "N1", "N2")
    if middle_backwards:
        f.element("E2", "N3", "N2")
    else:
        f.element("E2", "N2", "N3")
    f.element("E3", "N3", "N4")
    f.support("N1").support("N4")
    f.brace("N2", "top").brace("N3", "bottom")
    f.moment_field("UDL", lambda x, y, z: 4.0 * x * (9.0 - x), stations=7)
    return f.build()


def test_element_drawn_backwards_keeps_one_member_in_order_with_the_same_segments(frame):
    built = _three_element_beam(frame, "backwards", middle_backwards=True)
    forwards = _three_element_beam(frame, "forwards", middle_backwards=False)

    # One member E1 E2 E3 of 9 m. Top braced at N1 (0), N2 (2), N4 (9) -> (0,2), (2,9);
    # bottom braced at N1, N3 (5), N4 -> (0,5), (5,9). No free end.
    expected = [Expect(("E1", "E2", "E3"), 9.0, top=((0, 2), (2, 9)), bottom=((0, 5), (5, 9)))]
    names = check_layout(built, expected)
    check_layout(forwards, expected)
    member = names[("E1", "E2", "E3")]

    el = built.layout.members.elements
    # E2 (drawn from N3 at s = 5 to N2 at s = 2) lies at s = 2 .. 5, against the member direction.
    assert el.loc["E2", "reversed"]
    assert el.loc["E2", ["s0", "s1"]].tolist() == pytest.approx([2000.0, 5000.0])
    assert not el.loc["E1", "reversed"] and not el.loc["E3", "reversed"]

    # Placed along the member, E2's stations run s = 2.0 .. 5.0 every 0.5 m with
    # M = 4 s (9 - s) = 56, 65, 72, 77, 80, 81, 80 kN·m.
    stations = member_stations(built.model, built.layout.members)
    e2_row = el.index.get_loc("E2")
    e2 = stations.element == e2_row
    np.testing.assert_allclose(stations.s[e2] / 1000.0, np.arange(2.0, 5.01, 0.5), atol=1e-9)
    np.testing.assert_allclose(
        stations.M[e2] / 1e6, [56, 65, 72, 77, 80, 81, 80], rtol=1e-9, atol=1e-9
    )

    # The top segment (2, 9): at x = 1.5 m from its start (s = 3.5) M = 4 * 3.5 * 5.5 = 77 kN·m;
    # its demand is the midspan peak wL²/8 = 8 * 81 / 8 = 81 kN·m (simple span under uniform load,
    # common practice) at s = 4.5, a station of E2.
    top2 = segment_ids(built, member, "top")[1]
    x, m = built.diagram(top2, "UDL")
    at = np.flatnonzero(np.isclose(x, 1.5))
    assert len(at) == 1 and m[at[0]] == pytest.approx(77.0)
    assert built.demand_knm(top2, "UDL") == pytest.approx(81.0)
    # Positive M everywhere: the bottom flange is in tension, no bottom segment is critical.
    for seg in segment_ids(built, member, "bottom"):
        assert not built.compressed(seg, "UDL")

    # The same diagrams as the all-forwards beam, segment by segment.
    for flange in ("top", "bottom"):
        for a, b in zip(
            segment_ids(built, member, flange),
            segment_ids(forwards, forwards.member_of("E1"), flange),
            strict=True,
        ):
            xa, ma = built.diagram(a, "UDL")
            xb, mb = forwards.diagram(b, "UDL")
            np.testing.assert_allclose(xa, xb, atol=1e-9)
            np.testing.assert_allclose(ma, mb, rtol=1e-9, atol=1e-9)


# ---------------------------------------------------------------------------------------------
# 5. Skew just inside and just outside the angle tolerance
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(("degrees", "one_member"), [(0.4, True), (0.6, False)])
def test_skew_within_the_tolerance_continues_the_member_and_beyond_it_ends_it(
    frame, degrees, one_member
):
    # Plan at z = 3: E1 from N1 (0,0) to N2 (4,0); E2 from N2, 4 m long, turned `degrees` in plan:
    # N3 = (4 + 4 cos θ, 4 sin θ). Supports N1, N3. Default angle tolerance 0.5°.
    t = math.radians(degrees)
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4, 0, 3).node("N3", 4 + 4 * math.cos(t), 4 * math.sin(t), 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3")
    f.support("N1").support("N3")
    built = f.build()
    if one_member:
        # 0.4° <= 0.5°: one member. Its axis is the sum of the two element vectors, N1 -> N3, and
        # its length is the chord |N1 N3| = 2 * 4 * cos(θ/2) = 8 cos 0.2° (isosceles triangle).
        chord = 8.0 * math.cos(t / 2)
        check_layout(built, [Expect(("E1", "E2"), chord, top=((0, chord),), bottom=((0, chord),))])
    else:
        # 0.6° > 0.5°: two members of 4 m, each braced at its support and at N2, where it ends and
        # connects to the other (a connected member end).
        whole = ((0.0, 4.0),)
        check_layout(
            built,
            [
                Expect(("E1",), 4.0, top=whole, bottom=whole),
                Expect(("E2",), 4.0, top=whole, bottom=whole),
            ],
        )


# ---------------------------------------------------------------------------------------------
# 6. A section change in a straight line
# ---------------------------------------------------------------------------------------------


def _beam_split_at_n2(frame, e1: dict, e2: dict):
    """Beam at z = 3 along x: N1 (0) - N2 (4) - N3 (8), supports N1 and N3, split at N2.

    Whatever splits it, the result is two members of 4 m that both end at N2, connected to each
    other, so both flanges are braced there: one segment per flange, 0 .. 4 m, in each.
    """
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4, 0, 3).node("N3", 8, 0, 3)
    f.element("E1", "N1", "N2", **e1).element("E2", "N2", "N3", **e2)
    f.support("N1").support("N3")
    built = f.build()
    whole = ((0.0, 4.0),)
    names = check_layout(
        built,
        [
            Expect(("E1",), 4.0, top=whole, bottom=whole),
            Expect(("E2",), 4.0, top=whole, bottom=whole),
        ],
    )
    return built, names


def test_section_change_in_a_straight_line_splits_the_member(frame):
    # E1 in S1, E2 in S2: in line but of different sections.
    built, names = _beam_split_at_n2(frame, {"section": "S1"}, {"section": "S2"})
    table = built.layout.members.table
    assert table.loc[names[("E1",)], "section"] == "S1"
    assert table.loc[names[("E2",)], "section"] == "S2"


# ---------------------------------------------------------------------------------------------
# 7. Overlapping elements
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("nodes", "elements"),
    [
        pytest.param(
            # E2 (0..4) lies inside E1 (0..8); both leave N1 along +x.
            {"N1": 0.0, "N2": 4.0, "N3": 8.0},
            [("E1", "N1", "N3"), ("E2", "N1", "N2")],
            id="one-inside-the-other",
        ),
        pytest.param(
            # The same element twice, the second drawn the other way.
            {"N1": 0.0, "N2": 4.0},
            [("E1", "N1", "N2"), ("E2", "N2", "N1")],
            id="duplicate-reversed",
        ),
        pytest.param(
            # E1 (0..8) and E2 (4..12) share 4..8 but no end node: E2 starts at N2, inside E1.
            {"N1": 0.0, "N2": 4.0, "N3": 8.0, "N4": 12.0},
            [("E1", "N1", "N3"), ("E2", "N2", "N4")],
            id="partial-overlap-no-shared-node",
        ),
    ],
)
def test_overlapping_elements_are_an_input_error_at_an_element_row(frame, nodes, elements):
    f = frame()
    for n, x in nodes.items():
        f.node(n, x, 0, 3)
    for e in elements:
        f.element(*e)
    f.support("N1")
    with pytest.raises(InputError) as info:
        f.build()
    # The elements file, spreadsheet rows 2 (E1) and 3 (E2), column 'id', value the element there.
    row_of = {2: "E1", 3: "E2"}
    found = [
        p
        for p in info.value.problems
        if Path(p.file).name == "elements.csv" and p.row in row_of and p.column == "id"
    ]
    assert found, info.value.report()
    assert found[0].value == row_of[found[0].row]
    assert "elements.csv" in info.value.report()


# ---------------------------------------------------------------------------------------------
# 8. A cantilever
# ---------------------------------------------------------------------------------------------


def test_segment_reaching_a_free_end_is_a_cantilever(frame):
    # Beam at z = 3 along x: N1 (0) - N2 (6) - N3 (8); supports N1 and N2; N3 is free (a 2 m
    # overhang). Load: w = 10 kN/m on the overhang only.
    # Overhang: M = -w (8 - x)² / 2 = -5 (8 - x)², so -20 at N2 (cantilever root moment w a² / 2
    # with a = 2 m, common practice). Back span: the support moment dies out linearly to N1,
    # M = -20 x / 6.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 6, 0, 3).node("N3", 8, 0, 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3")
    f.support("N1").support("N2")
    f.moment_field("OVERHANG", lambda x, y, z: -20.0 * x / 6.0, elements=["E1"])
    f.moment_field("OVERHANG", lambda x, y, z: -5.0 * (8.0 - x) ** 2, elements=["E2"])
    built = f.build()

    # One member of 8 m; both flanges braced at N1 and N2 (supports): (0,6), (6,8). The second
    # segment of each flange reaches N3, which connects to nothing and is not supported: cantilever.
    names = check_layout(
        built,
        [
            Expect(
                ("E1", "E2"),
                8.0,
                top=((0, 6), (6, 8)),
                bottom=((0, 6), (6, 8)),
                cantilever=frozenset({("top", 1), ("bottom", 1)}),
            )
        ],
    )
    member = names[("E1", "E2")]
    tip = built.segments(member).query("cantilever")
    assert set(tip["node_end"]) == {"N3"}
    assert tip["free_end"].all() and not tip["braced_end"].any() and not tip["free_start"].any()
    st = built.layout.segments.stations
    assert st.loc[st["member"] == member].set_index("node")["free"].to_dict() == {
        "N1": False,
        "N2": False,
        "N3": True,
    }
    # Hogging everywhere: the bottom flange is compressed, 20 kN·m at N2 on both sides of it.
    top, bottom = segment_ids(built, member, "top"), segment_ids(built, member, "bottom")
    for seg in bottom:
        assert built.compressed(seg, "OVERHANG")
        assert built.demand_knm(seg, "OVERHANG") == pytest.approx(20.0)
    for seg in top:
        assert not built.compressed(seg, "OVERHANG")


# ---------------------------------------------------------------------------------------------
# 9. A purlin-braced rafter under gravity and under uplift
# ---------------------------------------------------------------------------------------------


def test_purlin_braced_rafter_top_segments_critical_under_gravity_bottom_under_uplift(frame):
    # Rafter at 10° along +x: P0..P6 at a horizontal run of 0, 2, ..., 12 m, z = 3 + x tan 10°;
    # elements R1..R6, each 2 / cos 10° long. Supports at P0 and P6. Purlins (top flange) at P1..P5;
    # a fly brace (bottom flange) only at P1, near the knee.
    slope = math.radians(10.0)
    f = frame()
    for k in range(7):
        f.node(f"P{k}", 2 * k, 0, 3 + 2 * k * math.tan(slope))
    for k in range(6):
        f.element(f"R{k + 1}", f"P{k}", f"P{k + 1}")
    f.support("P0").support("P6")
    for k in range(1, 6):
        f.brace(f"P{k}", "top")
    f.brace("P1", "bottom")
    # Invented diagrams in terms of the horizontal run x: gravity M = 3 x (12 - x) (sagging,
    # positive everywhere inside), uplift M = -1.5 x (12 - x) (hogging everywhere inside).
    f.moment_field("GRAVITY", lambda x, y, z: 3.0 * x * (12.0 - x))
    f.moment_field("UPLIFT", lambda x, y, z: -1.5 * x * (12.0 - x))
    built = f.build()

    # One member, 12 / cos 10° along the slope; a = 2 / cos 10° between nodes.
    # Top braced at P0..P6 (supports + purlins): six segments of length a.
    # Bottom braced at P0, P1 (fly brace), P6: (0, a), (a, 6a). The purlins do not count there.
    a = 2.0 / math.cos(slope)
    names = check_layout(
        built,
        [
            Expect(
                tuple(f"R{k}" for k in range(1, 7)),
                6 * a,
                top=tuple((k * a, (k + 1) * a) for k in range(6)),
                bottom=((0, a), (a, 6 * a)),
            )
        ],
    )
    member = names[tuple(f"R{k}" for k in range(1, 7))]
    top, bottom = segment_ids(built, member, "top"), segment_ids(built, member, "bottom")

    # Gravity: every top segment is compressed; its demand is the largest sampled 3x(12 - x) over
    # its run [2k, 2k + 2], at a node: 3*2*10 = 60, 3*4*8 = 96, 3*6*6 = 108, 108, 96, 60.
    for seg, peak in zip(top, [60, 96, 108, 108, 96, 60], strict=True):
        assert built.compressed(seg, "GRAVITY")
        assert built.demand_knm(seg, "GRAVITY") == pytest.approx(peak)
    # ... and no bottom segment is (M >= 0 puts the bottom flange in tension).
    for seg in bottom:
        assert not built.compressed(seg, "GRAVITY")
        assert built.demand_knm(seg, "GRAVITY") == 0.0

    # Uplift: the bottom flange is compressed between the bottom braces: (0, a) up to
    # 1.5*2*10 = 30 at P1, (a, 6a) up to 1.5*6*6 = 54 at x = 6 (P3).
    for seg, peak in zip(bottom, [30, 54], strict=True):
        assert built.compressed(seg, "UPLIFT")
        assert built.demand_knm(seg, "UPLIFT") == pytest.approx(peak)
    for seg in top:
        assert not built.compressed(seg, "UPLIFT")


# ---------------------------------------------------------------------------------------------
# 10. A beam continuous over three supports
# ---------------------------------------------------------------------------------------------


def test_two_span_beam_hogging_compresses_the_bottom_flange_next_to_the_middle_support(frame):
    # Two equal spans L = 6 m continuous over a middle support, uniform load w = 20 kN/m.
    # Closed form (two equal spans, uniform load: the continuous-beam coefficients tabulated in
    # structural-analysis textbooks and handbooks, common practice; also from the three-moment
    # equation, M_A L + 2 M_B (2L) + M_C L = -2 w L³ / 4 with M_A = M_C = 0 -> M_B = -w L² / 8):
    #   end reaction 3 w L / 8 = 45 kN; M(x) = 45 x - 10 x² in the first span (mirrored in the
    #   second),
    #   support moment -w L² / 8 = -20 * 36 / 8 = -90 kN·m,
    #   sagging peak 9 w L² / 128 = 50.625 kN·m at x = 3 L / 8 = 2.25 m, inflection at x = 4.5 m.
    # Beam at z = 4 along x: N0..N8 every 1.5 m (E1..E8), 5 stations per element (every 0.375 m, so
    # x = 2.25 and 9.75 are stations). Supports N0, N4, N8; top braces at N2 (3 m) and N6 (9 m);
    # bottom braces at N3 (4.5 m) and N5 (7.5 m).
    f = frame()
    for k in range(9):
        f.node(f"N{k}", 1.5 * k, 0, 4)
    for k in range(8):
        f.element(f"E{k + 1}", f"N{k}", f"N{k + 1}")
    for n in ("N0", "N4", "N8"):
        f.support(n)
    f.brace("N2", "top").brace("N6", "top").brace("N3", "bottom").brace("N5", "bottom")

    def moment(x: float, y: float, z: float) -> float:
        u = x if x <= 6.0 else 12.0 - x
        return 45.0 * u - 10.0 * u * u

    f.moment_field("UDL", moment)
    built = f.build()

    # One member E1..E8 of 12 m. Top braced at 0, 3, 6, 9, 12; bottom at 0, 4.5, 6, 7.5, 12.
    chain = tuple(f"E{k}" for k in range(1, 9))
    names = check_layout(
        built,
        [
            Expect(
                chain,
                12.0,
                top=((0, 3), (3, 6), (6, 9), (9, 12)),
                bottom=((0, 4.5), (4.5, 6), (6, 7.5), (7.5, 12)),
            )
        ],
    )
    member = names[chain]
    top, bottom = segment_ids(built, member, "top"), segment_ids(built, member, "bottom")

    # Bottom segments next to the middle support (4.5..6 and 6..7.5): hogging from the inflection
    # point to the support, demand w L² / 8 = 90 kN·m.
    for seg in bottom[1:3]:
        assert built.compressed(seg, "UDL")
        assert built.demand_knm(seg, "UDL") == pytest.approx(90.0)
    # The outer bottom segments (0..4.5, 7.5..12) stop at the inflection point: M >= 0 there, not
    # critical (an inflection point is not a brace, but here a real brace sits on it).
    for seg in (bottom[0], bottom[3]):
        assert not built.compressed(seg, "UDL")
    # Top segments mid-span (0..3, 9..12) hold the sagging peak 9 w L² / 128 = 50.625 kN·m.
    for seg in (top[0], top[3]):
        assert built.compressed(seg, "UDL")
        assert built.demand_knm(seg, "UDL") == pytest.approx(50.625)
    # Top segments 3..6 and 6..9 start (end) sagging at M(3) = 45*3 - 10*9 = 45 kN·m: compressed
    # with that demand, although most of them is hogging.
    for seg in (top[1], top[2]):
        assert built.compressed(seg, "UDL")
        assert built.demand_knm(seg, "UDL") == pytest.approx(45.0)


# ---------------------------------------------------------------------------------------------
# 11. The user's member id column
# ---------------------------------------------------------------------------------------------


def test_consistent_user_member_ids_name_the_member(frame):
    # Beam at z = 3 along x: N1 (0) - N2 (3) - N3 (6) - N4 (9), E1..E3 all given member "RB-12".
    # A post E4 from N5 (3,0,0) up to N2 frames in, with no member id. Supports N1, N4, N5.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 3, 0, 3).node("N3", 6, 0, 3).node("N4", 9, 0, 3)
    f.node("N5", 3, 0, 0)
    for k in range(1, 4):
        f.element(f"E{k}", f"N{k}", f"N{k + 1}", member="RB-12")
    f.element("E4", "N5", "N2")
    f.support("N1").support("N4").support("N5")
    built = f.build()
    # E1 E2 E3 chain straight through N2 (the post is square to them): member "RB-12", 9 m.
    # The post: a vertical member of 3 m (steep), braced at its support and its connected top end.
    names = check_layout(
        built,
        [
            Expect(("E1", "E2", "E3"), 9.0, top=((0, 9),), bottom=((0, 9),)),
            Expect(("E4",), 3.0, either=((0, 3),), steep=True),
        ],
    )
    assert names[("E1", "E2", "E3")] == "RB-12"
    assert built.layout.members.table.loc["RB-12", "user_id"] == "RB-12"
    assert names[("E4",)] != "RB-12"
    assert pd.isna(built.layout.members.table.loc[names[("E4",)], "user_id"])
    assert (built.segments("RB-12")["member"] == "RB-12").all()


def test_a_change_of_user_member_id_ends_the_member(frame):
    # E1 is member "A", E2 member "B": in line and of one section, but the member column changes.
    _, names = _beam_split_at_n2(frame, {"member": "A"}, {"member": "B"})
    assert names == {("E1",): "A", ("E2",): "B"}


@pytest.mark.parametrize(
    ("nodes", "elements"),
    [
        pytest.param(
            # A corner: E2 turns down from N2 to N3 (4,0,0).
            {"N1": (0, 0, 3), "N2": (4, 0, 3), "N3": (4, 0, 0)},
            [("E1", "N1", "N2", "S1"), ("E2", "N2", "N3", "S1")],
            id="corner",
        ),
        pytest.param(
            # In line, but the section changes at N2.
            {"N1": (0, 0, 3), "N2": (4, 0, 3), "N3": (8, 0, 3)},
            [("E1", "N1", "N2", "S1"), ("E2", "N2", "N3", "S2")],
            id="section-change",
        ),
        pytest.param(
            # In line, but with a 1 m gap between N2 and N3.
            {"N1": (0, 0, 3), "N2": (4, 0, 3), "N3": (5, 0, 3), "N4": (9, 0, 3)},
            [("E1", "N1", "N2", "S1"), ("E2", "N3", "N4", "S1")],
            id="gap",
        ),
    ],
)
def test_user_member_id_on_elements_that_are_not_one_straight_chain_is_an_input_error(
    frame, nodes, elements
):
    f = frame()
    for n, xyz in nodes.items():
        f.node(n, *xyz)
    for e, start, end, section in elements:
        f.element(e, start, end, section=section, member="G-7")
    f.support("N1")
    with pytest.raises(InputError) as info:
        f.build()
    # Both elements (rows 2 and 3) carry "G-7" but cannot chain: the error names the elements file,
    # the member column, the id, and the row of one of them.
    found = [
        p
        for p in info.value.problems
        if Path(p.file).name == "elements.csv" and p.column == "member" and p.value == "G-7"
    ]
    assert found, info.value.report()
    assert found[0].row in (2, 3)


# ---------------------------------------------------------------------------------------------
# 12. Member breaks from the settings
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("with_break", [False, True])
def test_break_node_in_the_settings_splits_a_straight_beam(frame, with_break):
    # Beam at z = 3 along x: N1 (0) - N2 (4) - N3 (8), one section; supports N1, N3.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4, 0, 3).node("N3", 8, 0, 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3")
    f.support("N1").support("N3")
    if with_break:
        f.settings = '[members]\nbreaks = ["N2"]\n'
    built = f.build()
    if not with_break:
        # Control: one member of 8 m, one segment per flange.
        check_layout(built, [Expect(("E1", "E2"), 8.0, top=((0, 8),), bottom=((0, 8),))])
        return
    # breaks = ["N2"]: every member ends at N2 -> two members of 4 m. Each end at N2 connects to the
    # other member: braced (connected_ends_brace is on by default).
    assert built.model.settings.members.breaks == ("N2",)
    whole = ((0.0, 4.0),)
    names = check_layout(
        built,
        [
            Expect(("E1",), 4.0, top=whole, bottom=whole),
            Expect(("E2",), 4.0, top=whole, bottom=whole),
        ],
    )
    first = built.segments(names[("E1",)])
    assert (first["node_end"] == "N2").all() and first["braced_end"].all()


# ---------------------------------------------------------------------------------------------
# 13. Invariance to row order, node numbering and drawing direction; segment counts
# ---------------------------------------------------------------------------------------------

# A frame of three members:
#   main beam G1..G8 at z = 4 along x, nodes B0..B8 every 1.5 m (12 m), supports B0 and B8;
#   a column K1 (F0 (6,0,0) -> F1 (6,0,2)), K2 (F1 -> B4), framing into the beam at B4, support F0;
#   a cross beam J1 from B2 along +y to T1 (3,4,4), support T1.
INV_NODES = {
    **{f"B{k}": (1.5 * k, 0.0, 4.0) for k in range(9)},
    "F0": (6.0, 0.0, 0.0),
    "F1": (6.0, 0.0, 2.0),
    "T1": (3.0, 4.0, 4.0),
}
INV_ELEMENTS = [
    *[(f"G{k + 1}", f"B{k}", f"B{k + 1}") for k in range(8)],
    ("K1", "F0", "F1"),
    ("K2", "F1", "B4"),
    ("J1", "B2", "T1"),
]
INV_SUPPORTS = ["B0", "B8", "F0", "T1"]
BRACE_CHOICES = (None, "top", "bottom", "both")


def _inv_field_gravity(x: float, y: float, z: float) -> float:
    return 2.0 * x * (12.0 - x) - 5.0 + 3.0 * y - z


def _inv_field_wind(x: float, y: float, z: float) -> float:
    return -1.5 * x * (12.0 - x) + 4.0 + 2.0 * z - y


def _inv_build(frame, name, braces, *, rename=None, reverse=frozenset(), shuffle=None):
    rename = rename or {n: n for n in INV_NODES}
    f = frame(name)
    for n, xyz in INV_NODES.items():
        f.node(rename[n], *xyz)
    for e, start, end in INV_ELEMENTS:
        if e in reverse:
            start, end = end, start
        f.element(e, rename[start], rename[end])
    for n in INV_SUPPORTS:
        f.support(rename[n])
    for n, flange in braces.items():
        f.brace(rename[n], flange)
    f.moment_field("G", _inv_field_gravity)
    f.moment_field("W", _inv_field_wind)
    return f.build(shuffle)


def _inv_signature(built, back: dict[str, str]) -> dict[str, object]:
    """Everything that must not depend on row order, node ids or drawing direction."""
    lay = built.layout
    members = lay.members.table[["section", "length", "n_elements", "steep"]].sort_index()
    chains = {m: tuple(built.elements_of(m)) for m in built.member_names}
    seg = lay.segments.table.drop(columns=["node_start", "node_end"]).assign(
        node_start=lay.segments.table["node_start"].map(back),
        node_end=lay.segments.table["node_end"].map(back),
    )
    d = lay.diagrams
    names = lay.segments.table.index.to_numpy()
    pairs = (
        d.pairs.assign(
            segment=names[d.pairs["segment"].to_numpy()],
            combination=np.asarray(d.combinations, dtype=object)[d.pairs["combination"]],
        )
        .set_index(["segment", "combination"])
        .sort_index()
    )
    runs = {}
    for i, (s, c) in enumerate(zip(d.pairs["segment"], d.pairs["combination"], strict=True)):
        lo, hi = d.offsets[i], d.offsets[i + 1]
        runs[(names[s], d.combinations[c])] = (d.x[lo:hi], d.m[lo:hi])
    ignored = {
        (str(m), back[str(n)])
        for m, n in zip(lay.segments.ignored["member"], lay.segments.ignored["node"], strict=True)
    }
    return {
        "members": members,
        "chains": chains,
        "segments": seg,
        "pairs": pairs,
        "runs": runs,
        "ignored": ignored,
    }


def _assert_same(a: dict[str, object], b: dict[str, object]) -> None:
    pd.testing.assert_frame_equal(a["members"], b["members"], check_exact=False, atol=1e-6)
    assert a["chains"] == b["chains"]
    pd.testing.assert_frame_equal(a["segments"], b["segments"], check_exact=False, atol=1e-6)
    pd.testing.assert_frame_equal(a["pairs"], b["pairs"], check_exact=False, rtol=1e-9, atol=1e-3)
    assert a["runs"].keys() == b["runs"].keys()
    for key, (x, m) in a["runs"].items():
        xb, mb = b["runs"][key]
        np.testing.assert_allclose(x, xb, atol=1e-6, err_msg=str(key))
        np.testing.assert_allclose(m, mb, rtol=1e-9, atol=1e-3, err_msg=str(key))
    assert a["ignored"] == b["ignored"]


@pytest.mark.parametrize("seed", range(8))
def test_layout_is_invariant_and_segments_are_one_more_than_interior_braces(frame, seed):
    rng = np.random.default_rng(seed)
    # A random brace layout: each interior node of the main beam (B1..B7) and the column's middle
    # node F1 gets no brace, or a brace of the top, bottom or both flanges.
    braces = {}
    for n in [f"B{k}" for k in range(1, 8)] + ["F1"]:
        choice = BRACE_CHOICES[int(rng.integers(len(BRACE_CHOICES)))]
        if choice is not None:
            braces[n] = choice

    base = _inv_build(frame, "base", braces)
    identity = {n: n for n in INV_NODES}

    # Expected by hand from the brace layout. Members: main beam G1..G8 (12 m, +x from B0), column
    # K1 K2 (4 m, from F0 at z = 0 up to B4 at z = 4, steep), cross beam J1 (4 m, +y from B2).
    beam = [f"B{k}" for k in range(1, 8)]
    n_top = sum(braces.get(n) in ("top", "both") for n in beam)
    n_bottom = sum(braces.get(n) in ("bottom", "both") for n in beam)
    # Segments per flange: one more than the interior nodes that brace that flange (the ends are
    # supports; B2 and B4, where other members frame in, are not braces by themselves).
    main = base.member_of("G1")
    assert len(base.bounds(main, "top")) == n_top + 1
    assert len(base.bounds(main, "bottom")) == n_bottom + 1
    top_nodes = [0.0] + [1.5 * k for k in range(1, 8) if braces.get(f"B{k}") in ("top", "both")]
    bottom_nodes = [0.0] + [
        1.5 * k for k in range(1, 8) if braces.get(f"B{k}") in ("bottom", "both")
    ]
    top_nodes.append(12.0)
    bottom_nodes.append(12.0)
    # The column: only a "both" brace at F1 (s = 2) splits it; a one-flange brace there is ignored.
    column_split = braces.get("F1") == "both"
    check_layout(
        base,
        [
            Expect(
                tuple(f"G{k}" for k in range(1, 9)),
                12.0,
                top=tuple(itertools.pairwise(top_nodes)),
                bottom=tuple(itertools.pairwise(bottom_nodes)),
            ),
            Expect(
                ("K1", "K2"),
                4.0,
                either=((0, 2), (2, 4)) if column_split else ((0, 4),),
                steep=True,
            ),
            Expect(("J1",), 4.0, top=((0, 4),), bottom=((0, 4),)),
        ],
    )
    column = base.member_of("K1")
    ignored = base.layout.segments.ignored
    at_f1 = ignored[(ignored["member"] == column) & (ignored["node"] == "F1")]
    assert len(at_f1) == (1 if braces.get("F1") in ("top", "bottom") else 0)

    reference = _inv_signature(base, identity)

    # Shuffled rows of every table.
    shuffled = _inv_build(frame, "shuffled", braces, shuffle=np.random.default_rng(seed + 100))
    _assert_same(reference, _inv_signature(shuffled, identity))

    # Renumbered node ids (a random one-to-one renaming), rows shuffled too.
    numbers = rng.permutation(len(INV_NODES)) + 101
    rename = {n: f"Q{k}" for n, k in zip(INV_NODES, numbers, strict=True)}
    back = {v: k for k, v in rename.items()}
    renamed = _inv_build(
        frame, "renamed", braces, rename=rename, shuffle=np.random.default_rng(seed + 200)
    )
    _assert_same(reference, _inv_signature(renamed, back))

    # A random half of the elements drawn the other way (forces follow: positions are measured from
    # the new start node, the moment at each point in space is unchanged).
    names = [e for e, _, _ in INV_ELEMENTS]
    reverse = frozenset(rng.choice(names, size=len(names) // 2, replace=False).tolist())
    reversed_ = _inv_build(frame, "reversed", braces, reverse=reverse)
    _assert_same(reference, _inv_signature(reversed_, identity))

    # All three at once.
    everything = _inv_build(
        frame,
        "everything",
        braces,
        rename=rename,
        reverse=reverse,
        shuffle=np.random.default_rng(seed + 300),
    )
    _assert_same(reference, _inv_signature(everything, back))


# ---------------------------------------------------------------------------------------------
# 14. A one-flange brace on a steep member
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("flange", ["top", "bottom", "both"])
def test_one_flange_brace_on_a_steep_member_is_ignored_and_reported(frame, flange):
    # Column N1 (0,0,0) - N2 (0,0,3) - N3 (0,0,6), elements C1, C2; supports N1 and N3; a brace of
    # `flange` at N2.
    f = frame()
    f.node("N1", 0, 0, 0).node("N2", 0, 0, 3).node("N3", 0, 0, 6)
    f.element("C1", "N1", "N2").element("C2", "N2", "N3")
    f.support("N1").support("N3")
    f.brace("N2", flange)
    built = f.build()
    ignored = built.layout.segments.ignored
    if flange == "both":
        # A brace of both flanges holds a column: "either" segments (0,3), (3,6); nothing ignored.
        check_layout(built, [Expect(("C1", "C2"), 6.0, either=((0, 3), (3, 6)), steep=True)])
        assert len(ignored) == 0
        return
    # A vertical member has no top or bottom flange: the one-flange brace at N2 holds nothing, the
    # column is one "either" segment 0..6, and the brace is listed as ignored.
    names = check_layout(built, [Expect(("C1", "C2"), 6.0, either=((0, 6),), steep=True)])
    assert len(ignored) == 1
    assert ignored.iloc[0]["member"] == names[("C1", "C2")]
    assert ignored.iloc[0]["node"] == "N2"
    # The row describes that brace (Segments docstring: "one-flange braces on steep members:
    # member, node, flange, reason"): its flange is the one the braces table gave.
    assert ignored.iloc[0]["flange"] == flange
    assert ignored.iloc[0]["reason"]


# ---------------------------------------------------------------------------------------------
# 15. A concentrated moment at a node
# ---------------------------------------------------------------------------------------------


def _jump_beam(frame, reverse: set[str], brace: bool):
    # Simply supported beam at z = 3 along x: N1 (0) - N2 (3) - N3 (6); a couple C = 60 kN·m applied
    # at N2. Reactions ±C/L = ±10 kN, so M = 10 x left of N2 (0 -> 30) and M = 10 x - 60 right of it
    # (-30 -> 0): a jump of C = 60 kN·m at N2 (statics). Elements in `reverse` are drawn backwards.
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 3, 0, 3).node("N3", 6, 0, 3)
    f.element(*(("E1", "N2", "N1") if "E1" in reverse else ("E1", "N1", "N2")))
    f.element(*(("E2", "N3", "N2") if "E2" in reverse else ("E2", "N2", "N3")))
    f.support("N1").support("N3")
    if brace:
        f.brace("N2", "both")
    f.moment_field("COUPLE", lambda x, y, z: 10.0 * x, elements=["E1"])
    f.moment_field("COUPLE", lambda x, y, z: 10.0 * x - 60.0, elements=["E2"])
    return f.build()


@pytest.mark.parametrize("reverse", [set(), {"E1"}, {"E2"}, {"E1", "E2"}], ids=str)
def test_moment_jump_at_a_braced_node_each_segment_sees_its_own_side(frame, reverse):
    built = _jump_beam(frame, reverse, brace=True)
    # One member of 6 m, both flanges braced at N2 (s = 3): (0,3), (3,6) per flange.
    names = check_layout(
        built,
        [Expect(("E1", "E2"), 6.0, top=((0, 3), (3, 6)), bottom=((0, 3), (3, 6)))],
    )
    member = names[("E1", "E2")]
    top, bottom = segment_ids(built, member, "top"), segment_ids(built, member, "bottom")

    # Top segment 1 ends at N2 with the left-hand value +30; top segment 2 starts with -30.
    x, m = built.diagram(top[0], "COUPLE")
    assert (x[0], m[0]) == pytest.approx((0.0, 0.0), abs=1e-9)
    assert (x[-1], m[-1]) == pytest.approx((3.0, 30.0))
    x, m = built.diagram(top[1], "COUPLE")
    assert (x[0], m[0]) == pytest.approx((0.0, -30.0))
    assert (x[-1], m[-1]) == pytest.approx((3.0, 0.0), abs=1e-9)
    # Bottom segments see the same values with the bottom flange's sign (+ compresses it).
    x, m = built.diagram(bottom[0], "COUPLE")
    assert (x[-1], m[-1]) == pytest.approx((3.0, -30.0))
    x, m = built.diagram(bottom[1], "COUPLE")
    assert (x[0], m[0]) == pytest.approx((0.0, 30.0))

    # So the left half is critical for the top flange only (sagging, 30), the right half for the
    # bottom flange only (hogging, 30).
    assert built.compressed(top[0], "COUPLE") and built.demand_knm(top[0], "COUPLE") == (
        pytest.approx(30.0)
    )
    assert not built.compressed(top[1], "COUPLE")
    assert not built.compressed(bottom[0], "COUPLE")
    assert built.compressed(bottom[1], "COUPLE") and built.demand_knm(bottom[1], "COUPLE") == (
        pytest.approx(30.0)
    )


def test_moment_jump_inside_an_unbraced_segment_keeps_both_values(frame):
    built = _jump_beam(frame, {"E2"}, brace=False)
    # No brace at N2: one segment per flange over 0..6 m.
    names = check_layout(built, [Expect(("E1", "E2"), 6.0, top=((0, 6),), bottom=((0, 6),))])
    member = names[("E1", "E2")]
    (top,), (bottom,) = segment_ids(built, member, "top"), segment_ids(built, member, "bottom")
    # At x = 3 the diagram holds both sides of the jump, +30 and -30, so both flanges are
    # compressed in that one segment, each with demand 30 kN·m.
    x, m = built.diagram(top, "COUPLE")
    at = np.isclose(x, 3.0)
    assert sorted(m[at].tolist()) == pytest.approx([-30.0, 30.0])
    assert built.demand_knm(top, "COUPLE") == pytest.approx(30.0)
    assert built.demand_knm(bottom, "COUPLE") == pytest.approx(30.0)
