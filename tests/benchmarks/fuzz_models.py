"""The long run of the damaged-model fuzz: thousands of random damages, counted by kind.

Run: ``python tests/benchmarks/fuzz_models.py [--runs 10000] [--seed 1] [--workers 2]``.
Each run copies a bundled sample, damages it (``tests/fuzz/damage.py``: cells, rows, columns,
bytes, encodings, settings keys), runs ``flangewise check`` in-process and judges the outcome:
status 0, 1 or 2 only, no traceback, no half-written output folder, a damaged number refused or
read as written, damage that cannot be read right refused. Prints the counts per damage kind and
writes every failing plan to ``fuzz-failures.txt`` (empty when there are none). Exit status 1
when any run failed. Not collected by pytest.
"""

from __future__ import annotations

import argparse
import collections
import importlib.util
import multiprocessing as mp
import random
import sys
import tempfile
import time
from pathlib import Path

_HERE = Path(__file__).resolve().parent
_spec = importlib.util.spec_from_file_location("fuzz_damage", _HERE.parent / "fuzz" / "damage.py")
damage = importlib.util.module_from_spec(_spec)
sys.modules["fuzz_damage"] = damage
_spec.loader.exec_module(damage)


def _work(args: tuple[int, int]) -> tuple[str, int, bool, bool, bool, str]:
    seed, index = args
    plan = damage.random_plan(random.Random(seed * 1_000_003 + index))
    with tempfile.TemporaryDirectory(prefix="flangewise-fuzz-") as tmp:
        v = damage.run_plan(plan, Path(tmp) / "run")
    return plan.kind, v.status, v.crash, v.wrong, v.half_written, v.detail


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--failures", type=Path, default=Path("fuzz-failures.txt"))
    a = parser.parse_args()
    t0 = time.perf_counter()
    counts: dict[str, collections.Counter] = collections.defaultdict(collections.Counter)
    failures: list[str] = []
    with mp.get_context("spawn").Pool(a.workers) as pool:
        jobs = ((a.seed, i) for i in range(a.runs))
        for n, (kind, status, crash, wrong, half, detail) in enumerate(
            pool.imap_unordered(_work, jobs, chunksize=8), start=1
        ):
            c = counts[kind]
            c["runs"] += 1
            c[f"status {status}"] += 1
            c["crash"] += crash
            c["wrong acceptance"] += wrong
            c["half-written"] += half
            if crash or wrong or half:
                failures.append(detail)
                print(detail, flush=True)
            if n % 500 == 0:
                print(f"  {n} runs, {len(failures)} failing, {time.perf_counter() - t0:.0f} s")
    a.failures.write_text("\n\n".join(failures) + ("\n" if failures else ""), encoding="utf-8")
    columns = [
        "runs",
        "status 0",
        "status 1",
        "status 2",
        "crash",
        "wrong acceptance",
        "half-written",
    ]
    print(f"{'damage':<22}" + "".join(f"{c:>17}" for c in columns))
    total: collections.Counter = collections.Counter()
    for kind in sorted(counts):
        total.update(counts[kind])
        print(f"{kind:<22}" + "".join(f"{counts[kind][c]:>17}" for c in columns))
    print(f"{'all':<22}" + "".join(f"{total[c]:>17}" for c in columns))
    print(f"{a.runs} runs in {time.perf_counter() - t0:.0f} s; failures written to {a.failures}")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
