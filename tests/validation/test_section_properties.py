"""Section properties and section class of I-sections against published tables and hand arithmetic.

References:

- American Institute of Steel Construction, *AISC Shapes Database v16.0* (companion to the Steel
  Construction Manual, 16th edition), W-shapes, US customary units (in, in², in³, in⁴, in⁶).
  The database gives no root radius: r is taken as kdes − tf, kdes being its design fillet
  distance.
- European hot-rolled I and H sections, dimensions per EN 10365:2017, *Hot rolled steel
  channels, I and H sections: Dimensions and masses*, with the properties European section
  catalogues tabulate for them (A cm², Iy and Iz cm⁴, Wpl,y and Wel,y cm³, It cm⁴, Iw 10³ cm⁶).
  These values are **from memory**, recalled but not re-read: check them against a catalogue.
- SANS 10162-1:2011, *The structural use of steel, Part 1: Limit-states design of hot-rolled
  steelwork*, Table 3, width-thickness limits for the class in flexure (the same limits as
  CSA S16-01/-09). The limits are **from memory**; the class tests work them by hand.

The handbook rows use the dimensions the tables print (three or four significant figures).
Inches are converted with the exact 1 in = 25.4 mm (NIST SP 811 (2008), App. B).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd
import pytest
from flangewise.engine.sections import section_class, section_properties

#: mm per inch, exact (NIST SP 811 (2008), App. B).
IN = 25.4
#: Power of the length unit each property carries.
POWER = {"A": 2, "Ix": 4, "Iy": 4, "Sx": 3, "Zx": 3, "J": 4, "Cw": 6}
#: European catalogue units to mm: cm² = 10² mm², cm³ = 10³ mm³, cm⁴ = 10⁴ mm⁴,
#: 10³ cm⁶ = 10³ × 10⁶ mm⁶.
EURO = {"A": 1e2, "Ix": 1e4, "Iy": 1e4, "Sx": 1e3, "Zx": 1e3, "J": 1e4, "Cw": 1e9}


class Tolerance(NamedTuple):
    rel: float
    reason: str


#: A, Ix, Iy, Sx, Zx, and Cw (which is Iy·h0²/4 and so inherits Iy's tolerance).
REL = Tolerance(
    0.01,
    "the tables print values to 3-4 significant figures (up to 0.5 %) and dimensions to 3, "
    "and r = kdes - tf only approximates the AISC fillet; for Cw, the European catalogue's "
    "flange-only form tf·b³·h0²/24 leaves out the web and fillets, a few tenths of 1 % of Iy",
)
#: J of the AISC shapes: the fillet-corrected form is the European catalogues' fit, and AISC
#: accounts for the fillets its own way. The fillet term is 5-25 % of J (REFERENCES.md §3:
#: plates-only J falls that far below handbook values), so a different fit of it can move J by
#: a tenth of that; and J grows with the cube of tf and tw, printed to 3 figures (up to 0.17 %
#: each, 0.5 % in J).
REL_J_AISC = Tolerance(
    0.03,
    "AISC's J treats the fillets by its own approximation (the fillet term is 5-25 % of J) "
    "and J goes with the cube of the thicknesses, printed to 3 figures",
)

#: AISC W18X97 prints bf = 11.1 in (three figures): bf may be up to 0.05 in (0.45 %) off, and
#: Iy and Cw go with bf³, so up to 1.35 %, more than REL allows.
BF_ROUNDED = pytest.mark.xfail(
    strict=True,
    reason="AISC W18X97 prints bf = 11.1 in to three figures; Iy and Cw go with bf cubed, "
    "so the rounding alone may move them up to 1.35 %, beyond the 1 % tolerance",
)


def _param_id(value: object) -> str | None:
    """Test ids such as ``test_w16x40[J-0.794-3%]`` (None: pytest's own id)."""
    return f"{value.rel:.0%}" if isinstance(value, Tolerance) else None


def _aisc(d: float, bf: float, tw: float, tf: float, kdes: float) -> pd.Series:
    """Properties [mm units] of an AISC W-shape from its printed dimensions [in]."""
    row = {"d": d, "b": bf, "tf": tf, "tw": tw, "r": kdes - tf}
    table = pd.DataFrame({c: [v * IN] for c, v in row.items()} | {"fy": [345.0]})
    return section_properties(table).iloc[0]


def _euro(h: float, b: float, tw: float, tf: float, r: float) -> pd.Series:
    """Properties [mm units] of a European section from its dimensions [mm]."""
    table = pd.DataFrame({"d": [h], "b": [b], "tf": [tf], "tw": [tw], "r": [r], "fy": [355.0]})
    return section_properties(table).iloc[0]


def _check(props: pd.Series, name: str, expected: float, tol: Tolerance) -> None:
    actual = props[name]
    off = actual / expected - 1.0
    assert abs(off) <= tol.rel, (
        f"{name} = {actual:.6g}, published {expected:.6g}: {off:+.2%}, beyond ±{tol.rel:.0%} "
        f"({tol.reason})"
    )


# --- AISC Shapes Database v16.0, W-shapes (in units; converted in the test) -------------------


@pytest.mark.parametrize(
    ("name", "expected", "tol"),
    [
        ("A", 11.8, REL),  # AISC v16.0, W16X40, A [in²]
        ("Ix", 518.0, REL),  # AISC v16.0, W16X40, Ix [in⁴]
        ("Zx", 73.0, REL),  # AISC v16.0, W16X40, Zx [in³]
        ("Sx", 64.7, REL),  # AISC v16.0, W16X40, Sx [in³]
        ("Iy", 28.9, REL),  # AISC v16.0, W16X40, Iy [in⁴]
        ("J", 0.794, REL_J_AISC),  # AISC v16.0, W16X40, J [in⁴]
        ("Cw", 1730.0, REL),  # AISC v16.0, W16X40, Cw [in⁶]
    ],
    ids=_param_id,
)
def test_w16x40(name, expected, tol):
    # AISC v16.0, W16X40: d = 16.0, bf = 7.00, tw = 0.305, tf = 0.505, kdes = 0.907 [in]
    props = _aisc(d=16.0, bf=7.00, tw=0.305, tf=0.505, kdes=0.907)
    _check(props, name, expected * IN ** POWER[name], tol)


@pytest.mark.parametrize(
    ("name", "expected", "tol"),
    [
        ("A", 14.7, REL),  # AISC v16.0, W18X50, A [in²]
        ("Ix", 800.0, REL),  # AISC v16.0, W18X50, Ix [in⁴]
        ("Zx", 101.0, REL),  # AISC v16.0, W18X50, Zx [in³]
        ("Sx", 88.9, REL),  # AISC v16.0, W18X50, Sx [in³]
        ("Iy", 40.1, REL),  # AISC v16.0, W18X50, Iy [in⁴]
        ("J", 1.24, REL_J_AISC),  # AISC v16.0, W18X50, J [in⁴]
        ("Cw", 3040.0, REL),  # AISC v16.0, W18X50, Cw [in⁶]
    ],
    ids=_param_id,
)
def test_w18x50(name, expected, tol):
    # AISC v16.0, W18X50: d = 18.0, bf = 7.50, tw = 0.355, tf = 0.570, kdes = 0.972 [in]
    props = _aisc(d=18.0, bf=7.50, tw=0.355, tf=0.570, kdes=0.972)
    _check(props, name, expected * IN ** POWER[name], tol)


@pytest.mark.parametrize(
    ("name", "expected", "tol"),
    [
        ("A", 10.3, REL),  # AISC v16.0, W18X35, A [in²]
        ("Ix", 510.0, REL),  # AISC v16.0, W18X35, Ix [in⁴]
        ("Zx", 66.5, REL),  # AISC v16.0, W18X35, Zx [in³]
        ("Sx", 57.6, REL),  # AISC v16.0, W18X35, Sx [in³]
        ("Iy", 15.3, REL),  # AISC v16.0, W18X35, Iy [in⁴]
        ("J", 0.506, REL_J_AISC),  # AISC v16.0, W18X35, J [in⁴]
        ("Cw", 1140.0, REL),  # AISC v16.0, W18X35, Cw [in⁶]
    ],
    ids=_param_id,
)
def test_w18x35(name, expected, tol):
    # AISC v16.0, W18X35: d = 17.7, bf = 6.00, tw = 0.300, tf = 0.425, kdes = 0.827 [in]
    props = _aisc(d=17.7, bf=6.00, tw=0.300, tf=0.425, kdes=0.827)
    _check(props, name, expected * IN ** POWER[name], tol)


@pytest.mark.parametrize(
    ("name", "expected", "tol"),
    [
        ("A", 28.5, REL),  # AISC v16.0, W18X97, A [in²]
        ("Ix", 1750.0, REL),  # AISC v16.0, W18X97, Ix [in⁴]
        ("Zx", 211.0, REL),  # AISC v16.0, W18X97, Zx [in³]
        ("Sx", 188.0, REL),  # AISC v16.0, W18X97, Sx [in³]
        pytest.param("Iy", 201.0, REL, marks=BF_ROUNDED),  # AISC v16.0, W18X97, Iy [in⁴]
        ("J", 5.86, REL_J_AISC),  # AISC v16.0, W18X97, J [in⁴]
        pytest.param("Cw", 15800.0, REL, marks=BF_ROUNDED),  # AISC v16.0, W18X97, Cw [in⁶]
    ],
    ids=_param_id,
)
def test_w18x97(name, expected, tol):
    # AISC v16.0, W18X97: d = 18.6, bf = 11.1, tw = 0.535, tf = 0.870, kdes = 1.27 [in]
    props = _aisc(d=18.6, bf=11.1, tw=0.535, tf=0.870, kdes=1.27)
    _check(props, name, expected * IN ** POWER[name], tol)


# --- European rolled sections, EN 10365 dimensions, catalogue properties (from memory) --------
# The catalogue's own J is the fillet-corrected form the code uses, and its values have four
# figures, so J is held to REL here.


@pytest.mark.parametrize(
    ("name", "expected", "tol"),
    [
        ("A", 53.81, REL),  # IPE 300, A [cm²], from memory
        ("Ix", 8356.0, REL),  # IPE 300, Iy (major axis) [cm⁴], from memory
        ("Zx", 628.4, REL),  # IPE 300, Wpl,y [cm³], from memory
        ("Sx", 557.1, REL),  # IPE 300, Wel,y [cm³], from memory
        ("Iy", 603.8, REL),  # IPE 300, Iz (minor axis) [cm⁴], from memory
        ("J", 20.12, REL),  # IPE 300, It [cm⁴], from memory
        ("Cw", 125.9, REL),  # IPE 300, Iw [10³ cm⁶], from memory
    ],
    ids=_param_id,
)
def test_ipe_300(name, expected, tol):
    # EN 10365, IPE 300: h = 300, b = 150, tw = 7.1, tf = 10.7, r = 15 [mm], from memory
    props = _euro(h=300.0, b=150.0, tw=7.1, tf=10.7, r=15.0)
    _check(props, name, expected * EURO[name], tol)


@pytest.mark.parametrize(
    ("name", "expected", "tol"),
    [
        ("A", 149.1, REL),  # HE 300 B, A [cm²], from memory
        ("Ix", 25170.0, REL),  # HE 300 B, Iy (major axis) [cm⁴], from memory
        ("Zx", 1869.0, REL),  # HE 300 B, Wpl,y [cm³], from memory
        ("Sx", 1678.0, REL),  # HE 300 B, Wel,y [cm³], from memory
        ("Iy", 8563.0, REL),  # HE 300 B, Iz (minor axis) [cm⁴], from memory
        ("J", 185.0, REL),  # HE 300 B, It [cm⁴], from memory
        ("Cw", 1688.0, REL),  # HE 300 B, Iw [10³ cm⁶], from memory
    ],
    ids=_param_id,
)
def test_he_300_b(name, expected, tol):
    # EN 10365, HE 300 B: h = 300, b = 300, tw = 11, tf = 19, r = 27 [mm], from memory
    props = _euro(h=300.0, b=300.0, tw=11.0, tf=19.0, r=27.0)
    _check(props, name, expected * EURO[name], tol)


# --- A welded plate girder (invented), r = 0, worked by hand --------------------------------


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        # A = 2·b·tf + (d − 2·tf)·tw = 2·200·20 + 360·10 = 8000 + 3600 = 11 600 mm²
        ("A", 11_600.0),
        # Ix = b·d³/12 − (b − tw)·h³/12 = 200·400³/12 − 190·360³/12
        #    = 1 066 666 666.7 − 738 720 000 = 327 946 666.7 mm⁴
        ("Ix", 327_946_666.7),
        # Iy = 2·tf·b³/12 + h·tw³/12 = 2·20·200³/12 + 360·10³/12 = 26 666 666.7 + 30 000
        ("Iy", 26_696_666.7),
        # Sx = Ix/(d/2) = 327 946 666.7/200
        ("Sx", 1_639_733.3),
        # Zx = b·tf·(d − tf) + tw·h²/4 = 200·20·380 + 10·360²/4 = 1 520 000 + 324 000
        ("Zx", 1_844_000.0),
        # J (plates, no fillets) = 2·b·tf³/3 + h·tw³/3 = 2·200·8000/3 + 360·1000/3
        #   = 1 066 666.7 + 120 000
        ("J", 1_186_666.7),
        # Cw = Iy·(d − tf)²/4 = 26 696 666.7·380²/4 = 26 696 666.7·36 100
        ("Cw", 963_749_666_666.7),
    ],
)
def test_welded_girder_by_hand(name, expected):
    # Invented: d = 400, b = 200, tf = 20, tw = 10, r = 0 [mm]; h = d − 2·tf = 360 mm.
    table = pd.DataFrame(
        {"d": [400.0], "b": [200.0], "tf": [20.0], "tw": [10.0], "r": [0.0], "fy": [350.0]}
    )
    # Hand values rounded to 0.1 in the last place shown: far inside 1e-6.
    assert section_properties(table).iloc[0][name] == pytest.approx(expected, rel=1e-6)


