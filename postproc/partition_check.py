"""The check of one partition of the forces, and the reduction of the partitions' results.

A check on a cluster (:mod:`flangewise.postproc.cluster`) splits the work by load combination:
every (segment, combination) pair needs only that combination's stations of that member. What
the pairs share (the model's other tables, the members, the segments, the section properties)
is built once (:class:`Shared`); each task (:func:`check_task`) reads and validates its
partitions' forces, builds their diagrams, checks their pairs with the very functions of the
plain check, writes its part of the full table and of ``flagged.csv`` into the run's staging
folder, and returns only what the result files need from it (:class:`Partial`): each member's
governing candidate, the counts of ``summary.json`` and the problems found. :class:`Reduction`
puts the partials together into the same ``governing.csv``, ``flagged.csv`` and
``summary.json`` as a check of the whole model, by the same rules (the worst pair of
:data:`~flangewise.postproc.exports.WORST_RULE`, counts added up).

Nothing here imports Dask: the tasks are plain functions of plain values.
"""

from __future__ import annotations

import os
import shutil
import uuid
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from flangewise.engine.check import CheckResult, check_pairs
from flangewise.engine.diagrams import segment_diagrams
from flangewise.engine.layout import Layout
from flangewise.engine.members import Members
from flangewise.engine.segments import Segments
from flangewise.postproc import exports
from flangewise.postproc.full_table import write_parquet
from flangewise.postproc.shown_units import ShownUnits
from flangewise.readers.errors import Problem, ProblemList
from flangewise.readers.forces_part import Frame, Partition, model_with, read_partitions
from flangewise.readers.settings import CheckSettings

#: The full table's folder in the results: one Parquet file per task, in the model's order of
#: load combinations (``part-00000.parquet``, ``part-00001.parquet`` ...).
DATASET = "segments.parquet"

#: Where the tasks leave their rows of flagged.csv in the staging folder (removed once joined).
FLAGGED_PARTS = ".flagged-parts"

#: Where the tasks make the folders of links they read partitions through, in the staging folder.
LINKS = ".links"

#: The two runs of pairs of a check, in the order its table lists them: the pairs of the top
#: and "either" segments first, then those of the bottom segments (each in the order of the
#: load combinations, then along the members). Parts are joined in this order.
RUNS = ("first", "second")


@dataclass(frozen=True)
class Shared:
    """What every task shares: built and validated once, sent to each worker once.

    Attributes:
        frame: the model's tables but its forces.
        members: the members.
        segments: the unbraced segments.
        props: section properties and class per section name.
        check: the check settings in force (after ``--method``).
        exact: whether the exact buckling analysis runs (``--no-exact`` switches it off).
        units: the output units.
        root: the forces folder.
        combinations: the load combinations checked, in the model's order.
        scope: the members checked (``--member``); ``None`` for all.
        stage: the run's staging folder, where the tasks write their parts.
        notes: the run's notes for the Parquet files' metadata.
    """

    frame: Frame
    members: Members
    segments: Segments
    props: pd.DataFrame
    check: CheckSettings
    exact: bool
    units: ShownUnits
    root: Path
    combinations: tuple[str, ...]
    scope: tuple[str, ...] | None
    stage: Path
    notes: dict[str, str]


@dataclass(frozen=True)
class Task:
    """One task: a few partitions (whole load combinations), checked together.

    Attributes:
        number: the task's place in the model's order of combinations (names its parts).
        parts: the partitions.
    """

    number: int
    parts: tuple[Partition, ...]


