"""The whole ``flangewise check`` process against a plain ``pandas.read_csv`` process, per size.

Run: ``python tests/benchmarks/bench_check.py [--sizes 0.5 1 2 5] [--repeat 3]`` (millions of force
rows). For each size a synthetic floor grid in our canonical layout is written (``synthetic.py``:
beams of 4 elements, top-flange braces at interior nodes, 50 load combinations, 5 stations per
element), then timed wall-clock around whole processes, imports and interpreter start included:

* ``plain process``: ``python -c "import pandas; pandas.read_csv('forces.csv')"``;
* ``check``: the command line's own ``main()`` running ``check MODEL --out DIR``, with the exact
  buckling analysis switched off (``check_model(..., exact=False)`` put in place of the command
  line's ``check_model``: there is no option for it) - the figure the targets are measured on;
* ``check, exact on``: the same with nothing switched off (once per size: it is the slow part).

Both check runs are :data:`CHILD`, which only wraps the stages in timers (a few clock reads): the
stage breakdown comes from the same processes. Also timed, in this process: ``pandas.read_csv``
of forces.csv (imports already paid) and the in-memory size of the DataFrame it gives. Peak RSS is
each child's own, through ``/usr/bin/time`` (Linux keeps a process's peak RSS across ``exec``, so
a child started straight from this process would report this process's peak as its own); inside
the check, the peak after each stage is the kernel's high-water mark of the process's own memory
(``VmHWM``). Times are the best of ``--repeat`` runs, interleaved, with the median beside it: the
machine is shared and noisy.

Targets (issue 13; a benchmark, never a timed test): whole check <= 2x the plain-read process;
peak RSS <= 3x the plain DataFrame; time per row flat within +-25 % from the smallest size to the
largest; read and validate <= 1.3x the plain read (in process).
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pandas as pd

HERE = Path(__file__).resolve().parent

#: GNU time: it reports the peak RSS of the process it starts (``-f %M``, kilobytes).
TIME = "/usr/bin/time"

#: One instrumented check: argv = folder, out, "on"|"off", stage file. The command line's own
#: main() runs ("off": with --no-exact); only the stage functions are wrapped in timers. Each
#: stage records its seconds, when it ended (from the process's first line) and this process's
#: peak RSS after it.
CHILD = r"""
import time
t_start = time.perf_counter()
import json, sys
folder, out, exact, stage_file = sys.argv[1:5]

def high_water_kb():
    with open("/proc/self/status") as f:
        return int(next(line for line in f if line.startswith("VmHWM")).split()[1])

import flangewise.engine.check as check
import flangewise.engine.layout as layout
import flangewise.postproc.cli as cli
marks = {"imports": time.perf_counter() - t_start}
began, ended = {}, {"imports": marks["imports"]}
peaks = {"imports": high_water_kb()}

def timed(module, name, stage):
    inner = getattr(module, name)  # fails loudly if the name has gone
    def run(*args, **kwargs):
        t = time.perf_counter()
        began.setdefault(stage, t - t_start)
        try:
            return inner(*args, **kwargs)
        finally:
            marks[stage] = marks.get(stage, 0.0) + time.perf_counter() - t
            ended[stage] = time.perf_counter() - t_start
            peaks[stage] = high_water_kb()
    setattr(module, name, run)

timed(cli, "load_model", "read+validate")
timed(cli, "check_model", "check_model")
timed(layout, "build_members", "members+segments")
timed(layout, "build_segments", "segments")
timed(layout, "segment_diagrams", "diagrams")
timed(check, "check_pairs", "check_pairs")
timed(check, "exact_factors", "exact buckling")
sys.argv = ["flangewise", "check", folder, "--out", out]
if exact == "off":
    sys.argv.append("--no-exact")
try:
    cli.main()
except SystemExit:  # click ends every run this way; the parent reads the exit status
    pass
marks["total in process"] = time.perf_counter() - t_start
peaks["total in process"] = high_water_kb()
with open(stage_file, "w") as f:
    json.dump({"seconds": marks, "began": began, "ended": ended, "peak_kb": peaks}, f)