# --- Overrides ---------------------------------------------------------------------------------


def test_overrides_win():
    # Invented: two sections of the welded girder above; G1 gives Ix and J, G2 leaves Ix empty;
    # no column A, Iy, Sx, Zx or Cw at all.
    table = pd.DataFrame(
        {
            "d": [400.0, 400.0],
            "b": [200.0, 200.0],
            "tf": [20.0, 20.0],
            "tw": [10.0, 10.0],
            "r": [0.0, 0.0],
            "fy": [350.0, 350.0],
            "Ix": [3.5e8, np.nan],
            "J": [2.0e6, np.nan],
        },
        index=pd.Index(["G1", "G2"], name="name"),
    )
    props = section_properties(table)
    assert list(props.index) == ["G1", "G2"]
    assert props.loc["G1", "Ix"] == 3.5e8  # given
    assert props.loc["G1", "J"] == 2.0e6  # given
    assert props.loc["G1", "Sx"] == pytest.approx(1.75e6)  # from the given Ix: 3.5e8/200
    assert props.loc["G2", "Ix"] == pytest.approx(327_946_666.7)  # computed: see the hand test
    assert props.loc["G2", "J"] == pytest.approx(1_186_666.7)  # computed: see the hand test
    assert props["given"].tolist() == ["Ix J", ""]


