"""Plain-text summary of a loaded model, in engineer's units."""

from __future__ import annotations

from flangewise.engine.layout import Layout
from flangewise.postproc.shown_units import SI, ShownUnits
from flangewise.readers import Model


def model_summary(model: Model, layout: Layout, units: ShownUnits = SI) -> str:
    """Return a short multi-line description of what was read: counts, units, moment ranges.

    Args:
        model: the validated model.
        layout: its members and segments (built so that the summary refuses exactly the input
            that a check refuses).
        units: the units to show lengths and moments in.
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
        f"(total length {units.to_length(model.elements['length'].sum()):.2f} {units.length}, "
        f"{int(model.elements['backwards'].sum())} drawn backwards)",
        f"Sections     : {len(model.sections)} ({_source_counts(model)}); where each one's "
        "properties come from:",
        *_section_sources(model),
        f"Braces       : {_brace_counts(model)}",
        f"Supports     : {len(model.supports)}",
        f"Members      : {len(layout.members.table)} "
        f"({len(layout.segments.table)} unbraced segments; 'flangewise members' lists them)",
        f"Force rows   : {len(forces)} in {len(model.combinations)} load combination(s)",
        "",
        f"Output units : {units.words}",
        "",
        f"Major-axis moment per load combination [{units.moment}] (+ compresses the top flange):",
    ]
    stats = (
        forces.groupby("combination", observed=True)["M"].agg(["min", "max", "size"]).reset_index()
    )
    width = max([len("combination")] + [len(str(c)) for c in stats["combination"]])
    lines.append(f"  {'combination':<{width}}  {'min':>10}  {'max':>10}  {'rows':>8}")
    for row in stats.itertuples(index=False):
        lines.append(
            f"  {row.combination!s:<{width}}  {units.to_moment(row.min):>10.1f}  "
            f"{units.to_moment(row.max):>10.1f}"
            f"  {row.size:>8}"
        )
    return "\n".join(lines)


#: At most this many sections are listed one by one; the rest are counted.
MAX_SECTIONS_LISTED = 40


def _source_counts(model: Model) -> str:
    """'2 from catalogues, 1 from plates, 0 with given properties'."""
    source = model.sections["source"].astype(str)
    kinds = (
        ("from catalogues", source.str.startswith("catalogue").sum()),
        ("from plates", (source == "plates").sum()),
        ("with given properties", (source == "given properties").sum()),
    )
    return ", ".join(f"{int(n)} {words}" for words, n in kinds)


def _section_sources(model: Model) -> list[str]:
    """One line per section: its name and where its properties come from."""
    sections = model.sections.head(MAX_SECTIONS_LISTED)
    width = max([len(str(n)) for n in sections.index], default=0)
    lines = []
    for name, row in sections.iterrows():  # a few sections, each worth a line
        words = {
            "plates": "plates (computed from d, b, tf, tw, r)",
            "given properties": f"given properties ({_given(row)}), the rest from plates",
        }.get(str(row["source"]), str(row["source"]))
        if row["replaces"]:
            words += f"; this row of the sections table replaces catalogue shape {row['replaces']}"
        lines.append(f"  {name!s:<{width}}  {words}")
    rest = len(model.sections) - len(sections)
    if rest > 0:
        lines.append(f"  … and {rest} more")
    return lines


def _given(row: object) -> str:
    """The property names a sections row gives, e.g. 'J Cw'."""
    return " ".join(c for c in ("A", "Ix", "Iy", "Sx", "Zx", "J", "Cw") if row[c] == row[c])  # type: ignore[index]


def _brace_counts(model: Model) -> str:
    if model.braces.empty:
        return "none"
    counts = model.braces["flange"].value_counts()
    return ", ".join(f"{counts.get(w, 0)} {w}" for w in ("top", "bottom", "both"))
