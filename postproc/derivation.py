"""The check of one segment in one load combination, step by step, with the clause beside each step.

Used by the ``explain`` command (plain text) and the review report (HTML). Every number shown is
read from the check's results or the section table: nothing is recomputed differently here, so the
derivation always matches the exported CSV. The one addition is ``explain``'s check of the exact
analysis: the same segment's diagram solved again on a mesh twice as fine, to show how little the
eigenvalue moves.

Numbers are shown in the engineer's choice of units (:mod:`flangewise.postproc.shown_units`):
positions and lengths in m or ft, plates and section properties in mm or in and their powers,
moments in kN·m or kip·ft, stresses in MPa or ksi. SI keeps its fixed decimals; US customary
numbers print to four significant figures. Signed end moments say their sign in the words of the
result files (:data:`flangewise.postproc.exports.SIGN`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from flangewise.engine import buckling
from flangewise.engine.check import EXACT_MARGIN, LINE_SHARE, CheckResult
from flangewise.engine.flags import FLAGS
from flangewise.engine.gradient import (
    END_TOLERANCE_MM,
    INSIDE_TOLERANCE,
    MIN_INSIDE_STATIONS,
    OMEGA2_CAP,
    STATION_MERGE_MM,
)
from flangewise.engine.resistance import INELASTIC_SWITCH
from flangewise.engine.sections import FLANGE_LIMITS, WEB_LIMITS
from flangewise.engine.segments import FLANGES
from flangewise.postproc.exports import LOAD_HEIGHT_WORDS, SIGN, significant
from flangewise.postproc.names import UnknownName, unknown_names_message
from flangewise.postproc.shown_units import SI, ShownUnits

#: Figures of a US customary number in the derivation (enough for a hand check to 0.1 %).
FIGURES = 4

#: Superscripts of the powers of a section unit (mm², in⁴, …).
POWERS = {1: "", 2: "²", 3: "³", 4: "⁴", 6: "⁶"}
#: The section properties shown, each with the power of the section unit it is in.
PROPERTY_POWERS = (("A", 2), ("Ix", 4), ("Iy", 4), ("Sx", 3), ("Zx", 3), ("J", 4), ("Cw", 6))

METHOD_NAMES = {
    "end_moment": "end-moment ω2",
    "quarter_point": "quarter-point ω2",
    "cb": "Cb",
    "exact": "exact factor",
}

#: How the exact analysis is cited wherever its result is shown.
EXACT_CITATION = "elastic buckling analysis (Vlasov beam theory, fork supports)"


@dataclass(frozen=True)
class Step:
    """One step of a derivation: a title, the clause it follows, and its lines of working."""

    title: str
    clause: str
    lines: list[str] = field(default_factory=list)


def find_pair(result: CheckResult, segment: str, combination: str) -> pd.Series:
    """Return the result row of one segment in one combination.

    Raises:
        UnknownName: the segment or the combination is not in the model (with the close matches
            and the names that exist), or the segment has no forces in that combination.
    """
    segments = [str(s) for s in result.layout.segments.table.index]
    combinations = [str(c) for c in result.layout.diagrams.combinations]
    if segment not in set(segments):
        raise UnknownName(
            "segment",
            unknown_names_message("segment", [segment], segments, "'flangewise members MODEL'"),
        )
    if combination not in set(combinations):
        raise UnknownName(
            "combination", unknown_names_message("load combination", [combination], combinations)
        )
    r = result.results
    hit = r[(r["segment"].astype(str) == segment) & (r["combination"].astype(str) == combination)]
    if hit.empty:
        raise UnknownName(
            "segment",
            f"segment '{segment}' has no forces in load combination '{combination}' "
            "(its member's elements have no force rows there)",
        )
    return hit.iloc[0]


def derivation(
    result: CheckResult, row: pd.Series, analysis: bool = False, units: ShownUnits = SI
) -> list[Step]:
    """Return the steps from section properties to utilization for one result row.

    Args:
        result: the check's results.
        row: one row of ``result.results`` (its index label is its run number).
        analysis: also show the exact buckling analysis itself, with a run on a doubled mesh
            (``explain``; the report leaves it out).
        units: the units every number is shown in.
    """
    seg = result.layout.segments.table.loc[row["segment"]]
    props = result.sections.loc[row["section"]]
    s = result.settings
    u = units
    x, m = run_diagram(result, row)
    shape = diagram_departure(row, x, m)
    extra = [_analysis_step(result, row, props, x, m, u)] if analysis else []
    steps = [
        _section_step(row, props, u),
        _length_step(row, seg, u),
        _diagram_step(row, shape, u),
        _gradient_step(row, seg, shape, s.limit_to_exact, u),
        *extra,
        _mcr_step(row, props, s.E, s.G, u),
        _resistance_step(row, s.phi, u),
        Step(
            "Demand and utilization",
            "demand / Mr",
            _demand_lines(row, u),
        ),
    ]
    flags = str(row["flags"])
    if flags:
        steps.append(
            Step(
                "Flags",
                "README, Flags",
                [f"{name}: {FLAGS[name]}" for name in flags.split()],
            )
        )
    return [
        Step(st.title, st.clause, [no_negative_zero(line) for line in st.lines]) for st in steps
    ]


#: A number that prints as zero with a minus sign ("-0.00", "−0.0"): rounding of a tiny negative.
_NEGATIVE_ZERO = re.compile(r"[-−](0(?:\.0+)?)(?![\d.])")


def no_negative_zero(text: str) -> str:
    """Drop the minus of every number that prints as zero ("-0.00 kN·m" → "0.00 kN·m")."""
    return _NEGATIVE_ZERO.sub(r"\1", text)


def significant_text(value: float, figures: int = FIGURES, sign: bool = False) -> str:
    """``value`` to ``figures`` significant figures, trailing zeros kept, never "-0".

    Plain decimals, no exponent: 1750.4 → "1750", 15812 → "15810", 0.30512 → "0.3051", 8 → "8.000";
    NaN and infinities print as Python writes them. With ``sign``, a positive value gets "+".
    """
    v = float(significant(np.array([value]), figures)[0])  # rounded, -0.0 made 0.0
    if not math.isfinite(v):
        return f"{v}"
    if v == 0.0:
        return "0"
    places = max(0, figures - 1 - math.floor(math.log10(abs(v))))
    return f"{v:+.{places}f}" if sign else f"{v:.{places}f}"


def _moment(nmm: float, u: ShownUnits, digits: int = 2) -> str:
    """A moment [N·mm] as a number in ``u.moment`` to ``digits`` decimals (unit not appended)."""
    return f"{u.to_moment(nmm):.{digits}f}"


def _at(mm: float, u: ShownUnits) -> str:
    """A position or length [mm] in ``u.length`` with its unit: "1.500 m", "4.921 ft"."""
    return f"{u.to_length(mm):.3f} {u.length}"


def _stress(mpa: float, u: ShownUnits) -> str:
    """A stress or modulus [MPa] as a number: whole MPa in SI, four figures in ksi."""
    return f"{mpa:.0f}" if u.system == "si" else significant_text(u.to_stress(mpa))


def _prop(mm: float, power: int, u: ShownUnits) -> str:
    """A section quantity [mm^power] as a number in the Mcr formula: '%.4g' in SI, four figures."""
    return f"{mm:.4g}" if u.system == "si" else significant_text(u.to_section(mm, power))


def _section_lines(row: pd.Series, p: pd.Series, u: ShownUnits) -> list[str]:
    """The plates and the properties, in mm (fixed decimals) or in (four figures)."""
    if u.system == "si":
        return [
            f"{row['section']}: d = {p['d']:.1f}, b = {p['b']:.1f}, tf = {p['tf']:.1f}, "
            f"tw = {p['tw']:.1f}, r = {p['r']:.1f} mm; fy = {p['fy']:.0f} MPa",
            f"A = {p['A']:.0f} mm², Ix = {p['Ix'] / 1e6:.2f}e6 mm⁴, "
            f"Iy = {p['Iy'] / 1e6:.3f}e6 mm⁴, "
            f"Sx = {p['Sx'] / 1e3:.0f}e3 mm³, Zx = {p['Zx'] / 1e3:.0f}e3 mm³, "
            f"J = {p['J'] / 1e3:.1f}e3 mm⁴, Cw = {p['Cw'] / 1e9:.1f}e9 mm⁶",
        ]

    plates = ", ".join(
        f"{k} = {significant_text(u.to_section(p[k]))}" for k in ("d", "b", "tf", "tw", "r")
    )
    props = ", ".join(
        f"{k} = {significant_text(u.to_section(p[k], n))} {u.section}{POWERS[n]}"
        for k, n in PROPERTY_POWERS
    )
    return [
        f"{row['section']}: {plates} {u.section}; fy = {_stress(p['fy'], u)} {u.stress}",
        props,
    ]


def _limit(constant: float, root: float, u: ShownUnits, digits: int) -> str:
    """'145/√fy = 7.70' in SI; in US the clause's constant for fy in ksi: '55.22/√fy = 7.70'.

    The clause's limits are written for fy in MPa; 145/√(fy [MPa]) = (145/√6.895)/√(fy [ksi]).
    """
    c = (
        f"{constant:.0f}"
        if u.system == "si"
        else significant_text(constant / math.sqrt(u.stress_mpa))
    )
    return f"{c}/√fy = {constant / root:.{digits}f}"


def _section_step(row: pd.Series, p: pd.Series, u: ShownUnits) -> Step:
    root = math.sqrt(p["fy"])
    bt = p["b"] / (2.0 * p["tf"])
    hw = (p["d"] - 2.0 * p["tf"]) / p["tw"]
    cls = int(row["section_class"])
    base = "Mp = Zx·fy" if cls <= 2 else "My = Sx·fy"
    ksi = "" if u.system == "si" else f" (fy in {u.stress})"
    lines = [
        *_section_lines(row, p, u),
        source_words(p),
        f"flange b/2tf = {bt:.2f}; limits "
        + ", ".join(_limit(c, root, u, 2) for c in FLANGE_LIMITS)
        + ksi,
        f"web h/w = {hw:.1f}; limits " + ", ".join(_limit(c, root, u, 1) for c in WEB_LIMITS) + ksi,
        f"class {cls}"
        + (": NOT CHECKED by this tool" if cls >= 4 else f": resistance from {base}")
        + (f" = {_moment(row['M_base'], u, 1)} {u.moment}" if cls < 4 else ""),
    ]
    return Step("Section properties and class", "SANS 10162-1:2011, Table 3", lines)


def _mcr_step(row: pd.Series, p: pd.Series, e: float, g: float, u: ShownUnits) -> Step:
    """Mcr by the clause, every quantity in consistent units (L in mm or in, as the section)."""
    length = (
        f"{row['length']:.0f}"
        if u.system == "si"
        else significant_text(u.to_section(row["length"]))
    )
    iy, j, cw = _prop(p["Iy"], 4, u), _prop(p["J"], 4, u), _prop(p["Cw"], 6, u)
    es, gs = _stress(e, u), _stress(g, u)
    return Step(
        "Elastic critical moment",
        "SANS 10162-1:2011, cl. 13.6(a)",
        [
            "Mcr = (ω2·π/L)·√(E·Iy·G·J + (π·E/L)²·Iy·Cw)",
            f"    = ({row['factor']:.3f}·π/{length} {u.section})·√({es}·{iy}·{gs}·{j} + "
            f"(π·{es}/{length})²·{iy}·{cw})",
            f"    = {_moment(row['Mcr'], u, 1)} {u.moment}",
        ]
        + (
            []
            if u.system == "si"
            else [
                f"    (E, G in {u.stress}; L in {u.section}; Iy, J in {u.section}⁴; Cw in "
                f"{u.section}⁶)"
            ]
        ),
    )


def source_words(p: pd.Series) -> str:
    """Where a section's properties came from, in one line (explain and the report)."""
    source = str(p.get("source", "plates"))
    given = str(p["given"])
    if source.startswith("catalogue"):
        words = f"source: {source}; the tabulated {given.replace(' ', ', ')} are used as they are"
    elif given:
        words = (
            f"source: given properties: {given.replace(' ', ', ')} from the sections table; "
            "the rest from the plates"
        )
    else:
        words = (
            "source: plates: A, Ix, Iy, Zx with root fillets, Sx = 2·Ix/d, J by the "
            "fillet-corrected fit, Cw = Iy·(d − tf)²/4"
        )
    replaces = str(p.get("replaces", "") or "")
    if replaces:
        words += f" (the sections table's row replaces catalogue shape {replaces})"
    return words


