"""A listed brace at a free member end braces that end for the flange(s) it names.

A member end is free for a flange only when it connects to nothing, is no support and the braces
table lists no brace of that flange there (README, "Which flange is braced where"). The models are
invented; coordinates in m, moments in kN·m.
"""

from __future__ import annotations

import pytest
from flangewise.engine.check import check_model


def overhang(frame, tip_brace: str | None):
    """Beam N1 (0) - N2 (6) - N3 (8) at z = 3, supports N1 and N2, the tip N3 connects to nothing.

    Hogging over the overhang (w = 10 kN/m on it): M = -5 (8 - x)² there, -20 kN·m at N2, dying out
    linearly to N1 (common practice: cantilever root moment w a² / 2 with a = 2 m).
    """
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 6, 0, 3).node("N3", 8, 0, 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3")
    f.support("N1").support("N2")
    if tip_brace is not None:
        f.brace("N3", tip_brace)
    f.moment_field("HOG", lambda x, y, z: -20.0 * x / 6.0, elements=["E1"])
    f.moment_field("HOG", lambda x, y, z: -5.0 * (8.0 - x) ** 2, elements=["E2"])
    return f


def tip_segments(built):
    t = built.layout.segments.table
    return t[t["node_end"] == "N3"].reset_index().set_index("flange")


def test_tip_braced_on_both_flanges_is_no_cantilever(frame):
    # An edge member the analysis leaves out holds the tip: listed as a brace of both flanges.
    built = overhang(frame, "both").build()
    tip = tip_segments(built)
    assert set(tip.index) == {"top", "bottom"}
    assert tip["braced_end"].all()
    assert not tip["free_end"].any()
    assert not tip["cantilever"].any()
    st = built.layout.segments.stations.set_index("node")
    assert not st.loc["N3", "top_free"] and not st.loc["N3", "bottom_free"]
    assert not st.loc["N3", "free"]
    # Bottom flange compressed over the overhang, braced at both ends: checked as an ordinary
    # segment, not with the cantilever fall-back.
    result = check_model(built.model).results
    row = result[result["segment"] == tip.loc["bottom", "segment"]]
    assert len(row) == 1 and row["status"].iloc[0] != "not critical"
    assert "cantilever" not in row["flags"].iloc[0]


@pytest.mark.parametrize(("braced", "free"), [("top", "bottom"), ("bottom", "top")])
def test_one_flange_brace_at_the_tip_leaves_the_other_flange_free(frame, braced, free):
    built = overhang(frame, braced).build()
    tip = tip_segments(built)
    assert bool(tip.loc[braced, "braced_end"]) and not bool(tip.loc[braced, "cantilever"])
    assert not bool(tip.loc[free, "braced_end"])
    assert bool(tip.loc[free, "free_end"]) and bool(tip.loc[free, "cantilever"])
    st = built.layout.segments.stations.set_index("node")
    assert not st.loc["N3", f"{braced}_free"] and st.loc["N3", f"{free}_free"]
    assert st.loc["N3", "free"]  # free for at least one flange


def test_unbraced_tip_is_free_for_both_flanges(frame):
    built = overhang(frame, None).build()
    tip = tip_segments(built)
    assert tip["free_end"].all() and tip["cantilever"].all()


@pytest.mark.parametrize(("word", "free"), [("top", True), ("both", False)])
def test_steep_member_tip_is_braced_only_by_a_brace_of_both_flanges(frame, word, free):
    # A column N1 (0,0,0) - N2 (0,0,4) - N3 (0,0,6) on a support at N1, a side beam at N2, the top
    # N3 free. A steep member has no top or bottom flange: only a brace of both holds its tip.
    f = frame()
    f.node("N1", 0, 0, 0).node("N2", 0, 0, 4).node("N3", 0, 0, 6).node("N4", 5, 0, 4)
    f.element("C1", "N1", "N2").element("C2", "N2", "N3").element("B1", "N2", "N4")
    f.support("N1").support("N4")
    f.brace("N3", word)
    built = f.build()
    t = built.layout.segments.table
    tip = t[(t["node_end"] == "N3") & (t["flange"] == "either")]
    assert len(tip) == 1
    assert bool(tip["cantilever"].iloc[0]) is free
    assert bool(tip["free_end"].iloc[0]) is free
