"""Plain-text summary of a loaded model, in engineer's units."""

from __future__ import annotations

from flangewise.engine.layout import Layout
from flangewise.readers import Model

_KNM = 1.0e6  # N·mm per kN·m


def model_summary(model: Model, layout: Layout) -> str:
    """Return a short multi-line description of what was read: counts, units, moment ranges.

    Args:
        model: the validated model.
        layout: its members and segments (built so that the summary refuses exactly the input
            that a check refuses).
    """
    s = model.settings
    forces = model.forces
    lines = [
        f"Model folder : {s.folder}",
        f"Settings     : {s.source if s.source else 'none (canonical names, SI units)'}",
        f"Input units  : length {s.units.length}, force {s.units.force}, moment {s.units.moment}, "
        f"sections {s.units.section}, stress {s.units.stress}; vertical axis {s.vertical}",
        f"Nodes        : {len(model.nodes)}",
        f"Elements     : {len(model.elements)} "
        f"(total length {model.elements['length'].sum() / 1000.0:.2f} m, "
        f"{int(model.elements['backwards'].sum())} drawn backwards)",
        f"Sections     : {len(model.sections)}",
        f"Braces       : {_brace_counts(model)}",
        f"Supports     : {len(model.supports)}",
        f"Members      : {len(layout.members.table)} "
        f"({len(layout.segments.table)} unbraced segments; 'flangewise members' lists them)",
        f"Force rows   : {len(forces)} in {len(model.combinations)} load combination(s)",
        "",
        "Major-axis moment per load combination [kN·m] (+ compresses the top flange):",
    ]
    stats = (
        forces.groupby("combination", observed=True)["M"].agg(["min", "max", "size"]).reset_index()
    )
    width = max([len("combination")] + [len(str(c)) for c in stats["combination"]])
    lines.append(f"  {'combination':<{width}}  {'min':>10}  {'max':>10}  {'rows':>8}")
    for row in stats.itertuples(index=False):
        lines.append(
            f"  {row.combination!s:<{width}}  {row.min / _KNM:>10.1f}  {row.max / _KNM:>10.1f}"
            f"  {row.size:>8}"
        )
    return "\n".join(lines)


def _brace_counts(model: Model) -> str:
    if model.braces.empty:
        return "none"
    counts = model.braces["flange"].value_counts()
    return ", ".join(f"{counts.get(w, 0)} {w}" for w in ("top", "bottom", "both"))
