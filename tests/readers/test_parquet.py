"""Parquet input: the same model as from CSV, and every validation with the same row, column and
value.

The Parquet files are written here with pyarrow from the CSV files or the base model of
``conftest.py``. Records count as in the CSV export of the same table: the first is row 2.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas.testing as pdt
import pyarrow as pa
import pyarrow.csv as pcsv
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner
from flangewise import readers
from flangewise.postproc.cli import main, sample_path
from flangewise.readers.columns import ID_COLUMNS
from flangewise.readers.settings import read_settings

TABLES = ("nodes", "elements", "sections", "forces", "braces", "supports")


# ---- helpers --------------------------------------------------------------------------------


def csv_folder_to_parquet(src: Path, dst: Path, names: dict[str, str] | None = None) -> str:
    """Write each table of a CSV model as Parquet (types as pyarrow infers them); return the
    ``[files]`` lines naming them. ``names`` maps a table to its CSV file name.
    """
    settings = read_settings(src)
    dst.mkdir(parents=True, exist_ok=True)
    lines = ["[files]"]
    for table in TABLES:
        path = src / (names or settings.files)[table]
        if not path.is_file():
            continue
        arrow = pcsv.read_csv(
            path,
            parse_options=pcsv.ParseOptions(delimiter=settings.delimiter),
            convert_options=pcsv.ConvertOptions(
                decimal_point=settings.decimal, strings_can_be_null=False
            ),
        )
        pq.write_table(arrow, dst / f"{table}.parquet")
        lines.append(f'{table} = "{table}.parquet"')
    return "\n".join(lines) + "\n"


def settings_with_files(src: Path, files: str) -> str:
    """The model's own settings file with its ``[files]`` table replaced by ``files``."""
    own = src / "flangewise.toml"
    if not own.is_file():
        return files
    text = own.read_text(encoding="utf-8")
    head, _, rest = text.partition("[files]")
    # Drop the old [files] lines up to the next table.
    rest = rest[rest.index("\n[") + 1 :] if "\n[" in rest else ""
    return head + files + "\n" + rest


def assert_same_model(a: readers.Model, b: readers.Model) -> None:
    for table in TABLES:
        pdt.assert_frame_equal(getattr(a, table), getattr(b, table), check_exact=True)


def base_to_parquet(model, folder: Path, typed: dict[str, dict[str, pa.Array]] | None = None):
    """Write the base model of ``conftest.py`` as Parquet files with ``typed`` columns replaced.

    Ids are written as text, numbers as float64 (an empty cell as null).
    """
    folder.mkdir(parents=True, exist_ok=True)
    lines = ["[files]"]
    for table, rows in model.tables.items():
        header, data = rows[0], rows[1:]
        columns = {}
        for i, name in enumerate(header):
            cells = [r[i] for r in data]
            if name in ID_COLUMNS[table] or table in ("braces", "supports"):
                columns[name] = pa.array(cells, pa.string())
            else:
                columns[name] = pa.array([float(c) if c else None for c in cells], pa.float64())
        columns.update((typed or {}).get(table, {}))
        pq.write_table(pa.table(columns), folder / f"{table}.parquet")
        lines.append(f'{table} = "{table}.parquet"')
    settings = "\n".join(lines) + "\n" + (model.settings or "")
    (folder / "flangewise.toml").write_text(settings, encoding="utf-8")
    return folder


def load_error(folder: Path) -> readers.InputError:
    with pytest.raises(readers.InputError) as info:
        readers.load_model(folder)
    return info.value


def only(error: readers.InputError, file: str, row: int | None, column: str | None):
    found = [p for p in error.problems if (p.file, p.row, p.column) == (file, row, column)]
    assert found, error.report()
    return found[0]


# ---- the same model and the same results ---------------------------------------------------------


