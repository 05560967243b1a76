"""The report and explain in the engineer's units (SI or US customary), and signs stated in words.

The sample models are checked once in the tool's internal units; the same results are then shown
in SI and in US customary units and compared number by number. Expected conversion factors are
the exact definitions of NIST SP 811 (2008), Appendix B: 1 ft = 0.3048 m, 1 in = 0.0254 m,
1 kip = 4.4482216152605 kN (1 lbf = 4.4482216152605 N); derived from them: 1 kip·ft =
4.4482216152605 × 0.3048 kN·m and 1 ksi = 4.4482216152605 kN / (0.0254 m)² = 6.894757… MPa.
Each comparison allows the rounding of both printed numbers (half a unit in the last digit shown),
never more. The Mcr formula printed in US units is evaluated back with the clause's equation
(SANS 10162-1:2011, cl. 13.6(a), from memory, as REFERENCES.md records).
"""

from __future__ import annotations

import math
import re
from html import unescape
from pathlib import Path

import pandas as pd
import pytest
from flangewise.engine.check import check_model
from flangewise.postproc import report
from flangewise.postproc.cli import sample_path
from flangewise.postproc.derivation import derivation_text, significant_text
from flangewise.postproc.exports import SIGN
from flangewise.postproc.shown_units import SI, US
from flangewise.postproc.svg import nice_ticks
from flangewise.readers.load import load_model

FT_IN_M = 0.3048  # NIST SP 811 (2008), App. B: 1 ft = 0.3048 m (exact)
IN_IN_MM = 25.4  # NIST SP 811 (2008), App. B: 1 in = 0.0254 m (exact)
KIP_IN_KN = 4.4482216152605  # NIST SP 811 (2008), App. B: 1 lbf = 4.4482216152605 N (exact)
KIPFT_IN_KNM = KIP_IN_KN * FT_IN_M  # 1 kip·ft in kN·m, from the two definitions above
KSI_IN_MPA = KIP_IN_KN * 1e3 / IN_IN_MM**2  # 1 ksi in MPa: 1 kip / in², from the definitions

#: A US number is printed to four significant figures: half a unit in the fourth figure.
FOUR_FIGURES = 5e-4

#: A number with a minus sign that prints as zero (−0, -0.0, −0.00).
NEGATIVE_ZERO = r"(?<![\w.])[-−]0(?:\.0+)?(?![\d.])"


@pytest.fixture(scope="module")
def shed():
    model = load_model(sample_path("industrial_shed"), None)
    return check_model(model, model.settings.check)


@pytest.fixture(scope="module")
def platform():
    model = load_model(sample_path("plant_platform"), None)
    return check_model(model, model.settings.check)


def _pair(result, segment: str, combination: str) -> pd.Series:
    r = result.results
    hit = r[(r["segment"].astype(str) == segment) & (r["combination"].astype(str) == combination)]
    assert len(hit) == 1
    return hit.iloc[0]


#: Per sample, its governing pair (drawn in the report): the shed's windward knee under uplift,
#: top flange (frame C's M6 mirrors it and is listed under it); the platform's girder over the
#: middle span, bottom flange.
GOVERNING = {
    "industrial_shed": ("M4-top-1", "ULS2 0.9D+1.3W"),
    "plant_platform": ("M2-bottom-2", "K1 1,2G+1,6Q"),
}


def _worst(result) -> pd.Series:
    """The sample's governing pair (``GOVERNING``), checked to be of the highest utilization."""
    name = (
        "industrial_shed"
        if "B04" in set(result.layout.segments.table["node_start"])
        else ("plant_platform")
    )
    row = _pair(result, *GOVERNING[name])
    assert row["utilization"] == result.results["utilization"].max()
    return row


def _number(text: str, pattern: str) -> float:
    found = re.search(pattern, text)
    assert found, pattern
    return float(found.group(1).replace("−", "-"))


def _shown(html: str) -> str:
    """The text a reader of the report sees (tags dropped, entities read)."""
    return unescape(re.sub(r"<[^>]+>", " ", html.split("<body>", 1)[1]))


def _no_si_units(text: str) -> None:
    assert "kN" not in text
    assert "MPa" not in text
    assert not re.search(r"\bmm\b", text)
    assert not re.search(r"\d\s*m\b", text)  # no value in metres
    assert "[m]" not in text


def test_explain_in_us_units_shows_kip_ft_ft_in_and_ksi_only(shed):
    text = derivation_text(shed, _worst(shed), units=US)
    for unit in ("kip·ft", " ft", " in;", " in²", " in⁴", " in⁶", " ksi"):
        assert unit in text, unit
    _no_si_units(text)
    assert not re.findall(NEGATIVE_ZERO, text)


