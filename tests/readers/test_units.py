"""Unit factors to the internal system (mm, N, N·mm, MPa) against their exact definitions.

Reference: NIST Special Publication 811 (2008 edition), *Guide for the Use of the International
System of Units (SI)*, Appendix B. SI prefixes (k = 10³, M = 10⁶, c = 10⁻², m = 10⁻³) are from the
same guide.
"""

from __future__ import annotations

import pytest
from flangewise.readers.units import factor, known_units

#: Each expected value is one exact factor or the product of two, so it and the code's factor can
#: differ only by a couple of float roundings (about 1e-16 each).
REL = 1e-15


@pytest.mark.parametrize(
    ("unit", "mm"),
    [
        ("mm", 1.0),  # SI
        ("cm", 10.0),  # SI prefix c = 10⁻²: 1 cm = 10 mm
        ("m", 1000.0),  # SI prefix m = 10⁻³: 1 m = 1000 mm
        ("in", 25.4),  # NIST SP 811 (2008), App. B: 1 in = 2.54 cm, exact
        ("ft", 304.8),  # NIST SP 811 (2008), App. B: 1 ft = 0.3048 m, exact
    ],
)
def test_length(unit, mm):
    assert factor("length", unit) == pytest.approx(mm, rel=REL)


@pytest.mark.parametrize(
    ("unit", "newtons"),
    [
        ("N", 1.0),  # SI
        ("kN", 1.0e3),  # SI prefix k = 10³
        ("MN", 1.0e6),  # SI prefix M = 10⁶
        # NIST SP 811 (2008), App. B: 1 lb = 0.453 592 37 kg and g_n = 9.806 65 m/s², both exact,
        # so 1 lbf = 4.448 221 615 260 5 N exactly (the table prints it rounded, 4.448 222 N).
        ("lbf", 4.4482216152605),
        ("kip", 4448.2216152605),  # NIST SP 811 (2008), App. B: 1 kip = 1000 lbf
    ],
)
def test_force(unit, newtons):
    assert factor("force", unit) == pytest.approx(newtons, rel=REL)


@pytest.mark.parametrize(
    ("unit", "mpa"),
    [
        ("MPa", 1.0),  # SI: 1 MPa = 10⁶ N / 10⁶ mm² = 1 N/mm²
        ("N/mm2", 1.0),  # SI: the same unit
        ("kPa", 1.0e-3),  # SI prefixes
        ("GPa", 1.0e3),  # SI prefixes
        ("psi", 6.894757293168e-3),  # NIST SP 811 (2008), App. B: 1 lbf/in² = 6.894 757 kPa
        ("ksi", 6.894757293168),  # NIST SP 811 (2008), App. B: 1 kip/in² = 6.894 757 MPa
    ],
)
def test_stress(unit, mpa):
    # The guide prints the stress factors rounded to 7 digits; 6.894757293168 is the value that
    # follows from its exact lbf and in (4.4482216152605 N / 645.16 mm² = 6.89475729316836e-3
    # MPa), given here to 13 digits, hence the looser tolerance.
    assert factor("stress", unit) == pytest.approx(mpa, rel=1e-12)


@pytest.mark.parametrize(
    ("unit", "nmm"),
    [
        ("N*mm", 1.0),  # SI
        ("kN*m", 1.0e6),  # SI: 10³ N x 10³ mm
        ("kN.m", 1.0e6),  # the same, written with a dot
        ("kN·m", 1.0e6),  # the same, written with a middle dot
        ("kN*cm", 1.0e4),  # SI: 10³ N x 10 mm
        ("kip*ft", 4448.2216152605 * 304.8),  # NIST SP 811 (2008), App. B: kip and ft as above
        ("kip-ft", 4448.2216152605 * 304.8),  # the same, written with a hyphen
        ("kip*in", 4448.2216152605 * 25.4),  # NIST SP 811 (2008), App. B: kip and in as above
        ("lbf*in", 4.4482216152605 * 25.4),  # NIST SP 811 (2008), App. B: 0.112 984 8 N·m
    ],
)
def test_moment(unit, nmm):
    assert factor("moment", unit) == pytest.approx(nmm, rel=REL)


@pytest.mark.parametrize(
    ("kind", "unit"),
    [("length", "furlong"), ("force", "kgf"), ("stress", "bar"), ("moment", "kNm")],
)
def test_unknown_unit_is_refused(kind, unit):
    with pytest.raises(KeyError):
        factor(kind, unit)


@pytest.mark.parametrize("kind", ["length", "force", "moment", "stress"])
def test_every_listed_unit_has_a_factor(kind):
    for unit in known_units(kind):
        assert factor(kind, unit) > 0.0