@pytest.mark.parametrize("sample", ["industrial_shed", "plant_platform"])
def test_sample_as_parquet_loads_the_same_model_and_results(sample, tmp_path):
    # plant_platform: foreign column names, semicolons and decimal commas in its CSV, mm and N,
    # positions as fractions, the opposite moment sign, and whole-number ids (101 is "101").
    src = Path(sample_path(sample))
    dst = tmp_path / "pq"
    files = csv_folder_to_parquet(src, dst)
    (dst / "flangewise.toml").write_text(settings_with_files(src, files), encoding="utf-8")
    assert_same_model(readers.load_model(src), readers.load_model(dst))

    outputs = {}
    for name, folder in (("csv", src), ("parquet", dst)):
        out = tmp_path / f"out-{name}"
        result = CliRunner().invoke(main, ["check", str(folder), "--out", str(out)])
        assert result.exit_code in (0, 1), result.output
        outputs[name] = out
    assert (outputs["csv"] / "segments.csv").is_file()
    for table in ("segments.csv", "governing.csv", "flagged.csv"):
        assert (outputs["csv"] / table).read_bytes() == (outputs["parquet"] / table).read_bytes()


def test_whole_number_ids_are_their_decimal_text(model, tmp_path):
    ints = pa.array([1, 2, 3], pa.int64())
    folder = base_to_parquet(
        model,
        tmp_path / "m",
        {
            "nodes": {"id": ints},
            "elements": {
                "start": pa.array([1, 2], pa.int32()),
                "end": pa.array([2, 3], pa.uint8()),
            },
            "braces": {"node": pa.array([2], pa.int16())},
            "supports": {"node": pa.array([1, 3], pa.int64())},
        },
    )
    loaded = readers.load_model(folder)
    assert list(loaded.nodes.index) == ["1", "2", "3"]
    assert loaded.elements["start"].tolist() == ["1", "2"]


def test_whole_number_element_ids_match_exactly_as_text(model, tmp_path):
    # The elements table names "007"; the forces' integer 7 is the id "7": no match.
    model.tables["elements"][1][0] = "007"
    codes = pa.array([7, 7, 7, 2, 2, 2, 7, 7, 7, 2, 2, 2], pa.int64())
    model.tables["elements"][2][0] = "2"
    folder = base_to_parquet(model, tmp_path / "m", {"forces": {"element": codes}})
    problem = only(load_error(folder), "forces.parquet", 2, "element")
    assert problem.value == "7"
    assert "matched exactly as text" in problem.expected


def test_dictionary_encoded_ids_in_many_row_groups_read_as_one(model, tmp_path):
    folder = base_to_parquet(model, tmp_path / "m")
    table = pq.read_table(folder / "forces.parquet")
    table = table.set_column(0, "element", table.column("element").dictionary_encode())
    # Each row group gets its own dictionary, in another order: " E2" first, with a blank.
    rows = table.to_pylist()
    rows[0]["element"] = " E1"
    pq.write_table(
        pa.Table.from_pylist(rows, schema=table.schema), folder / "forces.parquet", row_group_size=4
    )
    loaded = readers.load_model(folder)
    assert list(loaded.forces["element"].cat.categories) == ["E1", "E2"]
    assert loaded.forces["element"].cat.codes.tolist() == [0] * 3 + [1] * 3 + [0] * 3 + [1] * 3


def test_csv_options_do_not_apply_to_parquet(model, tmp_path):
    model.settings = '[csv]\ndelimiter = ";"\ndecimal = ","\n'
    assert len(readers.load_model(base_to_parquet(model, tmp_path / "m")).forces) == 12


# ---- every validation family -------------------------------------------------------------------


def test_text_in_a_number_column_is_refused_at_its_first_value(model, tmp_path):
    moments = pa.array(["none", "30.0", "40.0"] + ["0"] * 9, pa.string())
    folder = base_to_parquet(model, tmp_path / "m", {"forces": {"M": moments}})
    problem = only(load_error(folder), "forces.parquet", 2, "M")
    assert problem.value == "none"
    assert "a number" in problem.expected and "string" in problem.expected


def test_true_false_in_a_number_column_is_refused(model, tmp_path):
    folder = base_to_parquet(
        model, tmp_path / "m", {"sections": {"fy": pa.array([True], pa.bool_())}}
    )
    problem = only(load_error(folder), "sections.parquet", 2, "fy")
    assert problem.value == "true"
    assert "bool" in problem.expected


def test_decimal_numbers_cannot_name_ids(model, tmp_path):
    folder = base_to_parquet(
        model, tmp_path / "m", {"nodes": {"id": pa.array([1.0, 2.5, 3.0], pa.float64())}}
    )
    problem = only(load_error(folder), "nodes.parquet", 2, "id")
    assert problem.value == "1"
    assert "whole numbers" in problem.expected and "double" in problem.expected


