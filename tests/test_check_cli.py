"""The check command end to end: exit statuses, filters, result files, atomic replacement."""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner
from flangewise.postproc import exports
from flangewise.postproc.cli import main, sample_path

SAMPLE = sample_path("two_span_beam")


def _copy(tmp_path: Path, settings: str | None = None) -> Path:
    folder = tmp_path / "model"
    shutil.copytree(SAMPLE, folder)
    if settings is not None:
        (folder / "flangewise.toml").write_text(settings, encoding="utf-8")
    return folder


def test_passing_model_exits_0_and_writes_every_file(tmp_path):
    out = tmp_path / "res"
    result = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out)])
    assert result.exit_code == 0, result.output
    for name in exports.RESULT_FILES:
        assert (out / name).is_file(), name
    info = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert info["pairs over 1.0"] == 0
    assert "competent engineer" in info["caution"]
    seg = pd.read_csv(out / "segments.csv")
    # 8 segments (4 per flange, README sample) x 2 combinations.
    assert len(seg) == 16
    assert {"Mr [kN·m]", "Lu [m]", "utilization"} <= set(seg.columns)


def test_model_over_capacity_exits_1_unless_told_otherwise(tmp_path):
    # The same diagrams read as MN·m instead of kN·m: a thousand times the demand.
    folder = _copy(tmp_path, '[units]\nmoment = "MN*m"\n')
    runner = CliRunner()
    over = runner.invoke(main, ["check", str(folder), "--out", str(tmp_path / "a")])
    assert over.exit_code == 1, over.output
    assert "Over 1.0       : 12" in over.output  # every compressed pair of the 16
    anyway = runner.invoke(
        main, ["check", str(folder), "--out", str(tmp_path / "b"), "--exit-zero"]
    )
    assert anyway.exit_code == 0, anyway.output


def test_bad_input_exits_2_without_traceback(tmp_path):
    folder = _copy(tmp_path, '[units]\nmoment = "kN*furlong"\n')
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "r")])
    assert result.exit_code == 2
    assert "units.moment" in result.stderr
    assert "Traceback" not in result.output
    assert not (tmp_path / "r").exists()


def test_filters_by_member_and_combination(tmp_path):
    out = tmp_path / "res"
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(SAMPLE),
            "--out",
            str(out),
            "--member",
            "M1",
            "--combination",
            "ULS-2 pattern",
            "--method",
            "cb",
        ],
    )
    assert result.exit_code == 0, result.output
    seg = pd.read_csv(out / "segments.csv")
    assert set(seg["combination"]) == {"ULS-2 pattern"}
    assert set(seg["basis"]) == {"cb"}
    unknown = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out), "--member", "X9"])
    assert unknown.exit_code == 2
    assert "X9" in unknown.output


FILES = [*exports.RESULT_FILES, "report.html"]


def _fail_writing_at(monkeypatch, fail_at: str) -> None:
    """Make the results writer fail just before it puts ``fail_at`` in place."""
    real = exports.write_results

    def failing(out_dir, tables, info, before_replace=None, texts=None, notes=None):
        def boom(name):
            if name == fail_at:
                raise OSError("disk full (injected)")

        return real(out_dir, tables, info, before_replace=boom, texts=texts, notes=notes)

    monkeypatch.setattr(exports, "write_results", failing)


@pytest.mark.parametrize("fail_at", ["segments.csv", "flagged.csv", "report.html", "summary.json"])
def test_failure_while_writing_leaves_earlier_results_intact(tmp_path, monkeypatch, fail_at):
    out = tmp_path / "res"
    first = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out), "--report"])
    assert first.exit_code == 0, first.output
    before = {name: (out / name).read_bytes() for name in FILES}

    _fail_writing_at(monkeypatch, fail_at)
    second = CliRunner().invoke(
        main, ["check", str(SAMPLE), "--out", str(out), "--method", "cb", "--report"]
    )
    assert second.exit_code == 3
    assert "unchanged" in second.stderr
    assert "Traceback" not in second.output
    after = {name: (out / name).read_bytes() for name in FILES}
    assert after == before  # the whole earlier set, byte for byte
    assert sorted(p.name for p in out.iterdir()) == sorted(FILES)


def test_members_without_forces_are_named_not_skipped(tmp_path):
    folder = _copy(tmp_path)
    # A bracing strut with no force rows: a second member, not checked, and said so.
    with (folder / "nodes.csv").open("a", encoding="utf-8") as fh:
        fh.write("N10,6.0,3.0,4.5\n")
    with (folder / "elements.csv").open("a", encoding="utf-8") as fh:
        fh.write("T1,N5,N10,W410x60\n")
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "r")])
    assert result.exit_code == 0, result.output
    assert "NO FORCES      : 1 member(s) not checked" in result.output
    info = json.loads((tmp_path / "r" / "summary.json").read_text(encoding="utf-8"))
    assert len(info["members without forces (not checked)"]) == 1


