"""The review report renders in a real browser, and explain agrees with the results CSV.

The browser is headless Chromium (Debian's package; `.ci/run` installs it). Without it the browser
tests are skipped on a developer's machine and fail in CI, where it must be present.
"""

from __future__ import annotations

import os
import re
import shutil
import struct
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from flangewise.engine.check import check_model
from flangewise.postproc import report
from flangewise.postproc.cli import main, sample_path
from flangewise.postproc.keyplan import (
    band_classes,
    elevation_axis,
    label_box,
    place_labels,
)
from flangewise.postproc.svg import LABEL_CHAR_PX, number
from flangewise.readers.load import load_model

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

#: Per sample, a governing segment (so the report draws it) and its combination.
CHOSEN = {
    # Frame B's windward knee under uplift: the governing segment of that rafter, and the worst of
    # the model (frame C's mirrors it; the stated tie-break takes the member first in natural
    # order).
    "industrial_shed": ("from B04 to B05, top flange", "ULS2 0.9D+1.3W"),
    # Girder 1 over the middle span, no kickers: the governing segment of the platform.
    "plant_platform": ("from 105 to 110, bottom flange", "K1 1,2G+1,6Q"),
}


def _need_browser() -> str:
    if CHROMIUM is None:
        if os.environ.get("CI"):
            pytest.fail("Chromium is required in CI (.ci/run installs it)")
        pytest.skip("Chromium is not installed (apt-get install chromium)")
    return CHROMIUM


def _report(sample: str, out: Path) -> tuple[Path, pd.DataFrame]:
    result = CliRunner().invoke(
        main, ["check", str(sample_path(sample)), "--out", str(out), "--report"]
    )
    # The platform's cantilever tips are "verify length": not shown to pass, status 1.
    assert result.exit_code == (1 if sample == "plant_platform" else 0), result.output
    seg = pd.read_csv(out / "segments.csv", dtype={"from node": str, "to node": str})
    return out / "report.html", seg


def _chosen_segment(sample: str, seg: pd.DataFrame) -> pd.Series:
    where, combo = CHOSEN[sample]
    node_a, node_b, flange = re.match(r"from (\S+) to (\S+), (\w+) flange", where).groups()
    hit = seg[
        (seg["from node"] == node_a)
        & (seg["to node"] == node_b)
        & (seg["flange"] == flange)
        & (seg["combination"] == combo)
    ]
    assert len(hit) == 1
    return hit.iloc[0]


def _run(browser: str, *args: str, tmp: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [browser, *FLAGS, f"--user-data-dir={tmp / 'profile'}", *args],
        capture_output=True,
        text=True,
        timeout=120,
        check=True,
    )


@pytest.mark.parametrize("sample", sorted(CHOSEN))
def test_report_renders_with_diagrams_and_the_derivation(sample, tmp_path):
    browser = _need_browser()
    html, seg = _report(sample, tmp_path / "out")
    row = _chosen_segment(sample, seg)
    url = html.resolve().as_uri()

    dom = _run(browser, "--dump-dom", url, tmp=tmp_path).stdout
    # The overview chart and the chosen segment's diagram, as the browser built them.
    assert 'id="utilization-chart"' in dom
    diagram = f'id="diagram-{row["segment"]}-{row["combination"]}"'.replace(" ", "_")
    assert diagram in dom
    section = dom[dom.index(diagram) :]
    section = section[: section.index("</section>")]
    # The derivation of that segment: every step, with the numbers of the results CSV.
    for step in (
        "Section properties and class",
        "Unbraced length",
        "Moment-gradient factor",
        "Elastic critical moment",
        "Factored resistance",
        "Demand and utilization",
    ):
        assert step in section
    assert f"= {row['Mcr [kN·m]']:.1f} kN·m" in section
    assert (
        f"Mr = {row['Mr [kN·m]']:.1f} kN·m" in section
        or f"= {row['Mr [kN·m]']:.1f} kN·m" in section
    )
    assert "utilization = " in section
    assert "competent engineer" in section  # the caution in every section

    shot = tmp_path / "report.png"
    _run(browser, "--window-size=1100,2400", f"--screenshot={shot}", url, tmp=tmp_path)
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = struct.unpack(">II", data[16:24])
    assert (width, height) == (1100, 2400)
    assert len(data) > 50_000  # text, tables and charts; a blank page compresses to a few kB


