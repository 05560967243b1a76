"""Settings that would read the files wrong are refused, naming the key at fault."""

from __future__ import annotations

import math

import pytest
from flangewise.readers import InputError, read_settings
from flangewise.readers.units import STRESS_TO_MPA


def settings_problems(tmp_path, text: str) -> list:
    """Write ``text`` as the settings file and return the problems reading it raises."""
    (tmp_path / "flangewise.toml").write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_settings(tmp_path)
    return info.value.problems


def test_two_of_our_columns_mapped_to_one_file_column(tmp_path):
    (problem,) = settings_problems(tmp_path, '[columns.nodes]\nx = "X"\ny = "X"\n')
    assert problem.column == "columns.nodes.y"
    assert problem.value == "X"
    assert "[columns.nodes] x" in problem.expected


def test_a_default_name_taken_by_another_column_is_a_clash(tmp_path):
    # y keeps its default file column "y", which z is now also mapped to.
    (problem,) = settings_problems(tmp_path, '[columns.nodes]\nz = "y"\n')
    assert problem.column == "columns.nodes.z"
    assert "[columns.nodes] y" in problem.expected


@pytest.mark.parametrize("delimiter", ["\\n", "\\r", '\\"'])
def test_line_break_or_quote_as_delimiter_is_refused(tmp_path, delimiter):
    (problem,) = settings_problems(tmp_path, f'[csv]\ndelimiter = "{delimiter}"\n')
    assert problem.column == "csv.delimiter"


@pytest.mark.parametrize("word", ["bottom", "Both", "top"])
def test_extra_flange_word_may_not_be_one_of_ours(tmp_path, word):
    (problem,) = settings_problems(tmp_path, f'[flange_words]\ntop = ["{word}"]\n')
    assert problem.column == "flange_words.top"
    assert problem.value == word


def test_extra_flange_word_may_not_name_two_flanges(tmp_path):
    (problem,) = settings_problems(tmp_path, '[flange_words]\ntop = ["upper"]\nboth = "Upper"\n')
    assert problem.column == "flange_words.both"
    assert "flange_words.top" in problem.expected


@pytest.mark.parametrize("fy", ["nan", "inf", "-inf", "0", "-350", "50", "5000"])
def test_default_fy_must_be_a_plausible_yield_stress(tmp_path, fy):
    (problem,) = settings_problems(tmp_path, f"[material]\nfy = {fy}\n")
    assert problem.column == "material.fy"
    assert "150 to 1000 MPa" in problem.expected


def test_default_fy_in_ksi_is_converted(tmp_path):
    (tmp_path / "flangewise.toml").write_text('[units]\nstress = "ksi"\n[material]\nfy = 50\n')
    settings = read_settings(tmp_path)
    # 50 ksi = 344.7 MPa (1 ksi = 6.894757 MPa, NIST SP 811 (2008), App. B).
    assert math.isclose(settings.default_fy, 50 * STRESS_TO_MPA["ksi"])
    assert math.isclose(settings.default_fy, 344.738, rel_tol=1e-5)


def test_files_named_in_the_settings_are_remembered(tmp_path):
    (tmp_path / "flangewise.toml").write_text('[files]\nbraces = "brace.csv"\n')
    settings = read_settings(tmp_path)
    assert settings.named_files == frozenset({"braces"})
    assert read_settings(tmp_path / "nowhere").named_files == frozenset()
