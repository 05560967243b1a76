"""The check command end to end: exit statuses, filters, result files, atomic replacement."""

from __future__ import annotations

import json
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


@pytest.mark.parametrize("fail_at", ["segments.csv", "flagged.csv", "report.html", "summary.json"])
def test_failure_while_writing_leaves_earlier_results_intact(tmp_path, monkeypatch, fail_at):
    out = tmp_path / "res"
    first = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out), "--report"])
    assert first.exit_code == 0, first.output
    before = {name: (out / name).read_bytes() for name in FILES}

    real = exports.write_results

    def failing(out_dir, tables, info, before_replace=None, texts=None):
        def boom(name):
            if name == fail_at:
                raise OSError("disk full (injected)")

        return real(out_dir, tables, info, before_replace=boom, texts=texts)

    monkeypatch.setattr(exports, "write_results", failing)
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