def test_report_is_self_contained(tmp_path):
    html, _ = _report("industrial_shed", tmp_path / "out")
    text = html.read_text(encoding="utf-8")
    # Nothing to fetch: no scripts, no external style sheets, images or fonts.
    assert "<script" not in text
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:)?//""", text)
    assert text.count("<svg") >= 2


def test_explain_matches_the_results_csv(tmp_path):
    _, seg = _report("industrial_shed", tmp_path / "out")
    row = _chosen_segment("industrial_shed", seg)
    result = CliRunner().invoke(
        main,
        ["explain", str(sample_path("industrial_shed")), row["segment"], row["combination"]],
    )
    assert result.exit_code == 0, result.output
    text = result.output
    # Each number as explain prints it, against the CSV (4 decimals) within explain's rounding.
    assert _number(text, r"L = ([\d.]+) m") == pytest.approx(row["Lu [m]"], abs=6e-4)
    assert _number(text, r"end moment = ([-+\d.]+)") == pytest.approx(row["κ"], abs=6e-4)
    assert _number(text, r"factor used = ([\d.]+)") == pytest.approx(row["factor used"], abs=6e-4)
    assert _number(text, r"Mcr = ([\d.]+) [>≤]") == pytest.approx(row["Mcr [kN·m]"], abs=0.06)
    assert _number(text, r"Mr = ([\d.]+) kN·m") == pytest.approx(row["Mr [kN·m]"], abs=0.06)
    assert _number(text, r"utilization = [\d.]+ / [\d.]+ = ([\d.]+)") == pytest.approx(
        row["utilization"], abs=6e-4
    )
    assert "competent engineer" in text


def _number(text: str, pattern: str, **kw: bool) -> float | str:
    """The first match of ``pattern``'s group in ``text`` (a float unless ``text=True``)."""
    found = re.search(pattern, text)
    assert found, pattern
    return found.group(1) if kw.get("text") else float(found.group(1))


def test_key_plan_names_every_member_in_plan_and_elevation(tmp_path):
    html, _ = _report("industrial_shed", tmp_path / "out")
    text = html.read_text(encoding="utf-8")
    plan = text[text.index('id="key-plan"') :]
    plan = plan[: plan.index("</svg>")]
    elevation = text[text.index('id="key-elevation"') :]
    elevation = elevation[: elevation.index("</svg>")]
    named_plan = re.findall(r'class="name" text-anchor="middle">([^<]+)</text>', plan)
    named_elev = re.findall(r'class="name" text-anchor="middle">([^<]+)</text>', elevation)
    members = [f"M{i}" for i in range(1, 17)]
    # Every member named once in each view; the shed's four frames fall on one another in
    # elevation, so they are named together there.
    assert sorted(n for label in named_plan for n in label.split(", ")) == sorted(members)
    assert sorted(n for label in named_elev for n in label.split(", ")) == sorted(members)
    assert "M2, M4, M6, M8" in named_elev
    # The shed spans 24 m in x and 18 m in y: the elevation looks along y.
    assert "Elevation (x–z), looking along y" in elevation
    # M4 governs at 0.844 (the shed's worst member): shaded in the 0.70 to 0.90 band.
    assert re.search(r'class="u3"><title>[^<]*M4: 0\.844', plan)


def test_utilization_bands_and_the_elevation_axis():
    values = np.array([0.0, 0.5, 0.5001, 0.7, 0.9, 1.0, 1.0001, np.nan])
    assert band_classes(values).tolist() == ["u1", "u1", "u2", "u2", "u3", "u4", "u5", "u0"]
    wide_in_y = pd.DataFrame(
        {"x0": [0.0], "y0": [0.0], "z0": [0.0], "x1": [1000.0], "y1": [9000.0], "z1": [0.0]}
    )
    assert elevation_axis(wide_in_y) == "y"
    wide_in_x = wide_in_y.assign(x1=9000.0, y1=1000.0)
    assert elevation_axis(wide_in_x) == "x"


