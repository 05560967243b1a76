"""Factored moment resistance Mr of laterally unsupported segments: the clause's three branches.

Reference: SANS 10162-1:2011 (Edition 2.1), *The structural use of steel, Part 1: Limit-states
design of hot-rolled steelwork*, clause 13.6(a), the same method as CSA S16-01/-09. The clause
text is **from memory**, recalled but not re-read: check it against your copy of the standard.

    Mcr = (ω2·π/L)·√(E·Iy·G·J + (π·E/L)²·Iy·Cw)
    class 1 and 2:  Mcr > 0.67·Mp:  Mr = 1.15·φ·Mp·(1 − 0.28·Mp/Mcr)  ≤ φ·Mp
                    Mcr ≤ 0.67·Mp:  Mr = φ·Mcr
    φ = 0.90, E = 200 000 MPa, G = 77 000 MPa

One invented class 1 section and uniform moment (ω2 = 1), worked by hand for one length in each
branch: elastic (long), inelastic (middling) and capped at φ·Mp (very short).
"""

from __future__ import annotations

import numpy as np
import pytest
from flangewise.engine import resistance

#: The hand arithmetic below is carried to seven significant figures; a relative 1e-5 allows for
#: its rounding and for nothing a wrong branch or coefficient would produce.
REL = 1.0e-5
REASON = "hand arithmetic to seven significant figures"

#: SANS 10162-1:2011, cl. 13.6(a) (from memory).
PHI = 0.9
E, G = 200_000.0, 77_000.0

#: Invented section: Iy [mm⁴], J [mm⁴], Cw [mm⁶]; Zx = 1.25e6 mm³ and fy = 400 MPa give
#: Mp = Zx·fy = 500e6 N·mm (500 kN·m), so 0.67·Mp = 335e6 and φ·Mp = 450e6 N·mm.
IY, J, CW = 20.0e6, 500.0e3, 400.0e9
MP = 1.25e6 * 400.0


def _close(actual: float, expected: float, what: str) -> None:
    assert actual == pytest.approx(expected, rel=REL), (
        f"{what} = {actual:.7g}, worked by hand {expected:.7g} (rel {REL:g}: {REASON})"
    )


def _mcr(length: float) -> float:
    return float(resistance.m_cr(np.array([1.0]), length, IY, J, CW, E, G)[0])


def _mr(m_cr: float) -> float:
    return float(resistance.m_r(np.array([m_cr]), np.array([MP]), PHI)[0])


def test_cl_13_6_a_elastic_branch():
    """L = 8 m: Mcr ≤ 0.67·Mp, Mr = φ·Mcr (cl. 13.6(a), from memory).

    E·Iy·G·J = 200 000 · 20e6 · 77 000 · 500e3 = 1.540000e23;
    π·E/L = 78.53982, squared 6168.503; × Iy·Cw (8e18) = 4.934802e22;
    sum 2.033480e23, root 4.509413e11; × π/L (3.926991e-4) → Mcr = 1.770842e8 N·mm,
    below 0.67·Mp = 3.35e8: Mr = 0.9 · 1.770842e8 = 1.593758e8 N·mm (159.4 kN·m).
    """
    m_cr = _mcr(8000.0)
    _close(m_cr, 1.770842e8, "Mcr [N·mm], L = 8 m")
    assert m_cr <= 0.67 * MP
    _close(_mr(m_cr), 1.593758e8, "Mr [N·mm], elastic")


def test_cl_13_6_a_inelastic_branch():
    """L = 4 m: Mcr > 0.67·Mp, Mr = 1.15·φ·Mp·(1 − 0.28·Mp/Mcr) (cl. 13.6(a), from memory).

    π·E/L = 157.0796, squared 24674.01; × 8e18 = 1.973921e23; + 1.54e23 = 3.513921e23;
    root 5.927833e11; × π/L (7.853982e-4) → Mcr = 4.655709e8 N·mm, above 3.35e8;
    0.28 · 5e8 / 4.655709e8 = 0.3007060; 1 − that = 0.6992940;
    1.15 · 0.9 · 5e8 = 5.175e8; × 0.6992940 = 3.618846e8 N·mm, below φ·Mp = 4.5e8.
    """
    m_cr = _mcr(4000.0)
    _close(m_cr, 4.655709e8, "Mcr [N·mm], L = 4 m")
    assert m_cr > 0.67 * MP
    _close(_mr(m_cr), 3.618846e8, "Mr [N·mm], inelastic")


