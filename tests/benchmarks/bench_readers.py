"""Readers against a plain read of the same forces file, side by side in one run, per size.

Run: ``python tests/benchmarks/bench_readers.py [--rows 1000000 5000000] [--repeat 5]``.

For each size the synthetic model (``synthetic.py``) is written once as CSV, a copy of it with
N and V columns added to the forces (as real exports have; the readers convert and check them
too), and each forces table once more as Parquet (written by pyarrow from the CSV, types as
pyarrow infers them; ids dictionary-encoded, as pyarrow writes text). Then, interleaved and best
of ``--repeat`` to damp the noise of a shared machine, in this process:

- ``pandas.read_csv(forces.csv)``: the plain read the target is set against;
- ``pyarrow.csv.read_csv`` of the forces columns with the readers' own types (ids as
  dictionaries, numbers as float64): the parse alone, the floor under the readers;
- ``read_table(forces)``: parse, ids encoded, numbers checked, as the readers hand it on;
- ``load_model``: every table read and validated, stations snapped, units converted;
- ``pandas.read_parquet(forces.parquet)`` and ``load_model`` with the forces table as Parquet.

Ratios are printed against the plain read of the same file (target: ``load_model`` of the CSV
model at most 1.3x ``pandas.read_csv``).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pcsv
import pyarrow.parquet as pq

sys.path.insert(0, str(Path(__file__).resolve().parent))
from flangewise.readers import load_model
from flangewise.readers.errors import ProblemList
from flangewise.readers.settings import read_settings
from flangewise.readers.tables import read_table
from synthetic import write_model

TABLES = ("nodes", "elements", "sections", "forces", "braces", "supports")


def add_axial_and_shear(folder: Path, to: Path) -> None:
    """Copy the model to ``to`` with N and V columns in its forces (as real exports have)."""
    to.mkdir()
    for table in TABLES:
        if table != "forces":
            (to / f"{table}.csv").symlink_to(folder / f"{table}.csv")
    types = {"element": pa.string(), "combination": pa.string()}
    forces = pcsv.read_csv(
        folder / "forces.csv", convert_options=pcsv.ConvertOptions(column_types=types)
    )
    moment = forces.column("M")
    forces = forces.append_column("N", pc.round(pc.multiply(moment, -0.3), 3))
    forces = forces.append_column("V", pc.round(pc.multiply(moment, 0.1), 3))
    pcsv.write_csv(forces, to / "forces.csv", pcsv.WriteOptions(quoting_style="none"))


def write_parquet_copy(folder: Path, copy: Path) -> None:
    """Link the CSV tables into ``copy`` and write its forces table as Parquet."""
    copy.mkdir()
    for table in TABLES:
        if table != "forces":
            (copy / f"{table}.csv").symlink_to(folder / f"{table}.csv")
    types = {"element": pa.string(), "combination": pa.string()}
    forces = pcsv.read_csv(
        folder / "forces.csv", convert_options=pcsv.ConvertOptions(column_types=types)
    )
    pq.write_table(forces, copy / "forces.parquet")
    (copy / "flangewise.toml").write_text('[files]\nforces = "forces.parquet"\n', encoding="utf-8")


def parse_alone(path: Path) -> pa.Table:
    """The forces columns parsed with the types the readers ask for: the floor under them."""
    ids = pa.dictionary(pa.int32(), pa.string())
    with path.open(encoding="utf-8") as fh:
        header = fh.readline().strip().replace('"', "").split(",")
    types = {c: ids if c in ("element", "combination") else pa.float64() for c in header}
    return pcsv.read_csv(
        path,
        convert_options=pcsv.ConvertOptions(
            column_types=types, null_values=[""], strings_can_be_null=False
        ),
    )


def forces_table(folder: Path) -> pd.DataFrame | None:
    """The readers' ``read_table`` of the forces table alone."""
    return read_table(read_settings(folder), "forces", ProblemList())


def best_of(runs: dict[str, Callable[[], object]], repeat: int) -> dict[str, float]:
    """Time every run ``repeat`` times, interleaved; return the best time of each."""
    best = dict.fromkeys(runs, float("inf"))
    for _ in range(repeat):
        for name, run in runs.items():
            t0 = time.perf_counter()
            run()
            best[name] = min(best[name], time.perf_counter() - t0)
    return best


def measure(rows: int, combinations: int, repeat: int) -> None:
    """Write the model of ``rows`` force rows, time every read, print the tables."""
    stations = 5
    elements = rows // (combinations * stations)
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp) / "m"
        t0 = time.perf_counter()
        written = write_model(base, elements, combinations, stations)
        add_axial_and_shear(base, Path(tmp) / "nv")
        print(f"\n{written:,} force rows written in {time.perf_counter() - t0:.1f} s")
        for label, folder in (
            ("element, combination, position, M", base),
            ("+ N, V", Path(tmp) / "nv"),
        ):
            parquet = folder.parent / f"{folder.name}-parquet"
            write_parquet_copy(folder, parquet)
            print(f" forces columns: {label}")
            compare(folder, parquet, written, repeat)


def compare(folder: Path, parquet: Path, written: int, repeat: int) -> None:
    """Time the plain reads and the readers on one model, print the table."""
    forces = folder / "forces.csv"
    assert len(load_model(folder).forces) == written
    assert len(load_model(parquet).forces) == written
    best = best_of(
        {
            "plain csv": lambda: pd.read_csv(forces),
            "parse alone": lambda: parse_alone(forces),
            "forces table": lambda: forces_table(folder),
            "load csv": lambda: load_model(folder),
            "plain parquet": lambda: pd.read_parquet(parquet / "forces.parquet"),
            "load parquet": lambda: load_model(parquet),
        },
        repeat,
    )
    plain = best["plain csv"]
    lines = [
        ("pandas.read_csv(forces.csv)", best["plain csv"], plain),
        ("pyarrow parse alone (readers' types)", best["parse alone"], plain),
        ("readers: forces table read", best["forces table"], plain),
        ("readers: load_model, CSV", best["load csv"], plain),
        ("pandas.read_parquet(forces.parquet)", best["plain parquet"], best["plain parquet"]),
        ("readers: load_model, forces Parquet", best["load parquet"], best["plain parquet"]),
    ]
    for label, seconds, against in lines:
        print(f"  {label:40s} {seconds:6.3f} s   x{seconds / against:5.2f}")
    ratio = best["load csv"] / plain
    print(f"  ratio load_model / pandas.read_csv: {ratio:.2f} (target <= 1.30)")
    print(f"  load_model with Parquet forces / pandas.read_csv: {best['load parquet'] / plain:.2f}")


def main() -> None:
    """Measure each size."""
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--rows", type=int, nargs="+", default=[1_000_000, 5_000_000])
    parser.add_argument("--combinations", type=int, default=50)
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()
    for rows in args.rows:
        measure(rows, args.combinations, args.repeat)


if __name__ == "__main__":
    main()
