"""Model rules the readers enforce before anything uses the numbers.

Each test starts from the valid base model of ``conftest.py`` (E1 from N1 to N2 and E2 from N2 to
N3, 4 m each, stations at 0, 2 and 4 m in combinations C1 and C2) and breaks one thing. Rows count
as a spreadsheet shows them: the header is row 1, the first data row is row 2. The ranges and
tolerances tested are the ones ``readers/load.py`` and ``readers/model.py`` document as common
practice.
"""

from __future__ import annotations

import pytest
from flangewise import readers


def problems_of(error: readers.InputError) -> list[tuple[str, int | None, str | None]]:
    return [(p.file, p.row, p.column) for p in error.problems]


def forces_rows(model, element: str, combination: str) -> list[list[str]]:
    return [r for r in model.tables["forces"][1:] if r[0] == element and r[1] == combination]


# ---- element ids match exactly as text ---------------------------------------------------------


@pytest.mark.parametrize(("element_id", "in_forces"), [("007", "7"), ("7", "007")])
def test_element_ids_match_exactly_as_text(model, element_id, in_forces):
    # "007" and "7" are different ids: no guessing that a parser dropped the zeros.
    model.set("elements", row=2, column="id", value=element_id)
    for row in model.tables["forces"][1:]:
        if row[0] == "E1":
            row[0] = in_forces
    error = model.load_error()
    assert problems_of(error) == [("forces.csv", 2, "element")]
    assert error.problems[0].value == in_forces
    assert "6 rows" in error.problems[0].expected  # one problem for the id, not one per row


def test_all_digit_element_id_that_matches_nothing_is_one_problem(model):
    for row in model.tables["forces"][1:]:
        if row[0] == "E2":
            row[0] = "99"
    error = model.load_error()
    assert problems_of(error) == [("forces.csv", 5, "element")]
    assert error.problems[0].value == "99"


def test_thirty_digit_element_id_is_one_problem_quoted_as_written(model):
    long_id = "123456789012345678901234567890"
    model.tables["forces"][5][0] = long_id  # row 6, one of E2's C1 rows
    error = model.load_error()
    located = [
        p for p in error.problems if (p.file, p.row, p.column) == ("forces.csv", 6, "element")
    ]
    assert [p.value for p in located] == [long_id]
    # The element E2 keeps its other stations; the missing one is not a second problem.
    assert problems_of(error) == [("forces.csv", 6, "element")]


def test_rows_naming_an_unknown_element_add_no_station_problems(model):
    for row in forces_rows(model, "E2", "C1"):
        row[0] = "E9"
    error = model.load_error()
    # E9 once; E2 now lacks C1 rows, which other elements have: that is E2's own problem.
    assert ("forces.csv", 5, "element") in problems_of(error)
    assert sum(p.value == "E9" for p in error.problems) == 1


# ---- a station at each end of every element ---------------------------------------------------


def test_stations_short_of_both_ends_is_one_problem_naming_element_and_positions(model):
    # E1 (4 m) sampled from 0.4 m to 3.6 m only, in both combinations: the end moments, κ and
    # the demand would come from inner stations.
    for c in ("C1", "C2"):
        first, _, last = forces_rows(model, "E1", c)
        first[2], last[2] = "0.4", "3.6"
    error = model.load_error()
    assert problems_of(error) == [("forces.csv", 2, "element")]
    problem = error.problems[0]
    assert problem.value == "E1"
    assert "'C1'" in problem.expected
    assert "0.4 to 3.6" in problem.expected  # the file's own units (m)
    assert "0 and 4 m" in problem.expected
    assert "1 more combination" in problem.expected


def test_stations_short_of_the_ends_in_fractions_are_named_in_fractions(model):
    model.settings = '[forces]\npositions = "fraction"\n'
    for row in model.tables["forces"][1:]:
        row[2] = {"0.0": "0.0", "2.0": "0.5", "4.0": "1.0"}[row[2]]
    first, _, last = forces_rows(model, "E2", "C2")
    first[2], last[2] = "0.1", "0.9"
    error = model.load_error()
    assert problems_of(error) == [("forces.csv", 11, "element")]
    assert "0.1 to 0.9" in error.problems[0].expected
    assert "0 and 1 as fractions" in error.problems[0].expected


@pytest.mark.parametrize(("written", "snapped_mm"), [("0.003", 0.0), ("3.997", 4000.0)])
def test_station_within_the_tolerance_of_an_end_is_snapped_onto_it(model, written, snapped_mm):
    # Tolerance for a 4 m element: 0.1 % = 4 mm (not less than 1 mm): 3 mm off is the end.
    first, _, last = forces_rows(model, "E1", "C1")
    (first if snapped_mm == 0.0 else last)[2] = written
    loaded = model.load()
    e1c1 = (loaded.forces["element"] == "E1") & (loaded.forces["combination"] == "C1")
    assert snapped_mm in loaded.forces.loc[e1c1, "position"].tolist()


def test_station_beyond_the_tolerance_of_its_end_is_refused(model):
    # 5 mm short of the end of a 4 m element: more than its 4 mm tolerance.
    _, _, last = forces_rows(model, "E1", "C2")
    last[2] = "3.995"
    error = model.load_error()
    # Named at the pair's first row (E1's C2 rows are rows 8 to 10).
    assert problems_of(error) == [("forces.csv", 8, "element")]
    assert "3.995" in error.problems[0].expected


# ---- supports: any restraint text --------------------------------------------------------------


