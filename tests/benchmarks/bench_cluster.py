"""``check --cluster`` on a large partitioned forces folder against the plain check, per row.

Run: ``python tests/benchmarks/bench_cluster.py [--rows 50] [--reference 5] [--workers 1 2]``
(millions of force rows). A synthetic floor grid (the model of ``synthetic.py``: beams of 4
elements, 1.5 m each, top-flange braces at interior nodes, 5 stations per element, the same
invented parabolic diagram scaled per combination) is written with its forces straight into
Parquet, one folder per load combination (``forces_ds/combination=C<i>/part-0.parquet``, the
layout ``flangewise partition`` writes), one combination at a time: memory stays bounded by one
combination whatever the size. The ``--rows`` model and the ``--reference`` model have the same
elements; only the number of combinations differs.

Timed, wall-clock around whole processes (imports, the cluster's start and stop included):

* ``plain``: ``flangewise check`` of the reference model (the single-machine path);
* ``cluster, N workers``: ``flangewise check --cluster local --workers N`` of the large model.

The peak memory is that of the whole process tree (the command, and for a cluster its scheduler,
nanny and worker processes): the sum of the resident memory (RSS) of the process and all its
descendants, sampled every :data:`POLL_S` seconds with psutil. RSS counts pages shared between
processes (libraries) once per process, so the sum overstates the tree's use a little; the sum of
proportional set sizes (PSS, shared pages split between the processes sharing them; sampled ten
times less often, reading it is costly) is shown beside it. Targets (issue 14; a benchmark, never
a timed test): 50 M rows finish with the tree at most 2 GB, and the time per row within 1.5x
that of the plain check at 5 M rows.

The machine is shared: other work running at the same time shows in the times.
"""

from __future__ import annotations

import argparse
import json
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np
import psutil
import pyarrow as pa
import pyarrow.parquet as pq

HERE = Path(__file__).resolve().parent

#: Seconds between two samples of the process tree's memory.
POLL_S = 0.2

#: The proportional set sizes are read every so many samples (reading them is costly).
PSS_EVERY = 10

#: Elements per beam, element length [m] and stations per element: those of ``synthetic.py``.
PER_BEAM, EL_LEN, STATIONS = 4, 1.5, 5


def write_model(folder: Path, elements: int, combinations: int) -> int:
    """Write the small tables as CSV and the forces as a folder per combination; return rows."""
    sys.path.insert(0, str(HERE))
    from synthetic import write_model as write_tables

    # The small tables of the synthetic model; its forces CSV (one combination) is not used.
    write_tables(folder, elements, 1, STATIONS)
    (folder / "forces.csv").unlink()
    beams = max(1, elements // PER_BEAM)
    n_el = beams * PER_BEAM
    s = np.linspace(0.0, EL_LEN, STATIONS)
    e = np.repeat(np.arange(n_el), STATIONS)
    x = (e % PER_BEAM) * EL_LEN + np.tile(s, n_el)
    span = PER_BEAM * EL_LEN
    shape = x * (span - x) / 2.0  # parabola of a unit uniform load, as synthetic.py
    scale = np.random.default_rng(7).uniform(5.0, 30.0, combinations)
    ids = pa.array(np.char.add("E", np.arange(n_el).astype(str))).dictionary_encode()
    element = ids.take(pa.array(e))
    position = pa.array(np.tile(s, n_el))
    for c in range(combinations):
        part = folder / "forces_ds" / f"combination=C{c}"
        part.mkdir(parents=True)
        moment = pa.array(np.round(scale[c] * shape, 3))
        table = pa.table({"element": element, "position": position, "M": moment})
        pq.write_table(table, part / "part-0.parquet", compression="zstd")
    (folder / "flangewise.toml").write_text('[files]\nforces = "forces_ds"\n', encoding="utf-8")
    return n_el * STATIONS * combinations


class TreeMemory:
    """The peak memory of a process and all its descendants, sampled in a thread."""

    def __init__(self, pid: int) -> None:
        self.root = psutil.Process(pid)
        self.peak_rss = 0
        self.peak_pss = 0
        self.peak_processes = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._poll, daemon=True)
        self._thread.start()

    def _poll(self) -> None:
        polls = 0
        while not self._stop.is_set():
            try:
                tree = [self.root, *self.root.children(recursive=True)]
            except psutil.Error:
                break
            # RSS is cheap to read (statm); PSS needs the kernel to walk every mapping (smaps),
            # which costs a core's tenth at this rate: read only every PSS_EVERY-th time.
            full = polls % PSS_EVERY == 0
            rss = pss = 0
            for p in tree:
                try:
                    if full:
                        info = p.memory_full_info()
                        pss += getattr(info, "pss", info.rss)
                    else:
                        info = p.memory_info()
                    rss += info.rss
                except psutil.Error:
                    pass  # a process that ended between the listing and the reading
            self.peak_rss = max(self.peak_rss, rss)
            if full:
                self.peak_pss = max(self.peak_pss, pss)
            self.peak_processes = max(self.peak_processes, len(tree))
            polls += 1
            self._stop.wait(POLL_S)

    def stop(self) -> None:
        self._stop.set()
        self._thread.join()


