"""Inferred braces (off by default): an element framing into a member at a large angle.

Worked by hand: beam E1-E2 along x from N1 (0 m) through N2 (4 m) to N3 (8 m), supported at N1 and
N3; a secondary beam S1 frames into N2 along y (90° to the beam) or at 30° to it.
"""

from __future__ import annotations

import math

import pytest


def _beam(frame, angle_deg: float, settings: str | None):
    f = frame()
    f.node("N1", 0, 0, 3).node("N2", 4, 0, 3).node("N3", 8, 0, 3)
    a = math.radians(angle_deg)
    f.node("N4", 4 + 3 * math.cos(a), 3 * math.sin(a), 3)
    f.element("E1", "N1", "N2").element("E2", "N2", "N3").element("S1", "N2", "N4", "S2")
    f.support("N1").support("N3").support("N4")
    if settings is not None:
        f.settings = settings
    return f.build()


def test_off_by_default_the_framing_beam_braces_nothing(frame):
    built = _beam(frame, 90.0, None)
    beam = built.member_of("E1")
    # No brace at N2: one segment per flange, 0 .. 8 m.
    assert built.bounds(beam, "top") == [(0.0, 8.0)]
    assert built.bounds(beam, "bottom") == [(0.0, 8.0)]


def test_square_framing_beam_is_an_assumed_top_flange_brace(frame):
    built = _beam(frame, 90.0, "[members]\ninfer_braces = true\n")
    beam = built.member_of("E1")
    # 90° >= the default 60°: N2 braces the top flange (the default infer_flange), only that one.
    assert built.bounds(beam, "top") == [(0.0, 4.0), (4.0, 8.0)]
    assert built.bounds(beam, "bottom") == [(0.0, 8.0)]
    top = built.segments(beam, "top")
    # Each top segment has one end held only by the inferred brace: marked as assumed.
    assert top["assumed"].all()
    assert not built.segments(beam, "bottom")["assumed"].any()


def test_shallow_framing_beam_is_not_a_brace(frame):
    # 30° < 60°: not inferred; and a bottom-flange choice of flange is honoured when it is.
    built = _beam(frame, 30.0, '[members]\ninfer_braces = true\ninfer_flange = "bottom"\n')
    beam = built.member_of("E1")
    assert built.bounds(beam, "top") == [(0.0, 8.0)]
    assert built.bounds(beam, "bottom") == [(0.0, 8.0)]


@pytest.mark.parametrize(("angle", "held"), [(60.5, True), (119.5, True), (125.0, False)])
def test_angle_is_measured_either_side(frame, angle, held):
    built = _beam(frame, angle, '[members]\ninfer_braces = true\ninfer_flange = "bottom"\n')
    beam = built.member_of("E1")
    # The angle between the lines: 60.5°, 180° − 119.5° = 60.5° (both >= 60°: the bottom flange
    # is held at N2) and 180° − 125° = 55° (< 60°: not a brace).
    expected = [(0.0, 4.0), (4.0, 8.0)] if held else [(0.0, 8.0)]
    assert built.bounds(beam, "bottom") == expected
    assert built.bounds(beam, "top") == [(0.0, 8.0)]
