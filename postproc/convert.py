"""A forces CSV file turned into a folder of Parquet files partitioned by load combination.

``flangewise partition MODEL --out FOLDER`` reads the model's forces table (the file
``[files] forces`` names, with the settings' delimiter, decimal mark and column names) and writes
``FOLDER/<combination column>=<name>/part-<i>.parquet``: the layout a check on a cluster reads
partition by partition (``check --cluster``), and which the plain check reads too.

The file is streamed in blocks (:data:`BLOCK_BYTES`) and written by Parquet writers per load
combination that hold a bounded number of rows (:class:`_PartWriter`), so memory stays bounded
whatever the file's size. No value is changed: identifiers are kept as text exactly as written
(blanks around them removed, as every reader of ours does), numbers are parsed by the very rules
of the CSV reader (:func:`flangewise.readers.csv_parse.parse_numbers`: a plain decimal number
with the ``[csv] decimal`` mark; ``inf``, ``nan``, numbers beyond a double and words refused).
Every cell the CSV reader would refuse is refused here (the file, its row, the column and the
cell as written), and nothing is left behind: the folder appears, complete, only when the whole
file converted. Each record keeps its row in the CSV file in the column
:data:`~flangewise.readers.source_rows.SOURCE_ROW`, so that a problem found later in the folder
also names the row of the export. Only the columns the settings map are kept.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections import OrderedDict
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any, TypeVar
from urllib.parse import quote

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pcsv
import pyarrow.parquet as pq
from flangewise.postproc.partition_check import NotWritten
from flangewise.readers.columns import map_columns
from flangewise.readers.csv_parse import (
    MAX_LISTED_ROWS,
    MAX_QUOTED,
    content_end,
    file_bytes,
    header_row,
    parse_numbers,
)
from flangewise.readers.errors import InputError, Problem, ProblemList
from flangewise.readers.parquet_parse import is_parquet
from flangewise.readers.settings import COLUMNS, Settings, read_settings
from flangewise.readers.source_rows import SOURCE_KEY, SOURCE_ROW
from flangewise.readers.tables import NO_DATA_ROWS

T = TypeVar("T")

#: Bytes of the CSV file parsed per block: a few tens of MB of columns in memory at a time.
BLOCK_BYTES = 1 << 20

#: Rows per row group of the Parquet files (and the most held per combination before writing).
ROWS_PER_GROUP = 1 << 18

#: Rows held in memory, over all combinations, before the largest waiting group is written.
ROWS_HELD = 1 << 20

#: Files the writer keeps open at once (each open Parquet writer holds a few MB); a combination
#: whose file was closed goes on in a new file (part-1, part-2 ...). A file ordered by load
#: combination, as exports usually are, gets one file per combination.
OPEN_FILES = 8

#: Our identifier columns of the forces table, kept as text.
ID_COLUMNS = ("element", "combination")

#: Number columns that may not be empty.
REQUIRED_NUMBERS = ("position", "M")


@dataclass(frozen=True)
class Converted:
    """What a conversion wrote.

    Attributes:
        source: the CSV file read.
        folder: the folder written.
        rows: force records written.
        combinations: load combinations (one folder each).
        files: Parquet files written.
        key: the folder names' key (the file's own combination column name).
    """

    source: Path
    folder: Path
    rows: int
    combinations: int
    files: int
    key: str


def partition_forces(
    model: Path, settings_file: Path | None, out: Path, *, block_bytes: int = BLOCK_BYTES
) -> Converted:
    """Convert ``model``'s forces CSV file into a folder of Parquet files by load combination.

    Args:
        model: the model folder.
        settings_file: a settings file instead of the folder's own.
        out: the folder to write; it must not exist yet (or be empty).
        block_bytes: bytes of the CSV file parsed at a time.

    Raises:
        InputError: a cell, a row or the header the CSV reader would refuse (all listed, up to
            the usual cap), or a forces table that is no CSV file.
        FileExistsError: ``out`` exists and holds something.
        NotWritten: the folder could not be written (nothing is left behind).
    """
    settings = read_settings(model, settings_file)
    path = settings.path("forces")
    name = settings.files["forces"]
    if not path.is_file() or is_parquet(path):
        what = "a folder" if path.is_dir() else "Parquet" if is_parquet(path) else "missing"
        raise InputError(
            [
                Problem(
                    name,
                    None,
                    None,
                    None,
                    f"the forces table as a CSV file to convert (mapped by [files] forces; "
                    f"this one is {what})",
                )
            ]
        )
    if out.exists() and (not out.is_dir() or any(out.iterdir())):
        raise FileExistsError(f"{out} exists and is not an empty folder")
    plan = _plan(settings, path)
    for newlines in (False, True):
        stage = _written(lambda: _make_stage(out))
        try:
            reading = _Reading(settings, plan, newlines)
            _write(reading.batches(path, block_bytes), plan, stage)
            problems = reading.problems
            if reading.ragged:
                # Rows with the wrong field count, or (first pass) a quoted line break that split
                # a block: list them in order, with line breaks allowed inside quotes.
                listed = _ragged_rows(settings, plan, path)
                if listed is None and not newlines:
                    continue  # no row is ragged read in order: read again, line breaks allowed
                problems = listed or _unreadable(settings, plan)
            elif reading.rows == 0 and not problems:
                problems.add(name, None, None, None, NO_DATA_ROWS)
            problems.raise_if_any()
            _written(lambda s=stage: _move(s, out))
            files = sorted(out.rglob("*.parquet"))
            return Converted(
                path, out, reading.rows, len({f.parent for f in files}), len(files), plan.key
            )
        finally:
            shutil.rmtree(stage, ignore_errors=True)
    raise AssertionError("unreachable: the second pass returns or raises")  # pragma: no cover


@dataclass(frozen=True)
class _Plan:
    """The CSV file's header and how its columns map onto ours."""

    name: str
    end: int
    width: int
    theirs: dict[str, str]  # our column -> the file's column name
    position: dict[str, int]  # our column -> its place in the file
    key: str  # the combination column's name: the folders' key

    def schema(self) -> pa.Schema:
        """The schema of the Parquet files (the combination goes in the folder names)."""
        fields = [pa.field(self.theirs["element"], pa.string())]
        fields += [
            pa.field(self.theirs[ours], pa.float64())
            for ours, _ in COLUMNS["forces"]
            if ours in self.theirs and ours not in ID_COLUMNS
        ]
        fields += [pa.field(self.key, pa.string()), pa.field(SOURCE_ROW, pa.int64())]
        return pa.schema(fields, metadata={SOURCE_KEY: self.name.encode("utf-8")})


