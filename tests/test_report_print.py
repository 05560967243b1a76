"""The review report prints as a calculation package in headless Chromium.

Printed to PDF by the browser itself (Debian's chromium; skipped without it on a developer's
machine, required in CI, as in test_report.py). The page count is read from the PDF's page
objects; what each page holds is checked in the HTML the browser printed.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import subprocess

import numpy as np
import pytest
from click.testing import CliRunner
from flangewise.engine.check import check_model
from flangewise.postproc import exports
from flangewise.postproc.cli import main, sample_path
from flangewise.readers.load import load_model

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
BROWSER_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

#: The demo shed prints in at most this many pages (the browser's default paper, Letter).
MAX_PAGES = 20

#: Flags that change a number of the check: every pair carrying one is drawn (or named under the
#: section that draws the same check). The two informative flags are listed in a table instead.
CHANGING = (
    "peak-inside",
    "omega2-cap",
    "cantilever",
    "few-stations",
    "end-unbraced",
    "zero-ends",
    "code-factor-high",
    "class-4",
    "assumed-brace",
)
INFORMATIVE = ("sign-change", "not-end-moments")


def _need_browser() -> str:
    if CHROMIUM is None:
        if os.environ.get("CI"):
            pytest.fail("Chromium is required in CI (.ci/run installs it)")
        pytest.skip("Chromium is not installed (apt-get install chromium)")
    return CHROMIUM


@pytest.fixture(scope="module")
def printed(tmp_path_factory) -> tuple[str, bytes, dict]:
    """The shed's report as HTML, its PDF as printed by Chromium, and summary.json."""
    browser = _need_browser()
    tmp = tmp_path_factory.mktemp("print")
    out = tmp / "out"
    run = CliRunner().invoke(
        main, ["check", str(sample_path("industrial_shed")), "--out", str(out), "--report"]
    )
    assert run.exit_code == 0, run.output
    pdf = tmp / "report.pdf"
    subprocess.run(
        [
            browser,
            *BROWSER_FLAGS,
            f"--user-data-dir={tmp / 'profile'}",
            f"--print-to-pdf={pdf}",
            (out / "report.html").resolve().as_uri(),
        ],
        capture_output=True,
        timeout=180,
        check=True,
    )
    html = (out / "report.html").read_text(encoding="utf-8")
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    return html, pdf.read_bytes(), summary


def _pages(pdf: bytes) -> int:
    """The number of page objects in a PDF (``/Type /Page``, not ``/Pages``)."""
    return len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", pdf))


def _sections(html: str) -> dict[str, str]:
    """Each drawn section's id and its HTML."""
    found = re.findall(r"<section class='segment' id='([^']+)'>(.*?)</section>", html, re.S)
    return dict(found)


def test_the_demo_shed_prints_in_at_most_20_pages(printed):
    _, pdf, _ = printed
    assert pdf[:5] == b"%PDF-"
    assert 4 <= _pages(pdf) <= MAX_PAGES  # before the print layout: 141 Letter pages


def test_every_governing_and_result_changing_pair_is_drawn_or_named(printed):
    html, _, _ = printed
    model = load_model(sample_path("industrial_shed"), None)
    r = check_model(model, model.settings.check).results
    checked = r[r["status"].isin(list(exports.CHECKED))]
    governing = checked.groupby("member", observed=True)["utilization"].idxmax().to_numpy()
    changing = np.logical_or.reduce([r[f"flag_{n}"].to_numpy() for n in CHANGING])
    wanted = r.loc[sorted({*governing, *r.index[changing]})]
    sections = _sections(html)
    assert sections, "no segment section"
    for _, row in wanted.iterrows():
        anchor = f"seg-{row['segment']}-{row['combination']}".replace(" ", "_")
        if anchor in sections:
            continue
        # Not drawn: then named, with its own id, under the one section that draws the same
        # check in the same load combination.
        named = [
            sid
            for sid, body in sections.items()
            if re.search(rf"not drawn again:.*id='{re.escape(anchor)}'", body)
        ]
        assert len(named) == 1, (row["segment"], row["combination"])
        assert named[0].endswith(str(row["combination"]).replace(" ", "_"))
    # Each drawn section holds its diagram and its derivation, kept together in print.
    for body in sections.values():
        assert "<svg" in body and "Demand and utilization" in body
    assert "section.segment { break-inside: avoid;" in html


def test_informative_only_pairs_are_listed_not_drawn(printed):
    html, _, _ = printed
    model = load_model(sample_path("industrial_shed"), None)
    r = check_model(model, model.settings.check).results
    changing = np.logical_or.reduce([r[f"flag_{n}"].to_numpy() for n in CHANGING])
    informative = np.logical_or.reduce([r[f"flag_{n}"].to_numpy() for n in INFORMATIVE])
    only = r[informative & ~changing]
    assert len(only) > 0  # the shed has such pairs (sign-change on pairs that are not critical)
    table = html[html.index("id='informative'") : html.index("id='segments'")]
    sections = _sections(html)
    for _, row in only.iterrows():
        anchor = f"seg-{row['segment']}-{row['combination']}".replace(" ", "_")
        if anchor in sections:  # drawn only because it governs its member
            continue
        assert f"<td>{row['segment']}</td><td>{row['combination']}</td>" in table


def test_title_block_page_numbers_and_contents(printed):
    html, _, summary = printed
    inputs = summary["provenance"]["inputs"]
    lines = "".join(f"{f['path']} {f['sha256']}\n" for f in inputs)
    short = hashlib.sha256(lines.encode("utf-8")).hexdigest()[:12]
    head = html[: html.index("id='contents'")]
    # The caution first, then the title block with the tool, the filters and the inputs' hash.
    assert head.index("competent engineer") < head.index("class='title'")
    assert f"flangewise {summary['provenance']['version']}" in head
    assert "none: the whole model" in head
    assert f"short hash {short}" in head
    for f in inputs:
        assert f"{f['path']} {f['sha256'][:12]}" in head
    # Page numbers and the hash in every page's foot (CSS paged media, printed by Chromium).
    assert 'counter(page) " of " counter(pages)' in html
    assert f"inputs {short}" in html[: html.index("</style>")]
    # The contents list links every drawn section, numbered in order.
    sections = list(_sections(html))
    contents = html[html.index("id='contents'") : html.index("id='overview'")]
    assert [contents.count(f"href='#{sid}'") for sid in sections] == [2] * len(sections)
    numbers = re.findall(r"<h3>§(\d+) ", html)
    assert numbers == [str(n) for n in range(1, len(sections) + 1)]
