"""Elastic critical moment and factored moment resistance of laterally unsupported segments.

Units throughout: mm, N, N·mm, MPa.
"""

from __future__ import annotations

import numpy as np

#: Where Mcr exceeds this fraction of Mp (or My) the inelastic branch applies.
INELASTIC_SWITCH = 0.67


def m_cr(
    omega2: np.ndarray,
    length: np.ndarray,
    iy: np.ndarray,
    j: np.ndarray,
    cw: np.ndarray,
    e: float,
    g: float,
) -> np.ndarray:
    """Return Mcr = (ω2·π/L)·√(E·Iy·G·J + (π·E/L)²·Iy·Cw).

    SANS 10162-1:2011, cl. 13.6(a).

    With ω2 = 1 this is the closed form for an I-beam in uniform moment with fork supports
    (Timoshenko & Gere, Theory of Elastic Stability, 2nd ed., ch. 6).

    Args:
        omega2: moment-gradient factor [-].
        length: unbraced length L [mm].
        iy: minor-axis second moment of area [mm⁴].
        j: St Venant torsion constant [mm⁴].
        cw: warping constant [mm⁶].
        e: elastic modulus [MPa].
        g: shear modulus [MPa].
    """
    length = np.asarray(length, dtype=np.float64)
    return (omega2 * np.pi / length) * np.sqrt(e * iy * g * j + (np.pi * e / length) ** 2 * iy * cw)


def m_r(m_cr_: np.ndarray, m_p: np.ndarray, phi: float) -> np.ndarray:
    """Return the factored resistance Mr of a laterally unsupported segment.

    SANS 10162-1:2011, cl. 13.6(a).

    Mcr > 0.67·Mp: Mr = 1.15·φ·Mp·(1 − 0.28·Mp/Mcr), not more than φ·Mp; otherwise Mr = φ·Mcr.
    For a class 3 section pass My in place of Mp.

    Args:
        m_cr_: elastic critical moment [N·mm].
        m_p: plastic moment Zx·fy (class 1 and 2) or yield moment Sx·fy (class 3) [N·mm].
        phi: resistance factor [-].
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        inelastic = 1.15 * phi * m_p * (1.0 - 0.28 * m_p / m_cr_)
    return np.where(m_cr_ > INELASTIC_SWITCH * m_p, np.minimum(inelastic, phi * m_p), phi * m_cr_)