def _plan(settings: Settings, path: Path) -> _Plan:
    """Read the header and map it, as the CSV reader does; refuse what it refuses."""
    name = settings.files["forces"]
    problems = ProblemList()
    with file_bytes(path) as data:
        start = 3 if data[:3] == b"\xef\xbb\xbf" else 0
        end = content_end(data)
        found = header_row(data, start, end, settings.delimiter) if end > start else None
    if end <= start:
        problems.add(name, None, None, None, "a header row naming the columns; the file is empty")
    elif found is None:
        problems.add(name, 1, None, None, "UTF-8 text (save or export the table as CSV in UTF-8)")
    problems.raise_if_any()
    assert found is not None
    header, header_end = found
    mapped = map_columns(settings, "forces", header, problems)
    problems.raise_if_any()
    assert mapped is not None
    if header_end >= end:
        problems.add(name, None, None, None, NO_DATA_ROWS)
    theirs = {ours: header[i].strip() for i, ours in mapped.items()}
    if SOURCE_ROW in theirs.values():
        problems.add(
            name, 1, SOURCE_ROW, None, f"no mapped column named '{SOURCE_ROW}' (the name of ours)"
        )
    problems.raise_if_any()
    return _Plan(
        name=name,
        end=end,
        width=len(header),
        theirs=theirs,
        position={ours: i for i, ours in mapped.items()},
        key=theirs["combination"],
    )


class _Head:
    """A file read only up to ``end``: empty lines at the end are left out, as the reader does."""

    def __init__(self, path: Path, end: int) -> None:
        self._fh = path.open("rb")
        self._left = end
        self.closed = False

    def read(self, n: int = -1) -> bytes:
        n = self._left if n is None or n < 0 else min(n, self._left)
        data = self._fh.read(n)
        self._left -= len(data)
        return data

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return False

    def close(self) -> None:
        self._fh.close()
        self.closed = True