def _length_step(row: pd.Series, seg: pd.Series, u: ShownUnits) -> Step:
    def end(node: str, braced: bool, free: bool) -> str:
        if free:
            return f"{node} (free end)"
        return f"{node} ({'braced' if braced else 'NOT braced'})"

    lines = [
        f"member {row['member']}, {row['flange']} flange: from "
        f"{end(seg['node_start'], seg['braced_start'], seg['free_start'])} at "
        f"{_at(seg['s_start'], u)} to {end(seg['node_end'], seg['braced_end'], seg['free_end'])}"
        f" at {_at(seg['s_end'], u)}",
        f"L = {_at(row['length'], u)}",
    ]
    if seg["assumed"]:
        lines.append("an end is held only by an inferred (assumed) brace: verify the connection")
    return Step("Unbraced length", "segment between points that hold the flange", lines)


def run_diagram(result: CheckResult, row: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Return the stations [mm from the segment start] and moments [N·mm] of one result row.

    Results row ``i`` is run ``i`` of the diagrams; the moments are positive where they compress
    the segment's flange.
    """
    d = result.layout.diagrams
    i = int(row.name)  # type: ignore[arg-type]
    a, b = int(d.offsets[i]), int(d.offsets[i + 1])
    return d.x[a:b], d.m[a:b]


@dataclass(frozen=True)
class Departure:
    """Where one diagram leaves the straight line between its end moments.

    Attributes:
        share: largest distance of a station from that line ÷ |M|max (the results' value) [-].
        at: where that station is, from the segment start [mm] (NaN without stations).
        jump: the largest moment jump inside the segment [N·mm] (0 when there is none).
        jump_at: where it is [mm] (NaN when there is none).
    """

    share: float
    at: float
    jump: float
    jump_at: float


def diagram_departure(row: pd.Series, x: np.ndarray, m: np.ndarray) -> Departure:
    """Locate the largest departure from the end-moment line, and the largest inside jump.

    The measures are those of the check (``engine.check.diagram_shape``); this finds where.
    """
    if len(x) == 0:
        return Departure(float(row["line_departure"]), math.nan, 0.0, math.nan)
    length = float(row["length"])
    t = np.clip(x / length, 0.0, 1.0) if length > 0 else np.zeros(len(x))
    line = m[0] + (m[-1] - m[0]) * t
    at = float(x[int(np.argmax(np.abs(m - line)))])
    step = np.abs(np.diff(m))
    place = (np.diff(x) <= STATION_MERGE_MM) & (x[:-1] > END_TOLERANCE_MM)
    place &= x[:-1] < length - END_TOLERANCE_MM
    step = np.where(place, step, 0.0)
    k = int(np.argmax(step)) if len(step) else 0
    big = len(step) and step[k] > LINE_SHARE * float(row["M_max"])
    return Departure(
        float(row["line_departure"]),
        at,
        float(step[k]) if big else 0.0,
        float(x[k]) if big else math.nan,
    )


def _departure_words(d: Departure, u: ShownUnits) -> str:
    """'inside station 12 % of |M|max off the straight line at 1.500 m; a jump of …'."""
    words = (
        f"largest departure from the straight line between the end moments: "
        f"{d.share * 100:.0f} % of |M|max, at {_at(d.at, u)}"
        if math.isfinite(d.at)
        else "no stations"
    )
    if d.jump > 0:
        words += f"; a jump of {_moment(d.jump, u)} {u.moment} at {_at(d.jump_at, u)}"
    else:
        words += "; no moment jump inside"
    return words


def _diagram_step(row: pd.Series, shape: Departure, u: ShownUnits) -> Step:
    flange = row["flange"]
    sign = (
        "moments as the model gives them"
        if flange == "either"
        else f"positive = compression in the {flange} flange"
    )
    peak = (
        f"largest |M| inside: {_moment(row['inside_peak'], u)} {u.moment} at "
        f"{_at(row['inside_peak_at'], u)} from the segment start"
        if not math.isnan(row["inside_peak_at"])
        else "no station inside the segment"
    )
    mu = u.moment
    return Step(
        "Moment diagram of the segment",
        "from the analysis, this load combination",
        [
            f"{sign}; load combination {row['combination']}",
            # The sign in the words of the result files' M start and M end headers.
            f"M at start = {_moment(row['M_start'], u)} {mu}, M at end = "
            f"{_moment(row['M_end'], u)} {mu} ({SIGN}), largest |M| = "
            f"{_moment(row['M_max'], u)} {mu}",
            peak,
            f"|M| at L/4, L/2, 3L/4 = {_moment(row['M_a'], u)}, {_moment(row['M_b'], u)}, "
            f"{_moment(row['M_c'], u)} {mu}",
            _departure_words(shape, u),
        ],
    )


def _exact_line(row: pd.Series) -> str:
    """The exact factor beside the code factors, or why there is none."""
    factor = row["exact_factor"]
    if math.isfinite(factor):
        return f"exact factor = Mcr exact / Mcr of uniform moment = {factor:.3f} [{EXACT_CITATION}]"
    return f"exact factor: none ({no_exact_reason(row)})"


def no_exact_reason(row: pd.Series) -> str:
    """Why a row has no exact factor."""
    note = str(row["exact_note"])
    if note:
        return note
    if row["status"] == "not critical":
        return "the flange is nowhere in compression"
    if row["status"] == "not checked":
        return "class 4 section: not checked"
    return "the diagram has no length to analyse"


def _gradient_step(
    row: pd.Series, seg: pd.Series, shape: Departure, limit_to_exact: bool, u: ShownUnits
) -> Step:
    kappa = row["kappa"]
    lines = []
    if math.isnan(kappa):
        lines.append("κ: both end moments are zero, there is no ratio")
    else:
        curvature = (
            "one end moment zero"
            if kappa == 0
            else ("double curvature" if kappa > 0 else "single curvature")
        )
        lines.append(f"κ = smaller / larger end moment = {kappa:+.3f} ({curvature})")
        lines.append(
            f"end-moment ω2 = 1.75 + 1.05κ + 0.3κ² = {row['omega2_formula']:.3f} "
            f"(≤ 2.5) [SANS 10162-1:2011, cl. 13.6(a)]"
        )
    flags = set(str(row["flags"]).split())
    large = f"{_moment(max(abs(row['M_start']), abs(row['M_end'])), u)} {u.moment}"
    if "peak-inside" in flags:
        lines.append(
            f"  NOT APPLICABLE: inside, |M| = {_moment(row['inside_peak'], u)} {u.moment} at "
            f"{_at(row['inside_peak_at'], u)} exceeds the larger end moment {large} "
            f"(by more than {INSIDE_TOLERANCE:.1%}): ω2 = 1.0"
        )
    elif "zero-ends" in flags:
        lines.append("  NOT APPLICABLE: both end moments are zero: ω2 = 1.0")
    elif "few-stations" in flags:
        lines.append(
            f"  CANNOT BE SHOWN TO APPLY: fewer than {MIN_INSIDE_STATIONS} stations inside the "
            "segment: ω2 = 1.0"
        )
    else:
        lines.append(f"  applies: no moment inside exceeds the larger end moment ({large})")
    if "not-end-moments" in flags:
        lines.append(
            "  BUT NOT END MOMENTS ONLY (flag not-end-moments): "
            + _off_line_words(shape, u)
            + "; the formula assumes a straight diagram between the end moments"
        )
    lines.append(
        f"quarter-point ω2 = 4·Mmax/√(Mmax² + 4Ma² + 7Mb² + 4Mc²) = {row['omega2_qp']:.3f} "
        "(≤ 2.5) [CSA S16-14, cl. 13.6(a)(ii)]"
    )
    held = f" (held to {OMEGA2_CAP} where Cb is the basis)" if row["cb"] > OMEGA2_CAP else ""
    lines.append(
        f"Cb = 12.5·Mmax/(2.5·Mmax + 3MA + 4MB + 3MC) = {row['cb']:.3f}{held} "
        "[AISC 360-16, Eq. F1-1]"
    )
    lines.append(_exact_line(row))
    method = METHOD_NAMES[str(row["method"])]
    if seg["cantilever"]:
        why = "cantilever segment: 1.0"
    elif not (seg["braced_start"] and seg["braced_end"]):
        why = "compression flange not braced at one end: 1.0"
    elif "few-stations" in flags:
        why = "too few stations inside the segment: 1.0"
    elif row["method"] == "end_moment" and flags & {"peak-inside", "zero-ends"}:
        why = "the end-moment formula does not apply here: 1.0"
    elif row["method"] == "cb" and row["cb"] > OMEGA2_CAP:
        why = f"Cb applies, held to {OMEGA2_CAP}"
    else:
        why = f"{method} applies"
    lines.append(f"design basis: {method} → factor basis = {row['factor_basis']:.3f} ({why})")
    lines.extend(_limit_lines(row, "code-factor-high" in flags, limit_to_exact))
    return Step("Moment-gradient factor", "see each line", lines)


def _off_line_words(d: Departure, u: ShownUnits) -> str:
    """The departure named: '12 % of |M|max off …', or 'a jump of 48.00 kN·m at 1.500 m'."""
    parts = []
    if d.share > LINE_SHARE and math.isfinite(d.at):
        parts.append(
            f"inside station {d.share * 100:.0f} % of |M|max off the straight line, at "
            f"{_at(d.at, u)}"
        )
    if d.jump > 0:
        parts.append(f"a jump of {_moment(d.jump, u)} {u.moment} at {_at(d.jump_at, u)}")
    return " and ".join(parts)


def _limit_lines(row: pd.Series, high: bool, limit_to_exact: bool) -> list[str]:
    """The factor used, and when the code factor is above the exact one, what was done."""
    used = f"factor used = {row['factor']:.3f}"
    if not high:
        return [used]
    bound = (1.0 + EXACT_MARGIN) * row["exact_factor"]
    lines = [
        f"  CODE FACTOR HIGH (flag code-factor-high): {row['factor_basis']:.3f} > "
        f"{1.0 + EXACT_MARGIN:.2f} × exact factor {row['exact_factor']:.3f} = {bound:.3f}: "
        "the code's shortcut overestimates Mcr for this diagram"
    ]
    if limit_to_exact:
        lines.append(f"{used} (limited to the exact factor: [check] limit_to_exact = true)")
    else:
        lines.append(
            f"{used} (NOT limited: [check] limit_to_exact = false; on the unsafe side of the "
            "exact analysis)"
        )
    return lines


def _analysis_step(
    result: CheckResult,
    row: pd.Series,
    props: pd.Series,
    x: np.ndarray,
    m: np.ndarray,
    u: ShownUnits,
) -> Step:
    """The exact analysis of this one diagram, and its change when the mesh is doubled."""
    s = result.settings
    e_iy = np.array([s.E * props["Iy"]])
    g_j = np.array([s.G * props["J"]])
    e_cw = np.array([s.E * props["Cw"]])
    uniform = float(buckling.m_cr_uniform(np.array([row["length"]]), e_iy, g_j, e_cw)[0])
    flange = np.array([list(FLANGES).index(str(row["flange"]))])
    height = buckling.load_heights(flange, np.array([props["d"] - props["tf"]]), s.load_height)
    a = (
        f"{height[0] + 0.0:+.1f}"
        if u.system == "si"
        else significant_text(u.to_section(height[0]), sign=True)
    )
    lines = [
        "the segment's own moment diagram (every station a node, M linear between stations); "
        "fork supports at both ends: lateral deflection and twist held, lateral rotation and "
        "warping free",
        f"load height: {LOAD_HEIGHT_WORDS[s.load_height]} ([check] load_height); here "
        f"a = {a} {u.section} above the shear centre, towards the flange in compression"
        + (
            " (a member steeper than 45° has no top or bottom: taken at the shear centre)"
            if str(row["flange"]) == "either"
            else ""
        ),
        f"Mcr of uniform moment = (π/L)·√(E·Iy·G·J + (π·E/L)²·Iy·Cw) = "
        f"{_moment(uniform, u, 1)} {u.moment} "
        "[Timoshenko & Gere (1961), ch. 6]",
    ]
    if not math.isfinite(row["exact_factor"]):
        lines.append(f"not analysed: {no_exact_reason(row)}; the exact columns are empty")
        return Step("Exact elastic buckling analysis", EXACT_CITATION, lines)
    n = int(row["exact_elements"])
    mcr = float(row["Mcr_exact"])
    base = 2 * buckling.BASE_ELEMENTS
    mesh = buckling.build_mesh(x, m, np.array([0, len(x)]), base=base)
    finer = float(buckling.critical_moments(mesh, e_iy, g_j, e_cw, height, workers=1)[0])
    change = (finer - mcr) / mcr
    lines += [
        f"finite elements: {n} cubic Hermite elements (DOF u, u′, φ, φ′ per node)",
        f"eigenvalue: Mcr exact = {_moment(mcr, u, 1)} {u.moment} (the largest |M| of this "
        "diagram at buckling)",
        f"exact factor = {_moment(mcr, u, 1)} / {_moment(uniform, u, 1)} = "
        f"{row['exact_factor']:.3f}",
        f"mesh doubled ({int(mesh.n_elements[0])} elements): Mcr exact = "
        f"{_moment(finer, u, 1)} {u.moment}, change {change * 100:+.4f} %",
    ]
    return Step("Exact elastic buckling analysis", EXACT_CITATION, lines)


def _resistance_step(row: pd.Series, phi: float, u: ShownUnits) -> Step:
    base = u.to_moment(row["M_base"])
    mcr = u.to_moment(row["Mcr"])
    mu = u.moment
    name = "Mp" if row["section_class"] <= 2 else "My"
    if row["section_class"] >= 4:
        return Step(
            "Factored resistance", "SANS 10162-1:2011, cl. 13.6(a)", ["class 4: not checked"]
        )
    if mcr > INELASTIC_SWITCH * base:
        lines = [
            f"Mcr = {mcr:.1f} > 0.67·{name} = {INELASTIC_SWITCH * base:.1f} {mu}: inelastic",
            f"Mr = 1.15·φ·{name}·(1 − 0.28·{name}/Mcr) = 1.15·{phi}·{base:.1f}·(1 − 0.28·"
            f"{base:.1f}/{mcr:.1f}) = {1.15 * phi * base * (1 - 0.28 * base / mcr):.1f} {mu}",
            f"≤ φ·{name} = {phi * base:.1f} {mu} → Mr = {_moment(row['Mr'], u, 1)} {mu}",
        ]
    else:
        lines = [
            f"Mcr = {mcr:.1f} ≤ 0.67·{name} = {INELASTIC_SWITCH * base:.1f} {mu}: elastic",
            f"Mr = φ·Mcr = {phi}·{mcr:.1f} = {_moment(row['Mr'], u, 1)} {mu}",
        ]
    return Step("Factored resistance", "SANS 10162-1:2011, cl. 13.6(a)", lines)


def _demand_lines(row: pd.Series, u: ShownUnits) -> list[str]:
    if row["status"] == "not critical":
        return [f"the {row['flange']} flange is nowhere in compression: not critical"]
    if row["status"] == "not checked":
        return ["class 4 section: not checked"]
    mu = u.moment
    demand = _moment(row["demand"], u)
    lines = [
        f"demand = largest moment compressing the {row['flange']} flange = {demand} {mu}",
        f"utilization = {demand} / {_moment(row['Mr'], u, 1)} = "
        f"{row['utilization']:.3f} → {str(row['status']).upper()}",
    ]
    if math.isfinite(row["Mr_exact"]):
        lines.append(
            f"with the exact factor: Mcr exact = {_moment(row['Mcr_exact'], u, 1)} {mu}, "
            f"Mr exact = {_moment(row['Mr_exact'], u, 1)} {mu}, utilization exact = {demand} / "
            f"{_moment(row['Mr_exact'], u, 1)} = {row['utilization_exact']:.3f}"
        )
    else:
        lines.append(f"no exact utilization: {no_exact_reason(row)}")
    return lines


def derivation_text(result: CheckResult, row: pd.Series, units: ShownUnits = SI) -> str:
    """Return the derivation as plain text for the terminal, the exact analysis included.

    Args:
        result: the check's results.
        row: one row of ``result.results``.
        units: the units every number is shown in.
    """
    lines = [
        f"Segment {row['segment']} (member {row['member']}, {row['flange']} flange), "
        f"load combination {row['combination']}",
        "",
    ]
    for i, step in enumerate(derivation(result, row, analysis=True, units=units), start=1):
        lines.append(f"{i}. {step.title}   [{step.clause}]")
        lines.extend(f"   {line}" for line in step.lines)
        lines.append("")
    return "\n".join(lines)