def test_explain_in_us_units_equals_the_si_numbers_converted(shed):
    row = _worst(shed)
    si = derivation_text(shed, row, units=SI)
    us = derivation_text(shed, row, units=US)
    # Lengths: SI prints 0.001 m, US 0.001 ft.
    tol_ft = 5e-4 / FT_IN_M + 5e-4
    for what in ("L = ", "at ", "to \\S+ \\(braced\\) at "):
        si_m = _number(si, what + r"([\d.]+) m\b")
        us_ft = _number(us, what + r"([\d.]+) ft\b")
        assert us_ft == pytest.approx(si_m / FT_IN_M, abs=tol_ft), what
    # Moments: both print 0.01 (end moments, demand) or 0.1 (Mcr, Mr) of their unit.
    for pattern, half in (
        (r"M at start = ([-−\d.]+) {}", 0.005),
        (r"M at end = ([-−\d.]+) {}", 0.005),
        (r"demand = .* = ([\d.]+) {}", 0.005),
        (r"→ Mr = ([\d.]+) {}", 0.05),
        (r"^\s+= ([\d.]+) {}", 0.05),  # the Mcr of the clause's formula
    ):
        si_knm = _number(si, re.compile(pattern.format("kN·m"), re.M))
        us_kipft = _number(us, re.compile(pattern.format("kip·ft"), re.M))
        assert us_kipft == pytest.approx(si_knm / KIPFT_IN_KNM, abs=half / KIPFT_IN_KNM + half)
    # Section properties: SI Ix to 0.01e6 mm⁴, US to four figures.
    si_ix = _number(si, r"Ix = ([\d.]+)e6 mm⁴") * 1e6
    us_ix = _number(us, r"Ix = ([\d.]+) in⁴")
    assert us_ix == pytest.approx(si_ix / IN_IN_MM**4, rel=FOUR_FIGURES, abs=5e3 / IN_IN_MM**4)
    si_d = _number(si, r"d = ([\d.]+),")
    assert _number(us, r"d = ([\d.]+),") == pytest.approx(
        si_d / IN_IN_MM, rel=FOUR_FIGURES, abs=0.05 / IN_IN_MM
    )
    # Stress: fy in whole MPa, in ksi to four figures.
    si_fy = _number(si, r"fy = ([\d.]+) MPa")
    assert _number(us, r"fy = ([\d.]+) ksi") == pytest.approx(
        si_fy / KSI_IN_MPA, rel=FOUR_FIGURES, abs=0.5 / KSI_IN_MPA
    )
    # Dimensionless numbers are the same text in both.
    for pattern in (
        r"factor used = ([\d.]+)",
        r"κ = .* = ([-+\d.]+)",
        r"utilization = .* = ([\d.]+)",
    ):
        assert _number(us, pattern) == _number(si, pattern)


def test_us_mcr_formula_evaluates_to_the_mcr_it_prints(shed):
    # The printed numbers, put back into SANS 10162-1:2011 cl. 13.6(a) (from memory), give the
    # printed Mcr: E, G [ksi], L [in], Iy, J [in⁴], Cw [in⁶] → kip·in, ÷ 12 in/ft → kip·ft.
    us = derivation_text(shed, _worst(shed), units=US)
    found = re.search(
        r"= \(([\d.]+)·π/([\d.]+) in\)·√\(([\d.]+)·([\d.]+)·([\d.]+)·([\d.]+) \+ "
        r"\(π·[\d.]+/[\d.]+\)²·[\d.]+·([\d.]+)\)\n\s+= ([\d.]+) kip·ft",
        us,
    )
    assert found
    w2, length, e, iy, g, j, cw, mcr = (float(v) for v in found.groups())
    kip_in = (w2 * math.pi / length) * math.sqrt(
        e * iy * g * j + (math.pi * e / length) ** 2 * iy * cw
    )
    # Seven printed inputs of four figures each: their rounding reaches about 0.2 % of Mcr.
    assert kip_in / 12.0 == pytest.approx(mcr, rel=2e-3)


def test_explain_states_the_sign_of_the_end_moments(shed, platform):
    for result, units in ((shed, SI), (shed, US), (platform, US)):
        text = derivation_text(result, _worst(result), units=units)
        line = next(ln for ln in text.splitlines() if "M at start" in ln)
        assert f"({SIGN})" in line, line


def test_report_in_us_units(shed, tmp_path):
    html = report.build_report(shed, Path("industrial_shed"), "canonical layout", units=US)
    shown = _shown(html)
    _no_si_units(shown)
    assert not re.findall(NEGATIVE_ZERO, shown)
    # The title block states the output units.
    assert "output units" in shown and US.words in shown
    assert "E = 29010 ksi" in shown  # 200 000 MPa ÷ KSI_IN_MPA = 29 007.5 → four figures
    # Tables, diagrams and the key plan carry US units.
    assert "Lu [ft]" in shown and "Mr [kip·ft]" in shown
    assert "distance along the member [ft]" in shown and "M [kip·ft]" in shown
    # The shed spans 24 m in x and 18 m in y (sample layout): 78.74 ft and 59.06 ft.
    assert f"x 0.0 to {24 / FT_IN_M:.1f} ft, y 0.0 to {18 / FT_IN_M:.1f} ft" in shown
    # The worst pair's derivation in the report is explain's, in kip·ft.
    row = _worst(shed)
    assert f"→ Mr = {US.to_moment(row['Mr']):.1f} kip·ft" in shown


