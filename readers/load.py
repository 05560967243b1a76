"""Load a model folder: read every table, validate it whole-column, convert to internal units.

Every row of every table is validated before anything is selected or used: rows of load
combinations left out by ``--combination`` or ``[forces] combinations`` are checked too. One defect
gives one problem: a node or an element that already has a problem adds no follow-on problems
about the elements or force rows that depend on it.
"""

from __future__ import annotations

import dataclasses
import difflib
from pathlib import Path

import numpy as np
import pandas as pd
from flangewise.readers import units
from flangewise.readers.errors import InputError, Problem, ProblemList
from flangewise.readers.model import (
    COINCIDENT_MM,
    POSITION_TOLERANCE,
    POSITION_TOLERANCE_MM,
    Model,
    drawn_backwards,
    position_tolerance,
)
from flangewise.readers.settings import (
    FLANGE_WORDS,
    FY_RANGE_MPA,
    TABLES,
    Settings,
    read_settings,
)
from flangewise.readers.tables import numeric, read_table, required_text, spreadsheet_rows
from scipy.spatial import cKDTree

#: Node coordinates farther than this from the origin along any axis [mm] are refused (common
#: practice: 10 000 km, the extent of map-grid coordinates such as UTM northings, which some
#: models are drawn in; float64 still resolves 1e-6 mm there, far below the 1 mm node
#: coincidence. A larger number is a corrupted cell or a units mistake, and overflows the
#: geometry: squared distances and the coincident-node search).
COORDINATE_LIMIT_MM = 1.0e10

#: Plate dimensions of rolled and welded I-sections [mm], (smallest, largest) (common practice:
#: the lightest rolled sections are about 80 mm deep with 46 mm flanges, the heaviest rolled and
#: welded girders about 1.1 m and, as plate girders, a few metres deep, with flanges up to about
#: 1 m wide and 150 mm thick; the ranges leave room on both sides).
SECTION_RANGES_MM: dict[str, tuple[float, float]] = {
    "d": (50.0, 5000.0),
    "b": (25.0, 2000.0),
    "tf": (1.0, 250.0),
    "tw": (1.0, 250.0),
}

#: Largest root radius [mm] (common practice: rolled sections have radii of about 5 to 30 mm;
#: welded sections have none). It must also be smaller than the clear flange outstand (b - tw)/2.
ROOT_RADIUS_MAX_MM = 150.0

#: What each plate dimension is called in messages.
PLATE_NAMES = {
    "d": "depth",
    "b": "flange width",
    "tf": "flange thickness",
    "tw": "web thickness",
    "r": "root radius",
}

#: Factors by which a number typed in the wrong unit is off: m for mm, in for mm, cm for mm.
UNIT_SLIPS: tuple[float, ...] = (1000.0, 25.4, 10.0)

#: Largest major-axis moment [N·mm] (common practice: 1e13 N·mm = 10 000 000 kN·m, about four
#: times the plastic moment of the largest section the ranges above admit; a larger value is a
#: units mistake, and far larger ones overflow the squares in the gradient formulas).
MOMENT_LIMIT_NMM = 1.0e13

#: Section property overrides and the power of the section length unit each carries.
OVERRIDES: dict[str, int] = {"A": 2, "Ix": 4, "Iy": 4, "Sx": 3, "Zx": 3, "J": 4, "Cw": 6}

#: Problems of one kind listed per table before the rest are only counted.
MAX_LISTED = 60

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
    problems.raise_if_any()
    tables = {t: df for t, df in raw.items() if df is not None}
    nodes = _nodes(tables["nodes"], settings, problems)
    _breaks(nodes, settings, problems)
    sections = _sections(tables["sections"], settings, problems)
    elements, broken = _elements(tables["elements"], nodes, sections, settings, problems)
    braces = _braces(tables["braces"], nodes, settings, problems)
    supports = _supports(tables["supports"], nodes, settings, problems)
    forces = _forces(tables["forces"], elements, broken, settings, from_option, problems)
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
    found = pd.Index(ids.to_numpy(dtype=object)).get_indexer(values.to_numpy(dtype=object)) >= 0
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


