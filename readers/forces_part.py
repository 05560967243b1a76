"""The forces table one partition at a time: the other tables once, each load combination apart.

For a check that runs partition by partition (``flangewise check --cluster``): the small tables
(nodes, elements, sections, braces, supports) are read and validated once
(:func:`load_frame`); the forces are a folder of Parquet files partitioned by load combination,
hive-style (``<combination column>=<name>/part-0.parquet``, :func:`partitions`), and each
partition is read and validated on its own (:func:`read_partition`) by exactly the code that
reads the whole table (:func:`flangewise.readers.parquet_parse.read_parquet` and the forces
validation of :mod:`flangewise.readers.load`), so that a value means the same and a problem is
named the same (the file of the folder, the row within it) whichever way the model is read.

One rule spans partitions: every element that has forces needs them in every load combination.
Each partition says which elements it holds (:attr:`PartForces.present`);
:func:`missing_combinations` applies the rule to all of them, with the words the whole-table
reader uses.

A problem in a dataset made by ``flangewise partition`` also names the row of the CSV file
it was converted from (:mod:`flangewise.readers.source_rows`).
"""

from __future__ import annotations

import dataclasses
import os
import shutil
import tempfile
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
from flangewise.readers import load
from flangewise.readers.csv_parse import ORIGIN_KEY
from flangewise.readers.errors import InputError, Problem, ProblemList
from flangewise.readers.model import Model
from flangewise.readers.parquet_parse import (
    NO_RECORDS,
    ParquetOrigin,
    _folder_keys,
    _natural,
    read_parquet,
)
from flangewise.readers.settings import TABLES, Settings, read_settings
from flangewise.readers.source_rows import with_source_rows
from flangewise.readers.tables import MAX_LISTED, read_table

#: The command that turns a forces CSV file into a dataset (named in messages).
CONVERT_COMMAND = "flangewise partition MODEL --out FOLDER"


@dataclass(frozen=True)
class Frame:
    """Every table of a model but its forces, validated: what each partition is checked against.

    Attributes:
        model: the model with a forces table of no rows (``element`` categories the elements).
        broken: per element, whether it has a problem its forces depend on (no usable length).
    """

    model: Model
    broken: np.ndarray


@dataclass(frozen=True)
class Partition:
    """The files of one load combination in a folder partitioned by load combination.

    Attributes:
        combination: the load combination's name, as the folder names it (decoded, blanks
            around it removed as for any id).
        files: the files, relative to the folder with forward slashes, in the order the
            whole-table reader reads them.
        rows: how many records they hold (from the files' footers).
    """

    combination: str
    files: tuple[str, ...]
    rows: int


@dataclass(frozen=True)
class PartForces:
    """One or more partitions' forces, validated.

    Attributes:
        forces: the forces of the partitions (the :class:`Model` contract), combinations in the
            partitions' order; ``None`` when a problem was found.
        present: per partition, per element, whether the element has rows there, as packed
            bits (:func:`numpy.packbits`); ``None`` for a partition that could not be read
            (its problems say why).
    """

    forces: pd.DataFrame | None
    present: list[np.ndarray | None]


def load_frame(
    folder: Path | str,
    settings_file: Path | str | None = None,
    combinations: tuple[str, ...] | None = None,
) -> tuple[Frame, bool]:
    """Read and validate every table of ``folder`` but the forces; as :func:`load_model` does.

    Returns:
        The frame, and whether the combinations to check were given on the command line (for
        the message about an unknown one).

    Raises:
        InputError: listing every problem found in those tables.
    """
    if not Path(folder).is_dir():
        raise InputError(
            [Problem(str(folder), None, None, None, "a folder holding the model's CSV files")]
        )
    settings = read_settings(folder, settings_file)
    from_option = combinations is not None
    if combinations is not None:
        settings = dataclasses.replace(settings, combinations=tuple(combinations))
    problems = ProblemList()
    raw = {t: read_table(settings, t, problems) for t in TABLES if t != "forces"}
    load._raise_if_any(problems, raw.values())
    tables = {t: df for t, df in raw.items() if df is not None}
    nodes = load._nodes(tables["nodes"], settings, problems)
    load._breaks(nodes, settings, problems)
    sections = load._sections(tables["sections"], settings, problems)
    sections = load._named_shapes(tables["elements"], sections, settings)
    elements, broken = load._elements(tables["elements"], nodes, sections, settings, problems)
    braces = load._braces(tables["braces"], nodes, settings, problems)
    supports = load._supports(tables["supports"], nodes, settings, problems)
    load._raise_if_any(problems, raw.values())
    forces = pd.DataFrame(
        {
            "element": pd.Categorical.from_codes(
                np.zeros(0, dtype=np.int32), categories=elements.index, validate=False
            ),
            "combination": pd.Categorical([], categories=pd.Index([], dtype=object)),
            "position": np.zeros(0),
            "M": np.zeros(0),
        }
    )
    model = Model(nodes, elements, sections, forces, braces, supports, settings)
    return Frame(model, broken), from_option


