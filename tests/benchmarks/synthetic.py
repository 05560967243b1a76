"""A synthetic model in our canonical layout, big enough to measure the readers (benchmarks only).

Beams on a plan grid at one level, simply supported, each split into elements; every element gets
``stations`` positions in every combination. The moments are a smooth invented diagram: they only
have to be numbers a real export could hold.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd


def write_model(folder: Path, elements: int, combinations: int, stations: int = 5) -> int:
    """Write nodes, elements, sections and forces CSVs; return the number of force rows."""
    folder.mkdir(parents=True, exist_ok=True)
    per_beam = 4
    beams = max(1, elements // per_beam)
    n_el = beams * per_beam
    el_len = 1.5  # m
    beam_y = np.repeat(np.arange(beams) * 3.0, per_beam + 1)
    beam_x = np.tile(np.arange(per_beam + 1) * el_len, beams)
    node_ids = np.char.add("N", np.arange(len(beam_x)).astype(str))
    pd.DataFrame({"id": node_ids, "x": beam_x, "y": beam_y, "z": 4.0}).to_csv(
        folder / "nodes.csv", index=False
    )
    starts = (np.arange(beams)[:, None] * (per_beam + 1) + np.arange(per_beam)[None, :]).ravel()
    el_ids = np.char.add("E", np.arange(n_el).astype(str))
    pd.DataFrame(
        {"id": el_ids, "start": node_ids[starts], "end": node_ids[starts + 1], "section": "S1"}
    ).to_csv(folder / "elements.csv", index=False)
    # Purlin-like top-flange braces at every interior node of each beam.
    interior = (
        np.arange(beams)[:, None] * (per_beam + 1) + np.arange(1, per_beam)[None, :]
    ).ravel()
    pd.DataFrame({"node": node_ids[interior], "flange": "top"}).to_csv(
        folder / "braces.csv", index=False
    )
    pd.DataFrame({"node": node_ids[:: per_beam + 1], "restrains": "all"}).to_csv(
        folder / "supports.csv", index=False
    )
    pd.DataFrame(
        {"name": ["S1"], "d": [407.0], "b": [178.0], "tf": [12.8], "tw": [7.7], "fy": [350.0]}
    ).to_csv(folder / "sections.csv", index=False)

    rng = np.random.default_rng(7)
    s = np.linspace(0.0, el_len, stations)
    e = np.repeat(np.arange(n_el), stations)
    x = (e % per_beam) * el_len + np.tile(s, n_el)
    span = per_beam * el_len
    shape = x * (span - x) / 2.0  # parabola of a unit uniform load
    scale = rng.uniform(5.0, 30.0, combinations)
    rows = n_el * stations * combinations
    frame = pd.DataFrame(
        {
            "element": np.tile(el_ids[e], combinations),
            "combination": np.repeat(np.char.add("C", np.arange(combinations).astype(str)), len(e)),
            "position": np.tile(np.tile(s, n_el), combinations),
            "M": np.round(np.repeat(scale, len(e)) * np.tile(shape, combinations), 3),
        }
    )
    frame.to_csv(folder / "forces.csv", index=False, float_format="%.4f")
    return rows
