"""The review report: one self-contained HTML file (inline CSS and SVG, no scripts, no network).

Laid out to print as a calculation package: a title block (model, date, tool version, settings in
force, filters, a short hash of the inputs), a contents list, an overview (counts, the members
nearest failure, a chart of every member's governing utilization, flag counts), then one numbered
section per governing segment and per segment whose result a flag changed: the member's moment
diagram with brace points and the segment shaded, and the derivation step by step with the clause
beside each step, kept together on one printed page. Pairs that repeat a drawn check to the printed
digits (a symmetric frame's mirror members) are listed under it instead of drawn again; pairs
whose flags only inform (``INFORMATIVE``) are listed in one table. Page numbers come from CSS
``@page`` margin boxes. The caution stands at the top and in every section.

Every number is shown in the engineer's choice of units (``units``: SI or US customary, stated in
the title block); signed end moments say their sign in the result files' words.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
from collections.abc import Mapping, Sequence
from html import escape
from importlib.metadata import version
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from flangewise.engine.check import EXACT_MARGIN, CheckResult
from flangewise.engine.diagrams import member_diagram, station_key
from flangewise.engine.flags import FLAGS
from flangewise.postproc.derivation import (
    EXACT_CITATION,
    derivation,
    no_exact_reason,
    significant_text,
    source_words,
)
from flangewise.postproc.exports import (
    CAUTION,
    CHECKED,
    INFORMATIVE,
    LOAD_HEIGHT_WORDS,
    METHOD_WORDS,
    worst_order,
)
from flangewise.postproc.keyplan import CSS as KEY_CSS
from flangewise.postproc.keyplan import key_plan
from flangewise.postproc.shown_units import SI, ShownUnits
from flangewise.postproc.svg import M_SIGN, Marker, moment_diagram, number, utilization_bars

SCOPE = (
    "Scope: lateral-torsional buckling in major-axis bending only. Not checked: axial force and "
    "interaction, shear, class 4 sections, load applied above the shear centre in the code "
    "factors (only the exact analysis takes a load height, [check] load_height), "
    "effective-length factors for cantilevers, the braces themselves (see the README, Scope and "
    "limits)."
)

#: Flags that ask the engineer to act: the factor of the design basis was on the unsafe side of
#: the exact analysis. Their segments come first after the governing ones.
ACTIONABLE = ("code-factor-high",)

#: Flags that inform without changing any number of the check (:data:`exports.INFORMATIVE`, the
#: same set that flagged.csv leaves out): their pairs are listed in a table, not drawn. Every other
#: flag (including any added later) changed a result and is drawn.

#: Hex digits of the inputs' hash shown in the title block and the page footer.
SHORT_HASH = 12

#: At most this many segment sections (governing first, then flagged); the rest are counted.
MAX_SECTIONS = 200
#: At most this many members in the utilization chart (the highest first).
MAX_BARS = 300
#: At most this many pairs with informative flags only listed; the rest are counted.
MAX_INFORMATIVE = 200
#: At most this many members without forces named; the rest are counted.
MAX_LISTED = 50

CSS = """
body { font-family: Georgia, 'DejaVu Serif', serif; color: #1b1b1b; max-width: 62rem;
       margin: 1.5rem auto; padding: 0 1rem; line-height: 1.4; }
