"""One domain error for bad input, carrying every problem found."""

from __future__ import annotations

from dataclasses import dataclass

#: The most problems one error lists; the rest are counted.
MAX_PROBLEMS = 50


@dataclass(frozen=True)
class Problem:
    """One thing wrong with the input, located as a spreadsheet shows it.

    Attributes:
        file: the file's name as the user gave it.
        row: spreadsheet row number (the header is row 1, the first data row is row 2);
            ``None`` when the problem is not tied to one row (a missing column, a missing file).
        column: the user's own column name, or ``None``.
        value: the offending value as text, or ``None``.
        expected: what was expected instead, in words.
    """

    file: str
    row: int | None
    column: str | None
    value: str | None
    expected: str

    def __str__(self) -> str:
        where = self.file
        if self.row is not None:
            where += f", row {self.row}"
        if self.column is not None:
            where += f", column '{self.column}'"
        got = f": got '{self.value}'" if self.value is not None else ""
        return f"{where}{got}; expected {self.expected}"


class InputError(Exception):
    """The input cannot be used; ``problems`` says every place why (up to ``MAX_PROBLEMS``)."""

    def __init__(self, problems: list[Problem], more: int = 0) -> None:
        self.problems = problems[:MAX_PROBLEMS]
        self.more = more + max(0, len(problems) - MAX_PROBLEMS)
        super().__init__(self.report())

    def report(self) -> str:
        """Return all problems, one per line, with a count of those not listed."""
        lines = [str(p) for p in self.problems]
        if self.more:
            lines.append(f"... and {self.more} more problem(s) of the same kinds")
        return "\n".join(lines)


class ProblemList:
    """Collects problems while validation runs; raises them all at once."""

    def __init__(self) -> None:
        self.items: list[Problem] = []
        self.more = 0

    def add(
        self,
        file: str,
        row: int | None,
        column: str | None,
        value: object,
        expected: str,
    ) -> None:
        """Record one problem (silently counted past the cap)."""
        if len(self.items) >= MAX_PROBLEMS:
            self.more += 1
            return
        text = None if value is None else str(value)
        self.items.append(Problem(file, row, column, text, expected))

    def add_many(
        self,
        file: str,
        rows: object,
        column: str | None,
        values: object,
        expected: str,
    ) -> None:
        """Record one problem per (row, value) pair; only the first few are materialised."""
        import numpy as np

        rows_arr = np.asarray(rows)
        vals_arr = np.asarray(values, dtype=object)
        room = max(0, MAX_PROBLEMS - len(self.items))
        for r, v in zip(rows_arr[:room].tolist(), vals_arr[:room].tolist(), strict=True):
            self.add(file, None if r is None else int(r), column, v, expected)
        self.more += max(0, len(rows_arr) - room)

    def __bool__(self) -> bool:
        return bool(self.items) or self.more > 0

    def raise_if_any(self) -> None:
        """Raise :class:`InputError` when anything was recorded."""
        if self:
            raise InputError(self.items, self.more)