def _outside_range(
    value: np.ndarray,
    lo: float,
    hi: float,
    written: pd.Series,
    rows: np.ndarray,
    file: str,
    column: str,
    expected: str,
    unit_key: str,
    problems: ProblemList,
    consider: np.ndarray | None = None,
) -> np.ndarray:
    """Record values (internal units) outside [lo, hi]; return the mask of those recorded.

    Missing values (NaN) were reported where they were read and are left alone. A value that one
    of ``UNIT_SLIPS`` would bring into the range is said to look like a units mistake, naming the
    settings key ``unit_key``.

    Args:
        value: the values in internal units.
        lo: smallest plausible value.
        hi: largest plausible value.
        written: the cells as written in the file (for messages).
        rows: spreadsheet row per value.
        file: the file's name.
        column: the file's own column name.
        expected: what was expected, in words.
        unit_key: the settings key of the unit, such as "[units] section = 'mm'".
        problems: where problems go.
        consider: the values to look at (default: all).
    """
    with np.errstate(invalid="ignore", over="ignore"):
        bad = ~np.isnan(value) & ~((value >= lo) & (value <= hi))
        if consider is not None:
            bad &= consider
        if not bad.any():
            return bad
        v = value[bad]
        slip = np.zeros(len(v), dtype=np.int64)
        for bit, f in enumerate(UNIT_SLIPS):
            fits = ((v * f >= lo) & (v * f <= hi)) | ((v / f >= lo) & (v / f <= hi))
            slip |= fits.astype(np.int64) << bit
    idx = np.flatnonzero(bad)
    for code in np.unique(slip).tolist():
        take = idx[slip == code]
        factors = [f"{f:g}" for bit, f in enumerate(UNIT_SLIPS) if (code >> bit) & 1]
        hint = (
            f"; off by a factor of {' or '.join(factors)}, it looks like a units mistake: "
            f"check {unit_key}"
            if factors
            else f" (check {unit_key})"
        )
        problems.add_many(file, rows[take], column, written.iloc[take], expected + hint)
    return bad