h1 { font-size: 1.6rem; margin-bottom: .2rem; } h2 { font-size: 1.25rem; margin-top: 2rem;
border-bottom: 2px solid #1b1b1b; } h3 { font-size: 1.05rem; margin: 1.2rem 0 .3rem; }
.caution { border: 2px solid #8a1c1c; padding: .5rem .8rem; margin: .8rem 0; font-size: .92rem; }
table { border-collapse: collapse; margin: .5rem 0; font-size: .9rem; }
td, th { border: 1px solid #999; padding: .2rem .5rem; vertical-align: top; text-align: left; }
th { background: #eee; } td.num { text-align: right; font-variant-numeric: tabular-nums; }
.steps td.clause { font-size: .8rem; color: #444; width: 13rem; }
.steps td.work { font-family: 'DejaVu Sans Mono', monospace; font-size: .8rem;
                 white-space: pre-wrap; }
section.segment { border-top: 1px solid #999; margin-top: 1.5rem; }
.meta { color: #444; font-size: .9rem; }
.over { color: #8a1c1c; font-weight: bold; }
svg { width: 100%; height: auto; max-width: 760px; display: block; margin: .4rem 0; }
svg .axis { stroke: #333; stroke-width: 1; } svg .line { fill: none; stroke: #1f3f8a;
stroke-width: 2; } svg .area { fill: #1f3f8a; fill-opacity: .12; }
svg .shade { fill: #d9b44a; fill-opacity: .28; } svg .cap { font: bold 13px sans-serif; }
svg .tick { font: 11px sans-serif; fill: #333; } svg .lab { font: bold 11px sans-serif; }
svg .dot { fill: #8a1c1c; } svg .brace-top { fill: #2b6e2b; } svg .brace-bottom { fill: #8a4b00; }
svg .bar { fill: #1f3f8a; } svg .bar.over { fill: #8a1c1c; }
svg .limit { stroke: #8a1c1c; stroke-dasharray: 4 3; }
.steps td.title { width: 12rem; } .steps .clause { font-size: .75rem; color: #444; }
.caution.small { font-size: .75rem; padding: .15rem .5rem; margin: .3rem 0; }
table.title td:first-child { width: 9rem; color: #444; }
.twins { font-size: .8rem; }
@media print {
  body { max-width: none; margin: 0; padding: 0; font-size: 9pt; line-height: 1.25; }
  h2 { margin-top: .8rem; break-after: avoid; } h3 { margin: .2rem 0; }
  table { font-size: 7.5pt; margin: .2rem 0; } td, th { padding: .05rem .3rem; }
  .steps td.work { font-size: 7pt; line-height: 1.15; } .steps td.title { width: 9rem; }
  section.segment { break-inside: avoid; margin-top: .4rem; padding-top: .2rem; }
  section.segment p { margin: .2rem 0; }
  section.segment p.meta { font-size: 7pt; line-height: 1.15; }
  svg.diagram { max-width: 460px; margin: .1rem 0; } svg.bars { max-width: 520px; }
  svg.plan { max-width: 640px; } a { color: inherit; text-decoration: none; }
  .contents, .informative, .title { break-inside: auto; } .keyplan { break-inside: avoid; }
}
"""

#: Page numbers and a running foot in print (CSS paged media margin boxes; headless Chromium
#: prints them). ``{foot}`` is the tool and the inputs' short hash.
PAGE_CSS = """
@page { margin: 12mm 11mm 14mm 11mm;
  @bottom-left { content: "{foot}"; font: 8pt sans-serif; color: #444; }
  @bottom-right { content: "page " counter(page) " of " counter(pages); font: 8pt sans-serif; }
}
"""


def build_report(
    result: CheckResult,
    model_folder: Path,
    settings_text: str,
    selection: str = "",
    outcome: str = "",
    no_forces: Sequence[str] = (),
    provenance: Mapping[str, Any] | None = None,
    units: ShownUnits = SI,
) -> str:
    """Return the whole report as one HTML string.

    Args:
        result: the check's results, already narrowed to the run's members: the report describes
            exactly these rows, as the CSV files and the summary do.
        model_folder: the model that was checked (shown in the header).
        settings_text: a one-line description of the input settings (units, source file).
        selection: a one-line description of the run's filters ("" for the whole model).
        outcome: the run's outcome in one line (passes, or not shown to pass and why).
        no_forces: the run's members that have no force rows (listed as not checked).
        provenance: summary.json's record of how the results were made (its ``inputs`` give the
            files' sha256 shown in the title block); None when there is none.
        units: the units every number is shown in (named in the title block).
    """
    r = result.results
    gov = _governing(r)
    drawn, twins = _drawn_pairs(r, gov, units)
    shown, omitted = drawn[:MAX_SECTIONS], max(0, len(drawn) - MAX_SECTIONS)
    key = station_key(result.layout.diagrams, result.layout.members)
    inputs = list(provenance.get("inputs", [])) if provenance else []
    short = inputs_hash(inputs)
    acting = set(r.index[_any_flag(r, ACTIONABLE)])
    reasons = {
        i: "governing" if i in gov.index else ("flagged, actionable" if i in acting else "flagged")
        for i in shown
    }
    body = [
        _header(result, model_folder, settings_text, selection, inputs, short, units),
        _contents(r, shown, reasons, twins),
        _overview(result, gov, omitted, outcome, no_forces, units),
        _key_plan(result, gov, units),
        _informative(r, set(drawn) | {j for t in twins.values() for j in t}),
        "<h2 id='segments'>Governing and flagged segments (every flag that changed a result)</h2>",
    ]
    body.extend(
        _segment_section(result, r.loc[i], n, reasons[i], key, r.loc[twins.get(i, [])], units)
        for n, i in enumerate(shown, start=1)
    )
    foot = f"flangewise {version('flangewise')}" + (f" · inputs {short}" if short else "")
    return (
        "<!DOCTYPE html>\n<html lang='en'><head><meta charset='utf-8'>"
        f"<title>flangewise review: {escape(model_folder.name)}</title>"
        f"<style>{CSS}{KEY_CSS}{PAGE_CSS.replace('{foot}', foot)}</style></head>"
        f"<body>{no_negative_zero(''.join(body))}</body></html>\n"
    )


#: A zero written with a minus sign (−0.0, -0.00, -0): a number that rounds to zero.
NEGATIVE_ZERO = re.compile(r"(?<![\w.])[-−](0(?:\.0+)?)(?![\d.])")


def no_negative_zero(text: str) -> str:
    """``text`` with every negative zero (−0.0 from a tiny negative value) written 0.0."""
    return NEGATIVE_ZERO.sub(r"\1", text)


def _key_plan(result: CheckResult, gov: pd.DataFrame, units: ShownUnits) -> str:
    """The key plan section: where each member is, shaded by its governing utilization."""
    util = dict(zip(gov["member"].astype(str), gov["utilization"].astype(float), strict=True))
    members = result.layout.members.table
    run = members[members.index.astype(str).isin(result.results["member"].astype(str).unique())]
    return (
        "<h2 id='keyplan'>Key plan</h2><div class='keyplan'>"
        "<p class='meta'>Every member of this run, named where it stands and shaded by its "
        "governing utilization; members that fall on one another in a view are named together "
        "and shaded by the highest of them.</p>"
        f"{key_plan(run, util, units)}</div>"
    )


def inputs_hash(inputs: Sequence[Mapping[str, Any]]) -> str:
    """A short hash of all input files: sha256 of their "path sha256" lines, first digits.

    Two runs on the same files (same names, same bytes) print the same short hash; summary.json
    holds each file's full sha256. "" when no input is recorded.
    """
    if not inputs:
        return ""
    lines = "".join(f"{f['path']} {f['sha256']}\n" for f in inputs)
    return hashlib.sha256(lines.encode("utf-8")).hexdigest()[:SHORT_HASH]


def _any_flag(r: pd.DataFrame, names: Sequence[str]) -> np.ndarray:
    """Per row, whether any of the named flags is set (False when none is named)."""
    cols = [r[f"flag_{n}"].to_numpy(dtype=bool) for n in names if f"flag_{n}" in r]
    return np.logical_or.reduce(cols) if cols else np.zeros(len(r), dtype=bool)


def _drawn_pairs(
    r: pd.DataFrame, gov: pd.DataFrame, units: ShownUnits
) -> tuple[list[Any], dict[Any, list[Any]]]:
    """The pairs to draw (governing, then actionable, then other result-changing flags) and twins.

    A pair whose check repeats a drawn one to the printed digits (same load combination,
    section, flange, length, end moments as sizes, factor, Mr, demand and flags: a mirror member
    of a symmetric frame) is not drawn again; it is listed under the drawn one (``twins``).
    """
    changing = [n for n in FLAGS if n not in INFORMATIVE]
    picked = list(
        dict.fromkeys(
            [*gov.index, *r.index[_any_flag(r, ACTIONABLE)], *r.index[_any_flag(r, changing)]]
        )
    )
    if not picked:
        return [], {}
    p = r.loc[picked]
    u = units
    ends = np.abs(u.to_moment(p[["M_start", "M_end"]].to_numpy(dtype=float)))
    # The digits the section prints: 0.001 of the length unit, 0.01 of the moment unit, 0.001 in
    # the factor, 0.1 of the moment unit in Mr.
    key = pd.DataFrame(
        {
            "combination": p["combination"].astype(str).to_numpy(),
            "section": p["section"].astype(str).to_numpy(),
            "flange": p["flange"].astype(str).to_numpy(),
            "length": np.round(u.to_length(p["length"].to_numpy(dtype=float)), 3),
            "small": np.round(ends.min(axis=1), 2),
            "large": np.round(ends.max(axis=1), 2),
            "factor": np.round(p["factor"].to_numpy(dtype=float), 3),
            "Mr": np.round(u.to_moment(p["Mr"].to_numpy(dtype=float)), 1),
            "demand": np.round(u.to_moment(p["demand"].to_numpy(dtype=float)), 2),
            "flags": p["flags"].astype(str).to_numpy(),
        },
        index=p.index,
    ).fillna(-1.0)  # NaN never equals NaN: a not-critical pair still groups with its twin
    first = key.groupby(list(key.columns), sort=False, dropna=False).ngroup()
    drawn: list[Any] = []
    twins: dict[Any, list[Any]] = {}
    lead: dict[int, Any] = {}
    for i, g in zip(first.index, first.to_numpy(), strict=True):  # one pass over the few picked
        if g in lead:
            twins.setdefault(lead[g], []).append(i)
        else:
            lead[g] = i
            drawn.append(i)
    return drawn, twins


def _governing(r: pd.DataFrame) -> pd.DataFrame:
    """Each member's checked pair of highest utilization, worst first.

    Ties go as everywhere else (:func:`flangewise.postproc.exports.worst_order`: members, then
    segments in natural order, then combinations in model order), so the report's worst pair is
    the one the terminal and summary.json name.
    """
    checked = r[r["status"].isin(list(CHECKED))]
    if checked.empty:
        return checked
    ordered = checked.iloc[worst_order(checked)]
    return ordered[~ordered["member"].astype(str).duplicated()]


def _header(
    result: CheckResult,
    folder: Path,
    settings_text: str,
    selection: str,
    inputs: Sequence[Mapping[str, Any]],
    short: str,
    units: ShownUnits,
) -> str:
    """The title block: what was checked, when, with what, under which settings and filters."""
    s = result.settings
    when = dt.datetime.now().strftime("%Y-%m-%d %H:%M")
    files = "; ".join(
        f"{f['path']} {str(f['sha256'])[:SHORT_HASH]} ({int(f['bytes'])} bytes)" for f in inputs
    )
    rows = [
        ("model", str(folder)),
        ("date", when),
        ("tool", f"flangewise {version('flangewise')}"),
        ("input settings", settings_text),
        ("output units", units.words),
        (
            "design basis",
            f"{METHOD_WORDS[s.gradient]}; E = {_stress(s.E, units)}, "
            f"G = {_stress(s.G, units)}, φ = {s.phi}",
        ),
        (
            "exact factor",
            f"{EXACT_CITATION}; {LOAD_HEIGHT_WORDS[s.load_height]}. "
            f"{_limit_words(s.limit_to_exact)}",
        ),
        ("filters", selection or "none: the whole model"),
        (
            "inputs",
            f"short hash {short} (sha256 of every input file; summary.json has each in full): "
            f"{files}"
            if short
            else "no input hashes recorded",
        ),
    ]
    table = "".join(f"<tr><td>{escape(k)}</td><td>{escape(v)}</td></tr>" for k, v in rows)
    return (
        "<h1>Lateral-torsional buckling review</h1>"
        f"<div class='caution'>{escape(CAUTION)}</div>"
        f"<table class='title'>{table}</table>"
        f"<p class='meta'>{escape(SCOPE)}</p>"
    )


def _contents(
    r: pd.DataFrame, shown: list[Any], reasons: dict[Any, str], twins: dict[Any, list[Any]]
) -> str:
    """The contents list: the overview, then every drawn section with the pairs it stands for."""
    rows = "".join(
        f"<tr><td class='num'><a href='#{_anchor(r.loc[i])}'>{n}</a></td>"
        f"<td><a href='#{_anchor(r.loc[i])}'>{escape(str(r.at[i, 'segment']))}</a></td>"
        f"<td>{escape(str(r.at[i, 'combination']))}</td><td>{escape(reasons[i])}</td>"
        f"<td class='num'>{_maybe(r.at[i, 'utilization'], 3)}</td>"
        f"<td class='twins'>{escape(', '.join(r.loc[twins.get(i, []), 'segment'].astype(str)))}"
        "</td></tr>"
        for n, i in enumerate(shown, start=1)
    )
    return (
        "<h2 id='contents'>Contents</h2><div class='contents'>"
        "<p class='meta'><a href='#overview'>Overview</a> · "
        "<a href='#keyplan'>Key plan</a> · "
        "<a href='#informative'>Pairs with informative flags only</a> · "
        "<a href='#segments'>Segments</a> (numbered below; the printed page numbers are in each "
        "page's foot)</p>"
        "<table><tr><th>§</th><th>segment</th><th>load combination</th><th>why drawn</th>"
        "<th>utilization</th><th>same check, not drawn again</th></tr>"
        f"{rows}</table></div>"
    )


def _anchor(row: pd.Series) -> str:
    """The id of a segment's section (the diagram's id with ``seg-`` in place of ``diagram-``)."""
    return escape(f"seg-{row['segment']}-{row['combination']}".replace(" ", "_"))


def _informative(r: pd.DataFrame, drawn: set[Any]) -> str:
    """Pairs whose only flags inform (no number of their check changed), in one table."""
    every = r[(r["flags"].astype(str) != "") & ~r.index.isin(list(drawn))]
    flagged = every.head(MAX_INFORMATIVE)  # a large model's are counted, and all in flagged.csv
    rest = len(every) - len(flagged)
    rows = "".join(
        f"<tr><td>{escape(str(g['segment']))}</td><td>{escape(str(g['combination']))}</td>"
        f"<td>{escape(str(g['flags']))}</td><td class='num'>{_maybe(g['factor'], 3)}</td>"
        f"<td class='num'>{_maybe(g['utilization'], 3)}</td>"
        f"<td>{escape(str(g['status']))}</td></tr>"
        for _, g in flagged.iterrows()
    )
    listed = (
        "<table><tr><th>segment</th><th>load combination</th><th>flags</th><th>factor used</th>"
        f"<th>utilization</th><th>status</th></tr>{rows}</table>"
        if rows
        else "<p class='meta'>None.</p>"
    )
    return (
        "<h2 id='informative'>Pairs with informative flags only</h2><div class='informative'>"
        f"<p class='meta'>Flags {escape(', '.join(INFORMATIVE))} change no number of the check; "
        "these pairs are neither governing nor flagged otherwise (flagged.csv has them all).</p>"
        f"{listed}"
        + (f"<p class='meta'>{rest} more such pairs are in flagged.csv.</p>" if rest else "")
        + "</div>"
    )


def _limit_words(limit_to_exact: bool) -> str:
    """What happens to a code factor more than the margin above the exact factor."""
    margin = f"more than {EXACT_MARGIN * 100:.0f} % above the exact factor"
    if limit_to_exact:
        return f"A design-basis factor {margin} is limited to it ([check] limit_to_exact = true)."
    return (
        f"A design-basis factor {margin} is NOT limited ([check] limit_to_exact = false): such "
        "pairs are flagged code-factor-high and their factor is on the unsafe side of the exact "
        "analysis."
    )


def _overview(
    result: CheckResult,
    gov: pd.DataFrame,
    omitted: int,
    outcome: str,
    no_forces: Sequence[str],
    units: ShownUnits,
) -> str:
    r = result.results
    status = r["status"].astype(str)
    counts = [
        ("members", r["member"].nunique()),
        ("unbraced segments", r["segment"].nunique()),
        ("load combinations", r["combination"].nunique()),
        ("segment × combination pairs checked", int(status.isin(list(CHECKED)).sum())),
        (
            "pairs not critical (flange nowhere in compression)",
            int((status == "not critical").sum()),
        ),
        ("pairs NOT CHECKED (class 4)", int((status == "not checked").sum())),
        ("pairs over 1.0", int((status == "over").sum())),
        (
            "cantilever pairs at or below 1.0 to verify (status 'verify length': the actual "
            "length was taken as the effective length)",
            int((status == "verify length").sum()),
        ),
        (
            "checked pairs with an exact factor",
            int((status.isin(list(CHECKED)) & np.isfinite(r["exact_factor"])).sum()),
        ),
        (
            f"pairs whose code factor is more than {EXACT_MARGIN * 100:.0f} % above the exact "
            "factor (code-factor-high, actionable)",
            int(r["flag_code-factor-high"].sum()),
        ),
        (
            "pairs given the end-moment formula on a diagram that is not end moments only "
            "(not-end-moments)",
            int(r["flag_not-end-moments"].sum()),
        ),
    ]
    rows = "".join(f"<tr><td>{escape(k)}</td><td class='num'>{v}</td></tr>" for k, v in counts)
    nearest = "".join(
        f"<tr><td>{escape(str(g['member']))}</td><td>{escape(str(g['segment']))}</td>"
        f"<td>{escape(str(g['combination']))}</td>"
        f"<td class='num'>{units.to_length(g['length']):.2f}</td>"
        f"<td class='num'>{g['factor']:.2f}</td><td class='num'>{_maybe(g['exact_factor'])}</td>"
        f"<td class='num'>{units.to_moment(g['Mr']):.1f}</td>"
        f"<td class='num {'over' if g['utilization'] > 1 else ''}'>{g['utilization']:.3f}</td>"
        "</tr>"
        for _, g in gov.head(10).iterrows()
    )
    members = r["member"].astype(str).unique().tolist()
    util = gov.set_index(gov["member"].astype(str))["utilization"]
    values = [float(util.get(name, np.nan)) for name in members]
    order = np.argsort([-(v if np.isfinite(v) else -1.0) for v in values], kind="stable")
    names = [members[i] for i in order][:MAX_BARS]
    vals = [values[i] for i in order][:MAX_BARS]
    flag_rows = "".join(
        f"<tr><td>{escape(name)}</td><td class='num'>{int(r[f'flag_{name}'].sum())}</td>"
        f"<td>{escape(meaning)}</td></tr>"
        for name, meaning in FLAGS.items()
    )
    more = (
        f"<p class='meta'>{omitted} more governing or flagged segments are in the CSV files "
        "but not drawn here.</p>"
        if omitted
        else ""
    )
    return (
        "<h2 id='overview'>Overview</h2>"
        + (f"<p><b>{escape(outcome)}</b></p>" if outcome else "")
        + f"<table>{rows}</table>"
        + _no_forces(no_forces)
        + _sections_table(result)
        + "<h3>Members nearest failure</h3>"
        "<table><tr><th>member</th><th>segment</th><th>load combination</th>"
        f"<th>Lu [{units.length}]</th><th>factor used</th><th>exact factor</th>"
        f"<th>Mr [{units.moment}]</th><th>utilization</th></tr>"
        f"{nearest}</table>"
        + utilization_bars(names, vals, "utilization-chart")
        + (
            f"<p class='meta'>The {len(members) - MAX_BARS} members below these are left out of "
            "the chart.</p>"
            if len(members) > MAX_BARS
            else ""
        )
        + "<h3 id='flags'>Flags</h3><table><tr><th>flag</th><th>pairs</th><th>meaning</th></tr>"
        + flag_rows
        + "</table>"
        + more
    )


def _sections_table(result: CheckResult) -> str:
    """Each section the run's results use, and where its properties came from."""
    used = result.results["section"].astype(str).unique().tolist()
    props = result.sections[result.sections.index.astype(str).isin(used)]
    rows = "".join(
        f"<tr><td>{escape(str(name))}</td>"
        f"<td>{escape(source_words(p).removeprefix('source: '))}</td></tr>"
        for name, p in props.iterrows()
    )
    return (
        "<h3>Sections and where their properties come from</h3>"
        f"<table><tr><th>section</th><th>source</th></tr>{rows}</table>"
    )


def _stress(mpa: float, units: ShownUnits) -> str:
    """E or G with its unit: whole MPa as before, four significant figures in ksi."""
    if units.system == "si":
        return f"{mpa:.0f} {units.stress}"
    return f"{significant_text(units.to_stress(mpa))} {units.stress}"


def _maybe(value: float, digits: int = 2) -> str:
    """A number, or a dash where there is none (NaN)."""
    return f"{value:.{digits}f}" if np.isfinite(value) else "–"


def _no_forces(members: Sequence[str]) -> str:
    """The members without force rows, named (the first few) so that none is skipped silently."""
    if not members:
        return ""
    rest = len(members) - MAX_LISTED
    more = f" and {rest} more (summary.json lists them all)" if rest > 0 else ""
    return (
        f"<p class='over'>NO FORCES: {len(members)} member(s) not checked: "
        f"{escape(', '.join(members[:MAX_LISTED]))}{more}</p>"
    )


def _segment_section(
    result: CheckResult,
    row: pd.Series,
    ordinal: int,
    reason: str,
    key: np.ndarray,
    twins: pd.DataFrame,
    units: ShownUnits,
) -> str:
    """One numbered section: the segment's diagram and derivation, and the twins it stands for."""
    u = units
    layout = result.layout
    seg = layout.segments.table.loc[row["segment"]]
    member = str(row["member"])
    s, m = member_diagram(layout.diagrams, layout.members, member, str(row["combination"]), key)
    st = layout.segments.stations
    mst = st[st["member"] == member]
    # Every brace point and both member ends, each with its node id under the chart.
    markers = [
        Marker(
            float(u.to_length(p)),
            "both" if (t and b) else ("top" if t else ("bottom" if b else "")),
            str(n),
        )
        for p, t, b, n, e in zip(
            mst["s"], mst["top"], mst["bottom"], mst["node"], mst["end"], strict=True
        )
        if t or b or e != ""
    ]
    sign = -1.0 if row["flange"] == "bottom" else 1.0  # results are in flange-compression sign
    ends = [
        (float(u.to_length(seg["s_start"])), sign * float(u.to_moment(row["M_start"]))),
        (float(u.to_length(seg["s_end"])), sign * float(u.to_moment(row["M_end"]))),
    ]
    labels = [(a, v, number(v)) for a, v in ends]
    # The inside peak is labelled where it matters: it rejects the end-moment formula, or it
    # stands clear of both ends (a peak next to an end would only print over the end's label).
    clear = 0.1 * row["length"] < row["inside_peak_at"] < 0.9 * row["length"]
    if "peak-inside" in str(row["flags"]).split() or clear:
        at = seg["s_start"] + row["inside_peak_at"]
        near = int(np.argmin(np.abs(s - at))) if len(s) else 0
        value = float(u.to_moment(m[near])) if len(m) else 0.0
        labels.append((float(u.to_length(at)), value, f"inside peak {number(value)}"))
    flange = {"top": "top flange", "bottom": "bottom flange", "either": "either flange"}[
        str(row["flange"])
    ]
    svg_id = f"diagram-{row['segment']}-{row['combination']}".replace(" ", "_")
    chart = moment_diagram(
        np.asarray(u.to_length(s)),
        np.asarray(u.to_moment(m)),
        (float(u.to_length(seg["s_start"])), float(u.to_length(seg["s_end"]))),
        markers,
        labels,
        f"Member {member}, {row['combination']}: moment diagram, segment {row['segment']} shaded",
        svg_id,
        u,
    )
    steps = "".join(
        f"<tr><td class='title'><b>{i}. {escape(step.title)}</b><br>"
        f"<span class='clause'>{escape(step.clause)}</span></td>"
        f"<td class='work'>{escape(no_negative_zero(chr(10).join(step.lines)))}</td></tr>"
        # The flags' meanings stand once in the overview's table, not again in every section.
        for i, step in enumerate(
            [s for s in derivation(result, row, units=u) if s.title != "Flags"], start=1
        )
    )
    util = row["utilization"]
    verdict = (
        f"utilization <span class='{'over' if util > 1 else ''}'>{util:.3f}</span>"
        if np.isfinite(util)
        else escape(str(row["status"]))
    )
    flags = escape(str(row["flags"])) or "none"
    exact = (
        f"exact factor {row['exact_factor']:.3f}"
        if np.isfinite(row["exact_factor"])
        else f"no exact factor ({escape(no_exact_reason(row))})"
    )
    return (
        f"<section class='segment' id='{_anchor(row)}'>"
        f"<h3>§{ordinal} {escape(str(row['segment']))} · {escape(str(row['combination']))} "
        f"({reason})</h3>"
        f"{_twin_words(layout.segments.table, twins)}"
        f"<p>Member {escape(member)}, section {escape(str(row['section']))}; "
        f"compression checked in the <b>{flange}</b>; from node {escape(str(seg['node_start']))}"
        f" to {escape(str(seg['node_end']))}, Lu = {u.to_length(row['length']):.3f} "
        f"{escape(u.length)}; factor used "
        f"{row['factor']:.3f}, {exact}; {verdict}; flags: {flags} (meanings: "
        "<a href='#flags'>Flags</a>).</p>"
        f"{chart}"
        "<p class='meta'>▼ top flange braced · ▲ bottom flange braced · shaded: this segment. "
        f"{escape(_sign_words(str(row['flange'])))}</p>"
        f"<table class='steps'><tr><th>step and clause</th><th>working</th></tr>{steps}</table>"
        f"<div class='caution small'>{escape(CAUTION)}</div>"
        "</section>"
    )


def _sign_words(flange: str) -> str:
    """How the diagram's sign relates to the working's M at start and M at end, in one line."""
    if flange == "bottom":
        return (
            f"Diagram: {M_SIGN}; this segment checks the bottom flange, so its end values are "
            "M at start and M at end of the working with the opposite sign."
        )
    return (
        f"Diagram: {M_SIGN}; its end values are M at start and M at end of the working, the "
        "same numbers."
    )


def _twin_words(segments: pd.DataFrame, twins: pd.DataFrame) -> str:
    """The pairs whose check this section repeats to the printed digits, with their own nodes."""
    if twins.empty:
        return ""
    ends = segments.loc[twins["segment"].astype(str), ["node_start", "node_end"]].to_numpy()
    named = "; ".join(
        # Each twin keeps its own id, so links to it (contents, other tests) land here.
        f"<span id='{_anchor(t)}'>{escape(str(t['segment']))}</span> ("
        + escape(
            f"member {t['member']}, from node {a} to {b}, utilization {_maybe(t['utilization'], 3)}"
        )
        + ")"
        for (_, t), (a, b) in zip(twins.iterrows(), ends, strict=True)
    )
    return (
        "<p class='twins'>The same check to the digits shown (combination, section, flange, "
        f"length, end moments, factor, Mr, demand, flags), not drawn again: {named}.</p>"
    )