# --- Class in flexure, SANS 10162-1:2011 Table 3 limits (from memory), worked by hand ---------
# fy = 400 MPa, so √fy = 20 and the limits are:
#   flange b/(2·tf): class 1 ≤ 145/20 = 7.25, class 2 ≤ 170/20 = 8.5, class 3 ≤ 200/20 = 10.0
#   web h/tw (Cf = 0): class 1 ≤ 1100/20 = 55, class 2 ≤ 1700/20 = 85, class 3 ≤ 1900/20 = 95
# Every plate has tf = 20 and tw = 10 mm (invented), so b/(2·tf) = b/40 and h/tw = (d − 40)/10.


@pytest.mark.parametrize(
    ("d", "b", "flange", "web", "overall"),
    [
        (540.0, 280.0, 1, 1, 1),  # b/40 = 7.0 ≤ 7.25: 1; (540 − 40)/10 = 50 ≤ 55: 1
        (540.0, 320.0, 2, 1, 2),  # 320/40 = 8.0 in (7.25, 8.5]: 2; web 50: 1
        (540.0, 380.0, 3, 1, 3),  # 380/40 = 9.5 in (8.5, 10.0]: 3; web 50: 1
        (840.0, 280.0, 1, 2, 2),  # flange 7.0: 1; (840 − 40)/10 = 80 in (55, 85]: 2
        (940.0, 280.0, 1, 3, 3),  # flange 7.0: 1; (940 − 40)/10 = 90 in (85, 95]: 3
        (1040.0, 280.0, 1, 4, 4),  # flange 7.0: 1; (1040 − 40)/10 = 100 > 95: 4
        (840.0, 440.0, 4, 2, 4),  # 440/40 = 11.0 > 10.0: 4; web 80: 2
    ],
)
def test_class_table_3_by_hand(d, b, flange, web, overall):
    got = section_class(d=[d], b=[b], tf=[20.0], tw=[10.0], fy=[400.0])
    assert (got.flange[0], got.web[0], got.overall[0]) == (flange, web, overall)


