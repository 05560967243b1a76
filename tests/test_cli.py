"""The command line end to end, through click's CliRunner."""

from __future__ import annotations

import shutil
from importlib.resources import files
from pathlib import Path

from click.testing import CliRunner

from postproc.cli import main

SAMPLE = Path(str(files("sample_models").joinpath("two_span_beam")))


def test_demo_runs_and_prints_the_caution():
    result = CliRunner().invoke(main, ["demo"])
    assert result.exit_code == 0, result.output
    assert "competent engineer" in result.output
    assert "two_span_beam" in result.output


def test_summary_of_a_broken_model_exits_2_with_the_place(tmp_path):
    folder = tmp_path / "broken"
    shutil.copytree(SAMPLE, folder)
    nodes = folder / "nodes.csv"
    lines = nodes.read_text(encoding="utf-8").splitlines()
    assert lines[2] == "N2,1.5,0.0,4.5"  # spreadsheet row 3
    lines[2] = "N2,one and a half,0.0,4.5"
    nodes.write_text("\n".join(lines) + "\n", encoding="utf-8")

    result = CliRunner().invoke(main, ["summary", str(folder)])

    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit)  # handled, not a crash
    assert "nodes.csv, row 3, column 'x': got 'one and a half'" in result.stderr
    assert "Traceback" not in result.output
    assert "competent engineer" not in result.output  # no results, so no caution
