"""The end-moment rule for ω2 against the clause and hand arithmetic.

Reference: SANS 10162-1:2011 (Edition 2.1), *The structural use of steel, Part 1: Limit-states
design of hot-rolled steelwork*, clause 13.6(a), the same method as CSA S16-01/-09. The clause
text is **from memory**, recalled but not re-read: check it against your copy of the standard.

    ω2 = 1.75 + 1.05·κ + 0.3·κ²  ≤ 2.5   for an unbraced length carrying end moments only
    ω2 = 1.0   when the moment anywhere inside the unbraced length exceeds the larger end moment
    κ  = smaller end moment / larger end moment; positive in double curvature, negative in single

The check values κ = −1, 0, +1 → ω2 = 1.0, 1.75, 3.1 (limited to 2.5) are **common practice**
and follow from the formula. The diagrams below are invented and built by hand as
``gradient.Runs``; every expected value is worked from the clause or from statics in the test.
The tool's own rules (at least ``MIN_INSIDE_STATIONS`` inside stations before it trusts a
diagram; an inside bulge within ``INSIDE_TOLERANCE`` of the larger end moment still counts as
"not larger") are the tool's choices, not the standard's, and are named as such below.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from flangewise.engine import gradient

#: Every expected value here is an exact decimal (or an exact product of decimals) worked by hand,
#: so the code's value can differ from it only by float rounding in the polynomial and in the
#: diagram arithmetic, a few parts in 1e16; 1e-9 leaves room for that and nothing else.
REL = 1e-9
REASON = "hand values are exact; only float rounding may differ"


def _runs(*diagrams: tuple[list[float], list[float], float]) -> gradient.Runs:
    """Build ``Runs`` from (x [mm], M [N·mm], L [mm]) diagrams, one run each."""
    xs = [np.asarray(x, dtype=float) for x, _, _ in diagrams]
    ms = [np.asarray(m, dtype=float) for _, m, _ in diagrams]
    offsets = np.r_[0, np.cumsum([len(x) for x in xs])]
    return gradient.Runs(
        x=np.concatenate(xs),
        m=np.concatenate(ms),
        offsets=offsets.astype(np.int64),
        length=np.array([length for _, _, length in diagrams], dtype=float),
    )


def _close(actual: float, expected: float, what: str) -> None:
    assert actual == pytest.approx(expected, rel=REL), (
        f"{what} = {actual!r}, worked by hand {expected!r} (tolerance rel {REL:g}: {REASON})"
    )


# --- ω2 from κ -----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kappa", "omega2"),
    [
        (
            -1.0,
            1.0,
        ),  # SANS 10162-1:2011 cl. 13.6(a), from memory: 1.75 − 1.05 + 0.3 = 1.0 (practice)
        (-0.5, 1.30),  # cl. 13.6(a), from memory: 1.75 − 0.525 + 0.075 = 1.30
        (0.0, 1.75),  # cl. 13.6(a), from memory: one end moment zero → 1.75 (practice)
        (0.5, 2.35),  # cl. 13.6(a), from memory: 1.75 + 0.525 + 0.075 = 2.35
        (1.0, 2.5),  # cl. 13.6(a), from memory: 1.75 + 1.05 + 0.3 = 3.1, limited to 2.5 (practice)
    ],
)
def test_cl_13_6_a_omega2_from_kappa(kappa, omega2):
    _close(float(gradient.omega2_from_kappa(np.array([kappa]))[0]), omega2, f"ω2(κ = {kappa})")


def test_cl_13_6_a_cap_is_2_5():
    # SANS 10162-1:2011 cl. 13.6(a), from memory: ω2 ≤ 2.5.
    assert gradient.OMEGA2_CAP == 2.5


# --- κ and its sign ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("m_start", "m_end", "kappa"),
    [
        # cl. 13.6(a), from memory: ends of the same sign bend the segment in single curvature,
        # κ negative; ends of opposite sign in double curvature, κ positive.
        (100.0e6, 50.0e6, -0.5),  # both sagging: single curvature, 50/100 = 0.5 → −0.5
        (-100.0e6, -50.0e6, -0.5),  # both hogging: single curvature → −0.5
        (50.0e6, 100.0e6, -0.5),  # larger end at the far end: same ratio → −0.5
        (100.0e6, -50.0e6, 0.5),  # opposite signs: double curvature → +0.5
        (-50.0e6, 100.0e6, 0.5),  # opposite signs, larger end at the far end → +0.5
        (100.0e6, 100.0e6, -1.0),  # equal ends, single curvature: uniform moment → −1
        (100.0e6, -100.0e6, 1.0),  # equal and opposite ends: double curvature → +1
        (100.0e6, 0.0, 0.0),  # one end zero → κ = 0
        (0.0, -80.0e6, 0.0),  # one end zero (the start) → κ = 0
    ],
)
def test_cl_13_6_a_kappa_sign(m_start, m_end, kappa):
    actual = float(gradient.kappa_from_ends(np.array([m_start]), np.array([m_end]))[0])
    _close(actual, kappa, f"κ({m_start:g}, {m_end:g})")


def test_cl_13_6_a_kappa_both_ends_zero_is_undefined():
    # cl. 13.6(a), from memory: κ is a ratio of end moments; with both zero it has no value.
    assert np.isnan(gradient.kappa_from_ends(np.array([0.0]), np.array([0.0]))[0])


# --- The rule applied to whole diagrams ----------------------------------------------------------

#: A segment of 4 m with stations every metre: three inside stations (1, 2 and 3 m).
X4 = [0.0, 1000.0, 2000.0, 3000.0, 4000.0]
L4 = 4000.0


def _linear(m_start: float, m_end: float, x: list[float] = X4, length: float = L4) -> list[float]:
    """Moments of a straight diagram from ``m_start`` to ``m_end`` at stations ``x``."""
    return [m_start + (m_end - m_start) * xi / length for xi in x]


@pytest.mark.parametrize(
    ("m_start", "m_end", "kappa", "omega2"),
    [
        # Straight diagrams (end moments only): cl. 13.6(a), from memory.
        (100.0e6, 100.0e6, -1.0, 1.0),  # uniform moment: κ = −1 → 1.0 (practice)
        (100.0e6, 0.0, 0.0, 1.75),  # one end zero: κ = 0 → 1.75 (practice)
        (100.0e6, 50.0e6, -0.5, 1.30),  # κ = −0.5 → 1.75 − 0.525 + 0.075 = 1.30
        (100.0e6, -50.0e6, 0.5, 2.35),  # stations 100, 62.5, 25, −12.5, −50: κ = +0.5 → 2.35
        (-60.0e6, 60.0e6, 1.0, 2.5),  # κ = +1 → 3.1, limited to 2.5 (practice)
    ],
)
def test_cl_13_6_a_linear_diagram_three_inside_stations(m_start, m_end, kappa, omega2):
    result = gradient.end_moment_omega2(_runs((X4, _linear(m_start, m_end), L4)))
    _close(float(result.kappa[0]), kappa, "κ")
    _close(float(result.omega2[0]), omega2, "ω2")
    assert not result.peak_inside[0], "a straight diagram has no inside moment above its ends"
    assert not result.few_stations[0], "three distinct inside stations are enough (tool's rule)"
    assert not result.zero_ends[0]
    assert result.capped[0] == (kappa == 1.0), "only κ = +1 here reaches the 2.5 limit"


def test_cl_13_6_a_uniform_load_with_end_moment_peak_inside():
    """A span with uniform load and one end moment: the inside peak exceeds the end moment.

    Invented: L = 8 m, w = 10 N/mm (10 kN/m) downwards, sagging end moment M0 = 40 kN·m at the
    start, zero at the end, stations every 500 mm (17 stations).
    Statics (practice): M(x) = M0·(1 − x/L) + w·x·(L − x)/2;
    dM/dx = −M0/L + w·(L − 2x)/2 = 0 → x = L/2 − M0/(w·L) = 4000 − 40e6/(10·8000) = 3500 mm;
    M(3500) = 40e6·(1 − 3500/8000) + 10·3500·4500/2 = 22.5e6 + 78.75e6 = 101.25e6 N·mm,
    above the larger end moment 40e6: cl. 13.6(a) (from memory) rejects the formula (κ = 0,
    which would give 1.75) and ω2 = 1.0.
    """
    length, w, m0 = 8000.0, 10.0, 40.0e6
    x = [500.0 * i for i in range(17)]
    m = [m0 * (1.0 - xi / length) + w * xi * (length - xi) / 2.0 for xi in x]
    result = gradient.end_moment_omega2(_runs((x, m, length)))
    _close(float(result.inside_peak[0]), 101.25e6, "inside peak [N·mm]")
    _close(float(result.inside_peak_at[0]), 3500.0, "inside peak position [mm]")
    _close(float(result.omega2_formula[0]), 1.75, "ω2 before rejection (κ = 0)")
    assert result.peak_inside[0], "101.25 kN·m inside > 40 kN·m at the end: formula rejected"
    _close(float(result.omega2[0]), 1.0, "ω2")


def test_cl_13_6_a_simply_supported_uniform_load_zero_ends():
    """A simply supported span under uniform load: peak wL²/8 at midspan, both ends zero.

    Invented: L = 8 m, w = 10 N/mm, stations every 500 mm. Statics (practice): the peak is
    w·L²/8 = 10·8000²/8 = 80e6 N·mm at x = L/2 = 4000 mm; both end moments are zero, so κ has
    no value, and the moment inside exceeds the ends: ω2 = 1.0 (cl. 13.6(a), from memory).
    """
    length, w = 8000.0, 10.0
    x = [500.0 * i for i in range(17)]
    m = [w * xi * (length - xi) / 2.0 for xi in x]
    result = gradient.end_moment_omega2(_runs((x, m, length)))
    _close(float(result.inside_peak[0]), 80.0e6, "inside peak wL²/8 [N·mm]")
    _close(float(result.inside_peak_at[0]), 4000.0, "inside peak position L/2 [mm]")
    assert result.zero_ends[0], "both end moments are zero"
    assert np.isnan(result.kappa[0]), "κ has no value with both ends zero"
    _close(float(result.omega2[0]), 1.0, "ω2")


def test_cl_13_6_a_both_ends_zero_straight():
    # Both end moments zero and nothing inside either: no ratio, ω2 = 1.0 (cl. 13.6(a), from
    # memory).
    result = gradient.end_moment_omega2(_runs((X4, [0.0] * 5, L4)))
    assert result.zero_ends[0]
    _close(float(result.omega2[0]), 1.0, "ω2")


def test_ends_only_too_few_stations():
    # Two stations (the ends): the diagram between them is unknown, so the tool cannot show that
    # no inside moment exceeds the ends; it falls back to ω2 = 1.0 (tool's rule; the formula
    # would give 1.75 for κ = 0, cl. 13.6(a), from memory).
    result = gradient.end_moment_omega2(_runs(([0.0, L4], [100.0e6, 0.0], L4)))
    assert result.few_stations[0]
    _close(float(result.omega2_formula[0]), 1.75, "ω2 before the fall-back (κ = 0)")
    _close(float(result.omega2[0]), 1.0, "ω2")


def test_two_inside_stations_too_few():
    # Two inside stations are fewer than the tool's MIN_INSIDE_STATIONS = 3: ω2 = 1.0.
    x = [0.0, 1000.0, 3000.0, 4000.0]
    result = gradient.end_moment_omega2(_runs((x, _linear(100.0e6, 0.0, x), L4)))
    assert gradient.MIN_INSIDE_STATIONS == 3
    assert result.few_stations[0]
    _close(float(result.omega2[0]), 1.0, "ω2")


@pytest.mark.parametrize(
    ("bulge", "omega2", "rejected"),
    [
        # The tool's INSIDE_TOLERANCE (its own choice, not the standard's): an inside moment up to
        # that fraction above the larger end moment still counts as "not larger".
        (0.5, 1.75, False),  # half the tolerance: accepted, κ = 0 → 1.75 (cl. 13.6(a), from memory)
        (2.0, 1.0, True),  # twice the tolerance: rejected → 1.0 (cl. 13.6(a), from memory)
    ],
)
def test_inside_bulge_and_inside_tolerance(bulge, omega2, rejected):
    # Straight from 100 kN·m to 0 over 4 m, except the station at 1 m, raised from 75 kN·m to
    # just above the 100 kN·m end by ``bulge`` times INSIDE_TOLERANCE.
    peak = 100.0e6 * (1.0 + bulge * gradient.INSIDE_TOLERANCE)
    m = [100.0e6, peak, 50.0e6, 25.0e6, 0.0]
    result = gradient.end_moment_omega2(_runs((X4, m, L4)))
    _close(float(result.inside_peak[0]), peak, "inside peak [N·mm]")
    _close(float(result.inside_peak_at[0]), 1000.0, "inside peak position [mm]")
    assert bool(result.peak_inside[0]) == rejected
    _close(float(result.omega2[0]), omega2, "ω2")


def test_several_runs_at_once():
    # The five straight cases and the uniform-load span above in one call give the same values.
    result = gradient.end_moment_omega2(
        _runs(
            (X4, _linear(100.0e6, 100.0e6), L4),  # κ = −1 → 1.0
            (X4, _linear(100.0e6, 0.0), L4),  # κ = 0 → 1.75
            ([0.0, L4], [100.0e6, 0.0], L4),  # ends only → 1.0 (tool's rule)
            (X4, _linear(100.0e6, -50.0e6), L4),  # κ = +0.5 → 2.35
            (X4, _linear(-60.0e6, 60.0e6), L4),  # κ = +1 → 2.5
        )
    )
    for k, expected in enumerate([1.0, 1.75, 1.0, 2.35, 2.5]):
        _close(float(result.omega2[k]), expected, f"ω2 of run {k}")
    assert math.isnan(float(result.inside_peak_at[2])), "no inside station in run 2"
