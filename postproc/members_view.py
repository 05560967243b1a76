"""Members and their unbraced segments, as text for the terminal and as a CSV table."""

from __future__ import annotations

import numpy as np
import pandas as pd
from flangewise.engine.diagrams import SegmentDiagrams
from flangewise.engine.members import Members
from flangewise.engine.segments import Segments
from flangewise.postproc.shown_units import SI, ShownUnits


def segment_rows(
    members: Members, segments: Segments, diagrams: SegmentDiagrams, units: ShownUnits = SI
) -> pd.DataFrame:
    """One row per segment with its member's data and the combinations that compress it.

    Column names carry their units (``units``).
    """
    per, lu = units.length_mm, units.length
    t = segments.table
    pairs = diagrams.pairs
    names = np.asarray(diagrams.combinations, dtype=object)
    crit = pairs[pairs["compressed"]]
    critical_in = (
        pd.Series(names[crit["combination"].to_numpy()], index=crit["segment"].to_numpy())
        .groupby(level=0)
        .agg(" | ".join)
    )
    elements = members.elements.reset_index().groupby("member", sort=False)["element"].agg(" ".join)
    out = pd.DataFrame(
        {
            "member": t["member"].to_numpy(),
            "section": members.table["section"].reindex(t["member"]).to_numpy(),
            f"member length [{lu}]": members.table["length"].reindex(t["member"]).to_numpy() / per,
            "elements in order": elements.reindex(t["member"]).to_numpy(),
            "segment": t.index.to_numpy(),
            "flange": t["flange"].to_numpy(),
            "start node": t["node_start"].to_numpy(),
            "end node": t["node_end"].to_numpy(),
            f"start [{lu}]": t["s_start"].to_numpy() / per,
            f"end [{lu}]": t["s_end"].to_numpy() / per,
            f"unbraced length [{lu}]": t["length"].to_numpy() / per,
            "start braced": t["braced_start"].to_numpy(),
            "end braced": t["braced_end"].to_numpy(),
            "cantilever": t["cantilever"].to_numpy(),
            "assumed brace": t["assumed"].to_numpy(),
            "flange compressed in": critical_in.reindex(np.arange(len(t)))
            .fillna("(none: not critical)")
            .to_numpy(),
        }
    )
    return out


def members_text(
    members: Members, segments: Segments, diagrams: SegmentDiagrams, units: ShownUnits = SI
) -> str:
    """Return a readable listing: each member, its braced nodes per flange, its segments."""
    rows = segment_rows(members, segments, diagrams, units)
    per, lu = units.length_mm, units.length
    st = segments.stations
    lines: list[str] = []
    for name, m in members.table.iterrows():
        own = members.elements[members.elements["member"] == name]
        mst = st[st["member"] == name]
        kind = "steep (no top or bottom flange)" if m["steep"] else "beam"
        lines.append(
            f"Member {name}  section {m['section']}  length {m['length'] / per:.3f} {lu}  {kind}"
        )
        lines.append(f"  elements in order: {' '.join(map(str, own.index))}")
        for flange in ("top",) if m["steep"] else ("top", "bottom"):
            braced = mst[mst[flange]]
            listed = ", ".join(
                f"{n} ({s / per:.3f} {lu}, {by})"
                for n, s, by in zip(
                    braced["node"], braced["s"], braced[f"{flange}_by"], strict=True
                )
            )
            which = "both flanges" if m["steep"] else f"{flange} flange"
            lines.append(f"  {which} braced at: {listed or 'nowhere'}")
        free = mst[mst["free"]]
        if len(free):
            lines.append(f"  free end(s): {', '.join(free['node'])}")
        segs = rows[rows["member"] == name]
        lines.append(
            f"  {'segment':<16} {'from':>6} {'to':>6} {'start ' + lu:>8} {'end ' + lu:>8} "
            f"{'Lu ' + lu:>7}  notes / flange compressed in"
        )
        for r in segs.to_dict("records"):
            notes = []
            if r["cantilever"]:
                notes.append("cantilever")
            if not (r["start braced"] and r["end braced"]):
                notes.append("an end not braced")
            if r["assumed brace"]:
                notes.append("assumed brace")
            notes.append(r["flange compressed in"])
            lines.append(
                f"  {r['segment']:<16} {r['start node']!s:>6} {r['end node']!s:>6} "
                f"{r[f'start [{lu}]']:>8.3f} {r[f'end [{lu}]']:>8.3f} "
                f"{r[f'unbraced length [{lu}]']:>7.3f}  " + "; ".join(notes)
            )
        lines.append("")
    if len(segments.ignored):
        lines.append("Braces ignored (one flange only, on members steeper than 45°):")
        for r in segments.ignored.itertuples(index=False):
            lines.append(f"  member {r.member} node {r.node}: {r.reason}")
    return "\n".join(lines)
