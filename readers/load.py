"""Load a model folder: read every table, validate it whole-column, convert to internal units.

Every row of every table is validated before anything is selected or used: rows of load
combinations left out by ``--combination`` or ``[forces] combinations`` are checked too. One defect
gives one problem: a node or an element that already has a problem adds no follow-on problems
about the elements or force rows that depend on it.
"""

from __future__ import annotations

import dataclasses
import difflib
from collections.abc import Iterable
from pathlib import Path

import numpy as np
import pandas as pd
from flangewise.readers import units
from flangewise.readers.catalogue import PLATES, PROPERTIES, catalogue, normalise
from flangewise.readers.csv_parse import ORIGIN_KEY, cell_text
from flangewise.readers.errors import InputError, Problem, ProblemList
from flangewise.readers.model import (
    COINCIDENT_MM,
    Model,
    drawn_backwards,
)
from flangewise.readers.nearby import close_pairs
from flangewise.readers.parquet_parse import ParquetOrigin
from flangewise.readers.ranges import moments_nmm, node_coordinates, section_plates
from flangewise.readers.settings import (
    FLANGE_WORDS,
    TABLES,
    Settings,
    read_settings,
)
from flangewise.readers.source_rows import with_source_rows
from flangewise.readers.stations import station_positions
from flangewise.readers.tables import (
    MAX_LISTED,
    UNPARSED_KEY,
    numeric,
    read_table,
    required_text,
    spreadsheet_rows,
)

#: Section property overrides and the power of the section length unit each carries.
OVERRIDES: dict[str, int] = {"A": 2, "Ix": 4, "Iy": 4, "Sx": 3, "Zx": 3, "J": 4, "Cw": 6}

#: Valid combination names shown when an unknown one is asked for.
NAMES_SHOWN = 8


