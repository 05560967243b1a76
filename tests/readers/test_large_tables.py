"""The fast paths for big forces tables keep every check and every message.

Ids are encoded by the CSV parser as it reads, text is checked for UTF-8 only where it is read,
stations are counted on a dense (element, combination) table, or by sorting when the pairs far
outnumber the rows. Each test starts from the base model of ``conftest.py``.
"""

from __future__ import annotations

from flangewise import readers


def test_first_appearance_orders_combinations_even_when_blanks_merge_two_spellings(model):
    # C2's rows come first, one of them written " C2": the results keep the file's order.
    forces = model.tables["forces"]
    model.tables["forces"] = [forces[0], *forces[7:], *forces[1:7]]
    model.tables["forces"][1][1] = " C2"
    loaded = model.load()
    assert loaded.combinations == ["C2", "C1"]
    assert loaded.forces["combination"].astype(str).tolist()[:6] == ["C2"] * 6


def test_text_that_is_not_utf8_in_an_unread_column_is_left_alone(model):
    # A column nobody maps holds Latin-1 text: the values read are all UTF-8, the model loads.
    model.tables["forces"][0].append("note")
    for row in model.tables["forces"][1:]:
        row.append("ok")
    text = model.text("forces").replace("ok", "Tr\xe4ger", 1)
    model.raw["forces.csv"] = text.encode("latin-1")
    assert len(model.load().forces) == 12


def test_a_ragged_row_in_a_file_that_is_not_utf8_is_named_as_such(model, capfd):
    # Rows are located with their text; that text must be UTF-8 first (the parser would
    # otherwise print its own complaint and lose the row).
    lines = model.text("forces").splitlines()
    lines[3] = "E1,C1,4.0,40.0,extra"
    lines[6] = "E2,C1,4.0,0\xe9"
    model.raw["forces.csv"] = ("\n".join(lines) + "\n").encode("latin-1")
    problem = model.expect_problem("forces.csv", row=7, column=None)
    assert "UTF-8" in problem.expected
    assert capfd.readouterr().err == ""


def test_a_new_combination_on_every_row_is_refused_without_a_dense_table(model):
    # 600 elements, each in a combination of its own: a dense table would hold 600 x 600 pairs
    # per place for 1 800 rows. Every element lacks the other 599 combinations.
    n = 600
    model.tables["nodes"] = [["id", "x", "y", "z"]] + [
        [f"N{i}", str(4.0 * i), "0.0", "3.0"] for i in range(n + 1)
    ]
    model.tables["elements"] = [["id", "start", "end", "section"]] + [
        [f"E{i}", f"N{i}", f"N{i + 1}", "S1"] for i in range(n)
    ]
    model.tables["forces"] = [["element", "combination", "position", "M"]] + [
        [f"E{i}", f"C{i}", p, "1.0"] for i in range(n) for p in ("0.0", "2.0", "4.0")
    ]
    model.tables["braces"] = model.tables["braces"][:1]
    model.tables["supports"] = [["node", "restrains"], ["N0", "all"]]
    error = model.load_error()
    first = error.problems[0]
    assert (first.file, first.row, first.column, first.value) == (
        "forces.csv",
        None,
        "element",
        "E0",
    )
    assert "rows for combination 'C1'" in first.expected
    assert len(error.problems) + error.more == n * (n - 1)


def test_a_station_missing_at_one_end_is_found_among_many_rows(model):
    # The dense count: E2 lacks its end station in C2 only.
    model.set("forces", row=13, column="position", value="3.0")
    problem = model.expect_problem("forces.csv", row=11, column="element")
    assert problem.value == "E2"
    assert "combination 'C2'" in problem.expected
    assert "positions from 0.0 to 3.0 (3 rows)" in problem.expected


def test_optional_forces_columns_are_converted_without_problems(model):
    model.tables["forces"][0] += ["N", "V"]
    for row in model.tables["forces"][1:]:
        row += ["-12.5", "3"]
    loaded = readers.load_model(model.write())
    # 1 kN = 1000 N (SI).
    assert loaded.forces["N"].tolist() == [-12500.0] * 12
    assert loaded.forces["V"].tolist() == [3000.0] * 12