# --- Exit status 1 means "not shown to pass" --------------------------------------------------

#: A flange so thin that the section is class 4 in flexure: b/2tf = 178 / (2·4) = 22.3, above
#: the class 3 limit 200/√fy = 200/√350 = 10.7 (SANS 10162-1:2011 Table 3, from memory).
THIN = "THIN,407,178,4,7.7,10,350\n"


def _info(out: Path) -> dict:
    return json.loads((out / "summary.json").read_text(encoding="utf-8"))


def test_a_passing_run_says_so_in_the_terminal_and_the_summary(tmp_path):
    out = tmp_path / "res"
    result = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out)])
    assert result.exit_code == 0, result.output
    assert "Result         : passes" in result.output
    assert _info(out)["result"] == {"shown to pass": True, "reasons": []}


def test_every_pair_class_4_is_not_shown_to_pass(tmp_path):
    folder = _copy(tmp_path)
    sections = folder / "sections.csv"
    sections.write_text(
        sections.read_text(encoding="utf-8").replace("W410x60,407,178,12.8,", "W410x60,407,178,4,"),
        encoding="utf-8",
    )
    out = tmp_path / "res"
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(out)])
    assert result.exit_code == 1, result.output
    info = _info(out)
    # Every compressed pair of the 16 (12, as in the MN·m test above) is class 4, none checked.
    assert info["pairs checked"] == 0
    assert info["pairs not checked (class 4)"] == 12
    assert info["result"]["shown to pass"] is False
    reasons = " ".join(info["result"]["reasons"])
    assert "12 pair(s) with the flange in compression not checked (class 4 section)" in reasons
    assert "nothing was checked" in reasons
    assert "Result         : NOT SHOWN TO PASS: 12 pair(s)" in result.output


def test_one_class_4_member_among_passing_ones_is_not_shown_to_pass(tmp_path):
    folder = _copy(tmp_path)
    with (folder / "sections.csv").open("a", encoding="utf-8") as fh:
        fh.write(THIN)
    elements = folder / "elements.csv"
    lines = elements.read_text(encoding="utf-8").splitlines()
    # B1..B4 (the first span) in the thin section: a member of its own, the second span passes.
    lines[1:5] = [line.replace("W410x60", "THIN") for line in lines[1:5]]
    elements.write_text("\n".join(lines) + "\n", encoding="utf-8")
    out = tmp_path / "res"
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(out)])
    assert result.exit_code == 1, result.output
    info = _info(out)
    assert info["pairs checked"] > 0
    assert info["pairs over 1.0"] == 0
    assert info["pairs not checked (class 4)"] > 0
    assert len(info["result"]["reasons"]) == 1
    assert "not checked (class 4 section)" in info["result"]["reasons"][0]
    anyway = CliRunner().invoke(
        main, ["check", str(folder), "--out", str(tmp_path / "b"), "--exit-zero"]
    )
    assert anyway.exit_code == 0, anyway.output
    assert "NOT SHOWN TO PASS" in anyway.output  # --exit-zero changes the status, not the words


def _with_strut(tmp_path: Path) -> Path:
    """The sample with a bracing strut that has no force rows: a member that cannot be checked."""
    folder = _copy(tmp_path)
    with (folder / "nodes.csv").open("a", encoding="utf-8") as fh:
        fh.write("N10,6.0,3.0,4.5\n")
    with (folder / "elements.csv").open("a", encoding="utf-8") as fh:
        fh.write("T1,N5,N10,W410x60\n")
    return folder


def test_a_run_that_checks_nothing_is_not_shown_to_pass(tmp_path):
    folder = _with_strut(tmp_path)
    whole = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "a")])
    assert whole.exit_code == 0, whole.output  # the beam passes; the strut is only listed
    (strut,) = _info(tmp_path / "a")["members without forces (not checked)"]

    out = tmp_path / "b"
    result = CliRunner().invoke(
        main, ["check", str(folder), "--out", str(out), "--member", strut, "--report"]
    )
    assert result.exit_code == 1, result.output
    info = _info(out)
    assert info["pairs checked"] == 0
    assert info["members without forces (not checked)"] == [strut]
    assert info["result"]["shown to pass"] is False
    assert "nothing was checked" in info["result"]["reasons"][0]
    assert f"NO FORCES      : 1 member(s) not checked: {strut}" in result.output
    assert "NOT SHOWN TO PASS: nothing was checked" in result.output
    report = (out / "report.html").read_text(encoding="utf-8")
    assert "Result: NOT SHOWN TO PASS: nothing was checked" in report
    assert f"NO FORCES: 1 member(s) not checked: {strut}" in report