def load_model(
    folder: Path | str,
    settings_file: Path | str | None = None,
    combinations: tuple[str, ...] | None = None,
) -> Model:
    """Read and validate the model in ``folder``; return it in internal units.

    Args:
        folder: the folder holding the CSV files (and ``flangewise.toml`` if any).
        settings_file: a settings file to use instead of the folder's own.
        combinations: load combinations to include (the command line's ``--combination``),
            overriding the settings file's list.

    Raises:
        InputError: listing every problem found (file, spreadsheet row, column, value, expected).
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
    raw = {t: read_table(settings, t, problems) for t in TABLES}
    _raise_if_any(problems, raw.values())
    tables = {t: df for t, df in raw.items() if df is not None}
    nodes = _nodes(tables["nodes"], settings, problems)
    _breaks(nodes, settings, problems)
    sections = _sections(tables["sections"], settings, problems)
    sections = _named_shapes(tables["elements"], sections, settings)
    elements, broken = _elements(tables["elements"], nodes, sections, settings, problems)
    braces = _braces(tables["braces"], nodes, settings, problems)
    supports = _supports(tables["supports"], nodes, settings, problems)
    forces = _forces(tables["forces"], elements, broken, settings, from_option, problems)
    _raise_if_any(problems, raw.values(), settings)
    return Model(
        nodes=nodes,
        elements=elements,
        sections=sections,
        forces=forces,
        braces=braces,
        supports=supports,
        settings=settings,
    )


def _raise_if_any(
    problems: ProblemList,
    tables: Iterable[pd.DataFrame | None],
    settings: Settings | None = None,
) -> None:
    """Raise the problems found; one in a folder of Parquet files names the file and its row.

    With ``settings``, a problem in a folder converted from a CSV file also names the row the
    CSV file had (:func:`with_source_rows`).
    """
    for df in tables:
        origin = None if df is None else df.attrs.get(ORIGIN_KEY)
        if isinstance(origin, ParquetOrigin):
            problems.items = [origin.relocate(p) for p in problems.items]
    if problems and settings is not None and settings.path("forces").is_dir():
        forces = settings.path("forces")
        problems.items = with_source_rows(problems.items, forces, settings.files["forces"])
    problems.raise_if_any()


def _unknown_ids(
    df: pd.DataFrame,
    column: str,
    ids: pd.Index,
    file: str,
    their_name: str,
    expected: str,
    problems: ProblemList,
) -> np.ndarray:
    """Record every non-empty cell of ``column`` that is not one of ``ids``; return that mask."""
    unknown = (df[column].notna() & ~_known(df[column], ids)).to_numpy()
    rows = spreadsheet_rows(df.index[unknown])
    problems.add_many(file, rows, their_name, df.loc[unknown, column], expected)
    return unknown


def _known(values: pd.Series, ids: pd.Index) -> pd.Series:
    """Return, per value, whether it is one of ``ids`` (a hash look-up, not a scan)."""
    if ids.dtype != object:
        ids = pd.Index(ids.to_numpy(dtype=object), dtype=object)
    # An object index keeps its hash table: the nodes' is built once for every table naming them.
    found = ids.get_indexer(pd.Index(values.to_numpy(dtype=object), dtype=object)) >= 0
    return pd.Series(found, index=values.index)


def _col(settings: Settings, table: str, ours: str) -> str:
    return settings.columns[table][ours]


def _settings_name(settings: Settings) -> str:
    return str(settings.source) if settings.source is not None else "the settings"


def _unique_ids(
    df: pd.DataFrame, column: str, table: str, settings: Settings, problems: ProblemList
) -> np.ndarray:
    """Record repeated ids; return a mask of rows that keep their id (first occurrences)."""
    name = settings.files[table]
    ids = df[column]
    dup = ids.duplicated(keep="first") & ids.notna()
    if dup.any():
        first = ids[~ids.duplicated(keep="first")]
        first_row = pd.Series(spreadsheet_rows(first.index), index=first.to_numpy())
        rows = spreadsheet_rows(df.index[dup.to_numpy()])
        for r, v in zip(rows, ids[dup], strict=True):
            problems.add(
                name,
                int(r),
                _col(settings, table, column),
                v,
                f"a unique id (it is already used at row {first_row[v]})",
            )
    return (~dup & ids.notna()).to_numpy()


def _nodes(df: pd.DataFrame, settings: Settings, problems: ProblemList) -> pd.DataFrame:
    """Nodes in mm; a coordinate that is missing or out of range is NaN (already reported)."""
    file = settings.files["nodes"]
    required_text(df, "id", file, _col(settings, "nodes", "id"), problems)
    keep = _unique_ids(df, "id", "nodes", settings, problems)
    xyz = node_coordinates(df, settings, problems)
    if settings.vertical == "y":
        # Y up -> internal z up, keeping a right-handed system: (X, Y, Z) -> (X, -Z, Y).
        xyz = {"x": xyz["x"], "y": -xyz["z"], "z": xyz["y"]}
    out = pd.DataFrame(xyz)
    out.index = pd.Index(df["id"], name="id")
    _coincident_nodes(out, df.index, file, settings, problems)
    return out[keep]


def _coincident_nodes(
    nodes: pd.DataFrame,
    records: pd.Index,
    file: str,
    settings: Settings,
    problems: ProblemList,
) -> None:
    pts = nodes[["x", "y", "z"]].to_numpy()
    finite = np.isfinite(pts).all(axis=1)
    idx = np.flatnonzero(finite)
    if len(idx) < 2:
        return
    pairs = close_pairs(pts[idx], COINCIDENT_MM)
    if len(pairs) == 0:
        return
    a, b = idx[pairs.min(axis=1)], idx[pairs.max(axis=1)]
    ids = nodes.index.to_numpy()
    rows = spreadsheet_rows(records)
    id_col = _col(settings, "nodes", "id")
    for i, j in zip(a.tolist(), b.tolist(), strict=True):
        if ids[i] == ids[j]:
            continue  # a repeated id is reported as such
        problems.add(
            file,
            int(rows[j]),
            id_col,
            ids[j],
            f"a node at its own point; it lies within {COINCIDENT_MM:g} mm of node "
            f"'{ids[i]}' (row {rows[i]}): merge them or move one",
        )


def _breaks(nodes: pd.DataFrame, settings: Settings, problems: ProblemList) -> None:
    """Record every node id in ``[members] breaks`` that the nodes table does not have."""
    listed = settings.members.breaks
    if not listed:
        return
    missing = nodes.index.get_indexer(pd.Index(list(listed), dtype=object)) < 0
    for node in np.asarray(listed, dtype=object)[missing].tolist():
        problems.add(
            _settings_name(settings),
            None,
            "members.breaks",
            node,
            f"a node id of {settings.files['nodes']} ([members] breaks)",
        )


def _sections(df: pd.DataFrame, settings: Settings, problems: ProblemList) -> pd.DataFrame:
    """The sections table, each row with its ``source`` and the catalogue shape it ``replaces``.

    A row naming a catalogue shape whose plate cells (d, b, tf, tw) are all empty takes the
    shape's plates and tabulated properties, with its own fy and any properties it gives; a row
    with plates replaces the catalogue shape of its name altogether.
    """
    file = settings.files["sections"]
    col = lambda ours: _col(settings, "sections", ours)  # noqa: E731
    required_text(df, "name", file, col("name"), problems)
    keep = _unique_ids(df, "name", "sections", settings, problems)
    shapes = catalogue()
    found, _ = shapes.match(df["name"])
    from_catalogue = (found.notna() & _empty_cells(df, ("d", "b", "tf", "tw"))).to_numpy()
    f = units.factor("length", settings.units.section)
    if from_catalogue.any():
        # The shape's plates stand in the empty cells, so that the row is read like any other.
        df = df.copy()
        tab = shapes.shapes.loc[found[from_catalogue].to_numpy()]
        for c in PLATES:
            df[c] = df[c].astype(np.float64) if c in df else np.nan
            df.loc[from_catalogue, c] = tab[c].to_numpy() / f
    out = section_plates(df, settings, problems)
    rows = spreadsheet_rows(df.index)
    for c, power in OVERRIDES.items():
        v = np.full(len(df), np.nan)
        if c in df:
            with np.errstate(over="ignore"):
                v = numeric(df, c, file, col(c), problems, required=False).to_numpy() * f**power
            bad = ~np.isnan(v) & ~((v > 0) & np.isfinite(v))
            problems.add_many(
                file,
                rows[bad],
                col(c),
                cell_text(df, c, bad),
                "a positive, finite value or an empty cell",
            )
        out[c] = v
    given = out[list(OVERRIDES)].notna().any(axis=1).to_numpy()
    out["source"] = np.where(given, "given properties", "plates")
    out["replaces"] = found.astype(object).where(found.notna(), "").to_numpy(dtype=object)
    if from_catalogue.any():
        tab = shapes.shapes.loc[found[from_catalogue].to_numpy()]
        for c in PLATES:
            out.loc[from_catalogue, c] = tab[c].to_numpy()
        for c in PROPERTIES:
            mine = out.loc[from_catalogue, c].to_numpy()
            out.loc[from_catalogue, c] = np.where(np.isnan(mine), tab[c].to_numpy(), mine)
        words = np.where(given[from_catalogue], "; with properties given in the sections table", "")
        out.loc[from_catalogue, "source"] = (
            "catalogue: " + tab["source"].to_numpy(dtype=object) + words.astype(object)
        )
        out.loc[from_catalogue, "replaces"] = ""
    return out[keep]


def _empty_cells(df: pd.DataFrame, columns: tuple[str, ...]) -> pd.Series:
    """Per row, whether every one of ``columns`` is empty (a cell holding text is not empty)."""
    empty = pd.Series(True, index=df.index)
    unparsed = df.attrs.get(UNPARSED_KEY, {})
    for c in columns:
        if c not in df:
            continue
        empty &= df[c].isna()
        if c in unparsed:
            empty.iloc[unparsed[c].records] = False
    return empty


def _named_shapes(
    elements: pd.DataFrame, sections: pd.DataFrame, settings: Settings
) -> pd.DataFrame:
    """Add the catalogue shapes that elements name and the sections table does not have.

    Each is named as the elements table writes it, with the shape's plates and tabulated
    properties (taking precedence over plate formulas in the engine) and ``[material] fy``.
    """
    names = elements["section"].dropna()
    missing = pd.Series(names[~_known(names, sections.index)].unique(), dtype=object)
    found, _ = catalogue().match(missing)
    # A shape a sections row replaces, written another way here, is no catalogue shape: the
    # elements would silently skip the user's own row (reported in _unknown_sections).
    hit = (found.notna() & ~found.isin(sections["replaces"].to_numpy())).to_numpy()
    if not hit.any():
        return sections
    tab = catalogue().shapes.loc[found[hit].to_numpy()]
    added = pd.DataFrame(
        {
            **{c: tab[c].to_numpy() for c in (*PLATES,)},
            "fy": settings.default_fy,
            **{c: tab[c].to_numpy() for c in PROPERTIES},
            "source": "catalogue: " + tab["source"].to_numpy(dtype=object),
            "replaces": "",
        },
        index=pd.Index(missing[hit].to_numpy(dtype=object), name="name"),
    )
    return pd.concat([sections, added[sections.columns]])


def _elements(
    df: pd.DataFrame,
    nodes: pd.DataFrame,
    sections: pd.DataFrame,
    settings: Settings,
    problems: ProblemList,
) -> tuple[pd.DataFrame, np.ndarray]:
    """The elements table, and per element whether it has a problem its forces depend on.

    Such an element (an unknown node, a node without usable coordinates, zero length) has no
    usable length, so its force rows are not checked against it: one defect, one problem.
    """
    file = settings.files["elements"]
    col = lambda ours: _col(settings, "elements", ours)  # noqa: E731
    for c in ("id", "start", "end", "section"):
        required_text(df, c, file, col(c), problems)
    keep = _unique_ids(df, "id", "elements", settings, problems)
    rows = spreadsheet_rows(df.index)
    for c in ("start", "end"):
        _unknown_ids(df, c, nodes.index, file, col(c), "a node id of the nodes table", problems)
    _unknown_sections(df, sections, file, col("section"), problems)
    # Coordinates of each end; an unknown or missing node (-1) takes the last row, NaN.
    xyz = np.vstack([nodes[["x", "y", "z"]].to_numpy(), np.full((1, 3), np.nan)])
    start = xyz[nodes.index.get_indexer(pd.Index(df["start"].to_numpy(dtype=object), dtype=object))]
    end = xyz[nodes.index.get_indexer(pd.Index(df["end"].to_numpy(dtype=object), dtype=object))]
    d = end - start
    length = np.sqrt((d * d).sum(axis=1))
    same = (df["start"] == df["end"]).to_numpy() & df["start"].notna().to_numpy()
    zero = (length < COINCIDENT_MM) | same
    problems.add_many(
        file,
        rows[zero],
        col("end"),
        df.loc[zero, "end"],
        f"an end node other than the start node, at least {COINCIDENT_MM:g} mm away "
        "(zero-length element)",
    )
    broken = zero | ~np.isfinite(length)
    out = pd.DataFrame(
        {
            "start": df["start"].to_numpy(),
            "end": df["end"].to_numpy(),
            "section": df["section"].to_numpy(),
            "member": df["member"].to_numpy() if "member" in df else pd.NA,
            "length": length,
            "backwards": drawn_backwards(d[:, 0], d[:, 1], d[:, 2]),
            "row": rows,
        },
        index=pd.Index(df["id"], name="id"),
    )
    return out[keep], broken[keep]


def _unknown_sections(
    df: pd.DataFrame, sections: pd.DataFrame, file: str, their_name: str, problems: ProblemList
) -> None:
    """Record every section name that is neither in the sections table nor one catalogue shape.

    A name that fits two catalogue shapes is refused with both named: never a guess. So is a
    catalogue shape written otherwise than the sections row that replaces it.
    """
    names = df["section"]
    known = sections.index
    unknown = (names.notna() & ~_known(names, known)).to_numpy()
    if not unknown.any():
        return
    found, ambiguous = catalogue().match(names[unknown])
    replaced = sections["replaces"].to_numpy(dtype=object)
    mine = replaced != ""
    row_of = pd.Series(sections.index.to_numpy(dtype=object)[mine], index=replaced[mine])
    row_of = row_of[~row_of.index.duplicated()]
    keys = list(catalogue().keys)
    rows = spreadsheet_rows(df.index[unknown])
    problems.more += max(0, len(rows) - MAX_LISTED)
    listed = zip(rows[:MAX_LISTED].tolist(), names[unknown][:MAX_LISTED], ambiguous, strict=False)
    for (row, name, both), shape in zip(listed, found, strict=False):
        if isinstance(shape, str) and shape in row_of.index:
            expected = (
                f"the name as the sections table writes it, '{row_of[shape]}': that row "
                f"replaces catalogue shape {shape}"
            )
        elif isinstance(both, str):
            expected = (
                f"one shape: this name fits {both} (write the designation in full, or add a "
                "row for it to the sections table)"
            )
        else:
            close = difflib.get_close_matches(normalise(name), keys, n=3, cutoff=0.8)
            near = [catalogue().keys[k][0] for k in close] + difflib.get_close_matches(
                name, [str(k) for k in known], n=3
            )
            hint = f" (close: {', '.join(near)})" if near else ""
            expected = f"a section name of the sections table or a catalogue shape{hint}"
        problems.add(file, int(row), their_name, name, expected)


def _braces(
    df: pd.DataFrame, nodes: pd.DataFrame, settings: Settings, problems: ProblemList
) -> pd.DataFrame:
    file = settings.files["braces"]
    col = lambda ours: _col(settings, "braces", ours)  # noqa: E731
    for c in ("node", "flange"):
        required_text(df, c, file, col(c), problems)
    rows = spreadsheet_rows(df.index)
    _unknown_ids(
        df, "node", nodes.index, file, col("node"), "a node id of the nodes table", problems
    )
    words = {w: w for w in FLANGE_WORDS}
    for ours, extra in settings.flange_words.items():
        words.update({e: ours for e in extra})
    flange = df["flange"].astype("str").str.lower().map(words)
    bad = (flange.isna() & df["flange"].notna()).to_numpy()
    problems.add_many(
        file,
        rows[bad],
        col("flange"),
        df.loc[bad, "flange"],
        f"a flange word: one of {sorted(words)} (more can be named in [flange_words])",
    )
    return pd.DataFrame({"node": df["node"].to_numpy(), "flange": flange.to_numpy()})


def _supports(
    df: pd.DataFrame, nodes: pd.DataFrame, settings: Settings, problems: ProblemList
) -> pd.DataFrame:
    """Supports; ``restrains`` is carried as written (a support braces both flanges anyway)."""
    file = settings.files["supports"]
    col = lambda ours: _col(settings, "supports", ours)  # noqa: E731
    required_text(df, "node", file, col("node"), problems)
    _unknown_ids(
        df, "node", nodes.index, file, col("node"), "a node id of the nodes table", problems
    )
    if "restrains" in df:
        text = df["restrains"].astype(object).where(df["restrains"].notna(), "all")
    else:
        text = pd.Series("all", index=df.index, dtype=object)
    return pd.DataFrame({"node": df["node"].to_numpy(), "restrains": text.to_numpy()})


def _forces(
    df: pd.DataFrame,
    elements: pd.DataFrame,
    broken: np.ndarray,
    settings: Settings,
    from_option: bool,
    problems: ProblemList,
) -> pd.DataFrame:
    """Validate every force row, convert it, then keep the selected combinations."""
    file = settings.files["forces"]
    col = lambda ours: _col(settings, "forces", ours)  # noqa: E731
    for c in ("element", "combination"):
        required_text(df, c, file, col(c), problems)
    rows_of = lambda mask: spreadsheet_rows(df.index[mask])  # noqa: E731

    # Element codes re-based onto the elements table, so that codes are element row numbers.
    # Ids match exactly as text ("007" is not "7"). One gather through a lookup whose last entry
    # (-1) catches the missing code -1; the lookup already has the categorical's code type.
    labels = pd.Index(df["element"].cat.categories.to_numpy(dtype=object), dtype=object)
    ids = pd.Index(elements.index.to_numpy(dtype=object), dtype=object)
    lookup = np.append(ids.get_indexer(labels), -1).astype(_code_type(len(ids)))
    raw_codes = df["element"].cat.codes.to_numpy()
    ecode = lookup[raw_codes]
    _unknown_elements(raw_codes, lookup, labels, df.index, file, col("element"), problems)

    pos_written = numeric(df, "position", file, col("position"), problems).to_numpy()
    moment = numeric(df, "M", file, col("M"), problems).to_numpy()
    pos = station_positions(df, pos_written, ecode, broken, elements, settings, file, problems)

    m = moments_nmm(df, moment, settings, file, problems)  # a new array: negated in place
    if settings.positive_moment == "compresses_bottom":
        np.negative(m, out=m)
    if settings.backwards_flips_sign and elements["backwards"].any():
        flip = np.append(elements["backwards"].to_numpy(dtype=bool), False)[ecode]
        np.negative(m, out=m, where=flip)
    out = {
        # Every code is a row of the elements table once no problem is left (checked above).
        "element": pd.Categorical.from_codes(ecode, categories=elements.index, validate=False),
        "combination": df["combination"].array,
        "position": pos,
        "M": m,
    }
    for c, kind in (("N", "force"), ("V", "force"), ("M_minor", "moment"), ("T", "moment")):
        if c in df:
            unit = settings.units.force if kind == "force" else settings.units.moment
            with np.errstate(over="ignore"):
                v = numeric(df, c, file, col(c), problems, required=False).to_numpy()
                v = v * units.factor(kind, unit)  # type: ignore[arg-type]
            huge = np.isinf(v)
            problems.add_many(
                file,
                rows_of(huge),
                col(c),
                cell_text(df, c, huge),
                f"a finite number once converted from '{unit}'",
            )
            out[c] = v
    keep = _selected_combinations(df["combination"], settings, from_option, file, problems)
    if keep is None:
        return pd.DataFrame(out, copy=False)
    chosen = pd.DataFrame(out, copy=False)[keep]
    chosen["combination"] = chosen["combination"].cat.remove_unused_categories()
    return chosen


def _code_type(categories: int) -> type[np.signedinteger]:
    """Return the integer type pandas keeps a categorical's codes in, for so many categories."""
    for t in (np.int8, np.int16, np.int32):
        if categories < np.iinfo(t).max:
            return t
    return np.int64


