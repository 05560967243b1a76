"""Exact elastic buckling (engine/buckling.py) of many segment-combination pairs, timed.

Run: ``python tests/benchmarks/bench_exact.py [--sizes 10000 50000 250000] [--combinations 25]``.

Invented but realistic diagrams: segments of 2 to 12 m with 9 to 25 stations (a third of them with
a moment jump at an inside station), each in ``--combinations`` load combinations; every
combination's diagram is a random mix of end moments, a uniform-load parabola, a point load at
a station and the jump. Sections have torsion parameters K from about 0.2 to 2.5.

Each size runs in a fresh process (so that its peak memory is its own), timing the path the check
takes (``exact_factors``: stiffness-sharing runs side by side, meshed and solved in blocks):

* ``centre``: loads at the shear centre (the fast, half-size eigenproblem);
* ``top``: loads on the top flange (the full eigenproblem);
* ``unshared``: loads at the shear centre with every pair given its own section (E·Iy scaled by
  1 + i·1e-13), so that no stiffness factorization is shared: the cost without grouping.

Prints seconds, µs per pair, peak resident memory and the load average (another process may be
using the cores: the three cases of one size run back to back so that their ratios are fair).
Target on a 2-core machine: 250 000 pairs at the shear centre in at most 60 s, µs per pair flat
within 25 % across sizes.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys

CHILD = r"""
import json, resource, sys, time
import numpy as np
from flangewise.engine.buckling import exact_factors
from flangewise.engine.gradient import Runs
from flangewise.readers.settings import CheckSettings
sys.path.insert(0, sys.argv[4])
from bench_exact import diagrams
n_pairs, combos, case = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
x, m, offsets, e_iy, g_j, e_cw, h0 = diagrams(n_pairs, combos)
if case == "unshared":
    e_iy = e_iy * (1.0 + 1e-13 * np.arange(len(e_iy)))
settings = CheckSettings(load_height="top_flange" if case == "top" else "shear_centre")
n = len(h0)
length = x[offsets[1:] - 1]
runs = Runs(x=x, m=m, offsets=offsets, length=length)
t0 = time.perf_counter()
# The whole path check.py takes: blocks of stiffness-sharing runs, mesh, solve.
result = exact_factors(
    runs, np.ones(n, dtype=bool), np.zeros(n, dtype=np.int64), e_iy / settings.E,
    g_j / settings.G, e_cw / settings.E, h0, settings,
)
seconds = time.perf_counter() - t0
assert np.isfinite(result.m_cr).all() and (result.m_cr > 0).all()
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"seconds": seconds, "peak": peak, "elements": float(result.elements.mean())}))
"""


def diagrams(n_pairs: int, combinations: int, seed: int = 7) -> tuple:
    """Return (x, m, offsets, E·Iy, G·J, E·Cw, h0) of ``n_pairs`` invented pairs.

    Units: mm, N·mm, N·mm², N·mm⁴. Pairs of one segment are consecutive and share their stations.
    """
    import numpy as np

    rng = np.random.default_rng(seed)
    n_seg = -(-n_pairs // combinations)
    xs, ms, props = [], [], []
    for _ in range(n_seg):  # benchmark input only: a loop per segment is fine here
        n_st = int(rng.integers(9, 26))
        length = rng.uniform(2000.0, 12000.0)
        x = np.linspace(0.0, length, n_st)
        jump_at = int(rng.integers(1, n_st - 1)) if rng.random() < 1 / 3 else -1
        if jump_at >= 0:
            x = np.insert(x, jump_at, x[jump_at])
        t = x / length
        d, b = rng.uniform(200.0, 600.0), rng.uniform(100.0, 300.0)
        tf, tw = rng.uniform(8.0, 25.0), rng.uniform(5.0, 15.0)
        iy = 2 * tf * b**3 / 12
        j = (2 * b * tf**3 + (d - 2 * tf) * tw**3) / 3
        h0 = d - tf
        props.append((200e3 * iy, 77e3 * j, 200e3 * iy * h0**2 / 4, h0))
        point = int(rng.integers(1, len(x) - 1))
        for _ in range(combinations):
            ends = rng.normal(size=2) * (rng.random(2) < 0.8)
            w = rng.normal() * (rng.random() < 0.6)
            p = rng.normal() * (rng.random() < 0.4)
            m = ends[0] * (1 - t) + ends[1] * t + w * 4 * t * (1 - t)
            m += p * np.minimum(t / t[point], (1 - t) / (1 - t[point]))
            if jump_at >= 0:
                m[jump_at + 1 :] += rng.normal() * 0.3
            if not np.abs(m).max() > 0:
                m = np.ones_like(t)
            xs.append(x)
            ms.append(m * 1e8)
    xs, ms = xs[:n_pairs], ms[:n_pairs]
    per = np.repeat(np.array(props), combinations, axis=0)[:n_pairs]
    offsets = np.r_[0, np.cumsum([len(x) for x in xs])]
    return np.concatenate(xs), np.concatenate(ms), offsets, *per.T


def run(n_pairs: int, combinations: int, case: str) -> dict[str, float]:
    """Time one size and case in a fresh process."""
    here = os.path.dirname(os.path.abspath(__file__))
    args = [sys.executable, "-c", CHILD, str(n_pairs), str(combinations), case, here]
    out = subprocess.run(args, check=True, capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def main() -> None:
    """Run every size and case and print the table."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 50_000, 250_000])
    parser.add_argument("--combinations", type=int, default=25)
    parser.add_argument("--cases", nargs="+", default=["centre", "top", "unshared"])
    opts = parser.parse_args()
    print(
        f"{'pairs':>8} {'case':>9} {'s':>8} {'µs/pair':>8} {'ratio':>6} {'elements':>8} "
        f"{'peak MiB':>9} {'load avg':>8}"
    )
    for n in opts.sizes:
        base = None
        for case in opts.cases:
            r = run(n, opts.combinations, case)
            us = r["seconds"] / n * 1e6
            base = base or us
            print(
                f"{n:>8} {case:>9} {r['seconds']:>8.2f} {us:>8.1f} {us / base:>6.2f} "
                f"{r['elements']:>8.1f} {r['peak'] / 2**20:>9.0f} {os.getloadavg()[0]:>8.2f}",
                flush=True,
            )


if __name__ == "__main__":
    main()