@dataclass
class Partial:
    """What one task returns: small whatever the size of its partitions.

    Attributes:
        number: the task's number.
        problems: the input problems found (already located in their files).
        more: problems found beyond those listed.
        present: per partition, the elements with rows there (packed bits; ``None``:
            unreadable), for the rule that spans partitions.
        rows: pairs in the task's part of the full table (0: no part written).
        flagged: pairs in its parts of flagged.csv, per run of :data:`RUNS`.
        governing: each member's governing pair among the task's (full rows).
        counts: :func:`~flangewise.postproc.exports.pair_counts` of the task's pairs.
        exact_with: checked pairs with an exact factor.
        exact_without: checked pairs without one, per exact note (all notes, in their order).
        flags: pairs carrying each flag.
        segments: the segments with pairs (packed bits over the segment rows).
        combinations: the load combinations with pairs.
    """

    number: int
    problems: list[Problem] = field(default_factory=list)
    more: int = 0
    present: list[np.ndarray | None] = field(default_factory=list)
    rows: int = 0
    flagged: tuple[int, int] = (0, 0)
    governing: pd.DataFrame | None = None
    counts: dict[str, int] = field(default_factory=dict)
    exact_with: int = 0
    exact_without: pd.Series | None = None
    flags: dict[str, int] = field(default_factory=dict)
    segments: np.ndarray | None = None
    combinations: list[str] = field(default_factory=list)


class NotWritten(Exception):
    """A part of the results could not be written; the argument is the operating system's word."""


def part_name(number: int) -> str:
    """The file of a task's part of the full table, inside :data:`DATASET`."""
    return f"part-{number:05d}.parquet"


def flagged_name(number: int, run: int) -> str:
    """The file of a task's rows of flagged.csv of one run, inside :data:`FLAGGED_PARTS`."""
    return f"{number:05d}-{run}.csv"


def check_task(shared: Shared, task: Task) -> Partial:
    """Read, validate and check the partitions of ``task``; write its parts; return its partial.

    Problems in the input are returned, not raised: every partition's problems are reported
    together. Nothing is written for a task with a problem.
    """
    problems = ProblemList()
    # The links each partition is read through live in the run's staging folder: removed with
    # it at the end of the run, even when a worker dies while reading.
    links = shared.stage / LINKS
    links.mkdir(exist_ok=True)
    got = read_partitions(shared.frame, shared.root, task.parts, problems, links)
    partial = Partial(task.number, problems.items, problems.more, got.present)
    if problems or got.forces is None:
        return partial
    forces = _selected(got.forces, shared.combinations)
    if forces is None:
        return partial  # validated only: none of its combinations is checked in this run
    model = model_with(shared.frame, forces)
    diagrams = segment_diagrams(model, shared.members, shared.segments)
    layout = Layout(shared.members, shared.segments, diagrams)
    result = CheckResult(
        check_pairs(layout, shared.props, shared.check, exact=shared.exact),
        shared.props,
        layout,
        shared.check,
    )
    del diagrams, layout, forces, model
    if shared.scope is not None:
        result = exports.select_members(result, shared.scope)
    seg = exports.segment_table(result, shared.units)
    del result
    # One order of combinations for every task: the model's (the tie-break's last key).
    seg["combination"] = seg["combination"].cat.set_categories(list(shared.combinations))
    _fill(partial, seg, shared, task.number)
    return partial


def _selected(forces: pd.DataFrame, combinations: Sequence[str]) -> pd.DataFrame | None:
    """The rows of the combinations checked in this run (``None``: none of them)."""
    names = forces["combination"].cat.categories
    wanted = np.isin(np.asarray(names, dtype=object), np.asarray(combinations, dtype=object))
    if wanted.all():
        return forces
    if not wanted.any():
        return None
    keep = wanted[forces["combination"].cat.codes.to_numpy()]
    chosen = forces[keep].reset_index(drop=True)
    chosen["combination"] = chosen["combination"].cat.remove_unused_categories()
    return chosen