def timed_check(model: Path, out: Path, *extra: str) -> dict:
    """Run ``flangewise check`` as its own process; its seconds, tree peak and summary."""
    command = [str(Path(sys.executable).parent / "flangewise"), "check", str(model)]
    command += ["--out", str(out), "--exit-zero", *extra]
    start = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    memory = TreeMemory(child.pid)
    stdout, stderr = child.communicate()
    seconds = time.perf_counter() - start
    memory.stop()
    if child.returncode != 0:
        raise SystemExit(f"{' '.join(command)} failed ({child.returncode}):\n{stderr}{stdout}")
    info = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    return {
        "seconds": seconds,
        "rss": memory.peak_rss,
        "pss": memory.peak_pss,
        "processes": memory.peak_processes,
        "pairs": info["pairs checked"] + info["pairs not critical"],
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=float, default=50.0, help="millions of rows, cluster")
    parser.add_argument("--reference", type=float, default=5.0, help="millions, plain check")
    parser.add_argument("--workers", type=int, nargs="+", default=[1, 2])
    parser.add_argument("--worker-memory", default=None, help="per worker (default: the tool's)")
    parser.add_argument("--elements", type=int, default=100_000)
    parser.add_argument("--root", type=Path, default=None, help="where to write (a temp folder)")
    args = parser.parse_args()

    root = Path(tempfile.mkdtemp(prefix="bench-cluster-", dir=args.root))
    per_combination = (args.elements // PER_BEAM) * PER_BEAM * STATIONS
    try:
        rows = {}
        for name, millions in (("reference", args.reference), ("large", args.rows)):
            combinations = max(1, round(millions * 1e6 / per_combination))
            t = time.perf_counter()
            rows[name] = write_model(root / name, args.elements, combinations)
            print(
                f"{name}: {rows[name]:,} rows ({args.elements:,} elements, {combinations} "
                f"combinations) written in {time.perf_counter() - t:.0f} s",
                flush=True,
            )
        results = []
        plain = timed_check(root / "reference", root / "out-plain")
        results.append(("plain check", rows["reference"], plain))
        print(f"plain: {plain['seconds']:.0f} s", flush=True)
        for workers in args.workers:
            extra = ["--cluster", "local", "--workers", str(workers)]
            if args.worker_memory:
                extra += ["--worker-memory", args.worker_memory]
            run = timed_check(root / "large", root / f"out-{workers}", *extra)
            shutil.rmtree(root / f"out-{workers}", ignore_errors=True)
            results.append((f"cluster, {workers} worker(s)", rows["large"], run))
            print(f"cluster, {workers} worker(s): {run['seconds']:.0f} s", flush=True)
        report(results, plain["seconds"] / rows["reference"])
    finally:
        shutil.rmtree(root, ignore_errors=True)


def report(results: list, reference_per_row: float) -> None:
    """Print the table and the targets."""
    print()
    print(
        f"{'run':<24}{'rows':>14}{'pairs':>13}{'time [s]':>10}{'rows/s':>12}{'µs/row':>9}"
        f"{'× plain':>9}{'tree RSS [GB]':>15}{'tree PSS [GB]':>15}{'procs':>7}"
    )
    for name, n, r in results:
        per_row = r["seconds"] / n
        print(
            f"{name:<24}{n:>14,}{r['pairs']:>13,}{r['seconds']:>10.1f}{n / r['seconds']:>12,.0f}"
            f"{per_row * 1e6:>9.2f}{per_row / reference_per_row:>9.2f}{r['rss'] / 1e9:>15.2f}"
            f"{r['pss'] / 1e9:>15.2f}{r['processes']:>7}"
        )
    print()
    for name, _, r in results[1:]:
        per_row = r["seconds"] / results[1][1]
        print(
            f"target, {name}: tree peak {r['rss'] / 1e9:.2f} GB (RSS sum) <= 2 GB: "
            f"{'met' if r['rss'] <= 2e9 else 'MISSED'}; time per row {per_row * 1e6:.2f} µs "
            f"<= 1.5 x {reference_per_row * 1e6:.2f} µs: "
            f"{'met' if per_row <= 1.5 * reference_per_row else 'MISSED'}"
        )


if __name__ == "__main__":
    main()