def _open(settings: Settings, plan: _Plan, path: Path, **options: Any) -> Any:
    """Open the CSV file for streaming: the mapped columns as bytes, every row kept."""
    names = [f"c{i}" for i in range(plan.width)]
    columns = options.pop("columns", list(plan.position.values()))
    return pcsv.open_csv(
        pa.PythonFile(_Head(path, plan.end), mode="r"),
        read_options=pcsv.ReadOptions(
            column_names=names,
            skip_rows=1,
            use_threads=options.pop("threads", True),
            block_size=options.pop("block_bytes", BLOCK_BYTES),
        ),
        parse_options=pcsv.ParseOptions(
            delimiter=settings.delimiter,
            ignore_empty_lines=False,
            newlines_in_values=options.pop("newlines", False),
            invalid_row_handler=options.pop("handler", None),
        ),
        convert_options=pcsv.ConvertOptions(
            include_columns=[names[i] for i in columns],
            # Bytes: UTF-8 is checked per block here, to name the row of a bad cell.
            column_types={names[i]: pa.binary() for i in columns},
            null_values=[""],
            strings_can_be_null=False,
            check_utf8=False,
        ),
    )


class _Reading:
    """One pass over the CSV file: each block checked cell by cell, then turned into Parquet rows.

    Once a problem is found no more rows are written (the folder will be thrown away), but the
    file is read to its end to list every problem, as the CSV reader does.
    """

    def __init__(self, settings: Settings, plan: _Plan, newlines: bool) -> None:
        self.settings = settings
        self.plan = plan
        self.newlines = newlines
        self.problems = ProblemList()
        self.ragged = 0  # rows with another field count than the header's
        self.rows = 0  # records written
        self._records = 0  # records read (row = record + 2 while no row is ragged)
        self._empty_rows: list[int] = []  # rows of empty cells only, not yet followed by data

    def _note_ragged(self, row: Any) -> str:
        self.ragged += 1
        return "skip"

    def batches(self, path: Path, block_bytes: int) -> Iterator[pa.RecordBatch]:
        """Yield the Parquet rows block by block (none once a problem is found)."""
        reader = _open(
            self.settings,
            self.plan,
            path,
            block_bytes=block_bytes,
            newlines=self.newlines,
            handler=self._note_ragged,
        )
        try:
            for batch in reader:
                out = self._block(batch)
                if out is not None and not self.problems and not self.ragged:
                    self.rows += out.num_rows
                    yield out
        finally:
            reader.close()

    def _block(self, batch: pa.RecordBatch) -> pa.RecordBatch | None:
        """Check one block's cells; return its rows for the Parquet files."""
        n = batch.num_rows
        rows = np.arange(self._records + 2, self._records + 2 + n, dtype=np.int64)
        self._records += n
        if self.ragged:
            return None  # only the ragged rows are reported, as the CSV reader does
        plan, name = self.plan, self.plan.name
        text: dict[str, pa.Array] = {}
        for ours, i in plan.position.items():
            column = batch.column(f"c{i}")
            cast = _utf8(column)
            if cast is None:
                at = _first_not_utf8(column)
                raw = column[at].as_py()
                self.problems.add(
                    name,
                    int(rows[at]),
                    plan.theirs[ours],
                    raw.decode("utf-8", "backslashreplace"),
                    "text in UTF-8 (save or export the table as CSV in UTF-8)",
                )
                return None
            text[ours] = cast
        values: dict[str, pa.Array] = {}
        empties = []
        for ours, column in text.items():
            if ours in ID_COLUMNS:
                stripped = pc.utf8_trim_whitespace(column)
                empty = pc.equal(stripped, "").to_numpy(zero_copy_only=False)
                values[ours] = stripped
            else:
                parsed, empty, cells = parse_numbers(column, self.settings.decimal)
                values[ours] = pa.array(parsed, mask=empty)
                self._bad_numbers(ours, rows, cells)
            empties.append((ours, empty))
        blank = np.logical_and.reduce([e for _, e in empties])
        self._blank_rows(rows, blank)
        for ours, empty in empties:
            required = ours in ID_COLUMNS or ours in REQUIRED_NUMBERS
            if required and (empty & ~blank).any():
                at = np.flatnonzero(empty & ~blank)
                expected = "a value" if ours in ID_COLUMNS else "a number"
                self.problems.add_many(name, rows[at], plan.theirs[ours], [""] * len(at), expected)
        if self.problems:
            return None
        keep = pa.array(~blank)
        columns = [values["element"]]
        numbers = [o for o, _ in COLUMNS["forces"] if o in values and o not in ID_COLUMNS]
        columns += [values[ours] for ours in numbers]
        columns += [values["combination"], pa.array(rows)]
        out = pa.RecordBatch.from_arrays(columns, schema=plan.schema())
        return out if blank.sum() == 0 else out.filter(keep)

    def _bad_numbers(self, ours: str, rows: np.ndarray, cells: Any) -> None:
        """Record the cells of a number column that hold no finite number, as written."""
        kinds = (("a number", ~cells.non_finite), ("a finite number", cells.non_finite))
        for wanted, pick in kinds:
            idx = np.flatnonzero(pick)
            if len(idx):
                shown = cells.texts.take(pa.array(idx[:50])).to_pylist()
                self.problems.add_many(
                    self.plan.name, rows[cells.records[idx]], self.plan.theirs[ours], shown, wanted
                )

    def _blank_rows(self, rows: np.ndarray, blank: np.ndarray) -> None:
        """Refuse rows of empty cells inside the table; those at its end are left out."""
        filled = np.flatnonzero(~blank)
        if len(filled):
            inside = list(self._empty_rows) + rows[: filled[-1]][blank[: filled[-1]]].tolist()
            self._empty_rows = []
            for row in inside[:MAX_LISTED_ROWS]:
                self.problems.add(
                    self.plan.name,
                    row,
                    None,
                    "",
                    "a row of values, not an empty line (delete it; empty lines may only end "
                    "the file)",
                )
            self.problems.more += max(0, len(inside) - MAX_LISTED_ROWS)
            self._empty_rows = rows[filled[-1] + 1 :].tolist()
        else:
            self._empty_rows += rows.tolist()


