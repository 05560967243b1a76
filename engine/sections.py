"""Section properties and section class of doubly symmetric I-sections.

Everything is vectorized over sections: one numpy expression per property, no loop per section.
Dimensions follow ``readers.model``: ``d`` overall depth, ``b`` flange width, ``tf`` flange
thickness, ``tw`` web thickness, ``r`` root radius (0 for a welded or unknown section), all in mm;
``fy`` in MPa. Properties are in mm², mm⁴, mm³ and mm⁶.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import numpy.typing as npt
import pandas as pd

#: Property overrides a sections table may carry, in the order ``given`` lists them.
OVERRIDABLE: tuple[str, ...] = ("A", "Ix", "Iy", "Sx", "Zx", "J", "Cw")

#: Columns of :func:`section_properties`' result, in order.
PROPERTY_COLUMNS: tuple[str, ...] = (
    *("d", "b", "tf", "tw", "r", "fy"),
    *("A", "Ix", "Iy", "Sx", "Zx", "rx", "ry", "J", "Cw", "given"),
)

#: Flange outstand limits b/(2·tf) · √fy for class 1, 2, 3 (SANS 10162-1:2011, Table 3).
FLANGE_LIMITS: tuple[float, float, float] = (145.0, 170.0, 200.0)
#: Web limits h/tw · √fy for class 1, 2, 3 with no axial force (SANS 10162-1:2011, Table 3).
WEB_LIMITS: tuple[float, float, float] = (1100.0, 1700.0, 1900.0)

#: Area of one root fillet per r² (a square of side r less a quarter circle of radius r).
_FILLET_AREA = 1.0 - np.pi / 4.0
#: Distance of a fillet's centroid from each of its two straight edges, per r.
_FILLET_CENTROID = (10.0 - 3.0 * np.pi) / (12.0 - 3.0 * np.pi)
#: Second moment of area of one fillet about either straight edge, per r⁴.
_FILLET_EDGE_INERTIA = 1.0 - 5.0 * np.pi / 16.0

Floats = npt.NDArray[np.float64]


class SectionClass(NamedTuple):
    """Class in flexure (1 to 4) per section, as integer arrays."""

    flange: npt.NDArray[np.int64]
    web: npt.NDArray[np.int64]
    overall: npt.NDArray[np.int64]


def _plates_and_fillets(
    d: Floats, b: Floats, tf: Floats, tw: Floats, r: Floats
) -> dict[str, Floats]:
    """Return A, Ix, Iy, Zx of two flanges, a web and four root fillets.

    Parallel-axis theorem on plates and root fillets (practice).

    Each fillet is a square of side r less a quarter circle of radius r, its right angle at a
    web-flange junction: area (1 − π/4)·r², centroid (10 − 3π)/(12 − 3π)·r ≈ 0.2234·r from the
    flange's inner face and from the web's face, second moment (1 − 5π/16)·r⁴ about either face.

    Args:
        d: overall depth [mm].
        b: flange width [mm].
        tf: flange thickness [mm].
        tw: web thickness [mm].
        r: root radius [mm], 0 for none.
    """
    hw = d - 2.0 * tf  # clear web depth
    area_f = _FILLET_AREA * r**2
    # Own second moment of a fillet about its centroid, parallel to either face.
    inertia_f = (_FILLET_EDGE_INERTIA - _FILLET_AREA * _FILLET_CENTROID**2) * r**4
    y_f = hw / 2.0 - _FILLET_CENTROID * r  # fillet centroid from the major axis
    x_f = tw / 2.0 + _FILLET_CENTROID * r  # fillet centroid from the minor axis
    return {
        "A": 2.0 * b * tf + hw * tw + 4.0 * area_f,
        "Ix": (b * d**3 - (b - tw) * hw**3) / 12.0 + 4.0 * (inertia_f + area_f * y_f**2),
        "Iy": (2.0 * tf * b**3 + hw * tw**3) / 12.0 + 4.0 * (inertia_f + area_f * x_f**2),
        "Zx": b * tf * (d - tf) + tw * hw**2 / 4.0 + 4.0 * area_f * y_f,
    }


def torsion_constant(d: Floats, b: Floats, tf: Floats, tw: Floats, r: Floats) -> Floats:
    """Return the St Venant torsion constant J [mm⁴] of I-sections.

    El Darwish & Johnston (1965), I-section with root fillets.

    Where ``r > 0``, the fillet-corrected form used for European catalogue values (the form, its
    constants and its attribution all from memory, not re-read):
    J = (2/3)(b − 0.63·tf)·tf³ + (1/3)(d − 2·tf)·tw³ + 2·(tw/tf)·(0.145 + 0.1·r/tf)·α⁴ with
    α = [(r + tw/2)² + (r + tf)² − r²] / (2·r + tf), the diameter of the circle inscribed at a
    web-flange junction. Where ``r = 0`` (welded plates, or no radius given), the thin-plate sum
    J = 2·b·tf³/3 + (d − 2·tf)·tw³/3, which takes no credit for the junctions: it is the lower of
    the two, so buckling resistances from it err on the safe side.

    Args:
        d: overall depth [mm].
        b: flange width [mm].
        tf: flange thickness [mm].
        tw: web thickness [mm].
        r: root radius [mm], 0 for none.
    """
    hw = d - 2.0 * tf
    plates = (2.0 * b * tf**3 + hw * tw**3) / 3.0
    alpha = ((r + tw / 2.0) ** 2 + (r + tf) ** 2 - r**2) / (2.0 * r + tf)
    filleted = (
        2.0 / 3.0 * (b - 0.63 * tf) * tf**3
        + hw * tw**3 / 3.0
        + 2.0 * (tw / tf) * (0.145 + 0.1 * r / tf) * alpha**4
    )
    return np.where(r > 0.0, filleted, plates)


def warping_constant(iy: Floats, d: Floats, tf: Floats) -> Floats:
    """Return the warping constant Cw [mm⁶] of doubly symmetric I-sections.

    Timoshenko & Gere (1961), ch. 6.

    Cw = Iy·h0²/4 with h0 = d − tf, the distance between the flange centroids: each flange
    bends about the web with half of Iy (from memory). The whole-section Iy (web and fillets
    included) is used rather than the flange-only form tf·b³·h0²/24 of European catalogues:
    it is the form of the AISC Shapes Database, and the web and fillets add well under 1 % to
    the Iy of a rolled I-section, so the two forms agree to that.

    Args:
        iy: minor-axis second moment of area [mm⁴].
        d: overall depth [mm].
        tf: flange thickness [mm].
    """
    return iy * (d - tf) ** 2 / 4.0


def section_properties(sections: pd.DataFrame) -> pd.DataFrame:
    """Return the properties of doubly symmetric I-sections, given values taking precedence.

    Timoshenko & Gere (1961), ch. 6.

    Computed from the plates and four quarter-circle root fillets of radius ``r`` (each
    (1 − π/4)·r², at the web-flange junctions; none when ``r = 0``): A, Ix, Iy, Zx directly,
    Sx = 2·Ix/d, J by :func:`torsion_constant`, Cw by :func:`warping_constant` (whole-section
    Iy·(d − tf)²/4: see there why). A property the input gives (a non-NaN value in one of the
    columns ``A``, ``Ix``, ``Iy``, ``Sx``, ``Zx``, ``J``, ``Cw``) replaces the computed one
    before anything is derived from it: Sx follows a given Ix, Cw a given Iy, and rx, ry the
    final A, Ix, Iy.

    Args:
        sections: one row per section with ``d``, ``b``, ``tf``, ``tw``, ``r`` [mm] and ``fy``
            [MPa]; optional overrides ``A`` [mm²], ``Ix``, ``Iy`` [mm⁴], ``Sx``, ``Zx`` [mm³],
            ``J`` [mm⁴], ``Cw`` [mm⁶] (column missing or NaN = compute).

    Returns:
        Same index as ``sections``; columns ``d``, ``b``, ``tf``, ``tw``, ``r`` [mm], ``fy``
        [MPa], ``A`` [mm²], ``Ix``, ``Iy`` [mm⁴], ``Sx``, ``Zx`` [mm³], ``rx``, ``ry`` [mm],
        ``J`` [mm⁴], ``Cw`` [mm⁶] and ``given`` (the overridden names, space-separated in the
        order above, "" when none); ``source`` and ``replaces`` carried unchanged where the
        input has them.
    """
    dims = {c: sections[c].to_numpy(dtype=float) for c in ("d", "b", "tf", "tw", "r")}
    d, tf = dims["d"], dims["tf"]
    nan = np.full(len(sections), np.nan)
    given = {c: sections[c].to_numpy(dtype=float) if c in sections else nan for c in OVERRIDABLE}

    def final(c: str, computed: Floats) -> Floats:
        return np.where(np.isnan(given[c]), computed, given[c])

    geom = _plates_and_fillets(**dims)
    a, ix, iy = (final(c, geom[c]) for c in ("A", "Ix", "Iy"))
    props = {
        **dims,
        "fy": sections["fy"].to_numpy(dtype=float),
        "A": a,
        "Ix": ix,
        "Iy": iy,
        "Sx": final("Sx", 2.0 * ix / d),
        "Zx": final("Zx", geom["Zx"]),
        "rx": np.sqrt(ix / a),
        "ry": np.sqrt(iy / a),
        "J": final("J", torsion_constant(**dims)),
        "Cw": final("Cw", warping_constant(iy, d, tf)),
        "given": _names_given(given),
    }
    out = pd.DataFrame(props, index=sections.index)
    for c in ("source", "replaces"):  # where the properties came from: carried for the report
        if c in sections:
            out[c] = sections[c].to_numpy()
    return out


def _names_given(given: dict[str, Floats]) -> npt.NDArray[np.str_]:
    """Return, per section, the names of the given (non-NaN) values, space-separated.

    Args:
        given: override values per name, NaN where not given (units of each property).
    """
    n = len(next(iter(given.values())))
    names = np.full(n, "", dtype=f"<U{sum(len(c) + 1 for c in given)}")
    for c, values in given.items():  # one pass per property name, not per section
        names = np.char.add(names, np.where(np.isnan(values), "", f" {c}"))
    return np.char.strip(names)


def section_class(
    b: npt.ArrayLike,
    tf: npt.ArrayLike,
    d: npt.ArrayLike,
    tw: npt.ArrayLike,
    fy: npt.ArrayLike,
    cf_ratio: npt.ArrayLike = 0.0,
) -> SectionClass:
    """Return the class in flexure (1 to 4) of I-sections: flange, web and the worse of the two.

    SANS 10162-1:2011, Table 3.

    Limits (from memory of the standard, which follows CSA S16; not re-read): flange outstand
    b/(2·tf): class 1 ≤ 145/√fy, class 2 ≤ 170/√fy, class 3 ≤ 200/√fy; web h/tw with
    h = d − 2·tf: class 1 ≤ (1100/√fy)(1 − 0.39·ρ), class 2 ≤ (1700/√fy)(1 − 0.61·ρ),
    class 3 ≤ (1900/√fy)(1 − 0.65·ρ), with ρ = Cf/φCy; class 4 beyond class 3. The limits are
    checked in that order (near ρ = 1 the class 2 web limit falls below the class 1 one).

    Args:
        b: flange width [mm].
        tf: flange thickness [mm].
        d: overall depth [mm].
        tw: web thickness [mm].
        fy: yield stress [MPa].
        cf_ratio: axial compression ratio Cf/φCy [-], 0 (pure bending, the default) to 1.

    Raises:
        ValueError: a yield stress not above zero or a ratio outside 0 to 1.
    """
    fy_a = np.asarray(fy, dtype=float)
    rho = np.asarray(cf_ratio, dtype=float)
    if np.any(fy_a <= 0.0):
        raise ValueError(f"fy must be above 0 MPa, got {fy_a[fy_a <= 0.0].ravel()[0]:g}")
    if np.any((rho < 0.0) | (rho > 1.0)):
        bad = rho[(rho < 0.0) | (rho > 1.0)].ravel()[0]
        raise ValueError(f"Cf/φCy must be within 0 to 1, got {bad:g}")
    root = np.sqrt(fy_a)
    tf_a = np.asarray(tf, dtype=float)
    flange = _classify(np.asarray(b, dtype=float) / (2.0 * tf_a), *FLANGE_LIMITS, root)
    w1, w2, w3 = WEB_LIMITS
    web = _classify(
        (np.asarray(d, dtype=float) - 2.0 * tf_a) / np.asarray(tw, dtype=float),
        w1 * (1.0 - 0.39 * rho),
        w2 * (1.0 - 0.61 * rho),
        w3 * (1.0 - 0.65 * rho),
        root,
    )
    return SectionClass(flange, web, np.maximum(flange, web))


def _classify(
    ratio: Floats, k1: npt.ArrayLike, k2: npt.ArrayLike, k3: npt.ArrayLike, root_fy: Floats
) -> npt.NDArray[np.int64]:
    """Return class 1 to 4 of a width-thickness ratio against limits k1, k2, k3 over √fy.

    SANS 10162-1:2011, Table 3.

    Args:
        ratio: width-thickness ratio [-].
        k1: class 1 limit times √fy [√MPa].
        k2: class 2 limit times √fy [√MPa].
        k3: class 3 limit times √fy [√MPa].
        root_fy: square root of the yield stress [√MPa].
    """
    conditions = [ratio <= np.divide(k, root_fy) for k in (k1, k2, k3)]
    return np.select(conditions, [1, 2, 3], default=4).astype(np.int64)