def test_null_cells_are_empty_cells(model, tmp_path):
    folder = base_to_parquet(
        model,
        tmp_path / "m",
        {
            "nodes": {"x": pa.array([0.0, None, 8.0], pa.float64())},
            "elements": {"section": pa.array(["S1", None], pa.string())},
        },
    )
    error = load_error(folder)
    assert only(error, "nodes.parquet", 3, "x").expected == "a number"
    assert only(error, "nodes.parquet", 3, "x").value == ""
    assert only(error, "elements.parquet", 3, "section").expected == "a value"


@pytest.mark.parametrize(
    ("value", "shown"), [(float("nan"), "nan"), (float("inf"), "inf"), (-float("inf"), "-inf")]
)
def test_non_finite_numbers_are_refused_as_stored(model, tmp_path, value, shown):
    positions = [0.0, 2.0, 4.0] * 4
    positions[4] = value  # row 6
    folder = base_to_parquet(
        model, tmp_path / "m", {"forces": {"position": pa.array(positions, pa.float64())}}
    )
    problem = only(load_error(folder), "forces.parquet", 6, "position")
    assert problem.value == shown
    assert problem.expected == "a finite number"


def test_out_of_range_values_are_quoted_as_stored(model, tmp_path):
    # 1e13 N·mm is the moment limit (readers.ranges): 1e20 kN·m is far beyond it.
    moments = pa.array([0.0, 30.0, 1.0e20] + [0.0] * 9, pa.float64())
    coordinates = pa.array([0, 4, 80_000_000], pa.int64())  # m: 8e10 mm, past 1e10 mm
    folder = base_to_parquet(
        model, tmp_path / "m", {"forces": {"M": moments}, "nodes": {"x": coordinates}}
    )
    error = load_error(folder)
    assert only(error, "forces.parquet", 4, "M").value == "1e+20"
    assert only(error, "nodes.parquet", 4, "x").value == "80000000"


def test_float32_and_decimal_numbers_are_read_as_stored(model, tmp_path):
    import decimal

    folder = base_to_parquet(
        model,
        tmp_path / "m",
        {
            "nodes": {"z": pa.array([3.0, 3.0, 3.0], pa.float32())},
            "sections": {"tf": pa.array([decimal.Decimal("13.000")], pa.decimal128(6, 3))},
        },
    )
    loaded = readers.load_model(folder)
    assert loaded.sections["tf"].tolist() == [13.0]
    assert loaded.nodes["z"].tolist() == [3000.0] * 3


def test_position_beyond_its_element_is_quoted_as_stored(model, tmp_path):
    positions = pa.array([0.0, 4.5] + [4.0, 0.0, 2.0, 4.0] + [0.0, 2.0, 4.0] * 2, pa.float64())
    folder = base_to_parquet(model, tmp_path / "m", {"forces": {"position": positions}})
    problem = only(load_error(folder), "forces.parquet", 3, "position")
    assert problem.value == "4.5"


def test_invalid_utf8_in_an_id_column_is_named_at_its_row(model, tmp_path):
    # Text claimed as UTF-8 (read as a dictionary), and plain bytes in a small table.
    raw = [b"E1", b"E1", b"E1", b"E\xff2"] + [b"E2"] * 2 + [b"E1"] * 3 + [b"E2"] * 3
    ids = pa.array(raw, pa.binary()).view(pa.string())
    nodes = pa.array([b"N1", b"N2", b"N\xe43"], pa.binary())
    folder = base_to_parquet(
        model, tmp_path / "m", {"forces": {"element": ids}, "nodes": {"id": nodes}}
    )
    error = load_error(folder)
    problem = only(error, "forces.parquet", 5, "element")
    assert problem.value == "E\\xff2"
    assert "UTF-8" in problem.expected
    assert only(error, "nodes.parquet", 4, "id").value == "N\\xe43"


@pytest.mark.parametrize(
    "damage",
    [
        lambda raw: b"element,combination,position,M\nE1,C1,0,0\n",  # a CSV named .parquet
        lambda raw: raw[: len(raw) // 2],  # cut short
        lambda raw: b"",
    ],
)
def test_a_file_that_is_no_parquet_exits_2_without_traceback(model, tmp_path, damage):
    folder = base_to_parquet(model, tmp_path / "m")
    path = folder / "forces.parquet"
    path.write_bytes(damage(path.read_bytes()))
    problem = only(load_error(folder), "forces.parquet", None, None)
    assert "a Parquet file" in problem.expected
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "r")])
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert "forces.parquet" in result.stderr