def partitions(settings: Settings) -> list[Partition]:
    """The load combinations of a forces folder partitioned by combination, in the model's order.

    The order is the one the whole-table reader gives the combinations: the files' paths in
    natural order (``C2`` before ``C10``), each combination where its first file comes.

    Raises:
        InputError: the forces table is no folder of Parquet files partitioned by the mapped
            combination column.
    """
    import pyarrow.dataset as ds

    path = settings.path("forces")
    name = settings.files["forces"]
    key = settings.columns["forces"]["combination"].strip()
    layout = f"{key}=<name>/part-0.parquet"
    if not path.is_dir():
        raise InputError(
            [
                Problem(
                    name,
                    None,
                    None,
                    None,
                    f"a folder of Parquet files partitioned by load combination ({layout}) "
                    f"for a check on a cluster: '{CONVERT_COMMAND}' makes one from the CSV file; "
                    "then name that folder in [files] forces",
                )
            ]
        )
    try:
        dataset = ds.dataset(path, format="parquet", partitioning=_folder_keys(path))
        # The whole-table reader's order of files (natural order of their paths): the order of
        # the combinations in the model.
        fragments = sorted(dataset.get_fragments(), key=lambda f: _natural(f.path))
        keys = dataset.partitioning.schema.names if dataset.partitioning else []
        found: dict[str, list[tuple[str, int]]] = {}
        if key in keys:
            for fragment in fragments:
                value = ds.get_partition_keys(fragment.partition_expression).get(key)
                combination = "" if value is None else str(value).strip()
                relative = Path(fragment.path).relative_to(path).as_posix()
                found.setdefault(combination, []).append((relative, fragment.metadata.num_rows))
    except (pa.ArrowException, OSError, ValueError):
        raise InputError(
            [
                Problem(
                    name,
                    None,
                    None,
                    None,
                    "a folder of Parquet files (a dataset) holding the same columns; a file in "
                    "it cannot be read as Parquet, or the files' columns do not agree",
                )
            ]
        ) from None
    if key not in keys:
        raise InputError(
            [
                Problem(
                    name,
                    None,
                    None,
                    None,
                    f"folders named after the load combination column ({layout}, the column "
                    f"mapped by [columns.forces] combination) for a check on a cluster; "
                    f"'{CONVERT_COMMAND}' makes them from the CSV file",
                )
            ]
        )
    # A folder whose files hold no records names no combination, as in the whole-table reader.
    kept = [
        Partition(c, tuple(f for f, _ in files), sum(n for _, n in files))
        for c, files in found.items()
        if sum(n for _, n in files)
    ]
    if not kept:
        raise InputError([Problem(name, None, None, None, NO_RECORDS)])
    return kept


def read_partitions(
    frame: Frame,
    root: Path,
    parts: Sequence[Partition],
    problems: ProblemList,
    scratch: Path | None = None,
) -> PartForces:
    """Read and validate the forces of ``parts``, each partition on its own.

    Every partition is read from the files of the folder ``root`` by the whole-table reader and
    validated as the whole table is (element ids, positions, stations at both ends, moments),
    with no selection of combinations: the caller selects. Problems name the file of the folder
    and the row within it (and the row of the CSV file a converted dataset came from).

    Args:
        frame: the model's other tables.
        root: the forces folder.
        parts: the partitions to read.
        problems: where problems go.
        scratch: where to make the short-lived folder of links each partition is read through
            (the system's temporary folder by default).
    """
    settings = dataclasses.replace(frame.model.settings, combinations=())
    n_el = len(frame.model.elements)
    pieces: list[pd.DataFrame] = []
    present: list[np.ndarray | None] = []
    for part in parts:
        mine = ProblemList()
        df = _read_files(settings, root, part.files, mine, scratch)
        if df is None:
            present.append(None)
        else:
            forces = load._forces(df, frame.model.elements, frame.broken, settings, False, mine)
            codes = forces["element"].cat.codes.to_numpy()
            has = np.zeros(n_el, dtype=bool)
            has[codes[codes >= 0]] = True
            present.append(np.packbits(has & ~frame.broken))
            pieces.append(forces)
            origin = df.attrs.get(ORIGIN_KEY)
            if isinstance(origin, ParquetOrigin):
                mine.items = [origin.relocate(p) for p in mine.items]
        mine.items = with_source_rows(mine.items, root, settings.files["forces"])
        for p in mine.items:
            problems.add(p.file, p.row, p.column, p.value, p.expected)
        problems.more += mine.more
    if problems or not pieces:
        return PartForces(None, present)
    return PartForces(_joined(pieces), present)


