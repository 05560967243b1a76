"""The load height enters with the right sign for every flange a segment can be checked for.

The load-height term ½·Q·a·φ² does not depend on the sign of M (Trahair, Flexural-Torsional
Buckling of Structures, 1993, ch. 6, from memory): a load acting downward above the shear centre
is destabilising whether the segment sags or hogs. flangewise checks a hogging segment as a
bottom-flange run with its moments turned positive, so the load height must turn over with it.
These tests compare physically identical problems written two ways.
"""

from __future__ import annotations

import numpy as np
from flangewise.engine.buckling import exact_factors
from flangewise.engine.gradient import Runs
from flangewise.readers.settings import CheckSettings

L = 6000.0  # mm
IY, J, CW = 8.0e6, 2.0e5, 3.0e11  # mm⁴, mm⁴, mm⁶ (an invented welded section)
H0 = 400.0  # mm, distance between flange centroids

#: Solver precision: the two ways give the same matrices up to rounding.
SAME = 1.0e-9


def _runs(m: np.ndarray) -> Runs:
    x = np.linspace(0.0, L, len(m))
    return Runs(x=x, m=m, offsets=np.array([0, len(m)]), length=np.array([L]))


def _factor(m: np.ndarray, flange: int, where: str) -> float:
    result = exact_factors(
        _runs(m),
        np.array([True]),
        np.array([flange]),
        np.array([IY]),
        np.array([J]),
        np.array([CW]),
        np.array([H0]),
        CheckSettings(load_height=where),
    )
    return float(result.factor[0])


# A uniform load on a simple span: M = q·x·(L − x)/2, sampled at 41 stations.
_x = np.linspace(0.0, L, 41)
SAGGING = _x * (L - _x) / 2.0


def test_gravity_on_top_flange_equals_uplift_on_bottom_flange_turned_over():
    # Gravity on the top flange of a sagging span (top flange in compression) is the same problem,
    # turned upside down, as uplift on the bottom flange of a hogging span (bottom in compression).
    gravity_top = _factor(SAGGING, flange=0, where="top_flange")
    # The hogging span is checked as a bottom-flange run whose moments are turned positive.
    uplift_bottom = _factor(SAGGING, flange=1, where="bottom_flange")
    assert abs(gravity_top / uplift_bottom - 1.0) < SAME


def test_a_load_on_the_flange_it_pushes_from_is_destabilising():
    # Common practice (and Anderson & Trahair 1972, from memory): a load applied on the flange from
    # which it pushes (gravity on the top flange, uplift on the bottom flange) lowers Mcr; on the
    # other flange it raises Mcr. A top run with the sagging shape carries gravity; a bottom run
    # with the same positive shape is a hogging span, which here carries uplift.
    for flange, pushing, holding in (
        (0, "top_flange", "bottom_flange"),
        (1, "bottom_flange", "top_flange"),
    ):
        centre = _factor(SAGGING, flange, "shear_centre")
        destabilised = _factor(SAGGING, flange, pushing)
        stabilised = _factor(SAGGING, flange, holding)
        assert destabilised < centre < stabilised, (flange, destabilised, centre, stabilised)


def test_steep_members_take_their_loads_at_the_shear_centre():
    centre = _factor(SAGGING, flange=2, where="shear_centre")
    assert _factor(SAGGING, flange=2, where="top_flange") == centre