def test_report_tables_equal_the_si_report_converted(shed):
    si = report.build_report(shed, Path("industrial_shed"), "canonical layout", units=SI)
    us = report.build_report(shed, Path("industrial_shed"), "canonical layout", units=US)

    def nearest(html: str) -> list[list[str]]:
        table = html[html.index("Members nearest failure") :]
        table = table[: table.index("</table>")]
        return [
            re.findall(r"<td class='num[^']*'>([^<]+)</td>", tr) for tr in table.split("<tr>")[2:]
        ]

    for a, b in zip(nearest(si), nearest(us), strict=True):
        lu_m, mr_knm = float(a[0]), float(a[3])
        lu_ft, mr_kipft = float(b[0]), float(b[3])
        # Lu to 0.01 of its unit, Mr to 0.1 of its unit, in both reports.
        assert lu_ft == pytest.approx(lu_m / FT_IN_M, abs=0.005 / FT_IN_M + 0.005)
        assert mr_kipft == pytest.approx(mr_knm / KIPFT_IN_KNM, abs=0.05 / KIPFT_IN_KNM + 0.05)
        assert a[1:3] + a[4:] == b[1:3] + b[4:]  # factors and utilization: no unit


def _section(html: str, row: pd.Series) -> str:
    anchor = f"id='seg-{row['segment']}-{row['combination']}'".replace(" ", "_")
    part = html[html.index(anchor) :]
    return part[: part.index("</section>")]


@pytest.mark.parametrize("units", [SI, US], ids=["si", "us"])
def test_report_diagram_sign_is_stated_and_matches_the_working(platform, units):
    html = report.build_report(platform, Path("plant_platform"), "canonical layout", units=units)
    # The platform's governing pair checks a girder's bottom flange over the middle span.
    bottom = _worst(platform)
    assert bottom["flange"] == "bottom"
    section = _section(html, bottom)
    text = unescape(re.sub(r"<[^>]+>", " ", section))
    assert f"M [{units.moment}], + compresses top flange" in text
    assert "checks the bottom flange" in text and "opposite sign" in text
    assert f"({SIGN})" in text  # the working's end moments say their sign
    start = _number(text, rf"M at start = ([-−\d.]+) {units.moment}")
    labels = [
        float(t.replace("−", "-"))
        for t in re.findall(r'class="lab" text-anchor="middle">([-−\d.]+)</text>', section)
    ]
    # The diagram's end labels are the working's end moments with the opposite sign (to 0.1).
    assert any(abs(v + start) <= 0.051 for v in labels), (start, labels)


def test_report_diagram_sign_for_a_top_flange_segment(shed):
    html = report.build_report(shed, Path("industrial_shed"), "canonical layout", units=US)
    row = _worst(shed)
    assert row["flange"] == "top"
    text = unescape(re.sub(r"<[^>]+>", " ", _section(html, row)))
    assert "the same numbers" in text and f"({SIGN})" in text
    start = _number(text, r"M at start = ([-−\d.]+) kip·ft")
    labels = [
        float(t.replace("−", "-"))
        for t in re.findall(
            r'class="lab" text-anchor="middle">([-−\d.]+)</text>', _section(html, row)
        )
    ]
    assert any(abs(v - start) <= 0.051 for v in labels), (start, labels)


def test_us_distance_ticks_stand_at_round_steps(shed):
    html = report.build_report(shed, Path("industrial_shed"), "canonical layout", units=US)
    svg = html[html.index('<svg id="diagram-') :]
    svg = svg[: svg.index("</svg>")]
    ticks = [
        float(v)
        for v in re.findall(r'y="\d+" class="tick" text-anchor="middle">([\d.]+)</text>', svg)
    ]
    step = ticks[1] - ticks[0]
    assert step in (1.0, 2.0, 2.5, 5.0, 10.0, 20.0, 25.0, 50.0)
    assert ticks == pytest.approx([i * step for i in range(len(ticks))])


def test_nice_ticks_and_significant_figures():
    # Round steps (common practice: 1, 2, 2.5, 5 × 10ⁿ) with at most six intervals.
    assert nice_ticks(45.0) == (pytest.approx([0, 10, 20, 30, 40]), 0)
    assert nice_ticks(30.0)[0].tolist() == [0, 5, 10, 15, 20, 25, 30]
    assert nice_ticks(2.2) == (pytest.approx([0, 0.5, 1.0, 1.5, 2.0]), 1)
    assert nice_ticks(150.0)[0].tolist() == [0, 25, 50, 75, 100, 125, 150]
    assert nice_ticks(150.0)[1] == 0
    assert nice_ticks(1.4)[1] == 2  # every 0.25
    # Four significant figures, plain decimals, never a negative zero.
    assert significant_text(1750.4) == "1750"
    assert significant_text(15812.0) == "15810"
    assert significant_text(8.0) == "8.000"
    assert significant_text(0.30512) == "0.3051"
    assert significant_text(9.99996) == "10.00"
    assert significant_text(-0.0) == "0"
    assert significant_text(-2.5e-7, sign=True) == "-0.0000002500"
    assert significant_text(3.14159, sign=True) == "+3.142"
