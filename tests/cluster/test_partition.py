"""``flangewise partition``: a forces CSV file into a folder per load combination, unchanged.

The folder must load to exactly the forces the CSV file loads to (values bit for bit, ids as
text, the file's order within a combination), and every cell the CSV reader refuses must be
refused here, naming the file, its row, the column and the cell as written.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner
from flangewise import readers
from flangewise.postproc.cli import main, sample_path
from flangewise.postproc.convert import partition_forces
from flangewise.readers.source_rows import SOURCE_ROW


def _copy(sample: str, tmp_path: Path) -> Path:
    folder = tmp_path / sample
    shutil.copytree(sample_path(sample), folder)
    return folder


def _point_to(folder: Path, dataset: str) -> Path:
    """A settings file like the model's own, with ``[files] forces`` naming the folder."""
    own = folder / "flangewise.toml"
    text = own.read_text(encoding="utf-8") if own.exists() else "[files]\n"
    if "forces =" in text:
        lines = [
            f'forces = "{dataset}"' if line.startswith("forces =") else line
            for line in text.splitlines()
        ]
        text = "\n".join(lines) + "\n"
    else:
        text = text.replace("[files]\n", f'[files]\nforces = "{dataset}"\n')
    path = folder / "dataset.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _by_pair(forces: pd.DataFrame) -> pd.DataFrame:
    """The forces with names as text, in (combination, file order): the order each reader keeps."""
    out = forces.assign(
        element=forces["element"].astype(str), combination=forces["combination"].astype(str)
    )
    return out.sort_values("combination", kind="stable").reset_index(drop=True)


def _partition(folder: Path, *extra: str):
    return CliRunner().invoke(main, ["partition", str(folder), *[str(e) for e in extra]])


@pytest.mark.parametrize("sample", ["industrial_shed", "plant_platform"])
def test_the_folder_loads_to_the_csv_files_forces(sample, tmp_path):
    # plant_platform: semicolons, decimal commas, its own column names and units.
    folder = _copy(sample, tmp_path)
    result = _partition(folder, "--out", folder / "forces_ds")
    assert result.exit_code == 0, result.output
    from_csv = readers.load_model(folder)
    from_folder = readers.load_model(folder, _point_to(folder, "forces_ds"))
    a, b = _by_pair(from_csv.forces), _by_pair(from_folder.forces)
    assert list(a.columns) == list(b.columns)
    for column in a.columns:
        assert np.array_equal(a[column].to_numpy(), b[column].to_numpy()), column
    assert sorted(from_csv.combinations) == sorted(from_folder.combinations)


def test_each_record_keeps_its_csv_row_and_names_with_any_character(tmp_path):
    folder = _copy("two_span_beam", tmp_path)
    csv = folder / "forces.csv"
    lines = csv.read_text(encoding="utf-8").splitlines()
    # Load combination names holding the characters folder names escape: '/', '=', '%', blanks.
    renamed = {"ULS-1 gravity": "G/1 = 100%", "ULS-2 pattern": " P+2 "}
    text = "\n".join([lines[0]] + [_rename(line, renamed) for line in lines[1:]]) + "\n"
    csv.write_text(text, encoding="utf-8")
    # Small blocks: the rows of a file split across many blocks keep their numbers.
    done = partition_forces(folder, None, folder / "forces_ds", block_bytes=256)
    assert done.rows == len(lines) - 1 and done.combinations == 2
    loaded = readers.load_model(folder, _point_to(folder, "forces_ds"))
    assert sorted(loaded.combinations) == sorted(n.strip() for n in renamed.values())
    assert sorted(p.name for p in (folder / "forces_ds").iterdir()) == [
        "combination=G%2F1%20%3D%20100%25",
        "combination=P%2B2",
    ]
    rows = []
    for path in sorted((folder / "forces_ds").rglob("*.parquet")):
        rows += pq.read_table(path, columns=[SOURCE_ROW]).column(0).to_pylist()
    assert sorted(rows) == list(range(2, len(lines) + 1))


def _rename(line: str, names: dict[str, str]) -> str:
    for old, new in names.items():
        line = line.replace(f",{old},", f',"{new}",')
    return line


