"""Problems quote numeric cells exactly as the file wrote them, never as parsed or converted.

A numeric column is read as float64, so ``6`` comes back as 6.0 and ``1e300`` as 1e+300; a problem
that quoted those would show the user a value they never typed. Each test starts from the valid base
model of ``conftest.py`` (4 m elements, stations at 0, 2 and 4 m; section S1 400 x 180, tf 13,
tw 8, r 10, fy 350), writes one cell in a form a float would not give back, and checks the quote.
"""

from __future__ import annotations

import pytest


def only_problem(model, file: str, row: int, column: str):
    error = model.load_error()
    located = [(p.file, p.row, p.column) for p in error.problems]
    assert located == [(file, row, column)], error.report()
    return error.problems[0]


def test_coordinate_out_of_range_is_quoted_as_written(model):
    model.set("nodes", row=3, column="x", value="1e300")
    assert only_problem(model, "nodes.csv", 3, "x").value == "1e300"


def test_position_beyond_its_element_is_quoted_as_written(model):
    # 6 m along a 4 m element.
    model.set("forces", row=4, column="position", value="6")
    assert only_problem(model, "forces.csv", 4, "position").value == "6"


def test_moment_out_of_range_is_quoted_as_written(model):
    model.set("forces", row=3, column="M", value="5e8")
    assert only_problem(model, "forces.csv", 3, "M").value == "5e8"


@pytest.mark.parametrize(
    ("column", "written"),
    [
        ("d", "0"),  # not a positive dimension
        ("tf", "250"),  # within the plate range, but 2 x 250 mm >= the 400 mm depth
        ("tw", "200"),  # within the plate range, but wider than the 180 mm flange
        ("r", "-1"),  # a negative root radius
        ("r", "90"),  # more than the (180 - 8) / 2 = 86 mm clear outstand
    ],
)
def test_implausible_plate_is_quoted_as_written(model, column, written):
    model.set("sections", row=2, column=column, value=written)
    assert only_problem(model, "sections.csv", 2, column).value == written


def test_negative_property_override_is_quoted_as_written(model):
    table = model.tables["sections"]
    table[0].append("Cw")
    table[1].append("-5")
    assert only_problem(model, "sections.csv", 2, "Cw").value == "-5"


def test_axial_force_too_big_once_converted_is_quoted_as_written(model):
    # 1e308 kN is 1e311 N: beyond float64 once converted.
    model.tables["forces"][0].append("N")
    for row in model.tables["forces"][1:]:
        row.append("0")
    model.set("forces", row=2, column="N", value="1e308")
    assert only_problem(model, "forces.csv", 2, "N").value == "1e308"


def test_yield_stress_is_quoted_as_written_and_converted_in_the_expectation(model):
    model.settings = '[units]\nstress = "ksi"\n'
    model.set("sections", row=2, column="fy", value="355")
    problem = only_problem(model, "sections.csv", 2, "fy")
    assert problem.value == "355"
    # NIST SP 811 (2008), Appendix B.8: 1 ksi = 6.894 757 MPa, so 355 ksi = 2447.64 MPa.
    assert "355 ksi = 2447.64 MPa" in problem.expected


def test_station_positions_are_quoted_as_written(model):
    # E1's first C1 station written with more digits than a short float format keeps.
    model.set("forces", row=2, column="position", value="0.1234567")
    model.set("forces", row=4, column="position", value="4.000")
    model.set("forces", row=8, column="position", value="0.1234567")  # E1 in C2 too
    problem = only_problem(model, "forces.csv", 2, "element")
    assert "positions from 0.1234567 to 4.000 (3 rows)" in problem.expected