def _utf8(column: pa.Array | pa.ChunkedArray) -> pa.Array | None:
    """The bytes as text, or ``None`` when a cell is not UTF-8."""
    try:
        out = column.cast(pa.string())
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    return out.combine_chunks() if isinstance(out, pa.ChunkedArray) else out


def _first_not_utf8(column: pa.Array) -> int:
    """The position of the first cell that is not UTF-8 (a block known to hold one)."""
    for i, value in enumerate(column.to_pylist()):
        if value is not None:
            try:
                value.decode("utf-8")
            except UnicodeDecodeError:
                return i
    return 0


def _write(batches: Iterator[pa.RecordBatch], plan: _Plan, stage: Path) -> None:
    """Write the rows into ``stage`` as ``<key>=<name>/part-<i>.parquet`` (hive-style names).

    Raises:
        NotWritten: a file could not be written (reading the CSV file raises its own errors).
    """
    writer = _PartWriter(stage, plan)
    try:
        for batch in batches:
            _written(lambda b=batch: writer.add(b))
    finally:
        _written(writer.close)


def _written(write: Callable[[], T]) -> T:
    """Run ``write``; an error of the file system there is one of writing the folder."""
    try:
        return write()
    except OSError as exc:
        raise NotWritten(str(exc)) from exc


def _make_stage(out: Path) -> Path:
    """A staging folder beside ``out``, to become ``out`` once complete."""
    out.parent.mkdir(parents=True, exist_ok=True)
    return Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))


def _move(stage: Path, out: Path) -> None:
    """Put the complete folder in place (an empty ``out`` is replaced)."""
    if out.exists():
        out.rmdir()
    os.replace(stage, out)


