"""Unit factors to the internal system (mm, N, N·mm, MPa).

Exact definitions from NIST SP 811 (2008), Appendix B: 1 in = 25.4 mm, 1 ft = 0.3048 m,
1 lbf = 4.4482216152605 N, 1 kip = 1000 lbf. Stress factors follow from force / length².
"""

from __future__ import annotations

from typing import Literal

LBF_N = 4.4482216152605  # NIST SP 811, B.8 (pound-force)
IN_MM = 25.4  # NIST SP 811, B.8 (inch), exact
FT_MM = 304.8  # NIST SP 811, B.8 (foot), exact

#: Length units to millimetres.
LENGTH_TO_MM: dict[str, float] = {
    "mm": 1.0,
    "cm": 10.0,
    "m": 1000.0,
    "in": IN_MM,
    "ft": FT_MM,
}

#: Force units to newtons.
FORCE_TO_N: dict[str, float] = {
    "N": 1.0,
    "kN": 1000.0,
    "MN": 1.0e6,
    "lbf": LBF_N,
    "kip": 1000.0 * LBF_N,
}

#: Stress units to MPa (N/mm²).
STRESS_TO_MPA: dict[str, float] = {
    "MPa": 1.0,
    "N/mm2": 1.0,
    "kPa": 1.0e-3,
    "GPa": 1.0e3,
    "psi": LBF_N / IN_MM**2,
    "ksi": 1000.0 * LBF_N / IN_MM**2,
}

UnitKind = Literal["length", "force", "moment", "stress"]


def moment_to_nmm(unit: str) -> float:
    """Return the factor from a moment unit written ``<force>*<length>`` to N·mm.

    Accepts ``*``, ``·``, ``.`` or ``-`` between the force and the length (``kN*m``, ``kip-ft``).

    Raises:
        KeyError: when either part is not a known unit.
    """
    text = unit.strip()
    for sep in ("*", "·", "-", "."):
        if sep in text:
            force, length = (part.strip() for part in text.split(sep, 1))
            return FORCE_TO_N[force] * LENGTH_TO_MM[length]
    raise KeyError(unit)


def factor(kind: UnitKind, unit: str) -> float:
    """Return the factor that converts a value in ``unit`` of ``kind`` to the internal system.

    Raises:
        KeyError: when the unit is not known for that kind.
    """
    if kind == "length":
        return LENGTH_TO_MM[unit]
    if kind == "force":
        return FORCE_TO_N[unit]
    if kind == "stress":
        return STRESS_TO_MPA[unit]
    return moment_to_nmm(unit)


def known_units(kind: UnitKind) -> list[str]:
    """List the unit names accepted for ``kind`` (for error messages and the README)."""
    if kind == "length":
        return list(LENGTH_TO_MM)
    if kind == "force":
        return list(FORCE_TO_N)
    if kind == "stress":
        return list(STRESS_TO_MPA)
    return [f"{f}*{le}" for f in FORCE_TO_N for le in LENGTH_TO_MM]
