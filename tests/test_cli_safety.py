"""What the command line does when something other than a result ends a run.

Exit status 1 means "not shown to pass" to every script that calls the tool, so a fault of the
tool must never end with it: an internal error ends with status 4, a short message and, only on
request, the traceback; an interrupt with 130; click's usage errors keep click's 2.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner
from flangewise.engine import check as engine_check
from flangewise.postproc import cli
from flangewise.postproc.cli import main, sample_path

SAMPLE = sample_path("two_span_beam")


def _copy(tmp_path: Path) -> Path:
    folder = tmp_path / "model"
    shutil.copytree(SAMPLE, folder)
    return folder


def _engine_fails(monkeypatch: pytest.MonkeyPatch, error: BaseException) -> None:
    """Make the engine's check of the pairs raise ``error`` (a fault, not an input problem)."""

    def boom(*args: object, **kwargs: object) -> None:
        raise error

    monkeypatch.setattr(engine_check, "check_pairs", boom)


def test_internal_error_exits_4_with_a_short_message_and_no_traceback(tmp_path, monkeypatch):
    _engine_fails(monkeypatch, ZeroDivisionError("float division by zero"))
    out = tmp_path / "res"
    result = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out)])
    assert result.exit_code == 4, result.output
    assert isinstance(result.exception, SystemExit)  # handled, not a crash
    assert "internal error (ZeroDivisionError)" in result.stderr
    assert "not a result" in result.stderr
    assert "report it" in result.stderr
    assert f"flangewise check {SAMPLE} --out {out}" in result.stderr  # what to report
    assert "--debug" in result.stderr and "FLANGEWISE_DEBUG=1" in result.stderr
    assert "Traceback" not in result.output
    assert "Over 1.0" not in result.stdout  # nothing that reads as a result
    assert not out.exists()


@pytest.mark.parametrize("command", ["summary", "members", "explain"])
def test_every_command_ends_an_internal_error_with_4(command, monkeypatch):
    def boom(*args: object, **kwargs: object) -> None:
        raise RuntimeError("injected")

    monkeypatch.setattr(cli, "build_layout", boom)
    monkeypatch.setattr(engine_check, "build_layout", boom)
    args = [command, str(SAMPLE)] + (["M1-top-1", "ULS-1 gravity"] if command == "explain" else [])
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 4, result.output
    assert "internal error (RuntimeError)" in result.stderr
    assert "Traceback" not in result.output


def test_debug_option_shows_the_traceback(tmp_path, monkeypatch):
    _engine_fails(monkeypatch, ZeroDivisionError("float division by zero"))
    result = CliRunner().invoke(
        main, ["--debug", "check", str(SAMPLE), "--out", str(tmp_path / "res")]
    )
    assert result.exit_code == 4, result.output
    assert "Traceback" in result.stderr
    assert "ZeroDivisionError: float division by zero" in result.stderr
    assert "in boom" in result.stderr  # where it happened


@pytest.mark.parametrize(("value", "shown"), [("1", True), ("0", False), ("", False)])
def test_debug_environment_variable_shows_the_traceback(tmp_path, monkeypatch, value, shown):
    _engine_fails(monkeypatch, ZeroDivisionError("float division by zero"))
    result = CliRunner().invoke(
        main,
        ["check", str(SAMPLE), "--out", str(tmp_path / "res")],
        env={"FLANGEWISE_DEBUG": value},
    )
    assert result.exit_code == 4, result.output
    assert ("Traceback" in result.stderr) is shown


def test_interrupt_exits_130_without_traceback(tmp_path, monkeypatch):
    _engine_fails(monkeypatch, KeyboardInterrupt())
    result = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(tmp_path / "res")])
    assert result.exit_code == 130, result.output
    assert "Interrupted" in result.stderr
    assert "Traceback" not in result.output


@pytest.mark.parametrize(
    "args",
    [
        ["check"],  # MODEL missing
        ["check", str(SAMPLE), "--method", "sideways"],  # not a choice
        ["check", str(SAMPLE), "--no-such-option"],
        ["explain", str(SAMPLE), "M1-top-1"],  # COMBINATION missing
        ["no-such-command"],
    ],
)
def test_usage_errors_keep_clicks_status_2(args):
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 2, result.output
    assert "Usage:" in result.stderr
    assert "internal error" not in result.output


def test_input_errors_still_exit_2_and_write_errors_3(tmp_path, monkeypatch):
    folder = _copy(tmp_path)
    (folder / "flangewise.toml").write_text('[units]\nmoment = "kN*furlong"\n', encoding="utf-8")
    bad = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "a")])
    assert bad.exit_code == 2, bad.output
    assert "The input cannot be used" in bad.stderr

    # The output folder's place is taken by a file: the results cannot be written.
    blocked = tmp_path / "blocked"
    blocked.write_text("not a folder", encoding="utf-8")
    write = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(blocked / "res")])
    assert write.exit_code == 3, write.output
    assert "Could not write the results" in write.stderr


def test_an_unreadable_input_file_is_input_that_cannot_be_used(tmp_path, monkeypatch):
    folder = _copy(tmp_path)

    def refused(*args: object, **kwargs: object) -> None:
        raise PermissionError(13, "Permission denied", str(folder / "forces.csv"))

    monkeypatch.setattr(cli, "load_model", refused)
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "r")])
    assert result.exit_code == 2, result.output
    assert "forces.csv: Permission denied" in result.stderr
    assert "Could not write" not in result.stderr  # reading is not writing


def test_help_documents_the_exit_statuses_and_debug():
    top = CliRunner().invoke(main, ["--help"]).output
    assert "--debug" in top and "FLANGEWISE_DEBUG=1" in top
    for text in (top, CliRunner().invoke(main, ["check", "--help"]).output):
        assert "4  an internal error of flangewise" in text
        assert "NOT SHOWN TO PASS" in text
        assert "130  interrupted" in text


def test_a_reader_that_closes_the_pipe_early_is_not_an_internal_error(tmp_path):
    # `flangewise members … | head -1`: the reader goes away after one line. The tool ends as a
    # process stopped by SIGPIPE does (141), quietly, never with 4 ("internal error") or a result.
    import subprocess
    import sys

    sample = sample_path("industrial_shed")
    # A listing longer than any pipe's buffer (1 MB), so that writing it meets the closed pipe.
    script = (
        "import sys; from flangewise.postproc import cli; "
        "cli.members_text = lambda *a, **k: 'member line\\n' * 100000; "
        f"sys.argv = ['flangewise', 'members', {str(sample)!r}]; cli.main()"
    )
    proc = subprocess.Popen(
        [sys.executable, "-c", script], stdout=subprocess.PIPE, stderr=subprocess.PIPE
    )
    assert proc.stdout is not None
    proc.stdout.readline()
    proc.stdout.close()  # the reader goes away
    err = proc.stderr.read().decode() if proc.stderr else ""
    status = proc.wait(timeout=60)
    assert status == 141, err
    assert "internal error" not in err
    assert "Traceback" not in err