def _fill(partial: Partial, seg: pd.DataFrame, shared: Shared, number: int) -> None:
    """Write the task's parts and note what the result files need from its pairs."""
    partial.rows = len(seg)
    # The full table is Parquet: flagged.csv keeps the columns a reviewer reads first, as a
    # plain check whose full table is Parquet only.
    flagged = exports.flagged_table(seg, exports.reading_columns(shared.units))
    # Rows of bottom segments come after those of top and "either" segments in a check's table.
    second = (flagged["flange"] == "bottom").to_numpy()
    try:
        if len(seg):
            folder = shared.stage / DATASET
            folder.mkdir(exist_ok=True)
            _whole(folder / part_name(number), lambda p: write_parquet(p, seg, shared.notes))
        folder = shared.stage / FLAGGED_PARTS
        folder.mkdir(exist_ok=True)
        for run, rows in enumerate((flagged[~second], flagged[second])):
            if len(rows):
                text = exports.csv_text(rows, False)
                _whole(folder / flagged_name(number, run), lambda p, t=text: p.write_bytes(t))
    except OSError as exc:
        raise NotWritten(str(exc)) from None
    partial.flagged = (int((~second).sum()), int(second.sum()))
    partial.governing = exports.governing_table(seg)
    partial.counts = exports.pair_counts(seg)
    checked = exports._status_in(seg, *exports.CHECKED)
    has = np.isfinite(seg["exact factor"].to_numpy(dtype=np.float64))
    partial.exact_with = int(has.sum())
    partial.exact_without = seg["exact note"][checked & ~has].value_counts(sort=False)
    partial.flags = exports.flag_counts(seg)
    seen = np.zeros(len(shared.segments.table), dtype=bool)
    seen[shared.segments.table.index.get_indexer(seg["segment"].unique())] = True
    partial.segments = np.packbits(seen)
    partial.combinations = [str(c) for c in seg["combination"].unique()]


def _whole(path: Path, write: Callable[[Path], object]) -> None:
    """Write a file under a hidden name, then give it its name: a part is whole or absent.

    A task whose worker died is run again, and a task may (rarely, on a cluster that lost
    sight of a worker) run twice: the last complete copy stands, never a half-written one.
    Hidden names (a leading ".") are skipped by every reader of a Parquet folder.
    """
    draft = path.with_name(f".{path.name}.{uuid.uuid4().hex}")
    try:
        write(draft)
        os.replace(draft, path)
    finally:
        draft.unlink(missing_ok=True)


#: Partials' governing candidates held before they are reduced to one row per member: ranking
#: the members' names costs the same for one partial or several, held a few at a time.
GOVERNING_BATCH = 6