"""

#: The plain read, as a whole process.
PLAIN = "import pandas, sys; pandas.read_csv(sys.argv[1])"

#: Stages as printed; they add up to the process's own time ("other": settings and the start of
#: the input hashes before reading, waiting for the hashes after it).
STAGES = (
    "imports",
    "read+validate",
    "members+segments",
    "diagrams",
    "factors/resistance",
    "exact buckling",
    "writing",
    "other",
)

#: Short column labels of the stages.
LABEL = {
    "read+validate": "read",
    "members+segments": "members",
    "factors/resistance": "factors",
    "exact buckling": "exact",
}

#: Peak RSS after these stages (the child's own names), as printed.
PEAK_AFTER = {
    "imports": "imports",
    "read+validate": "read+validate",
    "segments": "members+segments",
    "diagrams": "diagrams",
    "check_pairs": "check",
}


def run_child(args: list[str]) -> tuple[float, int, int]:
    """Run ``python args`` as a fresh process; return (wall seconds, peak RSS bytes, status).

    The wall time is this process's clock around the whole child (``/usr/bin/time`` adds about a
    millisecond); the peak RSS is the one ``/usr/bin/time`` reads for its own child.
    """
    with tempfile.NamedTemporaryFile("r", suffix=".rss") as rss:
        t0 = time.perf_counter()
        proc = subprocess.run(
            [TIME, "-f", "%M", "-o", rss.name, sys.executable, *args],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.PIPE,
            text=True,
        )
        seconds = time.perf_counter() - t0
        kb = int(Path(rss.name).read_text().split()[-1])
    if proc.returncode not in (0, 1):  # 1: results not shown to pass, still a full run
        raise RuntimeError(f"{args[:2]} ended with status {proc.returncode}:\n{proc.stderr}")
    return seconds, kb * 1024, proc.returncode


def check_once(folder: Path, exact: str) -> dict:
    """One instrumented check process; its wall time, peak RSS and stage seconds."""
    with tempfile.TemporaryDirectory() as tmp:
        stage_file = Path(tmp) / "stages.json"
        seconds, peak, _ = run_child(
            ["-c", CHILD, str(folder), str(Path(tmp) / "out"), exact, str(stage_file)]
        )
        inside = json.loads(stage_file.read_text())
    s, ended = inside["seconds"], inside["ended"]
    exact_s = s.get("exact buckling", 0.0)
    layout_s = s["members+segments"] + s["segments"] + s["diagrams"]
    stages = {
        "imports": s["imports"],
        "read+validate": s["read+validate"],
        "members+segments": s["members+segments"] + s["segments"],
        "diagrams": s["diagrams"],
        # The factors, Mcr, Mr and flags of every pair, and the section properties.
        "factors/resistance": s["check_model"] - layout_s - exact_s,
        "exact buckling": exact_s,
        # Everything after the check: result tables, summary, files, terminal text.
        "writing": s["total in process"] - ended["check_model"],
    }
    stages["other"] = s["total in process"] - sum(stages.values())
    peaks = {k: v * 1024 for k, v in inside["peak_kb"].items()}
    return {"seconds": seconds, "peak": peak, "stages": stages, "peaks": peaks}


def plain_in_process(folder: Path, repeat: int) -> tuple[float, int]:
    """Best in-process ``read_csv`` time and the DataFrame's in-memory size (deep)."""
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        frame = pd.read_csv(folder / "forces.csv")
        times.append(time.perf_counter() - t0)
    size = int(frame.memory_usage(deep=True).sum())
    return min(times), size


def write_size(root: Path, millions: float, combinations: int) -> tuple[Path, int]:
    """The synthetic model of this size (reused when ``root`` already holds it)."""
    sys.path.insert(0, str(HERE))
    from synthetic import write_model

    folder = root / f"{millions:g}M"
    marker = folder / "rows.txt"
    if marker.exists():
        return folder, int(marker.read_text())
    rows = int(millions * 1e6)
    n = write_model(folder, rows // (combinations * 5), combinations, 5)
    marker.write_text(str(n))
    return folder, n


def mb(n: float) -> str:
    """Bytes as whole MB."""
    return f"{n / 2**20:,.0f}"


def main() -> None:
    """Write each size, time everything, print the tables."""
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=float, nargs="+", default=[0.5, 1.0, 2.0, 5.0])
    parser.add_argument("--combinations", type=int, default=50)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument(
        "--models", type=Path, default=None, help="keep (and reuse) the written models here"
    )
    parser.add_argument("--no-exact", action="store_true", help="skip the exact-on runs")
    args = parser.parse_args()
    root = args.models or Path(tempfile.mkdtemp(prefix="bench_check_"))
    rows_out, breakdown = [], []
    try:
        for millions in args.sizes:
            folder, n = write_size(root, millions, args.combinations)
            plain_in, frame_bytes = plain_in_process(folder, args.repeat)
            plain, off = [], []
            for _ in range(args.repeat):  # interleaved: noise hits both sides alike
                plain.append(run_child(["-c", PLAIN, str(folder / "forces.csv")]))
                off.append(check_once(folder, "off"))
            on = None if args.no_exact else check_once(folder, "on")
            rows_out.append((n, plain_in, frame_bytes, plain, off, on))
            breakdown.append((n, off, on))
            print(f"measured {n:,} rows", flush=True)
    finally:
        if args.models is None:
            shutil.rmtree(root, ignore_errors=True)
    report(rows_out, breakdown, args.repeat)


