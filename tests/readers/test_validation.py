"""Input validation: each broken model names the file, the spreadsheet row and the column.

Each test starts from the valid base model of ``conftest.py`` and breaks one thing. Rows count as
a spreadsheet shows them: the header is row 1, the first data row is row 2.
"""

from __future__ import annotations

import pytest
from flangewise import readers


def test_base_model_loads(model):
    loaded = model.load()
    assert list(loaded.nodes.index) == ["N1", "N2", "N3"]
    assert list(loaded.elements.index) == ["E1", "E2"]
    # 4 m elements (nodes 4 m apart in the input), in mm.
    assert loaded.elements["length"].tolist() == [4000.0, 4000.0]
    assert loaded.combinations == ["C1", "C2"]
    assert len(loaded.forces) == 12


def test_missing_file(model):
    del model.tables["elements"]
    problem = model.expect_problem("elements.csv", row=None, column=None)
    assert "elements table" in problem.expected


def test_missing_column(model):
    model.drop_column("nodes", "z")
    # The header is row 1: a missing column is reported there.
    problem = model.expect_problem("nodes.csv", row=1, column="z")
    assert "column 'z'" in problem.expected


def test_empty_value(model):
    model.set("nodes", row=3, column="x", value="")
    problem = model.expect_problem("nodes.csv", row=3, column="x")
    assert problem.value == ""
    assert problem.expected == "a number"


def test_non_numeric_value(model):
    model.set("forces", row=4, column="M", value="forty")
    problem = model.expect_problem("forces.csv", row=4, column="M")
    assert problem.value == "forty"
    assert problem.expected == "a number"


def test_duplicate_id(model):
    model.tables["nodes"].append(["N1", "12.0", "0.0", "3.0"])  # row 5 repeats row 2's id
    problem = model.expect_problem("nodes.csv", row=5, column="id")
    assert problem.value == "N1"
    assert "row 2" in problem.expected


def test_element_names_unknown_node(model):
    model.set("elements", row=3, column="end", value="N9")
    problem = model.expect_problem("elements.csv", row=3, column="end")
    assert problem.value == "N9"


def test_element_names_unknown_section(model):
    model.set("elements", row=2, column="section", value="S9")
    problem = model.expect_problem("elements.csv", row=2, column="section")
    assert problem.value == "S9"


def test_zero_length_element(model):
    model.set("elements", row=3, column="end", value="N2")  # E2 from N2 to N2
    problem = model.expect_problem("elements.csv", row=3, column="end")
    assert "zero-length" in problem.expected


def test_two_nodes_at_the_same_point(model):
    model.tables["nodes"].append(["N4", "4.0", "0.0", "3.0"])  # row 5, where N2 (row 3) is
    problem = model.expect_problem("nodes.csv", row=5, column="id")
    assert problem.value == "N4"
    assert "'N2' (row 3)" in problem.expected


def test_position_outside_its_element(model):
    # E1 is 4 m long; 4.5 m is past its end by far more than export rounding.
    model.set("forces", row=3, column="position", value="4.5")
    problem = model.expect_problem("forces.csv", row=3, column="position")
    assert problem.value == "4.5"


def test_fewer_than_two_positions_in_a_combination(model):
    # Keep only E2's first C2 row (row 11): one station is no moment diagram.
    model.tables["forces"] = model.tables["forces"][:11] + model.tables["forces"][13:]
    assert model.tables["forces"][10] == ["E2", "C2", "0.0", "-20.0"]
    problem = model.expect_problem("forces.csv", row=11, column="element")
    assert problem.value == "E2"
    assert "'C2'" in problem.expected


def test_element_missing_from_a_combination_others_have(model):
    # Drop all of E2's C2 rows (rows 11 to 13). No row of the file holds what is missing, so the
    # problem names the element and the combination instead of a row.
    model.tables["forces"] = model.tables["forces"][:10]
    problem = model.expect_problem("forces.csv", row=None, column="element")
    assert problem.value == "E2"
    assert "'C2'" in problem.expected


def test_unknown_flange_word(model):
    model.set("braces", row=2, column="flange", value="middle")
    problem = model.expect_problem("braces.csv", row=2, column="flange")
    assert problem.value == "middle"
    assert "top" in problem.expected


def test_brace_on_unknown_node(model):
    model.tables["braces"].append(["N7", "bottom"])  # row 3
    problem = model.expect_problem("braces.csv", row=3, column="node")
    assert problem.value == "N7"


def test_non_positive_dimension(model):
    model.set("sections", row=2, column="tw", value="0")
    problem = model.expect_problem("sections.csv", row=2, column="tw")
    assert "positive" in problem.expected


def test_flange_thicker_than_half_the_depth(model):
    model.set("sections", row=2, column="tf", value="250")  # 2 x 250 mm > 400 mm depth
    problem = model.expect_problem("sections.csv", row=2, column="tf")
    assert "half the depth" in problem.expected


@pytest.mark.parametrize(
    "fy",
    [
        "50",  # a yield stress in ksi typed into an MPa file
        "50000",  # the same in psi
    ],
)
def test_yield_stress_outside_150_to_1000_mpa(model, fy):
    model.set("sections", row=2, column="fy", value=fy)
    problem = model.expect_problem("sections.csv", row=2, column="fy")
    assert "units mistake" in problem.expected


def test_unknown_unit_in_the_settings_file(model):
    model.settings = '[units]\nlength = "furlong"\n'
    problem = model.expect_problem("flangewise.toml", row=None, column="units.length")
    assert problem.value == "furlong"
    assert "'ft'" in problem.expected  # the known units are listed


def test_several_problems_are_all_reported(model):
    model.set("nodes", row=3, column="x", value="four")
    model.set("elements", row=2, column="section", value="S9")
    model.set("sections", row=2, column="tw", value="-8")
    model.set("forces", row=4, column="M", value="")
    model.set("braces", row=2, column="flange", value="middle")
    error = model.load_error()
    places = {(p.file, p.row, p.column) for p in error.problems}
    assert {
        ("nodes.csv", 3, "x"),
        ("elements.csv", 2, "section"),
        ("sections.csv", 2, "tw"),
        ("forces.csv", 4, "M"),
        ("braces.csv", 2, "flange"),
    } <= places
    assert len(error.report().splitlines()) >= 5


def test_row_with_too_many_fields_names_the_row(model):
    folder = model.write()
    lines = (folder / "nodes.csv").read_text(encoding="utf-8").splitlines()
    # A decimal comma in a comma-delimited file splits one number into two fields (row 3).
    lines[2] = "N2,4,0,0.0,3.0"
    (folder / "nodes.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(readers.InputError) as info:
        readers.load_model(folder)
    problem = info.value.problems[0]
    assert (problem.file, problem.row) == ("nodes.csv", 3)
    assert "4 fields" in problem.expected


def test_model_folder_that_does_not_exist(tmp_path):
    with pytest.raises(readers.InputError) as info:
        readers.load_model(tmp_path / "nowhere")
    assert "folder" in info.value.report()