# --- Every output of a run describes the same filtered set ------------------------------------


def _flag_counts(seg: pd.DataFrame) -> dict[str, int]:
    words = seg["flags"].fillna("").astype(str).str.split().explode()
    counts = words[words.notna() & (words != "")].value_counts()
    return {name: int(counts.get(name, 0)) for name in exports.FLAGS}


def test_member_filter_narrows_every_output(tmp_path):
    shed = sample_path("industrial_shed")
    whole = CliRunner().invoke(main, ["check", str(shed), "--out", str(tmp_path / "all")])
    assert whole.exit_code == 0, whole.output
    out = tmp_path / "res"
    result = CliRunner().invoke(
        main, ["check", str(shed), "--out", str(out), "--member", "M4", "--report"]
    )
    assert result.exit_code == 0, result.output
    seg = pd.read_csv(out / "segments.csv", keep_default_na=False)
    info = _info(out)
    assert set(seg["member"]) == {"M4"}
    # The summary counts the filtered table, not the whole model (which differs).
    assert info["flags"] == _flag_counts(seg)
    assert info["flags"] != _info(tmp_path / "all")["flags"]
    assert info["pairs checked"] == int(seg["status"].isin(list(exports.CHECKED)).sum())
    assert info["pairs not critical"] == int((seg["status"] == "not critical").sum())
    assert info["members"] == 1
    assert info["members without forces (not checked)"] == []
    for name in ("governing.csv", "flagged.csv"):
        assert set(pd.read_csv(out / name)["member"]) <= {"M4"}
    assert "in member M4," in result.output  # the worst result is the filtered one's
    report = (out / "report.html").read_text(encoding="utf-8")
    text = re.sub(r"""\sd=(["']).*?\1""", "", report)  # SVG path data: "M142.5,24 L..."
    assert set(re.findall(r"\bM\d+\b", text)) == {"M4"}
    assert "M4 (--member)" in report


# --- The output folder holds exactly this run's files -----------------------------------------


def test_a_rerun_removes_our_files_it_did_not_write_and_keeps_others(tmp_path):
    out = tmp_path / "res"
    first = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out), "--report"])
    assert first.exit_code == 0, first.output
    (out / "my notes.txt").write_text("the engineer's own file", encoding="utf-8")
    second = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out)])
    assert second.exit_code == 0, second.output
    assert sorted(p.name for p in out.iterdir()) == sorted([*exports.RESULT_FILES, "my notes.txt"])
    assert (out / "my notes.txt").read_text(encoding="utf-8") == "the engineer's own file"


@pytest.mark.parametrize("fail_at", ["segments.csv", "summary.json", "report.html"])
def test_a_failed_rerun_keeps_the_earlier_report_too(tmp_path, monkeypatch, fail_at):
    out = tmp_path / "res"
    first = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out), "--report"])
    assert first.exit_code == 0, first.output
    before = {p.name: p.read_bytes() for p in out.iterdir()}

    _fail_writing_at(monkeypatch, fail_at)
    # Without --report: report.html is not this run's, so the run removes it, unless it fails.
    second = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out), "--method", "cb"])
    assert second.exit_code == 3, second.output
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before


# --- Names the model does not have --------------------------------------------------------------


def test_unknown_member_names_the_option_the_close_names_and_those_there_are(tmp_path):
    shed = sample_path("industrial_shed")
    result = CliRunner().invoke(
        main, ["check", str(shed), "--out", str(tmp_path / "r"), "--member", "M1O"]
    )
    assert result.exit_code == 2, result.output
    err = result.stderr
    assert "'--member'" in err
    assert "no member named 'M1O' (close: M1, " in err
    assert "The 16 members are: M1, M2, M3" in err
    assert "None" not in err
    assert not (tmp_path / "r").exists()


def test_unknown_combination_is_input_that_cannot_be_used(tmp_path):
    result = CliRunner().invoke(
        main, ["check", str(SAMPLE), "--out", str(tmp_path / "r"), "--combination", "ULS-9"]
    )
    assert result.exit_code == 2, result.output
    assert "ULS-9" in result.stderr
    assert "Traceback" not in result.output
    assert not (tmp_path / "r").exists()
