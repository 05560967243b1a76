"""Readers against a plain ``pandas.read_csv`` of the same forces file, side by side in one run.

Run: ``python tests/benchmarks/bench_readers.py [--rows 5000000]``. Prints wall times and the ratio
(target: the readers, with full validation and unit conversion, at most 1.3x the plain read).
Each timing is the best of ``--repeat`` runs, interleaved, to damp the noise of a shared machine.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
from flangewise.readers import load_model
from synthetic import write_model


def main() -> None:
    """Write the synthetic model, time both reads, print the ratio."""
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--rows", type=int, default=5_000_000)
    parser.add_argument("--combinations", type=int, default=50)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    stations = 5
    elements = args.rows // (args.combinations * stations)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        t0 = time.perf_counter()
        rows = write_model(folder, elements, args.combinations, stations)
        print(f"wrote {rows:,} force rows in {time.perf_counter() - t0:.1f} s")
        plain, ours = [], []
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            pd.read_csv(folder / "forces.csv")
            plain.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            model = load_model(folder)
            ours.append(time.perf_counter() - t0)
        assert len(model.forces) == rows
        print(f"plain pandas.read_csv(forces.csv)  best {min(plain):6.2f} s")
        print(f"readers.load_model (whole model)  best {min(ours):6.2f} s")
        print(f"ratio readers / plain read: {min(ours) / min(plain):.2f} (target <= 1.30)")


if __name__ == "__main__":
    main()
