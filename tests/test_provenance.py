"""summary.json records how a result set was made: a checker can tell which input it came from."""

from __future__ import annotations

import hashlib
import json
import shutil
from importlib.metadata import version
from pathlib import Path

from click.testing import CliRunner
from flangewise.postproc import cli
from flangewise.postproc.cli import main, sample_path

SAMPLE = sample_path("two_span_beam")


def _copy(tmp_path: Path, sample: str = "two_span_beam") -> Path:
    folder = tmp_path / sample
    shutil.copytree(sample_path(sample), folder)
    return folder


def _check(*args: str) -> dict:
    """Run check with ``args`` (the model and --out first) and return summary.json's record."""
    result = CliRunner().invoke(main, ["check", *args])
    assert result.exit_code == 0, result.output
    out = Path(args[args.index("--out") + 1])
    return json.loads((out / "summary.json").read_text(encoding="utf-8"))["provenance"]


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_every_input_file_read_is_hashed_and_one_changed_byte_shows(tmp_path):
    folder = _copy(tmp_path)
    first = _check(str(folder), "--out", str(tmp_path / "a"))
    inputs = {f["path"]: f for f in first["inputs"]}
    # The six tables of the sample (no settings file); its other files are not read.
    assert sorted(inputs) == [
        "braces.csv",
        "elements.csv",
        "forces.csv",
        "nodes.csv",
        "sections.csv",
        "supports.csv",
    ]
    for name, record in inputs.items():
        assert record["sha256"] == _sha256(folder / name), name
        assert record["bytes"] == (folder / name).stat().st_size, name
    assert first["settings file"] is None

    forces = folder / "forces.csv"
    data = forces.read_bytes()
    assert data.count(b"B1,ULS-1 gravity,0.375,18.562") == 1
    forces.write_bytes(data.replace(b"0.375,18.562", b"0.375,18.563", 1))
    second = {f["path"]: f for f in _check(str(folder), "--out", str(tmp_path / "b"))["inputs"]}
    assert second["forces.csv"]["sha256"] == _sha256(forces)
    assert second["forces.csv"]["sha256"] != inputs["forces.csv"]["sha256"]
    assert second["forces.csv"]["bytes"] == inputs["forces.csv"]["bytes"]  # one byte, same size
    for name in inputs.keys() - {"forces.csv"}:
        assert second[name] == inputs[name], name


def test_settings_filters_and_command_line_are_recorded(tmp_path):
    folder = _copy(tmp_path)
    toml = '# the engineer\'s settings\n[units]\nmoment = "kN*m"\n\n[check]\nphi = 0.85\n'
    (folder / "flangewise.toml").write_text(toml, encoding="utf-8")
    args = [
        str(folder),
        "--out",
        str(tmp_path / "res"),
        "--member",
        "M1",
        "--combination",
        "ULS-1 gravity",
        "--method",
        "cb",
    ]
    record = _check(*args)

    assert record["tool"] == "flangewise"
    assert record["version"] == version("flangewise")
    assert record["command line"] == ["check", *args]
    assert record["model folder"] == str(folder)
    assert record["settings file"] == {"path": "flangewise.toml", "text": toml}
    toml_input = next(f for f in record["inputs"] if f["path"] == "flangewise.toml")
    assert toml_input["sha256"] == _sha256(folder / "flangewise.toml")
    assert record["filters"] == {
        "member": ["M1"],
        "combination": ["ULS-1 gravity"],
        "method": "cb",
    }
    s = record["settings"]
    # As given in the file, as defaulted, and as overridden on the command line.
    assert s["units"] == {
        "length": "m",
        "force": "kN",
        "moment": "kN*m",
        "section": "mm",
        "stress": "MPa",
    }
    assert s["check"] == {
        "gradient": "cb",
        "E": 200000.0,
        "G": 77000.0,
        "phi": 0.85,
        "load_height": "shear_centre",
        "limit_to_exact": True,
    }
    assert s["combinations"] == ["ULS-1 gravity"]
    assert s["files"]["forces"] == "forces.csv"
    assert s["columns"]["forces"]["M"] == "M"
    assert (s["delimiter"], s["decimal"]) == (",", ".")
    assert (s["positive_moment"], s["backwards_flips_sign"]) == ("compresses_top", False)
    assert s["positions"] == "distance"
    assert s["members"]["angle_tolerance"] == 0.5


def test_a_foreign_layout_records_its_own_files_and_a_settings_file_elsewhere(tmp_path):
    folder = _copy(tmp_path, "plant_platform")
    outside = tmp_path / "settings" / "platform.toml"
    outside.parent.mkdir()
    shutil.move(folder / "flangewise.toml", outside)
    # --exit-zero: the platform is not shown to pass (cantilever tips to verify); its record is.
    out = str(tmp_path / "res")
    record = _check(str(folder), "--settings", str(outside), "--out", out, "--exit-zero")
    assert record["settings file"]["path"] == "../settings/platform.toml"
    assert record["settings file"]["text"] == outside.read_text(encoding="utf-8")
    paths = {f["path"] for f in record["inputs"]}
    assert "../settings/platform.toml" in paths
    for table, name in record["settings"]["files"].items():
        if (folder / name).is_file():
            assert name in paths, table
    assert "piece_results.csv" in paths  # the forces table, under the export's own name
    assert "reactions.csv" not in paths  # in the folder, but not an input


def test_a_file_that_changes_while_it_is_read_stops_the_run(tmp_path, monkeypatch):
    folder = _copy(tmp_path)
    real = cli.load_model

    def load_then_change(*args: object, **kwargs: object) -> object:
        model = real(*args, **kwargs)
        with (folder / "forces.csv").open("a", encoding="utf-8") as fh:
            fh.write("\n")  # another program still writing the export
        return model

    monkeypatch.setattr(cli, "load_model", load_then_change)
    out = tmp_path / "res"
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(out)])
    assert result.exit_code == 2, result.output
    assert "forces.csv" in result.stderr
    assert "it changed during this run" in result.stderr
    assert not out.exists()


def test_a_forces_folder_records_every_parquet_file_it_holds(tmp_path):
    import pandas as pd

    folder = _copy(tmp_path)
    forces = pd.read_csv(folder / "forces.csv", dtype={"element": str, "combination": str})
    (folder / "forces.csv").unlink()
    parts = folder / "forces"
    for i, (name, rows) in enumerate(forces.groupby("combination", sort=False)):
        part = parts / f"combination={name}"
        part.mkdir(parents=True)
        rows.drop(columns="combination").to_parquet(part / f"part-{i}.parquet", index=False)
    (parts / "_SUCCESS").write_text("", encoding="utf-8")  # skipped by the readers, and here
    (folder / "flangewise.toml").write_text('[files]\nforces = "forces"\n', encoding="utf-8")
    record = _check(str(folder), "--out", str(tmp_path / "res"))
    paths = {f["path"] for f in record["inputs"]}
    written = {str(p.relative_to(folder)) for p in parts.rglob("*.parquet")}
    assert len(written) == 2 and written <= paths
    assert "forces/_SUCCESS" not in paths
    for f in record["inputs"]:
        if f["path"] in written:
            assert f["sha256"] == hashlib.sha256((folder / f["path"]).read_bytes()).hexdigest()