def test_labels_overlap_neither_one_another_nor_the_drawing():
    # A crowded view: 12 members meeting at one point, each named at its middle.
    angles = np.linspace(0, 2 * np.pi, 12, endpoint=False)
    p0 = np.tile([[300.0, 200.0]], (12, 1))
    p1 = p0 + 120 * np.column_stack([np.cos(angles), np.sin(angles)])
    anchors = [
        (*((a + b) / 2), 1.0, f"M{i + 100}") for i, (a, b) in enumerate(zip(p0, p1, strict=True))
    ]
    placed = place_labels(anchors, p0, p1, 760, 420)
    boxes = np.array([label_box(x, y, text) for x, y, text in placed])
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            a, b = boxes[i], boxes[j]
            assert not (a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]), (i, j)
    # No point of any member inside any label.
    t = np.linspace(0, 1, 200)[:, None]
    for a, b in zip(p0, p1, strict=True):
        line = a + (b - a) * t
        for box in boxes:
            inside = (
                (line[:, 0] > box[0])
                & (line[:, 0] < box[2])
                & (line[:, 1] > box[1])
                & (line[:, 1] < box[3])
            )
            assert not inside.any()


def test_moment_labels_clear_of_one_another_and_node_ids_printed(tmp_path):
    html, seg = _report("industrial_shed", tmp_path / "out")
    text = html.read_text(encoding="utf-8")
    row = _chosen_segment("industrial_shed", seg)
    diagram = f'id="diagram-{row["segment"]}-{row["combination"]}"'.replace(" ", "_")
    svg = text[text.index(diagram) :]
    svg = svg[: svg.index("</svg>")]
    labels = [
        (float(x), float(y), t)
        for x, y, t in re.findall(r'<text x="([\d.]+)" y="([\d.]+)" class="lab"[^>]*>([^<]+)<', svg)
    ]
    # The two end moments and the inside peak of the shed's governing segment.
    assert len(labels) == 3 and any(t.startswith("inside peak") for _, _, t in labels)
    boxes = [label_box(x, y, t, LABEL_CHAR_PX) for x, y, t in labels]
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            assert not (a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]), labels
    dots = [
        (float(x), float(y)) for x, y in re.findall(r'<circle cx="([\d.]+)" cy="([\d.]+)"', svg)
    ]
    for box in boxes:
        assert not any(box[0] < x < box[2] and box[1] < y < box[3] for x, y in dots)
    # A node id under every brace point and member end of the member, printed (not on hover).
    ids = re.findall(r'class="tick node" text-anchor="middle">([^<]+)<', svg)
    assert ids == [f"B{i:02d}" for i in range(4, 13)]  # member M4 runs from B04 to B12


@pytest.mark.parametrize("sample", sorted(CHOSEN))
def test_no_negative_zero_in_the_report(sample, tmp_path):
    html, _ = _report(sample, tmp_path / "out")
    body = html.read_text(encoding="utf-8").split("<body>", 1)[1]
    shown = re.sub(r"<[^>]+>", " ", body)  # the text a reader sees
    assert not re.findall(r"(?<![\w.])[-−]0(?:\.0+)?(?![\d.])", shown)


def test_numbers_never_print_a_negative_zero():
    assert number(-0.04) == "0.0"
    assert number(-0.0, 2) == "0.00"
    assert number(-1.26) == "−1.3"
    assert number(0.2, 0, sign=True) == "0"
    assert number(207.2, 0, sign=True) == "+207"
    assert number(-207.2, 0, sign=True) == "−207"


def test_informative_pairs_beyond_the_limit_are_counted(monkeypatch):
    model = load_model(sample_path("industrial_shed"), None)
    result = check_model(model, model.settings.check)
    monkeypatch.setattr(report, "MAX_INFORMATIVE", 3)
    html = report.build_report(result, Path("industrial_shed"), "canonical layout")
    table = html[html.index("id='informative'") : html.index("id='segments'")]
    listed = table.count("<tr>") - 1  # less the heading row
    assert listed == 3
    more = int(re.search(r"(\d+) more such pairs are in flagged.csv", table).group(1))
    drawn = re.findall(r"id='(seg-[^']+)'", html)
    flagged = result.results[result.results["flags"].astype(str) != ""]
    shown = {
        f"seg-{s}-{c}".replace(" ", "_")
        for s, c in zip(flagged["segment"], flagged["combination"], strict=True)
    }
    assert listed + more == len(shown - set(drawn))
