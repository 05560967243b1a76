"""A small valid model written as canonical CSV files, for the readers tests to break or convert.

The model (invented): a beam of two 4 m elements E1 (N1 -> N2) and E2 (N2 -> N3) at elevation 3 m,
one section S1, two load combinations with three stations per element, a top-flange brace at N2,
supports at N1 and N3. Canonical layout and SI units: m, kN*m, mm, MPa.
"""

from __future__ import annotations

import copy
import csv
from collections.abc import Callable
from pathlib import Path

import pytest
from flangewise import readers
from flangewise.readers import InputError, Problem

#: The canonical tables, header first; the list index of a row is its spreadsheet row minus 1.
BASE_TABLES: dict[str, list[list[str]]] = {
    "nodes": [
        ["id", "x", "y", "z"],
        ["N1", "0.0", "0.0", "3.0"],
        ["N2", "4.0", "0.0", "3.0"],
        ["N3", "8.0", "0.0", "3.0"],
    ],
    "elements": [
        ["id", "start", "end", "section"],
        ["E1", "N1", "N2", "S1"],
        ["E2", "N2", "N3", "S1"],
    ],
    "sections": [
        ["name", "d", "b", "tf", "tw", "r", "fy"],
        ["S1", "400", "180", "13", "8", "10", "350"],
    ],
    "forces": [
        ["element", "combination", "position", "M"],
        ["E1", "C1", "0.0", "0.0"],
        ["E1", "C1", "2.0", "30.0"],
        ["E1", "C1", "4.0", "40.0"],
        ["E2", "C1", "0.0", "40.0"],
        ["E2", "C1", "2.0", "25.0"],
        ["E2", "C1", "4.0", "0.0"],
        ["E1", "C2", "0.0", "0.0"],
        ["E1", "C2", "2.0", "-12.5"],
        ["E1", "C2", "4.0", "-20.0"],
        ["E2", "C2", "0.0", "-20.0"],
        ["E2", "C2", "2.0", "-10.0"],
        ["E2", "C2", "4.0", "0.0"],
    ],
    "braces": [
        ["node", "flange"],
        ["N2", "top"],
    ],
    "supports": [
        ["node", "restrains"],
        ["N1", "ux uy uz"],
        ["N3", "uy uz"],
    ],
}


class ModelFiles:
    """The base model's tables, editable by spreadsheet row and column, written to one folder."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.tables = copy.deepcopy(BASE_TABLES)
        self.settings: str | None = None
        #: Files written byte for byte instead of their table (file name -> content).
        self.raw: dict[str, bytes] = {}

    def set(self, table: str, row: int, column: str, value: str) -> None:
        """Set one cell; ``row`` counts as a spreadsheet does (header = row 1)."""
        rows = self.tables[table]
        rows[row - 1][rows[0].index(column)] = value

    def drop_column(self, table: str, column: str) -> None:
        """Remove one column from a table."""
        rows = self.tables[table]
        i = rows[0].index(column)
        for row in rows:
            del row[i]

    def text(self, table: str, delimiter: str = ",") -> str:
        """Return a table as the CSV text :meth:`write` would give it (to edit by hand)."""
        return "".join(delimiter.join(row) + "\n" for row in self.tables[table])

    def replace_line(self, table: str, row: int, line: str) -> None:
        """Write ``table`` with spreadsheet row ``row`` replaced by ``line`` exactly."""
        lines = self.text(table).splitlines()
        lines[row - 1] = line
        self.raw[f"{table}.csv"] = ("\n".join(lines) + "\n").encode("utf-8")

    def write(self, delimiter: str = ",") -> Path:
        """Write every table (and ``flangewise.toml`` if settings are given); return the folder."""
        self.folder.mkdir(parents=True, exist_ok=True)
        for table, rows in self.tables.items():
            with open(self.folder / f"{table}.csv", "w", newline="", encoding="utf-8") as fh:
                csv.writer(fh, delimiter=delimiter).writerows(rows)
        for file, content in self.raw.items():
            (self.folder / file).write_bytes(content)
        if self.settings is not None:
            (self.folder / "flangewise.toml").write_text(self.settings, encoding="utf-8")
        return self.folder

    def load(self) -> readers.Model:
        """Write the files and load them."""
        return readers.load_model(self.write())

    def load_error(self) -> InputError:
        """Write the files, load them and return the :class:`InputError` that must follow."""
        with pytest.raises(InputError) as info:
            self.load()
        return info.value

    def problems_of(self, file: str) -> list[Problem]:
        """Load, expect an error, and return its problems about ``file``."""
        return [p for p in self.load_error().problems if Path(p.file).name == file]

    def expect_problem(self, file: str, row: int | None, column: str | None) -> Problem:
        """Load, expect an error, and return its problem at (file, row, column).

        Checks both the :class:`Problem` fields and that the report a user reads names the file,
        the spreadsheet row and the column.
        """
        error = self.load_error()
        found = [
            p
            for p in error.problems
            if Path(p.file).name == file and p.row == row and p.column == column
        ]
        assert found, f"no problem at {file}, row {row}, column {column} in:\n{error.report()}"
        line = str(found[0])
        report = error.report()
        assert line in report
        assert file in line
        if row is not None:
            assert f"row {row}" in line
        if column is not None:
            assert f"column '{column}'" in line
        return found[0]


@pytest.fixture
def model_files(tmp_path: Path) -> Callable[[str], ModelFiles]:
    """Return a factory of fresh base models, each in its own sub-folder of ``tmp_path``."""
    return lambda name: ModelFiles(tmp_path / name)


@pytest.fixture
def model(model_files: Callable[[str], ModelFiles]) -> ModelFiles:
    """Return a fresh, valid base model (not yet written)."""
    return model_files("model")