def test_cl_13_6_a_capped_at_phi_mp():
    """L = 1 m: the inelastic formula exceeds φ·Mp, Mr = φ·Mp (cl. 13.6(a), from memory).

    π·E/L = 628.3185, squared 394784.2; × 8e18 = 3.158273e24; + 1.54e23 = 3.312273e24;
    root 1.819965e12; × π/L (3.141593e-3) → Mcr = 5.717589e9 N·mm;
    1 − 0.28 · 5e8 / 5.717589e9 = 1 − 0.02448568 = 0.9755143; × 5.175e8 = 5.048287e8 > 4.5e8:
    Mr = φ·Mp = 0.9 · 5e8 = 4.5e8 N·mm. (The formula reaches φ·Mp where
    1.15·(1 − 0.28·Mp/Mcr) = 1, i.e. Mcr = 0.28·1.15/0.15·Mp = 2.146667·Mp.)
    """
    m_cr = _mcr(1000.0)
    _close(m_cr, 5.717589e9, "Mcr [N·mm], L = 1 m")
    assert m_cr > 2.146667 * MP
    _close(_mr(m_cr), 4.5e8, "Mr [N·mm], capped at φ·Mp")


def test_cl_13_6_a_branches_at_the_switch():
    """At Mcr = 0.67·Mp the clause's two equations nearly meet: a step of 0.0597 % of φ·Mp.

    Mcr = 0.67·Mp = 3.35e8 (≤: elastic): Mr = 0.9 · 3.35e8 = 3.015e8 N·mm.
    Just above it (inelastic): 5.175e8 · (1 − 0.28/0.67) = 5.175e8 · 0.5820896 = 3.012313e8.
    Step = φ·Mp·(0.67 − 1.15 + 1.15·0.28/0.67) = φ·Mp·(0.4805970 − 0.48) = 0.0005970149·φ·Mp
    = 2.686567e5 N·mm, 0.089 % of Mr: the published equations do not quite meet at the
    switch. (They cross at r² − 1.15·r + 0.322 = 0, r = Mcr/Mp = 0.6678709, just below 0.67.)
    """
    at_switch = _mr(0.67 * MP)
    just_above = _mr(0.67 * MP * (1.0 + 1.0e-12))
    _close(at_switch, 3.015e8, "Mr [N·mm] at Mcr = 0.67·Mp (elastic branch)")
    _close(just_above, 3.012313e8, "Mr [N·mm] just above 0.67·Mp (inelastic branch)")
    _close(at_switch - just_above, 2.686567e5, "step in Mr [N·mm] at the switch")
    assert (at_switch - just_above) / at_switch < 1.0e-3, "the step is under 0.1 % of Mr"


def test_cl_13_6_a_mr_rises_with_mcr_except_at_the_switch():
    # Over 0.3·Mp to 3·Mp, Mr never falls as Mcr grows, except just after 0.67·Mp, and there by
    # no more than the 2.686567e5 N·mm step worked in the test above (cl. 13.6(a), from memory).
    # Steps of 1e-5·Mp: fine enough to see the fall, since the inelastic branch rises only
    # 5.175e8 · 0.28 · (1/0.67 − 1/0.67001) = 3.2e3 N·mm over one step there.
    ratios = np.unique(np.r_[np.linspace(0.3, 3.0, 270_001), 0.67])
    m_r = resistance.m_r(ratios * MP, np.full_like(ratios, MP), PHI)
    falls = np.diff(m_r)
    drops = np.flatnonzero(falls < 0.0)
    assert len(drops) == 1, f"Mr falls at {len(drops)} places, expected only at the switch"
    assert ratios[drops[0]] == 0.67, f"Mr falls after Mcr = {ratios[drops[0]]}·Mp, not 0.67·Mp"
    assert -falls[drops[0]] <= 2.686567e5 * (1.0 + REL), "the fall exceeds the step at 0.67·Mp"