def test_class_table_3_with_axial_compression():
    # Cf/φCy = 0.5, fy = 400 MPa (√fy = 20); web limits:
    #   class 1: 55·(1 − 0.39·0.5) = 55·0.805 = 44.275
    #   class 2: 85·(1 − 0.61·0.5) = 85·0.695 = 59.075
    # Web (540 − 40)/10 = 50 in (44.275, 59.075]: class 2 (class 1 without the axial force).
    # Flange 280/40 = 7.0 ≤ 7.25: class 1, which the axial force does not change.
    got = section_class(d=540.0, b=280.0, tf=20.0, tw=10.0, fy=400.0, cf_ratio=0.5)
    assert (int(got.flange), int(got.web), int(got.overall)) == (1, 2, 2)


def test_class_rejects_a_ratio_outside_0_to_1():
    with pytest.raises(ValueError, match="Cf/φCy"):
        section_class(d=540.0, b=280.0, tf=20.0, tw=10.0, fy=400.0, cf_ratio=1.5)


def test_class_positional_order_is_flange_then_web():
    # Callers pass (b, tf, d, tw, fy) by position: row 2 of the table above, b = 320, tf = 20,
    # d = 540, tw = 10, fy = 400 → flange 320/40 = 8.0: 2; web (540 − 40)/10 = 50: 1.
    got = section_class(pd.Series([320.0]), 20.0, pd.Series([540.0]), 10.0, 400.0)
    assert (got.flange.tolist(), got.web.tolist(), got.overall.tolist()) == ([2], [1], [2])