def _nodes(df: pd.DataFrame, settings: Settings, problems: ProblemList) -> pd.DataFrame:
    """Nodes in mm; a coordinate that is missing or out of range is NaN (already reported)."""
    file = settings.files["nodes"]
    required_text(df, "id", file, _col(settings, "nodes", "id"), problems)
    keep = _unique_ids(df, "id", "nodes", settings, problems)
    f = units.factor("length", settings.units.length)
    rows = spreadsheet_rows(df.index)
    xyz = {}
    for c in "xyz":
        their = _col(settings, "nodes", c)
        with np.errstate(over="ignore"):
            v = numeric(df, c, file, their, problems).to_numpy() * f
        lim = COORDINATE_LIMIT_MM
        far = _outside_range(
            v,
            -lim,
            lim,
            df[c],
            rows,
            file,
            their,
            f"a coordinate within ±{lim:g} mm (10 000 km) once converted from "
            f"'{settings.units.length}'",
            f"[units] length (now '{settings.units.length}')",
            problems,
        )
        xyz[c] = np.where(far, np.nan, v)
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
    file = settings.files["sections"]
    col = lambda ours: _col(settings, "sections", ours)  # noqa: E731
    required_text(df, "name", file, col("name"), problems)
    keep = _unique_ids(df, "name", "sections", settings, problems)
    f = units.factor("length", settings.units.section)
    unit = settings.units.section
    unit_key = f"[units] section (now '{unit}')"
    rows = spreadsheet_rows(df.index)
    out = pd.DataFrame(index=pd.Index(df["name"], name="name"))
    plates_ok = np.ones(len(df), dtype=bool)
    for c, (lo, hi) in SECTION_RANGES_MM.items():
        with np.errstate(over="ignore"):
            v = numeric(df, c, file, col(c), problems).to_numpy() * f
        bad = v <= 0
        problems.add_many(file, rows[bad], col(c), df.loc[bad, c], "a positive dimension")
        far = _outside_range(
            v,
            lo,
            hi,
            df[c],
            rows,
            file,
            col(c),
            f"a {PLATE_NAMES[c]} from {lo:g} to {hi:g} mm once converted from '{unit}' (common "
            "practice for rolled and welded I-sections)",
            unit_key,
            problems,
            consider=v > 0,
        )
        plates_ok &= ~bad & ~far & ~np.isnan(v)
        out[c] = v
    d, b, tf, tw = (out[c].to_numpy() for c in ("d", "b", "tf", "tw"))
    # Proportions only where every plate is plausible: one defect, one problem.
    thick = plates_ok & (2.0 * tf >= d)
    problems.add_many(
        file,
        rows[thick],
        col("tf"),
        df.loc[thick, "tf"],
        f"a flange thinner than half the depth '{col('d')}'",
    )
    wide = plates_ok & (tw >= b)
    problems.add_many(
        file,
        rows[wide],
        col("tw"),
        df.loc[wide, "tw"],
        f"a web thinner than the flange width '{col('b')}'",
    )
    if "r" in df:
        with np.errstate(over="ignore"):
            r = numeric(df, "r", file, col("r"), problems, required=False).to_numpy() * f
        bad = r < 0
        problems.add_many(
            file, rows[bad], col("r"), df.loc[bad, "r"], "a root radius of zero or more"
        )
        far = _outside_range(
            r,
            0.0,
            ROOT_RADIUS_MAX_MM,
            df["r"],
            rows,
            file,
            col("r"),
            f"a root radius from 0 to {ROOT_RADIUS_MAX_MM:g} mm once converted from '{unit}' "
            "(common practice for rolled I-sections)",
            unit_key,
            problems,
            consider=r >= 0,
        )
        outstand = (b - tw) / 2.0
        with np.errstate(invalid="ignore"):
            big = plates_ok & ~far & ~wide & (r >= outstand)
        for i in np.flatnonzero(big)[:MAX_LISTED].tolist():
            problems.add(
                file,
                int(rows[i]),
                col("r"),
                df["r"].iloc[i],
                f"a root radius smaller than the clear flange outstand ('{col('b')}' - "
                f"'{col('tw')}') / 2 = {outstand[i] / f:g} {unit}",
            )
        problems.more += max(0, int(big.sum()) - MAX_LISTED)
        out["r"] = np.nan_to_num(r, nan=0.0)
    else:
        out["r"] = 0.0
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
            with np.errstate(over="ignore"):
                v = numeric(df, c, file, col(c), problems, required=False).to_numpy() * f**power
            bad = ~np.isnan(v) & ~((v > 0) & np.isfinite(v))
            problems.add_many(
                file, rows[bad], col(c), df.loc[bad, c], "a positive, finite value or an empty cell"
            )
            out[c] = v
    return out[keep]


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
    # (-1) catches the missing code -1.
    labels = pd.Index(df["element"].cat.categories.to_numpy(dtype=object), dtype=object)
    ids = pd.Index(elements.index.to_numpy(dtype=object), dtype=object)
    lookup = np.append(ids.get_indexer(labels), -1)
    raw_codes = df["element"].cat.codes.to_numpy()
    ecode = lookup[raw_codes]
    _unknown_elements(raw_codes, lookup, labels, df.index, file, col("element"), problems)

    pos_written = numeric(df, "position", file, col("position"), problems).to_numpy()
    moment = numeric(df, "M", file, col("M"), problems).to_numpy()
    # Rows of an element that already has a problem get no length: no follow-on problems.
    usable = np.append(~broken, False)[ecode]
    length = np.where(usable, np.append(elements["length"].to_numpy(), np.nan)[ecode], np.nan)
    length_unit = settings.units.length
    with np.errstate(over="ignore", invalid="ignore"):
        if settings.positions == "fraction":
            pos = pos_written * length
            given_as = "a fraction from 0 to 1 of the element's length"
        else:
            pos = pos_written * units.factor("length", length_unit)
            given_as = f"a distance from 0 to the element's length ({length_unit})"
    tol = position_tolerance(length)
    with np.errstate(invalid="ignore"):
        outside = (pos < -tol) | (pos > length + tol)  # False where length is NaN
    if outside.any():
        problems.add_many(
            file, rows_of(outside), col("position"), df["position"][outside], given_as
        )
    # Within the tolerance of an end a station is that end, exactly: element ends then land on
    # the member's node positions, and every element has its end stations (checked below).
    with np.errstate(invalid="ignore"):
        pos = np.where(pos <= tol, 0.0, np.where(pos >= length - tol, length, pos))

    ccode = df["combination"].cat.codes.to_numpy()
    # An element with a bad position row (reported above) may lack an end station because of it:
    # its stations are not checked further.
    bad_row = usable & (outside | ~np.isfinite(pos))
    spoilt = np.append(np.bincount(ecode[bad_row], minlength=len(elements)) > 0, True)
    good = usable & (ccode >= 0) & ~spoilt[ecode]
    everything = bool(good.all())
    _station_checks(
        ecode if everything else ecode[good],
        ccode if everything else ccode[good],
        pos if everything else pos[good],
        pos_written if everything else pos_written[good],
        df.index if everything else df.index[good],
        elements,
        df["combination"],
        settings,
        file,
        col("element"),
        problems,
    )

    moment_unit = settings.units.moment
    with np.errstate(over="ignore"):
        m = moment * units.factor("moment", moment_unit)
    _outside_range(
        m,
        -MOMENT_LIMIT_NMM,
        MOMENT_LIMIT_NMM,
        df["M"],
        spreadsheet_rows(df.index),
        file,
        col("M"),
        f"a moment within ±{MOMENT_LIMIT_NMM / 1e6:g} kN·m once converted from '{moment_unit}'",
        f"[units] moment (now '{moment_unit}')",
        problems,
    )
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
            with np.errstate(over="ignore"):
                v = numeric(df, c, file, col(c), problems, required=False).to_numpy()
                v = v * units.factor(kind, unit)  # type: ignore[arg-type]
            huge = np.isinf(v)
            problems.add_many(
                file,
                rows_of(huge),
                col(c),
                df[c][huge],
                f"a finite number once converted from '{unit}'",
            )
            out[c] = v
    keep = _selected_combinations(df["combination"], settings, from_option, file, problems)
    if keep is None:
        return pd.DataFrame(out, copy=False)
    chosen = pd.DataFrame(out, copy=False)[keep]
    chosen["combination"] = chosen["combination"].cat.remove_unused_categories()
    return chosen


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