def _unknown_elements(
    raw_codes: np.ndarray,
    lookup: np.ndarray,
    labels: pd.Index,
    records: pd.Index,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record each element id of the forces file that the elements table lacks, once.

    An unknown id is one defect however many rows carry it: one problem at its first row.
    """
    unknown_codes = np.flatnonzero(lookup[:-1] < 0)
    if len(unknown_codes) == 0:
        return
    hit = np.flatnonzero(np.isin(raw_codes, unknown_codes))
    codes, first, count = np.unique(raw_codes[hit], return_index=True, return_counts=True)
    rows = spreadsheet_rows(records[hit[first]])
    order = np.argsort(rows, kind="stable")
    for i in order[:MAX_LISTED].tolist():
        more = f" ({count[i]} rows name it)" if count[i] > 1 else ""
        problems.add(
            file,
            int(rows[i]),
            element_col,
            labels[codes[i]],
            f"an element id of the elements table, matched exactly as text{more}",
        )
    problems.more += max(0, len(codes) - MAX_LISTED)


def _selected_combinations(
    combination: pd.Series,
    settings: Settings,
    from_option: bool,
    file: str,
    problems: ProblemList,
) -> np.ndarray | None:
    """Return the mask of rows of the selected combinations (``None``: all of them).

    An unknown name is a problem naming where it was asked for: the ``--combination`` option,
    or ``[forces] combinations`` in the settings file; with a few valid names and close matches.
    """
    wanted = settings.combinations
    if not wanted:
        return None
    names = [str(c) for c in combination.cat.categories]
    present = set(names)
    shown = ", ".join(f"'{n}'" for n in names[:NAMES_SHOWN])
    if len(names) > NAMES_SHOWN:
        shown += f", ... ({len(names)} in all)"
    for c in wanted:
        if c in present:
            continue
        # Case is ignored in the comparison: "uls1" is a near miss of "ULS1".
        lowered = {n.lower(): n for n in names}
        close = [lowered[n] for n in difflib.get_close_matches(c.lower(), list(lowered), n=3)]
        near = f"; closest: {', '.join(repr(n) for n in close)}" if close else ""
        expected = f"a load combination of {file}: {shown}{near}"
        if from_option:
            problems.add("--combination", None, None, c, expected)
        else:
            problems.add(
                _settings_name(settings),
                None,
                "forces.combinations",
                c,
                f"{expected} ([forces] combinations)",
            )
    return combination.isin(wanted).to_numpy()
