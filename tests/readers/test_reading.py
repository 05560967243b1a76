"""Reading the CSV tables strictly: no dirty cell or row is read as something else.

Each test starts from the valid base model of ``conftest.py`` and dirties one file. Rows count as a
spreadsheet shows them: the header is row 1, the first data row is row 2.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from flangewise import readers
from flangewise.readers.csv_parse import cell_text
from flangewise.readers.errors import ProblemList
from flangewise.readers.settings import read_settings
from flangewise.readers.tables import numeric, read_table

# --- field counts -------------------------------------------------------------------------------


def test_decimal_comma_row_is_refused_when_the_file_has_unmapped_columns(model):
    # An extra column nobody maps; row 4 written with a decimal comma splits 59.980 in two.
    model.tables["forces"][0].append("note")
    for row in model.tables["forces"][1:]:
        row.append("")
    model.replace_line("forces", 4, "E1,C1,4.0,59,980,")
    problem = model.expect_problem("forces.csv", row=4, column=None)
    assert problem.value == "E1,C1,4.0,59,980,"
    assert "5 fields" in problem.expected and "6" in problem.expected
    assert "decimal comma" in problem.expected


def test_long_first_data_row_is_one_problem_at_row_2(model):
    model.replace_line("nodes", 2, "N1,0,0,0.0,3.0")
    problems = model.problems_of("nodes.csv")
    assert [(p.row, p.column) for p in problems] == [(2, None)]
    assert "4 fields" in problems[0].expected and "has 5" in problems[0].expected


def test_delimiter_inside_an_unquoted_name_is_a_field_count_problem(model):
    model.replace_line("elements", 3, "E,5,N2,N3,S1")
    problem = model.expect_problem("elements.csv", row=3, column=None)
    assert problem.value == "E,5,N2,N3,S1"
    assert "inside an unquoted name" in problem.expected


def test_quoted_name_with_the_delimiter_is_read_whole(model):
    model.set("elements", row=3, column="id", value="E,5")  # the csv writer quotes it
    for row in model.tables["forces"][1:]:
        row[0] = "E,5" if row[0] == "E2" else row[0]
    loaded = model.load()
    assert list(loaded.elements.index) == ["E1", "E,5"]
    assert list(loaded.forces["element"].cat.categories) == ["E1", "E,5"]


def test_row_missing_its_last_field_is_refused(model):
    # Without the check, fy would silently take the settings' default instead of the file's 355.
    model.replace_line("sections", 2, "S1,400,180,13,8,10")
    problem = model.expect_problem("sections.csv", row=2, column=None)
    assert "7 fields" in problem.expected and "has 6" in problem.expected
    assert "missing field" in problem.expected


def test_many_ragged_rows_list_a_few_and_count_the_rest(model):
    text = model.text("forces").splitlines()
    body = [text[0]] + [line.replace(".0", ",0") for line in text[1:]]  # 12 rows, all ragged
    model.raw["forces.csv"] = ("\n".join(body) + "\n").encode()
    error = model.load_error()
    listed = [p.row for p in error.problems if p.file == "forces.csv"]
    assert listed == [2, 3, 4, 5, 6]
    assert error.more == 7
    assert "7 more" in error.report()


# --- numbers ------------------------------------------------------------------------------------


@pytest.mark.parametrize("text", ["inf", "-inf", "1e309", "nan", "NaN", "Infinity"])
def test_non_finite_number_is_an_input_error(model, text):
    model.set("nodes", row=3, column="x", value=text)
    problem = model.expect_problem("nodes.csv", row=3, column="x")
    assert problem.value == text
    assert problem.expected == "a finite number"


def test_non_finite_number_in_the_big_table(model):
    model.set("forces", row=9, column="M", value="1e309")
    problem = model.expect_problem("forces.csv", row=9, column="M")
    assert problem.value == "1e309"
    assert problem.expected == "a finite number"


def test_non_finite_cell_is_nan_once_reported(model):
    # "TRUE" sends the table down the careful path, where "1e309" parses to infinity.
    model.set("forces", row=5, column="position", value="TRUE")
    model.set("forces", row=6, column="M", value="1e309")
    settings = read_settings(model.write())
    problems = ProblemList()
    forces = read_table(settings, "forces", problems)
    assert np.isnan(forces["M"].iloc[4])
    readers_numeric = numeric(forces, "M", "forces.csv", "M", problems)
    assert np.isnan(readers_numeric.iloc[4])
    assert [(p.row, p.value, p.expected) for p in problems.items] == [
        (6, "1e309", "a finite number")
    ]


def test_true_is_not_a_number(model):
    model.set("sections", row=2, column="tf", value="TRUE")
    problem = model.expect_problem("sections.csv", row=2, column="tf")
    assert problem.value == "TRUE"
    assert problem.expected == "a number"


def test_bad_cell_is_quoted_as_written(model):
    model.set("forces", row=5, column="M", value="1,5")  # quoted by the writer: one field
    model.set("forces", row=6, column="M", value=" NaN ")
    error = model.load_error()
    got = {(p.row, p.value, p.expected) for p in error.problems if p.column == "M"}
    assert got == {(5, "1,5", "a number"), (6, " NaN ", "a finite number")}


def decimal_commas(model) -> None:
    """Turn the model into a ';'-delimited file set with decimal commas."""
    model.settings = '[csv]\ndelimiter = ";"\ndecimal = ","\n'
    for rows in model.tables.values():
        for row in rows[1:]:
            row[:] = [cell.replace(".", ",") for cell in row]


def test_decimal_point_in_a_decimal_comma_file_is_not_a_number(model):
    # "1.500" under decimal "," may mean 1500 (a thousands point): never read it as 1.5.
    decimal_commas(model)
    model.set("nodes", row=3, column="x", value="1.500")
    folder = model.write(delimiter=";")
    with pytest.raises(readers.InputError) as info:
        readers.load_model(folder)
    (problem,) = info.value.problems
    assert (problem.row, problem.column, problem.value) == (3, "x", "1.500")


def test_numbers_with_blanks_and_decimal_commas_read_exactly(model):
    decimal_commas(model)
    model.set("nodes", row=3, column="x", value=" 4,0 ")
    model.set("sections", row=2, column="tf", value="12,75")
    folder = model.write(delimiter=";")
    loaded = readers.load_model(folder)
    assert loaded.nodes["x"].tolist() == [0.0, 4000.0, 8000.0]
    assert loaded.sections["tf"].tolist() == [12.75]


# --- empty tables and files ---------------------------------------------------------------------


# A sections table with no rows is allowed: elements may name catalogue shapes
# (tests/readers/test_catalogue.py).
@pytest.mark.parametrize("table", ["nodes", "elements", "forces"])
def test_header_without_data_rows_is_one_problem(model, table):
    model.tables[table] = model.tables[table][:1]
    error = model.load_error()
    assert [(p.file, p.row) for p in error.problems] == [(f"{table}.csv", None)]
    assert "no data rows" in error.problems[0].expected


@pytest.mark.parametrize("table", ["braces", "supports"])
def test_braces_and_supports_may_be_empty(model, table):
    model.tables[table] = model.tables[table][:1]
    loaded = model.load()
    assert len(getattr(loaded, table)) == 0


def test_zero_byte_file_is_named_in_our_words(model):
    model.raw["nodes.csv"] = b""
    (problem,) = model.problems_of("nodes.csv")
    assert "empty" in problem.expected
    assert "No columns" not in problem.expected


# --- ids are text -------------------------------------------------------------------------------


def test_ids_keep_their_exact_text(model):
    # "007", "7" and "7.0" are three different nodes; NA, None, null and nan are names.
    model.tables["nodes"] = [
        ["id", "x", "y", "z"],
        ["007", "0.0", "0.0", "3.0"],
        ["7", "4.0", "0.0", "3.0"],
        ["7.0", "8.0", "0.0", "3.0"],
        ["NA", "0.0", "5.0", "3.0"],
        ["None", "4.0", "5.0", "3.0"],
        ["null", "8.0", "5.0", "3.0"],
        ["nan", "0.0", "9.0", "3.0"],
        [" inf ", "4.0", "9.0", "3.0"],
        ["123456789012345678901234567890", "8.0", "9.0", "3.0"],
    ]
    model.tables["elements"] = [
        ["id", "start", "end", "section"],
        ["1", "007", "7", "S1"],
        ["01", "7", "7.0", "S1"],
    ]
    model.tables["braces"] = [["node", "flange"], ["NA", "top"], ["7", "top"]]
    model.tables["supports"] = [["node", "restrains"], ["007", "all"], ["7.0", "all"]]
    for row in model.tables["forces"][1:]:
        row[0] = {"E1": "1", "E2": "01"}[row[0]]
    loaded = model.load()
    assert list(loaded.nodes.index) == [
        "007",
        "7",
        "7.0",
        "NA",
        "None",
        "null",
        "nan",
        "inf",
        "123456789012345678901234567890",
    ]
    assert loaded.elements[["start", "end"]].to_numpy().tolist() == [["007", "7"], ["7", "7.0"]]
    assert list(loaded.forces["element"].cat.categories) == ["1", "01"]
    assert loaded.braces["node"].tolist() == ["NA", "7"]
    assert loaded.supports["node"].tolist() == ["007", "7.0"]


def test_read_table_gives_text_ids_and_float_numbers(model):
    model.set("nodes", row=2, column="id", value=" 007 ")
    model.set("forces", row=2, column="combination", value="01")
    model.set("forces", row=3, column="combination", value="1")
    settings = read_settings(model.write())
    problems = ProblemList()
    nodes = read_table(settings, "nodes", problems)
    forces = read_table(settings, "forces", problems)
    assert not problems
    assert nodes["id"].dtype == object
    assert nodes["id"].tolist() == ["007", "N2", "N3"]
    assert nodes["x"].dtype == np.float64
    assert isinstance(forces["element"].dtype, pd.CategoricalDtype)
    assert forces["element"].cat.categories.dtype == object
    assert forces["combination"].tolist()[:3] == ["01", "1", "C1"]
    assert forces["M"].dtype == np.float64


def test_blank_id_is_missing(model):
    model.set("nodes", row=3, column="id", value="   ")
    problem = model.expect_problem("nodes.csv", row=3, column="id")
    assert problem.value == ""
    assert problem.expected == "a value"


# --- lines, encodings, headers ------------------------------------------------------------------


def test_empty_line_in_the_middle_is_named_at_its_true_row(model):
    lines = model.text("forces").splitlines()
    lines.insert(4, "")  # the empty line is spreadsheet row 5
    model.raw["forces.csv"] = ("\n".join(lines) + "\n").encode()
    problems = model.problems_of("forces.csv")
    assert [(p.row, p.column) for p in problems] == [(5, None)]
    assert "empty line" in problems[0].expected


def test_trailing_empty_lines_and_crlf_and_bom_are_fine(model):
    text = model.text("nodes").replace("\n", "\r\n") + "\r\n\r\n"
    model.raw["nodes.csv"] = b"\xef\xbb\xbf" + text.encode()
    loaded = model.load()
    assert list(loaded.nodes.index) == ["N1", "N2", "N3"]


def test_row_numbers_stay_true_after_a_quoted_line_break(model):
    # A name holding a line break is one spreadsheet row; the bad cell after it is on row 4.
    model.set("nodes", row=2, column="id", value="N\n1")
    model.set("nodes", row=4, column="x", value="eight")
    for row in model.tables["elements"][1:]:
        row[1] = "N\n1" if row[1] == "N1" else row[1]
    model.tables["supports"][1][0] = "N\n1"
    problem = model.expect_problem("nodes.csv", row=4, column="x")
    assert problem.value == "eight"


def test_invalid_utf8_is_named(model):
    model.raw["elements.csv"] = model.text("elements").replace("E2", "Tr\xe4ger").encode("latin-1")
    (problem,) = model.problems_of("elements.csv")
    assert "UTF-8" in problem.expected
    assert problem.row == 3


def test_binary_file_is_named(model):
    model.raw["sections.csv"] = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00"
    (problem,) = model.problems_of("sections.csv")
    assert "UTF-8 text" in problem.expected


def test_duplicate_header_name_is_refused(model):
    model.tables["nodes"][0][3] = "x"  # id, x, y, x: which x?
    problem = model.expect_problem("nodes.csv", row=1, column="x")
    assert "once" in problem.expected


def test_missing_file_names_its_settings_key(model):
    # The sections table may be left out (catalogue shapes, tests/readers/test_catalogue.py).
    del model.tables["forces"]
    problem = model.expect_problem("forces.csv", row=None, column=None)
    assert "(mapped by [files] forces)" in problem.expected


def test_missing_column_names_its_settings_key(model):
    model.drop_column("nodes", "y")
    problem = model.expect_problem("nodes.csv", row=1, column="y")
    assert "(mapped by [columns.nodes] y)" in problem.expected


def test_braces_file_named_in_the_settings_must_exist(model):
    del model.tables["braces"]
    model.settings = '[files]\nbraces = "brace.csv"\n'
    problem = model.expect_problem("brace.csv", row=None, column=None)
    assert "(mapped by [files] braces)" in problem.expected


def test_default_braces_and_supports_files_may_be_absent(model):
    del model.tables["braces"]
    del model.tables["supports"]
    loaded = model.load()
    assert len(loaded.braces) == 0 and len(loaded.supports) == 0


def test_no_library_warning_reaches_the_user(model):
    # Mixed ids over many rows made the old parser warn about mixed types per chunk.
    n = 120_000
    model.tables["elements"] = [["id", "start", "end", "section"], ["1", "N1", "N2", "S1"]]
    model.tables["elements"].append(["E2", "N2", "N3", "S1"])
    rows = [["element", "combination", "position", "M"]]
    for element in ("1", "E2"):
        rows += [[element, f"C{i}", str(k * 2.0), "1.0"] for i in range(n // 3) for k in range(3)]
    model.tables["forces"] = rows
    model.set("forces", row=len(rows), column="M", value="bad")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        error = model.load_error()
    assert [(p.row, p.value) for p in error.problems if p.column == "M"] == [(len(rows), "bad")]


def test_quoted_line_breaks_across_the_parallel_read_blocks(model):
    # Over 1 MB of forces (pyarrow reads in 1 MB blocks), every combination name holding a
    # quoted line break: a block may start inside a quoted value.
    rows = [["element", "combination", "position", "M"]]
    for i in range(10_000):
        for element in ("E1", "E2"):
            rows += [[element, f"Case\n{i:05d}", f"{k * 2.0}", f"{k + 0.5}"] for k in range(3)]
    model.tables["forces"] = rows
    assert len(model.text("forces").encode()) > 1 << 20
    loaded = model.load()
    assert len(loaded.forces) == 60_000
    assert loaded.forces["combination"].cat.categories[-1] == "Case\n09999"
    assert loaded.forces["M"].tolist()[-3:] == [0.5e6, 1.5e6, 2.5e6]


def test_a_quote_never_closed_is_named_in_our_words(model):
    model.replace_line("forces", 13, 'E2,"C2,4.0,0.0')  # the last row opens a quote
    problems = model.problems_of("forces.csv")
    assert [(p.row, p.value) for p in problems] == [(13, 'E2,"C2,4.0,0.0')]
    assert "double quote" in problems[0].expected
    assert "CSV parse error" not in str(problems[0])


def test_cell_text_quotes_cells_as_written(model):
    model.set("sections", row=2, column="tf", value="13")
    model.set("nodes", row=3, column="x", value=" 4.00 ")
    settings = read_settings(model.write())
    problems = ProblemList()
    sections = read_table(settings, "sections", problems)
    nodes = read_table(settings, "nodes", problems)
    assert sections["tf"].tolist() == [13.0]
    assert cell_text(sections, "tf", np.array([True])) == ["13"]
    later = nodes[nodes.index > 0]  # filtered: positions shift, records do not
    assert cell_text(later, "x", np.array([0])) == [" 4.00 "]
    assert cell_text(later, "id", np.array([False, True])) == ["N3"]