def _read_files(
    settings: Settings,
    root: Path,
    files: Sequence[str],
    problems: ProblemList,
    scratch: Path | None = None,
) -> pd.DataFrame | None:
    """Read some files of the folder ``root`` as the whole-table reader reads the folder.

    They are read through a folder of links to them under their own relative paths: the reader
    then sees the same folder names (and so the same combination), numbers the records of each
    file the same way and names each file by the same path.
    """
    view = Path(tempfile.mkdtemp(prefix="flangewise-part-", dir=scratch))
    try:
        for relative in files:
            link = view / relative
            link.parent.mkdir(parents=True, exist_ok=True)
            os.symlink(root / relative, link)
        return read_parquet(settings, "forces", view, problems)
    finally:
        shutil.rmtree(view, ignore_errors=True)


def _joined(pieces: list[pd.DataFrame]) -> pd.DataFrame:
    """The partitions' forces as one table: combinations in the partitions' order."""
    if len(pieces) == 1:
        return pieces[0]
    combination = pd.api.types.union_categoricals([p["combination"] for p in pieces])
    out = pd.concat(pieces, ignore_index=True)
    out["combination"] = combination
    return out


def missing_combinations(
    frame: Frame,
    names: Sequence[str],
    present: Sequence[np.ndarray | None],
    problems: ProblemList,
) -> None:
    """Record each (element, combination) without rows where the element has rows in others.

    The rule and the words of the whole-table reader, over every partition: ``names`` are the
    combinations in the model's order, ``present`` per combination the elements with rows as
    packed bits (:func:`numpy.packbits`; ``None``: a partition that could not be read, left out
    of the rule). Combinations holding the same elements share one array: a valid model has
    one, however many combinations it has.
    """
    n_el = len(frame.model.elements)
    distinct: dict[bytes, int] = {}
    which = np.full(len(present), -1, dtype=np.int64)
    for c, bits in enumerate(present):
        if bits is not None:
            which[c] = distinct.setdefault(bits.tobytes(), len(distinct))
    if len(distinct) <= 1:
        return  # every combination holds the same elements (or none could be read)
    sets = np.vstack(
        [np.unpackbits(np.frombuffer(b, dtype=np.uint8), count=n_el) for b in distinct]
    ).astype(bool)
    anywhere = np.asarray(sets.any(axis=0))
    lacking = anywhere[None, :] & ~sets  # per distinct set, the elements it lacks
    per_set = lacking.sum(axis=1)
    kept = which >= 0
    total = int(per_set[which[kept]].sum())
    settings = frame.model.settings
    file = settings.files["forces"]
    element_col = settings.columns["forces"]["element"]
    ids = frame.model.elements.index.to_numpy()
    listed = 0
    for e in np.flatnonzero(lacking.any(axis=0)).tolist():
        combos = np.flatnonzero(kept & lacking[np.maximum(which, 0), e])
        for c in combos[: MAX_LISTED - listed].tolist():
            problems.add(
                file,
                None,
                element_col,
                ids[e],
                f"rows for combination '{names[c]}', which other elements have",
            )
            listed += 1
        if listed >= MAX_LISTED:
            break
    problems.more += total - listed


def model_with(frame: Frame, forces: pd.DataFrame) -> Model:
    """The frame's model with ``forces`` as its forces table."""
    return dataclasses.replace(frame.model, forces=forces)


def checked_combinations(frame: Frame, names: Sequence[str], from_option: bool) -> list[str]:
    """The load combinations to check, of ``names`` (the model's, in order), as selected.

    The selection of ``--combination`` or ``[forces] combinations``; a name the model does not
    have is refused as the whole-table reader refuses it.

    Raises:
        InputError: a selected combination the forces do not hold.
    """
    problems = ProblemList()
    settings = frame.model.settings
    series = pd.Series(pd.Categorical(list(names), categories=pd.Index(list(names), dtype=object)))
    keep = load._selected_combinations(
        series, settings, from_option, settings.files["forces"], problems
    )
    problems.raise_if_any()
    return list(names) if keep is None else [n for n, k in zip(names, keep, strict=True) if k]
