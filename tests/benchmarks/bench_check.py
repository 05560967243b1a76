"""The whole check against a plain ``pandas.read_csv`` of the forces file, side by side.

Run: ``python tests/benchmarks/bench_check.py [--sizes 0.5 1 2 5]`` (millions of force rows).
For each size a synthetic floor grid in our canonical layout is written (beams of 4 elements,
top-flange braces at interior nodes, 50 load combinations, 5 stations per element), then, each in
a fresh process so that peak memory is its own:

* ``plain``: ``pandas.read_csv`` of forces.csv;
* ``check``: read + validate + members + segments + gradient factors + resistance + result files
  (what ``flangewise check`` does).

Prints the ratio check / plain, the peak resident memory of the check process against the
in-memory size of the forces table, and time per million rows at each size. Targets on a 2-core
machine: ratio <= 1.5, peak memory <= 3x the forces table, time per row flat within 25 %.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent

CHILD = r"""
import json, resource, sys, time
from pathlib import Path
import pandas as pd
from flangewise.engine.check import check_model
from flangewise.postproc import exports
from flangewise.readers import load_model
folder, what = Path(sys.argv[1]), sys.argv[2]
# Imports are done before the clock starts: both sides pay them once per process, and they would
# otherwise swamp the per-row figures of the small sizes.
t0 = time.perf_counter()
if what == "plain":
    frame = pd.read_csv(folder / "forces.csv")
    size = int(frame.memory_usage(deep=True).sum())
else:
    model = load_model(folder)
    size = int(model.forces.memory_usage(deep=True).sum())
    result = check_model(model)
    seg = exports.segment_table(result)
    info = exports.summary(result, seg, folder)
    exports.write_results(
        folder / "results",
        {"segments.csv": seg, "governing.csv": exports.governing_table(seg),
         "flagged.csv": exports.flagged_table(seg)},
        info,
    )
seconds = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"seconds": seconds, "peak": peak, "table": size}))
"""


def run(folder: Path, what: str) -> dict[str, float]:
    """Run one measurement in a fresh interpreter and return its numbers."""
    out = subprocess.run(
        [sys.executable, "-c", CHILD, str(folder), what],
        check=True,
        capture_output=True,
        text=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    """Write each size, time both, print the table."""
    sys.path.insert(0, str(HERE))
    from synthetic import write_model

    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=float, nargs="+", default=[0.5, 1.0, 2.0, 5.0])
    parser.add_argument("--combinations", type=int, default=50)
    args = parser.parse_args()
    print(
        f"{'rows':>10} {'plain s':>8} {'check s':>8} {'ratio':>6} {'s/Mrow':>7} "
        f"{'forces MB':>9} {'peak MB':>8} {'peak/table':>10}"
    )
    per_row = []
    for millions in args.sizes:
        rows = int(millions * 1e6)
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            elements = rows // (args.combinations * 5)
            n = write_model(folder, elements, args.combinations, 5)
            plain = run(folder, "plain")
            check = run(folder, "check")
        ratio = check["seconds"] / plain["seconds"]
        spm = check["seconds"] / (n / 1e6)
        per_row.append(spm)
        print(
            f"{n:>10,} {plain['seconds']:>8.2f} {check['seconds']:>8.2f} {ratio:>6.2f} "
            f"{spm:>7.2f} {check['table'] / 2**20:>9.0f} {check['peak'] / 2**20:>8.0f} "
            f"{check['peak'] / check['table']:>10.2f}"
        )
    spread = max(per_row) / min(per_row) - 1.0
    print(f"time per row spread across sizes: {spread:.0%} (target <= 25%)")
    print("targets: ratio <= 1.5, peak/table <= 3")


if __name__ == "__main__":
    main()