def _station_checks(
    ecode: np.ndarray,
    ccode: np.ndarray,
    pos: np.ndarray,
    written: np.ndarray,
    records: pd.Index,
    elements: pd.DataFrame,
    combos: pd.Series,
    settings: Settings,
    file: str,
    element_col: str,
    problems: ProblemList,
) -> None:
    """Record elements without a station at each end in a combination, or missing from one.

    Positions are already snapped onto the ends within the tolerance, so "a station at the start"
    is ``pos == 0`` and "at the end" is ``pos == length``. Counted with ``np.bincount`` over a
    dense (element, combination) key: one pass per statistic, no sort and no group-by, which
    matters at millions of rows. One problem per element, at the first pair that fails.
    """
    if len(ecode) == 0:
        return
    cats = combos.cat.categories
    ncomb = len(cats)
    n_el = len(elements)
    size = n_el * ncomb
    key = ecode.astype(np.int64) * ncomb + ccode.astype(np.int64)
    length = elements["length"].to_numpy()
    count = np.bincount(key, minlength=size)
    at_start = np.bincount(key, weights=pos == 0.0, minlength=size)
    at_end = np.bincount(key, weights=pos == length[ecode], minlength=size)
    failing = np.flatnonzero((count > 0) & ((at_start == 0) | (at_end == 0)))
    ids = elements.index.to_numpy()
    if len(failing):
        # One problem per element: its first failing combination, with a count of the others.
        el_of, first_of, n_of = np.unique(failing // ncomb, return_index=True, return_counts=True)
        listed = failing[first_of[:MAX_LISTED]]
        hit = np.isin(key, listed)
        found = (
            pd.DataFrame(
                {"key": key[hit], "row": spreadsheet_rows(records[hit]), "pos": written[hit]}
            )
            .groupby("key")
            .agg(row=("row", "min"), lo=("pos", "min"), hi=("pos", "max"), n=("pos", "size"))
        )
        if settings.positions == "fraction":
            ends = "0 and 1 as fractions of its length"
        else:
            f = units.factor("length", settings.units.length)
        for k, others in zip(listed.tolist(), n_of[:MAX_LISTED].tolist(), strict=True):
            e, c = divmod(k, ncomb)
            rec = found.loc[k]
            if settings.positions != "fraction":
                ends = f"0 and {length[e] / f:g} {settings.units.length}"
            also = f" (and {others - 1} more combination(s) like it)" if others > 1 else ""
            what = (
                f"only position {rec['lo']:g}"
                if rec["lo"] == rec["hi"]
                else f"positions from {rec['lo']:g} to {rec['hi']:g} ({int(rec['n'])} rows)"
            )
            problems.add(
                file,
                int(rec["row"]),
                element_col,
                ids[e],
                f"a station at each end of the element ({ends}, within "
                f"{POSITION_TOLERANCE:.1%} of its length and at least {POSITION_TOLERANCE_MM:g} "
                f"mm) in combination '{cats[c]}', which has {what}{also}",
            )
        problems.more += max(0, len(el_of) - MAX_LISTED)
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
    problems.more += max(0, len(missing) - MAX_LISTED)
