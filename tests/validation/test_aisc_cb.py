"""Quarter-point moment-gradient factors (AISC Cb, CSA ω2) on sampled diagrams.

References:

- ANSI/AISC 360-16, *Specification for Structural Steel Buildings*, American Institute of Steel
  Construction, Chicago, 2016, Section F1, Eq. F1-1 (**from memory**):
  Cb = 12.5·Mmax / (2.5·Mmax + 3·MA + 4·MB + 3·MC).
- AISC *Steel Construction Manual*, Table 3-1, *Values of Cb for Simply Supported Beams*
  (**from memory**): no bracing between the supports, uniform load 1.14, central point load
  1.32; for a linear diagram with one end moment zero 1.67, and for uniform moment 1.00.
- CSA S16-14, *Design of steel structures*, cl. 13.6(a), quarter-point form (**from memory**),
  as proposed by E. Wong and R. G. Driver, "Critical evaluation of equivalent moment factor
  procedures for laterally unsupported beams", *Engineering Journal* (AISC), 1st quarter 2010
  (paper read): ω2 = 4·Mmax / √(Mmax² + 4·Ma² + 7·Mb² + 4·Mc²) ≤ 2.5.

Mmax is the largest |M| in the unbraced length; Ma, Mb, Mc (MA, MB, MC) are |M| at its quarter,
mid and three-quarter points. The diagrams are sampled at 21 stations (every L/20), so the
quarter points and the peaks fall on stations and the full path (``Runs`` →
``quarter_point_moments`` → factor) sees them exactly. The ω2 values are worked by hand below.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from flangewise.engine import gradient

#: Table 3-1 prints Cb to two decimals, so Eq. F1-1's exact value may lie up to half a unit of
#: the last place (0.005) from the printed one; the hand-worked factors below are read to the
#: same two decimals. The sampling adds nothing: the stations fall on the quarter points and peaks.
TOL = 0.005
REASON = "Table 3-1 prints two decimals: ±0.005"

#: Invented span [mm] and its 21 stations, every L/20.
L = 6000.0
X = np.linspace(0.0, L, 21)


def _runs(*diagrams: np.ndarray) -> gradient.Runs:
    """Build ``Runs`` from diagrams sampled at the stations ``X`` of the span ``L``."""
    offsets = np.arange(len(diagrams) + 1, dtype=np.int64) * len(X)
    return gradient.Runs(
        x=np.tile(X, len(diagrams)),
        m=np.concatenate(diagrams),
        offsets=offsets,
        length=np.full(len(diagrams), L),
    )


#: Invented loads, all on the simply supported span L (statics, common practice).
W = 20.0  # uniform load [N/mm]
P = 100.0e3  # central point load [N]
M0 = 150.0e6  # end moment [N·mm]

DIAGRAMS = {
    # M = w·x·(L − x)/2: wL²/8 at midspan, 3wL²/32 at the quarter points.
    "uniform_load": W * X * (L - X) / 2.0,
    # M = P·x/2 up to midspan, P·(L − x)/2 after: PL/4 at midspan, PL/8 at the quarter points.
    "central_point_load": P * np.minimum(X, L - X) / 2.0,
    # M = M0·(1 − x/L): M0, 3M0/4, M0/2, M0/4 at the ends and quarter points.
    "one_end_moment_zero": M0 * (1.0 - X / L),
    # M = M0 throughout.
    "uniform_moment": np.full_like(X, M0),
}

#: (Table 3-1 Cb, Eq. F1-1 by hand, ω2 by hand) per diagram; arithmetic in the comments, with
#: (Mmax, Ma, Mb, Mc) in the units named.
EXPECTED = {
    # Table 3-1, uniform load: 1.14 (from memory). (4, 3, 4, 3) × wL²/32:
    # Cb = 12.5·4 / (2.5·4 + 3·3 + 4·4 + 3·3) = 50/44 = 1.1364 (AISC 360-16 Eq. F1-1);
    # ω2 = 4/√(1 + 4·(3/4)² + 7 + 4·(3/4)²) = 4/√12.5 = 4/3.5355 = 1.1314 (CSA S16-14 cl. 13.6(a)).
    "uniform_load": (1.14, 50.0 / 44.0, 1.1314),
    # Table 3-1, central point load: 1.32 (from memory). (2, 1, 2, 1) × PL/8:
    # Cb = 12.5·2 / (2.5·2 + 3·1 + 4·2 + 3·1) = 25/19 = 1.3158 (Eq. F1-1);
    # ω2 = 4·2/√(2² + 4·1² + 7·2² + 4·1²) = 8/√40 = 8/6.3246 = 1.2649 (CSA S16-14 cl. 13.6(a)).
    "central_point_load": (1.32, 25.0 / 19.0, 1.2649),
    # One end moment zero, linear: 1.67 (from memory). (1, 3/4, 1/2, 1/4) × M0:
    # Cb = 12.5 / (2.5 + 3·0.75 + 4·0.5 + 3·0.25) = 12.5/7.5 = 1.6667 (Eq. F1-1);
    # ω2 = 4/√(1 + 4·0.5625 + 7·0.25 + 4·0.0625) = 4/√5.25 = 4/2.2913 = 1.7457 (CSA S16-14).
    "one_end_moment_zero": (1.67, 12.5 / 7.5, 1.7457),
    # Uniform moment: 1.00 (from memory). (1, 1, 1, 1) × M0:
    # Cb = 12.5/(2.5 + 3 + 4 + 3) = 1 (Eq. F1-1); ω2 = 4/√(1 + 4 + 7 + 4) = 4/4 = 1 (CSA S16-14).
    "uniform_moment": (1.00, 1.0, 1.0),
}

#: (Mmax, Ma, Mb, Mc) by statics, for the same diagrams (common practice).
QUARTER_POINTS = {
    "uniform_load": (W * L**2 / 8, 3 * W * L**2 / 32, W * L**2 / 8, 3 * W * L**2 / 32),
    "central_point_load": (P * L / 4, P * L / 8, P * L / 4, P * L / 8),
    "one_end_moment_zero": (M0, 0.75 * M0, 0.5 * M0, 0.25 * M0),
    "uniform_moment": (M0, M0, M0, M0),
}

CASES = list(DIAGRAMS)


def _quarter_points(name: str) -> tuple[float, float, float, float]:
    m_max, m_a, m_b, m_c = gradient.quarter_point_moments(_runs(DIAGRAMS[name]))
    return float(m_max[0]), float(m_a[0]), float(m_b[0]), float(m_c[0])


@pytest.mark.parametrize("name", CASES)
def test_quarter_point_moments_by_statics(name):
    # The sampled diagrams carry the statics values at the quarter points (stations on them);
    # held to TOL of the peak, far more than the float rounding that is the only difference.
    actual = _quarter_points(name)
    expected = QUARTER_POINTS[name]
    for label, a, e in zip(("Mmax", "Ma", "Mb", "Mc"), actual, expected, strict=True):
        assert abs(a - e) <= TOL * expected[0], (
            f"{name}: {label} = {a:.6g}, statics {e:.6g} (±{TOL} of Mmax)"
        )


@pytest.mark.parametrize("name", CASES)
def test_aisc_manual_table_3_1(name):
    table, _, _ = EXPECTED[name]
    cb = float(gradient.cb_aisc(*(np.array([v]) for v in _quarter_points(name)))[0])
    assert abs(cb - table) <= TOL, f"{name}: Cb = {cb:.4f}, Table 3-1 {table:.2f} ({REASON})"


@pytest.mark.parametrize("name", CASES)
def test_aisc_360_16_eq_f1_1_by_hand(name):
    _, by_hand, _ = EXPECTED[name]
    cb = float(gradient.cb_aisc(*(np.array([v]) for v in _quarter_points(name)))[0])
    assert abs(cb - by_hand) <= TOL, f"{name}: Cb = {cb:.4f}, Eq. F1-1 by hand {by_hand:.4f}"


@pytest.mark.parametrize("name", CASES)
def test_csa_s16_14_quarter_point_omega2_by_hand(name):
    _, _, by_hand = EXPECTED[name]
    omega2 = float(
        gradient.omega2_quarter_point(*(np.array([v]) for v in _quarter_points(name)))[0]
    )
    assert abs(omega2 - by_hand) <= TOL, (
        f"{name}: ω2 = {omega2:.4f}, worked by hand {by_hand:.4f} (±{TOL}: {REASON})"
    )


def test_all_diagrams_in_one_call():
    # The four diagrams as one ragged call give the same factors as the table rows above.
    runs = _runs(*DIAGRAMS.values())
    quarter = gradient.quarter_point_moments(runs)
    cb = gradient.cb_aisc(*quarter)
    omega2 = gradient.omega2_quarter_point(*quarter)
    for k, name in enumerate(CASES):
        table, _, by_hand = EXPECTED[name]
        assert abs(cb[k] - table) <= TOL, f"{name}: Cb = {cb[k]:.4f}, Table 3-1 {table} ({REASON})"
        assert abs(omega2[k] - by_hand) <= TOL, f"{name}: ω2 = {omega2[k]:.4f}, by hand {by_hand}"


def test_hand_values_round_to_table():
    # The hand-worked Eq. F1-1 values printed to two decimals are the Table 3-1 entries
    # (both from memory): a check on the arithmetic above, not on the code.
    for name, (table, by_hand, _) in EXPECTED.items():
        assert math.isclose(round(by_hand, 2), table), f"{name}: {by_hand:.4f} vs {table}"
