"""The command line end to end, through click's CliRunner."""

from __future__ import annotations

import csv
import re
import shutil
from importlib.resources import files
from pathlib import Path

import pytest
from click.testing import CliRunner
from flangewise.postproc.cli import main

SAMPLE = Path(str(files("flangewise.sample_models").joinpath("two_span_beam")))


def test_demo_runs_and_prints_the_caution(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # the demo writes into the current folder
    result = CliRunner().invoke(main, ["demo"])
    assert result.exit_code == 0, result.output
    assert "competent engineer" in result.output
    assert (tmp_path / "flangewise-demo" / "segments.csv").is_file()


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


def test_members_prints_members_and_segments_and_writes_a_csv(tmp_path):
    # The sample model (its README): eight 1.5 m elements B1..B8 along x at z = 4.5, one section,
    # B6 drawn backwards; supports N1 (0 m), N5 (6 m), N9 (12 m); top braces N3 (3 m), N7 (9 m);
    # bottom braces N4 (4.5 m), N6 (7.5 m).
    folder = tmp_path / "two_span_beam"
    shutil.copytree(SAMPLE, folder)
    out = tmp_path / "results" / "segments.csv"

    result = CliRunner().invoke(main, ["members", str(folder), "--csv", str(out)])

    assert result.exit_code == 0, result.output
    # All eight collinear, end to end, one section: one member of 12 m, elements in order along +x
    # (B6 included, although drawn backwards). It is the only member, so the generated id is M1.
    assert "Member M1" in result.output
    assert "length 12.000 m" in result.output
    assert "elements in order: B1 B2 B3 B4 B5 B6 B7 B8" in result.output
    # Top segments between 0, 3, 6, 9, 12 m (supports and top braces); bottom segments between
    # 0, 4.5, 6, 7.5, 12 m (supports and bottom braces). Each is listed as: id, from node, to node,
    # start, end, length.
    expected = [
        ("M1-top-1", "N1", "N3", 0.0, 3.0),
        ("M1-top-2", "N3", "N5", 3.0, 6.0),
        ("M1-top-3", "N5", "N7", 6.0, 9.0),
        ("M1-top-4", "N7", "N9", 9.0, 12.0),
        ("M1-bottom-1", "N1", "N4", 0.0, 4.5),
        ("M1-bottom-2", "N4", "N5", 4.5, 6.0),
        ("M1-bottom-3", "N5", "N6", 6.0, 7.5),
        ("M1-bottom-4", "N6", "N9", 7.5, 12.0),
    ]
    for seg, a, b, s0, s1 in expected:
        line = rf"{seg}\s+{a}\s+{b}\s+{s0:.3f}\s+{s1:.3f}\s+{s1 - s0:.3f}"
        assert re.search(line, result.output), f"no line like {line!r} in:\n{result.output}"
    assert f"Segments written to {out}" in result.output
    assert "competent engineer" in result.output

    with open(out, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    header = list(rows[0])
    # Lengths and positions carry their unit in the column name; no bare unit-less length column.
    for column in ("member length [m]", "start [m]", "end [m]", "unbraced length [m]"):
        assert column in header
    assert not {"length", "start", "end", "s_start", "s_end"} & set(header)
    assert len(rows) == len(expected)
    by_segment = {r["segment"]: r for r in rows}
    for seg, a, b, s0, s1 in expected:
        r = by_segment[seg]
        assert r["member"] == "M1"
        assert r["flange"] == seg.split("-")[1]
        assert (r["start node"], r["end node"]) == (a, b)
        assert float(r["start [m]"]) == pytest.approx(s0)
        assert float(r["end [m]"]) == pytest.approx(s1)
        assert float(r["unbraced length [m]"]) == pytest.approx(s1 - s0)
        assert float(r["member length [m]"]) == pytest.approx(12.0)
        assert r["cantilever"] == "False"

    # Which combinations compress each segment's flange, from the sample's closed-form diagrams
    # (two equal spans L = 6 m; README of the sample, common practice):
    #   "ULS-1 gravity" (24 kN/m both spans): M = 54 u - 12 u², u = distance from the nearer end
    #     support; sagging for u < 4.5 m, hogging from 4.5 m to the middle support (-108 kN·m).
    #   "ULS-2 pattern" (24 and 6 kN/m): middle support -(24 + 6) 36 / 16 = -67.5 kN·m;
    #     first span M = 60.75 x - 12 x² (zero at 5.0625 m); second span, with u from the far end,
    #     M = 6.75 u - 3 u² (sagging only for u < 2.25 m, i.e. x > 9.75 m).
    both = {"ULS-1 gravity", "ULS-2 pattern"}
    compressed_in = {
        "M1-top-1": both,  # sagging in both
        "M1-top-2": both,  # M(3) = 54 (gravity), 74.25 (pattern) > 0
        "M1-top-3": {"ULS-1 gravity"},  # pattern: hogging throughout 6..9 m (u = 3..6 > 2.25)
        "M1-top-4": both,  # sagging near the far end in both
        "M1-bottom-1": set(),  # sagging throughout 0..4.5 in both: not critical
        "M1-bottom-2": both,  # hogging next to the middle support in both
        "M1-bottom-3": both,
        "M1-bottom-4": {"ULS-2 pattern"},  # gravity sags up to the brace at 7.5 (u = 4.5)
    }
    for seg, combos in compressed_in.items():
        text = by_segment[seg]["flange compressed in"]
        got = set() if text.startswith("(none") else set(text.split(" | "))
        assert got == combos, f"{seg}: {text!r}"


def test_readme_names_every_command_and_no_other():
    """The README's command examples stay in step with the command line."""
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    # Commands as the README writes them in code blocks and `code spans`, not in prose.
    code = "\n".join(
        re.findall(r"```.*?```", readme, flags=re.S) + re.findall(r"`[^`\n]+`", readme)
    )
    named = set(re.findall(r"flangewise (\w+)", code))
    assert named == set(main.commands), (named, set(main.commands))
    for name, command in main.commands.items():
        for param in command.params:
            for opt in getattr(param, "opts", []):
                if opt.startswith("--") and opt != "--help":
                    assert opt in readme, f"{name} {opt} is not in the README"


def _overlapping(folder: Path) -> str:
    """B9 from N1 to N3 runs along B1 and B2: overlapping elements."""
    with (folder / "elements.csv").open("a", encoding="utf-8") as fh:
        fh.write("B9,N1,N3,W410x60\n")
    return "expected no overlap with element 'B9'"


def _member_ids_that_do_not_chain(folder: Path) -> str:
    """Member id G1 on B1, B2 and B5: not one straight chain (B3, B4 lie between)."""
    elements = folder / "elements.csv"
    lines = elements.read_text(encoding="utf-8").splitlines()
    lines[0] += ",member"
    lines[1:] = [line + (",G1" if i in (1, 2, 5) else ",G2") for i, line in enumerate(lines[1:], 1)]
    elements.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return "column 'member': got 'G1'; expected elements of one member id to form one straight"


@pytest.mark.parametrize("spoil", [_overlapping, _member_ids_that_do_not_chain])
def test_every_command_refuses_what_check_refuses(tmp_path, spoil):
    folder = tmp_path / "model"
    shutil.copytree(SAMPLE, folder)
    problem = spoil(folder)
    runner = CliRunner()
    for args in (
        ["summary", str(folder)],
        ["members", str(folder)],
        ["check", str(folder), "--out", str(tmp_path / "r")],
        ["explain", str(folder), "M1-top-1", "ULS-1 gravity"],
    ):
        result = runner.invoke(main, args)
        assert result.exit_code == 2, (args, result.output)
        assert problem in result.stderr, args
        assert "Traceback" not in result.output


def test_explain_names_the_argument_and_the_close_names():
    runner = CliRunner()
    segment = runner.invoke(main, ["explain", str(SAMPLE), "M1-top-9", "ULS-1 gravity"])
    assert segment.exit_code == 2, segment.output
    assert "Invalid value for 'SEGMENT': no segment named 'M1-top-9' (close: M1-top-" in (
        segment.stderr
    )
    assert "The 8 segments are: M1-top-1, M1-top-2, M1-top-3, M1-top-4, M1-bottom-1" in (
        segment.stderr
    )
    combination = runner.invoke(main, ["explain", str(SAMPLE), "M1-top-1", "ULS-1 gravty"])
    assert combination.exit_code == 2, combination.output
    assert "Invalid value for 'COMBINATION': no load combination named 'ULS-1 gravty'" in (
        combination.stderr
    )
    assert "(close: ULS-1 gravity" in combination.stderr
    assert "The 2 load combinations are: ULS-1 gravity, ULS-2 pattern." in combination.stderr
    for result in (segment, combination):
        assert "None" not in result.stderr


def test_summary_counts_members_and_segments():
    result = CliRunner().invoke(main, ["summary", str(SAMPLE)])
    assert result.exit_code == 0, result.output
    # One member of eight elements, four segments per flange (the sample's README).
    assert "Members      : 1 (8 unbraced segments" in result.output