@pytest.mark.parametrize("text", ["DX DZ", "TX", "1 1 1 0 0 0", "fixed", "pinned", "ux uy uz"])
def test_restrains_accepts_any_text_and_carries_it_unchanged(model, text):
    model.set("supports", row=2, column="restrains", value=text)
    model.set("supports", row=3, column="restrains", value="")
    loaded = model.load()
    assert loaded.supports["restrains"].tolist() == [text, "all"]


# ---- plausibility ranges ------------------------------------------------------------------------


@pytest.mark.parametrize("value", ["inf", "1e300", "1.2e29", "-2e7"])
def test_implausible_node_coordinate_is_one_problem(model, value):
    # -2e7 m is 20 000 km from the origin: beyond even map-grid coordinates (10 000 km).
    model.set("nodes", row=3, column="x", value=value)  # N2, shared by E1 and E2
    error = model.load_error()
    # The elements at N2 and their forces add nothing: one defect, one problem.
    assert problems_of(error) == [("nodes.csv", 3, "x")]
    assert float(error.problems[0].value) == float(value)


@pytest.mark.parametrize(
    ("column", "value", "words"),
    [
        ("b", "inf", None),
        ("d", "1.2e29", "50 to 5000 mm"),
        ("b", "2500", "25 to 2000 mm"),
        ("tf", "0.5", "1 to 250 mm"),
        ("r", "inf", None),
        ("r", "200", "0 to 150 mm"),
        ("r", "90", "outstand"),  # (180 - 8) / 2 = 86 mm of clear flange outstand
    ],
)
def test_implausible_section_plate_is_one_problem(model, column, value, words):
    model.set("sections", row=2, column=column, value=value)
    error = model.load_error()
    assert problems_of(error) == [("sections.csv", 2, column)]
    if words is not None:
        assert words in error.problems[0].expected


@pytest.mark.parametrize(
    ("value", "factor"),
    [
        ("0.4", "1000"),  # the depth in metres in a file whose [units] section is mm
        ("16", "25.4"),  # the depth in inches
    ],
)
def test_section_plate_off_by_a_unit_factor_names_the_units_key(model, value, factor):
    model.set("sections", row=2, column="d", value=value)
    error = model.load_error()
    assert problems_of(error) == [("sections.csv", 2, "d")]
    expected = error.problems[0].expected
    assert "units mistake" in expected and factor in expected
    assert "[units] section" in expected


def test_infinite_property_override_is_refused(model):
    table = model.tables["sections"]
    table[0].append("Cw")
    table[1].append("inf")
    error = model.load_error()
    assert problems_of(error) == [("sections.csv", 2, "Cw")]


def test_moment_beyond_any_section_is_a_units_problem(model):
    # 5e8 in a kN·m file: the value was written in N·mm (500 kN·m).
    model.set("forces", row=3, column="M", value="5e8")
    error = model.load_error()
    assert problems_of(error) == [("forces.csv", 3, "M")]
    assert "[units] moment" in error.problems[0].expected


def test_map_grid_coordinates_are_accepted(model):
    # A model drawn in map-grid coordinates (a northing of 7 200 km) is a real model.
    for row in model.tables["nodes"][1:]:
        row[2] = "7200000.0"
    assert model.load().nodes["y"].tolist() == [7.2e9] * 3


def test_break_at_an_unknown_node_names_the_settings_key(model):
    model.settings = '[members]\nbreaks = ["N2", "N9"]\n'
    error = model.load_error()
    assert [(p.column, p.value) for p in error.problems] == [("members.breaks", "N9")]
    assert error.problems[0].file.endswith("flangewise.toml")


# ---- combinations ------------------------------------------------------------------------------


def test_rows_of_combinations_left_out_are_still_validated(model):
    model.settings = '[forces]\ncombinations = ["C1"]\n'
    model.set("forces", row=9, column="M", value="forty")  # a C2 row
    error = model.load_error()
    assert problems_of(error) == [("forces.csv", 9, "M")]


def test_selected_combinations_are_kept_after_validation(model):
    model.settings = '[forces]\ncombinations = ["C2"]\n'
    loaded = model.load()
    assert loaded.combinations == ["C2"]
    assert len(loaded.forces) == 6


def test_unknown_combination_on_the_command_line_names_the_option(model):
    with pytest.raises(readers.InputError) as info:
        readers.load_model(model.write(), combinations=("c1",))
    problem = info.value.problems[0]
    assert (problem.file, problem.row, problem.column, problem.value) == (
        "--combination",
        None,
        None,
        "c1",
    )
    assert "'C1', 'C2'" in problem.expected  # the valid names
    assert "closest: 'C1'" in problem.expected
    assert "None" not in info.value.report()


def test_unknown_combination_in_the_settings_names_the_key(model):
    model.settings = '[forces]\ncombinations = ["ULS9"]\n'
    error = model.load_error()
    problem = error.problems[0]
    assert problem.file.endswith("flangewise.toml") and problem.value == "ULS9"
    assert "[forces] combinations" in problem.expected


# ---- one defect, one problem --------------------------------------------------------------------


def test_zero_length_element_is_one_problem(model):
    model.set("elements", row=3, column="end", value="N2")  # E2 from N2 to N2
    error = model.load_error()
    assert problems_of(error) == [("elements.csv", 3, "end")]


def test_element_at_an_unknown_node_is_one_problem(model):
    model.set("elements", row=3, column="end", value="N9")
    error = model.load_error()
    assert problems_of(error) == [("elements.csv", 3, "end")]
