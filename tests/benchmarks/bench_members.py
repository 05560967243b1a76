"""Chaining and segmenting against networkx alone building the graph, side by side in one run.

Run: ``python tests/benchmarks/bench_members.py [--elements 100000]``. Builds a synthetic floor of
beams split into elements, then times (a) networkx building a multigraph of those elements and
(b) ``build_members`` + ``build_segments``. Prints the ratio (target: at most 3x).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import networkx as nx

sys.path.insert(0, str(Path(__file__).resolve().parent))
from flangewise.engine.members import build_members
from flangewise.engine.segments import build_segments
from flangewise.readers import load_model
from synthetic import write_model


def main() -> None:
    """Write the model, time both, print the ratio."""
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--elements", type=int, default=100_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        write_model(folder, args.elements, combinations=1, stations=2)
        model = load_model(folder)
        el = model.elements
        graph_times, ours = [], []
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            g = nx.MultiGraph()
            g.add_edges_from(zip(el["start"], el["end"], el.index, strict=True))
            graph_times.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            members = build_members(model, model.settings.members)
            segments = build_segments(model, members, model.settings.members)
            ours.append(time.perf_counter() - t0)
        print(
            f"{len(el):,} elements -> {len(members.table):,} members, "
            f"{len(segments.table):,} segments"
        )
        print(f"networkx multigraph of the elements   best {min(graph_times):6.2f} s")
        print(f"build_members + build_segments        best {min(ours):6.2f} s")
        print(f"ratio: {min(ours) / min(graph_times):.2f} (target <= 3)")


if __name__ == "__main__":
    main()