def report(rows_out: list, breakdown: list, repeat: int) -> None:
    """Print the size table, the stage tables and the targets."""
    print(
        f"\nWhole processes, wall clock, imports included; best of {repeat} (median); "
        "check = exact analysis off"
    )
    head = (
        f"{'rows':>10} {'read in-proc':>12} {'plain proc':>13} {'check':>13} {'ratio':>6} "
        f"{'s/M rows':>8} {'DataFrame':>9} {'plain RSS':>9} {'check RSS':>9} {'RSS/DF':>6} "
        f"{'/plain':>6} "
        f"{'exact on':>9} {'ratio':>6} {'RSS on':>7}"
    )
    print(head)
    print(f"{'':>10} {'s':>12} {'s':>13} {'s':>13} {'':>6} {'':>8} {'MB':>9} {'MB':>9} {'MB':>9}")
    per_row, read_ratio = [], []
    for n, plain_in, frame_bytes, plain, off, on in rows_out:
        p = [s for s, _, _ in plain]
        c = [r["seconds"] for r in off]
        peak = max(r["peak"] for r in off)
        ratio = min(c) / min(p)
        spm = min(c) / (n / 1e6)
        per_row.append((n, spm, min(c) - statistics.median(r["stages"]["imports"] for r in off)))
        read = min(r["stages"]["read+validate"] for r in off)
        read_ratio.append((n, read, plain_in))
        on_cols = (
            f"{on['seconds']:>9.2f} {on['seconds'] / min(p):>6.2f} {mb(on['peak']):>7}"
            if on
            else f"{'-':>9} {'-':>6} {'-':>7}"
        )
        print(
            f"{n:>10,} {plain_in:>12.2f} {min(p):>6.2f} ({statistics.median(p):>4.2f}) "
            f"{min(c):>6.2f} ({statistics.median(c):>4.2f}) {ratio:>6.2f} {spm:>8.2f} "
            f"{mb(frame_bytes):>9} {mb(max(r for _, r, _ in plain)):>9} {mb(peak):>9} "
            f"{peak / frame_bytes:>6.1f} {peak / max(r for _, r, _ in plain):>6.1f} {on_cols}"
        )
    print(
        "\nStages of the check process, in process (s; median of the exact-off runs, then the "
        "exact-on run): read = read + validate, members = members + segments, factors = "
        "gradient factors, Mcr, Mr, flags"
    )
    print(f"{'rows':>10} {'exact':>5} " + " ".join(f"{LABEL.get(s, s):>10}" for s in STAGES))
    for n, off, on in breakdown:
        med = {s: statistics.median(r["stages"][s] for r in off) for s in STAGES}
        print(f"{n:>10,} {'off':>5} " + " ".join(f"{med[s]:>10.2f}" for s in STAGES))
        if on:
            cells = " ".join(f"{on['stages'][s]:>10.2f}" for s in STAGES)
            print(f"{'':>10} {'on':>5} {cells}")
    print("\nPeak RSS of the check process after each stage (MB; first exact-off run)")
    print(f"{'rows':>10} " + " ".join(f"{k:>16}" for k in (*PEAK_AFTER.values(), "end")))
    for n, off, _ in breakdown:
        pk = off[0]["peaks"]
        cells = [mb(pk.get(k, 0)) for k in PEAK_AFTER] + [mb(off[0]["peak"])]
        print(f"{n:>10,} " + " ".join(f"{c:>16}" for c in cells))

    print("\nTargets (issue 13; exact analysis off)")
    ratios = ", ".join(
        f"{n / 1e6:g}M {min(r['seconds'] for r in off) / min(s for s, _, _ in plain):.2f}x"
        for n, _, _, plain, off, _ in rows_out
    )
    print(f"  whole check <= 2x the plain-read process (at 5 M rows): {ratios}")
    rss = max(max(r["peak"] for r in off) / fb for _, _, fb, _, off, _ in rows_out)
    print(f"  peak RSS <= 3x the plain DataFrame (deep memory): worst {rss:.1f}x")
    base = per_row[0][1]
    flat = ", ".join(f"{n / 1e6:g}M {spm / base - 1:+.0%}" for n, spm, _ in per_row)
    print(f"  time per row flat within +-25 % of the smallest size's (whole process): {flat}")
    base_in = per_row[0][2] / (per_row[0][0] / 1e6)
    flat_in = ", ".join(f"{n / 1e6:g}M {(t / (n / 1e6)) / base_in - 1:+.0%}" for n, _, t in per_row)
    print(f"    the same without the imports (a fixed cost of every run): {flat_in}")
    reads = ", ".join(f"{n / 1e6:g}M {r / p:.2f}x" for n, r, p in read_ratio)
    print(f"  read + validate <= 1.3x the plain read (both in process): {reads}")


if __name__ == "__main__":
    main()