class _PartWriter:
    """Parquet files per load combination, written as the rows come, in bounded memory.

    Rows wait per combination until a row group's worth (:data:`ROWS_PER_GROUP`) has come, or
    until all waiting rows reach :data:`ROWS_HELD` (then the combination holding most is
    written). At most :data:`OPEN_FILES` files are open; a combination whose file was closed
    goes on in its next file (``part-1.parquet`` ...). Rows keep their order within a
    combination (stations with equal positions stay in file order).

    A name is written with the escapes of hive-style folder names (``%`` followed by its UTF-8
    bytes in hex for every character but letters, digits and ``-._~``: ``/`` is ``%2F``, ``=``
    ``%3D``, a blank ``%20``), which pyarrow, and so every reader of ours, undoes.
    """

    def __init__(self, stage: Path, plan: _Plan) -> None:
        self.stage = stage
        self.key = plan.key
        self.source = plan.name
        full = plan.schema()
        self.schema = full.remove(full.get_field_index(plan.key))
        self.held: dict[str, list[pa.RecordBatch]] = {}
        self.counts: dict[str, int] = {}
        self.total = 0
        self.files: OrderedDict[str, pq.ParquetWriter] = OrderedDict()
        self.parts: dict[str, int] = {}

    def add(self, batch: pa.RecordBatch) -> None:
        """Take one block's rows (with the combination column)."""
        names = pc.dictionary_encode(batch.column(self.key))
        codes = names.indices.to_numpy(zero_copy_only=False)
        rows = batch.drop_columns([self.key])
        if len(names.dictionary) == 1:
            groups = [(names.dictionary[0].as_py(), rows)]
        else:
            order = np.argsort(codes, kind="stable")  # file order kept within a combination
            cuts = np.cumsum(np.bincount(codes, minlength=len(names.dictionary)))[:-1]
            taken = rows.take(pa.array(order))
            starts = np.r_[0, cuts]
            ends = np.r_[cuts, len(order)]
            groups = [
                (names.dictionary[k].as_py(), taken.slice(a, b - a))
                for k, (a, b) in enumerate(zip(starts.tolist(), ends.tolist(), strict=True))
                if b > a
            ]
        for name, part in groups:
            self.held.setdefault(name, []).append(part)
            self.counts[name] = self.counts.get(name, 0) + part.num_rows
            self.total += part.num_rows
            if self.counts[name] >= ROWS_PER_GROUP:
                self._flush(name)
        while self.total > ROWS_HELD:
            self._flush(max(self.counts, key=self.counts.__getitem__))

    def _flush(self, name: str) -> None:
        part = pa.Table.from_batches(self.held.pop(name), schema=self.schema)
        self.total -= self.counts.pop(name)
        self._file(name).write_table(part, row_group_size=ROWS_PER_GROUP)

    def _file(self, name: str) -> pq.ParquetWriter:
        if name in self.files:
            self.files.move_to_end(name)
            return self.files[name]
        if len(self.files) >= OPEN_FILES:
            _, oldest = self.files.popitem(last=False)
            oldest.close()
        folder = self.stage / f"{self.key}={quote(name, safe='')}"
        if name not in self.parts and folder.exists():
            # Names that differ only in case, on a file system that does not tell them apart:
            # the second would write over the first's files.
            raise InputError(
                [
                    Problem(
                        self.source,
                        None,
                        self.key,
                        name,
                        "load combination names that stay distinct as folder names; on this "
                        "file system this one's folder is that of another combination whose "
                        "name differs only in case (rename one in the export)",
                    )
                ]
            )
        folder.mkdir(parents=True, exist_ok=True)
        n = self.parts.get(name, 0)
        self.parts[name] = n + 1
        writer = pq.ParquetWriter(folder / f"part-{n}.parquet", self.schema, compression="zstd")
        self.files[name] = writer
        return writer

    def close(self) -> None:
        """Write what is held and close every file."""
        try:
            for name in list(self.held):
                self._flush(name)
        finally:
            for writer in self.files.values():
                writer.close()
            self.files.clear()


def _ragged_rows(settings: Settings, plan: _Plan, path: Path) -> ProblemList | None:
    """List the rows whose field count differs from the header's, in order (``None``: none).

    Read in one thread, so that each row's number is known, and with line breaks allowed inside
    quoted values. Only these rows are reported, as the CSV reader does.
    """
    from flangewise.readers.csv_parse import _ragged_expected

    listed: list[tuple[int, int, str]] = []
    count = 0

    def note(row: Any) -> str:
        nonlocal count
        count += 1
        if len(listed) < MAX_LISTED_ROWS:
            listed.append((row.number, row.actual_columns, row.text))
        return "skip"

    reader = _open(settings, plan, path, columns=[0], threads=False, newlines=True, handler=note)
    try:
        for _ in reader:
            pass
    except pa.ArrowInvalid:
        return _unreadable(settings, plan)
    finally:
        reader.close()
    if not count:
        return None
    problems = ProblemList()
    dialect = _Dialect(settings.delimiter)
    for row, got, text in listed:
        shown = text if len(text) <= MAX_QUOTED else text[: MAX_QUOTED - 1] + "…"
        problems.add(plan.name, row, None, shown, _ragged_expected(plan.width, got, text, dialect))
    problems.more += count - len(listed)
    return problems


def _unreadable(settings: Settings, plan: _Plan) -> ProblemList:
    """The file cannot be split into rows with the delimiter (as the CSV reader says)."""
    problems = ProblemList()
    problems.add(
        plan.name,
        None,
        None,
        None,
        f"a CSV table readable with the delimiter '{settings.delimiter}' (check [csv] "
        "delimiter, and that every opening double quote is closed)",
    )
    return problems


@dataclass(frozen=True)
class _Dialect:
    """What the CSV reader's wording of a ragged row needs to know of the file."""

    delimiter: str