@dataclass
class Reduction:
    """The partials of a run put together, as they come (in any order).

    Attributes:
        shared: what the tasks shared.
        partials: how many were added.
        governing: each member's governing pair among the partials folded in so far.
        empty: the full table's columns with no rows (from the first task that checked pairs).
    """

    shared: Shared
    partials: int = 0
    governing: pd.DataFrame | None = None
    empty: pd.DataFrame | None = None
    _waiting: list[pd.DataFrame] = field(default_factory=list)
    _problems: dict[int, tuple[list[Problem], int]] = field(default_factory=dict)
    _present: dict[int, list[np.ndarray | None]] = field(default_factory=dict)
    _rows: dict[int, int] = field(default_factory=dict)
    _flagged: dict[int, tuple[int, int]] = field(default_factory=dict)
    _counts: dict[str, int] = field(default_factory=dict)
    _exact_with: int = 0
    _exact_without: pd.Series | None = None
    _flags: dict[str, int] = field(default_factory=dict)
    _segments: np.ndarray | None = None
    _combinations: set[str] = field(default_factory=set)

    def add(self, partial: Partial) -> None:
        """Take one task's partial."""
        self.partials += 1
        self._present[partial.number] = partial.present
        if partial.problems or partial.more:
            self._problems[partial.number] = (partial.problems, partial.more)
        if partial.governing is None:
            return
        self._rows[partial.number] = partial.rows
        self._flagged[partial.number] = partial.flagged
        if self.empty is None:
            self.empty = partial.governing.iloc[:0]
        if len(partial.governing):
            self._waiting.append(partial.governing)
            if len(self._waiting) >= GOVERNING_BATCH:
                self._fold()
        for key, n in partial.counts.items():
            self._counts[key] = self._counts.get(key, 0) + n
        self._exact_with += partial.exact_with
        if partial.exact_without is not None:
            self._exact_without = (
                partial.exact_without
                if self._exact_without is None
                else self._exact_without.add(partial.exact_without, fill_value=0)
            )
        for key, n in partial.flags.items():
            self._flags[key] = self._flags.get(key, 0) + n
        if partial.segments is not None:
            self._segments = (
                partial.segments
                if self._segments is None
                else np.bitwise_or(self._segments, partial.segments)
            )
        self._combinations.update(partial.combinations)

    def _fold(self) -> None:
        """Keep only each member's governing pair of the candidates so far (the same rule)."""
        both = [g for g in (self.governing, *self._waiting) if g is not None]
        self._waiting = []
        if both:
            self.governing = exports.governing_table(_stacked(both))

    def table(self) -> pd.DataFrame:
        """governing.csv: each member's governing pair, members in natural order."""
        self._fold()
        if self.governing is not None:
            return self.governing
        if self.empty is None:
            raise ValueError("no task checked any pair: there is no table to give")
        return self.empty

    def problems(self) -> ProblemList:
        """Every input problem, in the order of the tasks (and so of the files)."""
        found = ProblemList()
        for number in sorted(self._problems):
            listed, more = self._problems[number]
            for p in listed:
                found.add(p.file, p.row, p.column, p.value, p.expected)
            found.more += more
        return found

    def present(self) -> list[np.ndarray | None]:
        """Per partition, in the model's order, the elements with rows there."""
        return [bits for number in sorted(self._present) for bits in self._present[number]]

    def numbers(self) -> list[int]:
        """The tasks that wrote a part of the full table, in order."""
        return [n for n in sorted(self._rows) if self._rows[n]]

    def flagged_parts(self) -> list[Path]:
        """The tasks' parts of flagged.csv, in the order a check's table lists its pairs."""
        folder = self.shared.stage / FLAGGED_PARTS
        return [
            folder / flagged_name(number, run)
            for run in range(len(RUNS))
            for number in sorted(self._flagged)
            if self._flagged[number][run]
        ]

    def summary(self, model_folder: Path, stub: CheckResult) -> dict[str, Any]:
        """``summary.json`` of the whole run, as :func:`exports.summary` gives for the whole table.

        The summary of the governing table gives everything that depends on rows (the worst
        pair, the members with and without forces); the counts are the partials' sums.
        """
        governing = self.table()
        scope = list(self.shared.scope) if self.shared.scope is not None else None
        units = self.shared.units
        info = exports.summary(stub, governing, model_folder, members=scope, units=units)
        counts = {key: self._counts.get(key, 0) for key in exports.pair_counts(governing[:0])}
        # value_counts (which exports.exact_counts uses) lists the notes by count, most first,
        # ties in the notes' own order: the same order from the summed counts.
        without = self._exact_without
        ordered = {} if without is None else without.sort_values(ascending=False, kind="stable")
        info.update(
            {
                "exact analysis": {
                    "pairs with an exact factor": self._exact_with,
                    "pairs without": {
                        str(k) or "no exact factor": int(v) for k, v in dict(ordered).items() if v
                    },
                },
                "result": exports.outcome(counts),
                "segments": int(np.unpackbits(self._segments).sum())
                if self._segments is not None
                else 0,
                "load combinations": len(self._combinations),
                **counts,
                "flags": {key: self._flags.get(key, 0) for key in info["flags"]},
            }
        )
        return info


def _stacked(frames: list[pd.DataFrame]) -> pd.DataFrame:
    """Rows of several tables of the same columns, one below the other, names kept as categories.

    Categorical columns whose categories differ (the flags: each task has its own) are joined
    on the union of their categories, so no column turns into plain text.
    """
    if len(frames) == 1:
        return frames[0]
    out = pd.concat(frames, ignore_index=True)
    for column in frames[0].columns:
        if isinstance(frames[0][column].dtype, pd.CategoricalDtype) and not isinstance(
            out[column].dtype, pd.CategoricalDtype
        ):
            out[column] = pd.api.types.union_categoricals(
                [f[column] for f in frames], ignore_order=True
            )
    return out


def join_flagged(parts: Sequence[Path], header: bytes, path: Path) -> None:
    """Write flagged.csv from the tasks' parts: the byte-order mark, the header, the parts."""
    with path.open("wb") as out:
        out.write(exports.BOM)
        out.write(header)
        for part in parts:
            with part.open("rb") as fh:
                shutil.copyfileobj(fh, out, 1 << 20)