def test_a_missing_column_names_the_columns_there_are(model, tmp_path):
    model.drop_column("forces", "M")
    folder = base_to_parquet(model, tmp_path / "m")
    problem = only(load_error(folder), "forces.parquet", 1, "M")
    assert "'position'" in problem.expected


def test_no_records_is_refused(model, tmp_path):
    del model.tables["forces"][1:]
    folder = base_to_parquet(model, tmp_path / "m")
    assert "records" in only(load_error(folder), "forces.parquet", None, None).expected


# ---- a folder of Parquet files -----------------------------------------------------------------


def write_dataset(model, folder: Path) -> Path:
    """Write the base model's forces as forces/combination=<name>/part-0.parquet."""
    base_to_parquet(model, folder)
    forces = pq.read_table(folder / "forces.parquet")
    (folder / "forces.parquet").unlink()
    for name in dict.fromkeys(forces.column("combination").to_pylist()):
        part = folder / "forces" / f"combination={name}"
        part.mkdir(parents=True)
        mine = forces.filter(pa.compute.equal(forces.column("combination"), name))
        pq.write_table(mine.drop_columns(["combination"]), part / "part-0.parquet")
    settings = (folder / "flangewise.toml").read_text(encoding="utf-8")
    settings = settings.replace('forces = "forces.parquet"', 'forces = "forces"')
    (folder / "flangewise.toml").write_text(settings, encoding="utf-8")
    return folder


def test_a_folder_of_parquet_files_loads_like_one_table(model, tmp_path):
    folder = write_dataset(model, tmp_path / "m")
    csv_model = model.load()
    assert_same_model(csv_model, readers.load_model(folder))


def test_a_problem_in_a_folder_names_its_file_and_row(model, tmp_path):
    model.set("forces", row=10, column="M", value="")  # the 3rd record of C2: row 4 there
    folder = write_dataset(model, tmp_path / "m")
    problem = only(load_error(folder), "forces/combination=C2/part-0.parquet", 4, "M")
    assert problem.value == ""


def test_only_the_forces_table_may_be_a_folder(model, tmp_path):
    folder = base_to_parquet(model, tmp_path / "m")
    (folder / "nodes.parquet").unlink()
    (folder / "nodes.parquet").mkdir()
    problem = only(load_error(folder), "nodes.parquet", None, None)
    assert "is a folder" in problem.expected


def test_folder_names_give_text_exactly(model, tmp_path):
    # "combination=007" is the combination "007", not 7.
    model.tables["forces"] = [model.tables["forces"][0]] + [
        [e, "007" if c == "C1" else "7", p, m] for e, c, p, m in model.tables["forces"][1:]
    ]
    folder = write_dataset(model, tmp_path / "m")
    loaded = readers.load_model(folder)
    assert loaded.combinations == ["007", "7"]
    assert np.array_equal(loaded.forces["M"], model.load().forces["M"])


def test_folders_come_in_natural_order(model, tmp_path):
    # "C10" after "C2", as a person numbers them (a plain sort puts C10 first).
    model.tables["forces"] = [model.tables["forces"][0]] + [
        [e, "C2" if c == "C1" else "C10", p, m] for e, c, p, m in model.tables["forces"][1:]
    ]
    folder = write_dataset(model, tmp_path / "m")
    assert readers.load_model(folder).combinations == ["C2", "C10"]


def test_a_stored_dictionary_gives_combinations_in_the_order_rows_name_them(model, tmp_path):
    # A dictionary as a dataframe library may store it: sorted otherwise, with a value no row
    # uses ("Z"). The combinations are those the rows name, in the order they first name them.
    names = [row[1] for row in model.tables["forces"][1:]]  # C1 x 6, then C2 x 6
    where = {"Z": 0, "C2": 1, "C1": 2}
    combos = pa.DictionaryArray.from_arrays(
        pa.array([where[n] for n in names], pa.int32()), pa.array(["Z", "C2", "C1"])
    )
    folder = base_to_parquet(model, tmp_path / "m", {"forces": {"combination": combos}})
    loaded = readers.load_model(folder)
    assert loaded.combinations == ["C1", "C2"]
    assert_same_model(model.load(), loaded)
