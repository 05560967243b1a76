"""Plausibility ranges of the input numbers, and the checks that name a likely units mistake.

A coordinate, a plate dimension, a yield stress or a moment far outside what real models hold is
almost always a number written in another unit than the settings say, or a corrupted cell; a value
that a common unit factor (:data:`UNIT_SLIPS`) would bring into range is said to be a units
mistake, naming the settings key to check. The ranges are common practice, stated beside each.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from flangewise.readers import units
from flangewise.readers.csv_parse import cell_text
from flangewise.readers.errors import MAX_PROBLEMS, ProblemList
from flangewise.readers.settings import FY_RANGE_MPA, Settings
from flangewise.readers.tables import MAX_LISTED, numeric, spreadsheet_rows

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


def node_coordinates(
    df: pd.DataFrame, settings: Settings, problems: ProblemList
) -> dict[str, np.ndarray]:
    """Return the nodes' x, y and z in mm, as the file's axes; NaN where missing or out of range.

    Every such coordinate is reported (missing ones where they are read).
    """
    file = settings.files["nodes"]
    f = units.factor("length", settings.units.length)
    rows = spreadsheet_rows(df.index)
    xyz = {}
    for c in "xyz":
        their = settings.columns["nodes"][c]
        with np.errstate(over="ignore"):
            v = numeric(df, c, file, their, problems).to_numpy() * f
        lim = COORDINATE_LIMIT_MM
        far = outside_range(
            v,
            -lim,
            lim,
            df,
            c,
            rows,
            file,
            their,
            f"a coordinate within ±{lim:g} mm (10 000 km) once converted from "
            f"'{settings.units.length}'",
            f"[units] length (now '{settings.units.length}')",
            problems,
        )
        xyz[c] = np.where(far, np.nan, v)
    return xyz


def section_plates(df: pd.DataFrame, settings: Settings, problems: ProblemList) -> pd.DataFrame:
    """Return d, b, tf, tw, r [mm] and fy [MPa] per section row, every one checked for range.

    Plate proportions are checked only where every plate is plausible (one defect, one problem);
    an empty root radius is 0, an empty yield stress the settings' default.
    """
    file = settings.files["sections"]
    col = lambda ours: settings.columns["sections"][ours]  # noqa: E731
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
        problems.add_many(file, rows[bad], col(c), cell_text(df, c, bad), "a positive dimension")
        far = outside_range(
            v,
            lo,
            hi,
            df,
            c,
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
        cell_text(df, "tf", thick),
        f"a flange thinner than half the depth '{col('d')}'",
    )
    wide = plates_ok & (tw >= b)
    problems.add_many(
        file,
        rows[wide],
        col("tw"),
        cell_text(df, "tw", wide),
        f"a web thinner than the flange width '{col('b')}'",
    )
    if "r" in df:
        with np.errstate(over="ignore"):
            r = numeric(df, "r", file, col("r"), problems, required=False).to_numpy() * f
        bad = r < 0
        problems.add_many(
            file, rows[bad], col("r"), cell_text(df, "r", bad), "a root radius of zero or more"
        )
        far = outside_range(
            r,
            0.0,
            ROOT_RADIUS_MAX_MM,
            df,
            "r",
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
        listed = np.flatnonzero(big)[:MAX_LISTED]
        texts = cell_text(df, "r", listed, limit=MAX_LISTED)
        for i, text in zip(listed.tolist(), texts, strict=True):
            problems.add(
                file,
                int(rows[i]),
                col("r"),
                text,
                f"a root radius smaller than the clear flange outstand ('{col('b')}' - "
                f"'{col('tw')}') / 2 = {outstand[i] / f:g} {unit}",
            )
        problems.more += max(0, int(big.sum()) - MAX_LISTED)
        out["r"] = np.nan_to_num(r, nan=0.0)
    else:
        out["r"] = 0.0
    out["fy"] = _yield_stress(df, settings, rows, problems)
    return out


def _yield_stress(
    df: pd.DataFrame, settings: Settings, rows: np.ndarray, problems: ProblemList
) -> np.ndarray:
    """Return fy [MPa] per section row (the settings' default where empty); report implausible ones.

    The message quotes the cell as written and gives its value once converted to MPa.
    """
    unit = settings.units.stress
    stress = units.factor("stress", unit)
    if "fy" in df:
        their = settings.columns["sections"]["fy"]
        read = numeric(df, "fy", settings.files["sections"], their, problems, required=False)
        fy = (read * stress).fillna(settings.default_fy).to_numpy()
    else:
        their = "(default fy from the settings)"
        fy = np.full(len(df), settings.default_fy)
    lo, hi = FY_RANGE_MPA
    bad = np.flatnonzero((fy < lo) | (fy > hi))
    if len(bad) == 0:
        return fy
    listed = bad[:MAX_PROBLEMS]
    if "fy" in df:
        texts = cell_text(df, "fy", listed)
    else:
        # The settings check their default against the same range: this is only a safeguard.
        texts = [f"{settings.default_fy:g}"] * len(listed)
    for i, text in zip(listed.tolist(), texts, strict=True):
        # The settings' default is in MPa already: only a cell of the file is converted.
        shown = stress != 1.0 and "fy" in df
        converted = f"{text.strip()} {unit} = {fy[i]:.6g} MPa; " if shown else ""
        problems.add(
            settings.files["sections"],
            int(rows[i]),
            their,
            text,
            f"a yield stress of {lo:g} to {hi:g} MPa once converted from '{unit}' ({converted}"
            "a value outside is almost always a units mistake: check [units] stress)",
        )
    problems.more += len(bad) - len(listed)
    return fy


def moments_nmm(
    df: pd.DataFrame, moment: np.ndarray, settings: Settings, file: str, problems: ProblemList
) -> np.ndarray:
    """Return the forces table's moments ``moment`` (as read) in N·mm; report implausible ones."""
    col = lambda ours: settings.columns["forces"][ours]  # noqa: E731
    moment_unit = settings.units.moment
    with np.errstate(over="ignore"):
        m = moment * units.factor("moment", moment_unit)
    outside_range(
        m,
        -MOMENT_LIMIT_NMM,
        MOMENT_LIMIT_NMM,
        df,
        "M",
        None,
        file,
        col("M"),
        f"a moment within ±{MOMENT_LIMIT_NMM / 1e6:g} kN·m once converted from '{moment_unit}'",
        f"[units] moment (now '{moment_unit}')",
        problems,
    )
    return m


def outside_range(
    value: np.ndarray,
    lo: float,
    hi: float,
    df: pd.DataFrame,
    ours: str,
    rows: np.ndarray | None,
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
        df: the table the values come from (its cells are quoted as the file wrote them).
        ours: our name of the column the values come from.
        rows: spreadsheet row per value (``None``: from ``df``'s index, only where needed).
        file: the file's name.
        column: the file's own column name.
        expected: what was expected, in words.
        unit_key: the settings key of the unit, such as "[units] section = 'mm'".
        problems: where problems go.
        consider: the values to look at (default: all).
    """
    with np.errstate(invalid="ignore", over="ignore"):
        if consider is None and len(value) and lo <= value.min() and value.max() <= hi:
            # Two reductions without temporaries settle the usual case; a NaN fails them.
            return np.zeros(len(value), dtype=bool)
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
        at = spreadsheet_rows(df.index[take]) if rows is None else rows[take]
        problems.add_many(file, at, column, cell_text(df, ours, take), expected + hint)
    return bad