def _damaged_forces(tmp_path: Path, cells: dict[int, str]) -> Path:
    """two_span_beam with some cells of column M written anew (row -> text)."""
    folder = _copy("two_span_beam", tmp_path)
    csv = folder / "forces.csv"
    lines = csv.read_text(encoding="utf-8").splitlines()
    for row, text in cells.items():
        fields = lines[row - 1].split(",")
        fields[3] = text
        lines[row - 1] = ",".join(fields)
    csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return folder


def _problems(output: str) -> set[str]:
    return {line for line in output.splitlines() if line.startswith("forces.csv, row")}


def test_cells_the_csv_reader_refuses_are_refused_with_row_column_and_value(tmp_path):
    cells = {3: "inf", 5: "1e309", 7: "nan", 9: "1.5kN", 11: "", 13: "TRUE", 15: " -Infinity"}
    folder = _damaged_forces(tmp_path, cells)
    result = _partition(folder, "--out", folder / "forces_ds")
    assert result.exit_code == 2, result.output
    assert "forces.csv, row 5, column 'M': got '1e309'; expected a finite number" in result.output
    assert "forces.csv, row 11, column 'M': got ''; expected a number" in result.output
    # The same problems as the check of the CSV file gives, and nothing written.
    plain = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "o")])
    assert plain.exit_code == 2
    assert _problems(result.output) == _problems(plain.output)
    assert len(_problems(result.output)) == len(cells)
    assert not (folder / "forces_ds").exists()
    assert not [p for p in folder.iterdir() if p.name.startswith(".forces_ds")]


def test_a_decimal_comma_in_a_comma_file_is_refused_at_its_row(tmp_path):
    folder = _damaged_forces(tmp_path, {4: "12,5"})
    result = _partition(folder, "--out", folder / "forces_ds")
    assert result.exit_code == 2
    assert "forces.csv, row 4: got 'B1,ULS-1 gravity,0.75,12,5'; expected 4 fields" in result.output
    assert "a decimal comma splitting a number in two" in result.output
    assert not (folder / "forces_ds").exists()


def test_empty_lines_may_end_the_file_only(tmp_path):
    folder = _copy("two_span_beam", tmp_path)
    csv = folder / "forces.csv"
    lines = csv.read_text(encoding="utf-8").splitlines()
    csv.write_text("\n".join(lines) + "\n\n,,,\n\n", encoding="utf-8")
    assert _partition(folder, "--out", folder / "a").exit_code == 0
    csv.write_text("\n".join([*lines[:10], ",,,", *lines[10:]]) + "\n", encoding="utf-8")
    result = _partition(folder, "--out", folder / "b")
    assert result.exit_code == 2
    assert "forces.csv, row 11: got ''; expected a row of values, not an empty line" in (
        result.output
    )


def test_an_existing_folder_is_not_overwritten(tmp_path):
    folder = _copy("two_span_beam", tmp_path)
    (folder / "forces_ds").mkdir()
    (folder / "forces_ds" / "mine.txt").write_text("keep", encoding="utf-8")
    result = _partition(folder, "--out", folder / "forces_ds")
    assert result.exit_code == 2
    assert "not an empty folder" in result.output
    assert (folder / "forces_ds" / "mine.txt").read_text(encoding="utf-8") == "keep"


def test_a_forces_table_that_is_no_csv_file_is_refused(tmp_path):
    folder = _copy("two_span_beam", tmp_path)
    assert _partition(folder, "--out", folder / "forces_ds").exit_code == 0
    result = _partition(
        folder, "--settings", _point_to(folder, "forces_ds"), "--out", tmp_path / "again"
    )
    assert result.exit_code == 2
    assert "as a CSV file to convert" in result.output


def test_names_one_folder_cannot_tell_apart_are_refused(tmp_path, monkeypatch):
    # A file system that ignores case (as on macOS and Windows) sees "ULS-1 gravity" and
    # "uls-1 gravity" as one folder: stood in for by folder names written in lower case.
    import flangewise.postproc.convert as convert

    monkeypatch.setattr(convert, "quote", lambda name, safe: name.lower())
    folder = _copy("two_span_beam", tmp_path)
    csv = folder / "forces.csv"
    text = csv.read_text(encoding="utf-8").replace("ULS-2 pattern", "uls-1 GRAVITY")
    csv.write_text(text, encoding="utf-8")
    result = _partition(folder, "--out", folder / "forces_ds")
    assert result.exit_code == 2, result.output
    assert "column 'combination': got 'uls-1 GRAVITY'" in result.output
    assert not (folder / "forces_ds").exists()
