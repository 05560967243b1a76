"""Load a model folder: read every table, validate it whole-column, convert to internal units."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import numpy as np
import pandas as pd
from flangewise.readers import units
from flangewise.readers.errors import InputError, Problem, ProblemList
from flangewise.readers.model import COINCIDENT_MM, POSITION_TOLERANCE, Model, drawn_backwards
from flangewise.readers.settings import FLANGE_WORDS, TABLES, Settings, read_settings
from flangewise.readers.tables import numeric, read_table, required_text, spreadsheet_rows
from scipy.spatial import cKDTree

#: Yield stresses outside this range [MPa] are almost always a units mistake.
FY_RANGE_MPA = (150.0, 1000.0)

#: Section property overrides and the power of the section length unit each carries.
OVERRIDES: dict[str, int] = {"A": 2, "Ix": 4, "Iy": 4, "Sx": 3, "Zx": 3, "J": 4, "Cw": 6}

#: Words accepted in the supports table's ``restrains`` column.
RESTRAINT_WORDS = frozenset({"ux", "uy", "uz", "rx", "ry", "rz", "all"})

#: Problems of one kind listed per table before the rest are only counted.
MAX_LISTED = 60


def load_model(
    folder: Path | str,
    settings_file: Path | str | None = None,
    combinations: tuple[str, ...] | None = None,
) -> Model:
    """Read and validate the model in ``folder``; return it in internal units.

    Args:
        folder: the folder holding the CSV files (and ``flangewise.toml`` if any).
        settings_file: a settings file to use instead of the folder's own.
        combinations: load combinations to include, overriding the settings file's list.

    Raises:
        InputError: listing every problem found (file, spreadsheet row, column, value, expected).
    """
    if not Path(folder).is_dir():
        raise InputError(
            [Problem(str(folder), None, None, None, "a folder holding the model's CSV files")]
        )
    settings = read_settings(folder, settings_file)
    if combinations is not None:
        settings = dataclasses.replace(settings, combinations=tuple(combinations))
    problems = ProblemList()
    raw = {t: read_table(settings, t, problems) for t in TABLES}
    problems.raise_if_any()
    tables = {t: df for t, df in raw.items() if df is not None}
    nodes = _nodes(tables["nodes"], settings, problems)
    sections = _sections(tables["sections"], settings, problems)
    elements = _elements(tables["elements"], nodes, sections, settings, problems)
    braces = _braces(tables["braces"], nodes, settings, problems)
    supports = _supports(tables["supports"], nodes, settings, problems)
    forces = _forces(tables["forces"], elements, settings, problems)
    problems.raise_if_any()
    return Model(
        nodes=nodes,
        elements=elements,
        sections=sections,
        forces=forces,
        braces=braces,
        supports=supports,
        settings=settings,
    )


def _match_ids(labels: pd.Index, ids: pd.Index) -> np.ndarray:
    """Return, per label, the row of ``ids`` it names, or -1.

    A parser may read all-digit ids as numbers and lose leading zeros ("007" -> "7"); such labels
    also match an all-digit id equal as an integer, when that match is unique.
    """
    where = ids.get_indexer(labels).astype(np.int32)
    miss = (where < 0) & np.asarray(labels.astype(str).str.fullmatch(r"\d+"), dtype=bool)
    if miss.any():
        digits = ids[np.asarray(ids.astype(str).str.fullmatch(r"\d+"), dtype=bool)]
        as_int = pd.Index(digits.astype(np.int64))
        if as_int.is_unique:
            rows = ids.get_indexer(digits)
            found = as_int.get_indexer(labels[miss].astype(np.int64))
            where[miss] = np.where(found >= 0, rows[found], -1)
    return where


def _unknown_ids(
    df: pd.DataFrame,
    column: str,
    ids: pd.Index,
    file: str,
    their_name: str,
    expected: str,
    problems: ProblemList,
) -> None:
    """Record every non-empty cell of ``column`` that is not one of ``ids``."""
    unknown = (df[column].notna() & ~_known(df[column], ids)).to_numpy()
    rows = spreadsheet_rows(df.index[unknown])
    problems.add_many(file, rows, their_name, df.loc[unknown, column], expected)


def _known(values: pd.Series, ids: pd.Index) -> pd.Series:
    """Return, per value, whether it is one of ``ids`` (a hash look-up, not a scan)."""
    found = pd.Index(ids.to_numpy(dtype=object)).get_indexer(values.to_numpy(dtype=object)) >= 0
    return pd.Series(found, index=values.index)


def _col(settings: Settings, table: str, ours: str) -> str:
    return settings.columns[table][ours]


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
    file = settings.files["nodes"]
    required_text(df, "id", file, _col(settings, "nodes", "id"), problems)
    keep = _unique_ids(df, "id", "nodes", settings, problems)
    f = units.factor("length", settings.units.length)
    xyz = {c: numeric(df, c, file, _col(settings, "nodes", c), problems) * f for c in "xyz"}
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
    pairs = cKDTree(pts[idx]).query_pairs(r=COINCIDENT_MM, output_type="ndarray")
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


def _sections(df: pd.DataFrame, settings: Settings, problems: ProblemList) -> pd.DataFrame:
    file = settings.files["sections"]
    col = lambda ours: _col(settings, "sections", ours)  # noqa: E731
    required_text(df, "name", file, col("name"), problems)
    keep = _unique_ids(df, "name", "sections", settings, problems)
    f = units.factor("length", settings.units.section)
    rows = spreadsheet_rows(df.index)
    out = pd.DataFrame(index=pd.Index(df["name"], name="name"))
    for c in ("d", "b", "tf", "tw"):
        v = numeric(df, c, file, col(c), problems)
        bad = (v <= 0).to_numpy()
        problems.add_many(file, rows[bad], col(c), v[bad], "a positive dimension")
        out[c] = v.to_numpy() * f
    if "r" in df:
        r = numeric(df, "r", file, col("r"), problems, required=False)
        bad = (r < 0).to_numpy()
        problems.add_many(file, rows[bad], col("r"), r[bad], "a root radius of zero or more")
        out["r"] = r.fillna(0.0).to_numpy() * f
    else:
        out["r"] = 0.0
    thick = (2.0 * out["tf"] >= out["d"]).to_numpy()
    problems.add_many(
        file,
        rows[thick],
        col("tf"),
        df.loc[thick, "tf"],
        f"a flange thinner than half the depth '{col('d')}'",
    )
    wide = (out["tw"] >= out["b"]).to_numpy()
    problems.add_many(
        file,
        rows[wide],
        col("tw"),
        df.loc[wide, "tw"],
        f"a web thinner than the flange width '{col('b')}'",
    )
    stress = units.factor("stress", settings.units.stress)
    if "fy" in df:
        fy = numeric(df, "fy", file, col("fy"), problems, required=False) * stress
        fy = fy.fillna(settings.default_fy)
    else:
        fy = pd.Series(settings.default_fy, index=df.index)
    lo, hi = FY_RANGE_MPA
    bad = ((fy < lo) | (fy > hi)).to_numpy()
    problems.add_many(
        file,
        rows[bad],
        col("fy") if "fy" in df else "(default fy from the settings)",
        fy[bad].round(3),
        f"a yield stress of {lo:g} to {hi:g} MPa once converted from '{settings.units.stress}' "
        "(a value outside is almost always a units mistake: check [units] stress)",
    )
    out["fy"] = fy.to_numpy()
    for c, power in OVERRIDES.items():
        if c in df:
            v = numeric(df, c, file, col(c), problems, required=False)
            bad = (v <= 0).to_numpy()
            problems.add_many(file, rows[bad], col(c), v[bad], "a positive value or an empty cell")
            out[c] = v.to_numpy() * f**power
    return out[keep]


def _elements(
    df: pd.DataFrame,
    nodes: pd.DataFrame,
    sections: pd.DataFrame,
    settings: Settings,
    problems: ProblemList,
) -> pd.DataFrame:
    file = settings.files["elements"]
    col = lambda ours: _col(settings, "elements", ours)  # noqa: E731
    for c in ("id", "start", "end", "section"):
        required_text(df, c, file, col(c), problems)
    keep = _unique_ids(df, "id", "elements", settings, problems)
    rows = spreadsheet_rows(df.index)
    for c in ("start", "end"):
        _unknown_ids(df, c, nodes.index, file, col(c), "a node id of the nodes table", problems)
    _unknown_ids(
        df,
        "section",
        sections.index,
        file,
        col("section"),
        "a section name of the sections table",
        problems,
    )
    start = nodes.reindex(df["start"].to_numpy())[["x", "y", "z"]].to_numpy()
    end = nodes.reindex(df["end"].to_numpy())[["x", "y", "z"]].to_numpy()
    d = end - start
    length = np.sqrt((d * d).sum(axis=1))
    zero = (length < COINCIDENT_MM) | (df["start"] == df["end"]).to_numpy()
    problems.add_many(
        file,
        rows[zero],
        col("end"),
        df.loc[zero, "end"],
        f"an end node other than the start node, at least {COINCIDENT_MM:g} mm away "
        "(zero-length element)",
    )
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
    return out[keep]


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
    file = settings.files["supports"]
    col = lambda ours: _col(settings, "supports", ours)  # noqa: E731
    required_text(df, "node", file, col("node"), problems)
    rows = spreadsheet_rows(df.index)
    _unknown_ids(
        df, "node", nodes.index, file, col("node"), "a node id of the nodes table", problems
    )
    if "restrains" in df:
        text = df["restrains"].fillna("all").astype("str").str.lower()
        # One check per distinct value, not per row: support tables repeat a handful of values.
        ok = {v: set(re.split(r"[\s,;+]+", v.strip())) <= RESTRAINT_WORDS for v in text.unique()}
        bad = (~text.map(ok).astype(bool)).to_numpy()
        problems.add_many(
            file,
            rows[bad],
            col("restrains"),
            df.loc[bad, "restrains"],
            f"words from {sorted(RESTRAINT_WORDS)} separated by blanks or commas",
        )
    else:
        text = pd.Series("all", index=df.index)
    return pd.DataFrame({"node": df["node"].to_numpy(), "restrains": text.to_numpy()})


def _forces(
    df: pd.DataFrame, elements: pd.DataFrame, settings: Settings, problems: ProblemList
) -> pd.DataFrame:
    file = settings.files["forces"]
    col = lambda ours: _col(settings, "forces", ours)  # noqa: E731
    for c in ("element", "combination"):
        required_text(df, c, file, col(c), problems)
    if settings.combinations:
        present = set(df["combination"].cat.categories)
        for c in settings.combinations:
            if c not in present:
                problems.add(
                    str(settings.source),
                    None,
                    "forces.combinations",
                    c,
                    f"a load combination present in {file}",
                )
        df = df[df["combination"].isin(settings.combinations)]
        df["combination"] = df["combination"].cat.remove_unused_categories()
    rows_of = lambda mask: spreadsheet_rows(df.index[mask])  # noqa: E731

    # Element codes re-based onto the elements table, so that codes are element row numbers.
    # One gather through a lookup whose last entry (-1) catches the missing code -1.
    lookup = np.append(_match_ids(df["element"].cat.categories, elements.index), -1)
    raw_codes = df["element"].cat.codes.to_numpy()
    ecode = lookup[raw_codes]
    unknown = (ecode < 0) & (raw_codes >= 0)
    if unknown.any():
        problems.add_many(
            file,
            rows_of(unknown),
            col("element"),
            df["element"][unknown],
            "an element id of the elements table",
        )

    pos = numeric(df, "position", file, col("position"), problems).to_numpy()
    moment = numeric(df, "M", file, col("M"), problems).to_numpy()
    length = np.append(elements["length"].to_numpy(), np.nan)[ecode]
    if settings.positions == "fraction":
        pos = pos * length
        given_as = "a fraction from 0 to 1 of the element's length"
    else:
        pos = pos * units.factor("length", settings.units.length)
        given_as = f"a distance from 0 to the element's length ({settings.units.length})"
    slack = POSITION_TOLERANCE * length
    outside = (pos < -slack) | (pos > length + slack)  # False where length is NaN
    if outside.any():
        problems.add_many(
            file, rows_of(outside), col("position"), df["position"][outside], given_as
        )
    pos = np.clip(pos, 0.0, length)

    ccode = df["combination"].cat.codes.to_numpy()
    good = (ecode >= 0) & (ccode >= 0) & np.isfinite(pos)
    everything = bool(good.all())
    _station_counts(
        ecode if everything else ecode[good],
        ccode if everything else ccode[good],
        pos if everything else pos[good],
        df.index if everything else df.index[good],
        elements,
        df["combination"],
        file,
        col("element"),
        problems,
    )

    m = moment * units.factor("moment", settings.units.moment)
    if settings.positive_moment == "compresses_bottom":
        m = -m
    if settings.backwards_flips_sign:
        flip = np.append(elements["backwards"].to_numpy(), False)[ecode]
        m = np.where(flip, -m, m)
    out = {
        "element": pd.Categorical.from_codes(ecode, categories=elements.index),
        "combination": df["combination"].array,
        "position": pos,
        "M": m,
    }
    for c, kind in (("N", "force"), ("V", "force"), ("M_minor", "moment"), ("T", "moment")):
        if c in df:
            unit = settings.units.force if kind == "force" else settings.units.moment
            v = numeric(df, c, file, col(c), problems, required=False)
            out[c] = v.to_numpy() * units.factor(kind, unit)  # type: ignore[arg-type]
    return pd.DataFrame(out, copy=False)


def _station_counts(
    ecode: np.ndarray,
    ccode: np.ndarray,
    pos: np.ndarray,
    records: pd.Index,
    elements: pd.DataFrame,
    combos: pd.Series,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record (element, combination) pairs with fewer than two positions, or missing altogether.

    Counted with ``np.bincount`` over a dense (element, combination) key: one pass per statistic,
    no sort and no group-by, which matters at millions of rows.
    """
    if len(ecode) == 0:
        return
    cats = combos.cat.categories
    ncomb = len(cats)
    n_el = len(elements)
    key = ecode.astype(np.int64) * ncomb + ccode.astype(np.int64)
    count = np.bincount(key, minlength=n_el * ncomb)
    total = np.bincount(key, weights=pos, minlength=n_el * ncomb)
    total_sq = np.bincount(key, weights=pos * pos, minlength=n_el * ncomb)
    # Sum of squared deviations from the mean, without a gather pass. Cancellation costs about
    # 1e-16 * sum(pos²); positions 1 mm apart add at least 0.5 mm², far above that.
    spread = total_sq - total * total / np.maximum(count, 1)
    single = np.flatnonzero((count > 0) & (spread <= 1.0e-9 * total_sq + 1.0e-6))
    ids = elements.index.to_numpy()
    if len(single):
        # The spreadsheet row of each such pair's first record, so the user can find it.
        hit = np.isin(key, single[:MAX_LISTED])
        first = pd.Series(spreadsheet_rows(records[hit])).groupby(key[hit]).min()
    for k in single[:MAX_LISTED].tolist():
        problems.add(
            file,
            int(first[k]),
            element_col,
            ids[k // ncomb],
            "at least two different positions along the element in combination "
            f"'{cats[k % ncomb]}'",
        )
    present = (count > 0).reshape(n_el, ncomb)
    used = np.asarray(present.any(axis=1))
    missing = np.argwhere(~present & used[:, None])
    for e, c in missing[:MAX_LISTED].tolist():
        problems.add(
            file,
            None,
            element_col,
            ids[e],
            f"rows for combination '{cats[c]}', which other elements have",
        )
    problems.more += max(0, len(single) - MAX_LISTED) + max(0, len(missing) - MAX_LISTED)
