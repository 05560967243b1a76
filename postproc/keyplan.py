"""The key plan: the model drawn in plan and in one elevation, every member named and shaded.

Inline SVG written by hand, so that a reader of the printed report can find a member (M10) on the
structure. Each member is drawn from its end points (``layout.members.table``: x0, y0, z0, x1,
y1, z1 in mm) and shaded by its governing utilization in bands of our own: one blue, darker and
thicker as the utilization rises (it reads in black and white too), a deep red over 1.0, and a
dashed grey line for a member with no checked pair. Members that fall on one another in a view (a
column seen from above, the frames of a shed seen from the side) are drawn once, named together,
and shaded by the highest of them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from html import escape

import numpy as np
import pandas as pd
from flangewise.postproc.shown_units import SI, ShownUnits

WIDTH = 760
PAD = 36
#: Height of each view at most [px]; the width follows the model's extents.
MAX_HEIGHT = 340
#: Labels are estimated at this many px per character (11 px sans-serif, bold).
CHAR_PX = 6.6
LABEL_PX = 12
#: At most this many labels per view; beyond that the lines are drawn unnamed (and it says so).
MAX_LABELS = 400
#: Coordinates within this many mm are the same point in a view.
SAME_MM = 1.0


@dataclass(frozen=True)
class Band:
    """One shade of the legend: utilizations up to ``upper`` (inclusive)."""

    upper: float
    label: str
    css: str


BANDS = (
    Band(0.5, "up to 0.50", "u1"),
    Band(0.7, "0.50 to 0.70", "u2"),
    Band(0.9, "0.70 to 0.90", "u3"),
    Band(1.0, "0.90 to 1.00", "u4"),
    Band(np.inf, "over 1.00", "u5"),
)

CSS = """
svg.plan .u0 { stroke: #9a9a9a; stroke-width: 2; stroke-dasharray: 5 4; }
svg.plan .u1 { stroke: #b9c8e6; stroke-width: 3; }
svg.plan .u2 { stroke: #7f9bd0; stroke-width: 4; }
svg.plan .u3 { stroke: #3f63a8; stroke-width: 5; }
svg.plan .u4 { stroke: #17306b; stroke-width: 6; }
svg.plan .u5 { stroke: #8a1c1c; stroke-width: 7; }
svg.plan line, svg.plan path { stroke-linecap: round; fill: none; }
svg.plan rect.u0, svg.plan rect.u1, svg.plan rect.u2, svg.plan rect.u3, svg.plan rect.u4,
svg.plan rect.u5 { stroke-width: 0; } svg.plan rect.u1 { fill: #b9c8e6; }
svg.plan rect.u2 { fill: #7f9bd0; } svg.plan rect.u3 { fill: #3f63a8; }
svg.plan rect.u4 { fill: #17306b; } svg.plan rect.u5 { fill: #8a1c1c; }
svg.plan rect.u0 { fill: #fff; stroke: #9a9a9a; stroke-width: 1.5; stroke-dasharray: 3 2; }
svg.plan .pt { stroke: #1b1b1b; stroke-width: 1; }
svg.plan .name { font: bold 11px sans-serif; fill: #1b1b1b; paint-order: stroke;
                 stroke: #fff; stroke-width: 3px; }
"""


def band_classes(values: np.ndarray) -> np.ndarray:
    """The legend class of each utilization (``u0`` where there is none: NaN)."""
    v = np.asarray(values, dtype=float)
    uppers = np.array([b.upper for b in BANDS])
    idx = np.searchsorted(uppers, np.where(np.isfinite(v), v, 0.0), side="left")
    names = np.array([b.css for b in BANDS], dtype=object)[np.minimum(idx, len(BANDS) - 1)]
    return np.where(np.isfinite(v), names, "u0")


def elevation_axis(members: pd.DataFrame) -> str:
    """The horizontal axis of the elevation: ``x`` or ``y``, whichever spans more of the model."""
    xs = members[["x0", "x1"]].to_numpy(dtype=float)
    ys = members[["y0", "y1"]].to_numpy(dtype=float)
    span_x = float(np.ptp(xs)) if xs.size else 0.0
    span_y = float(np.ptp(ys)) if ys.size else 0.0
    return "y" if span_y > span_x else "x"


def key_plan(members: pd.DataFrame, util: Mapping[str, float], units: ShownUnits = SI) -> str:
    """The plan (x–y), the elevation that shows the model best, and the legend, as HTML.

    Args:
        members: ``layout.members.table`` (index member name; x0, y0, z0, x1, y1, z1 in mm).
        util: each member's governing utilization (members absent or NaN: none checked).
        units: the units the views' extents are stated in (``units.length``).
    """
    if members.empty:
        return ""
    names = members.index.astype(str).to_numpy()
    values = np.array([float(util.get(n, np.nan)) for n in names])
    classes = band_classes(values)
    across = elevation_axis(members)
    other = "y" if across == "x" else "x"
    plan = _view(
        members, names, values, classes, ("x", "y"), "key-plan", "Plan (x–y), from above", units
    )
    elev = _view(
        members,
        names,
        values,
        classes,
        (across, "z"),
        "key-elevation",
        f"Elevation ({across}–z), looking along {other}",
        units,
    )
    return f"{plan}{elev}{_legend()}"


def _legend() -> str:
    items = [("u0", "no checked pair"), *[(b.css, b.label) for b in BANDS]]
    parts = []
    x = 150.0
    for css, label in items:
        parts.append(f'<rect x="{x:.0f}" y="6" width="22" height="12" class="{css}"/>')
        parts.append(f'<text x="{x + 27:.0f}" y="16" class="name">{escape(label)}</text>')
        x += 34 + CHAR_PX * len(label)
    head = (
        f'<svg class="plan legend" xmlns="http://www.w3.org/2000/svg" '
        f'viewBox="0 0 {max(WIDTH, x):.0f} 24" role="img" aria-label="legend: governing '
        'utilization"><text x="0" y="16" class="name">governing utilization:</text>'
    )
    return head + "".join(parts) + "</svg>"


def _view(
    members: pd.DataFrame,
    names: np.ndarray,
    values: np.ndarray,
    classes: np.ndarray,
    axes: tuple[str, str],
    svg_id: str,
    title: str,
    units: ShownUnits,
) -> str:
    """One projection: lines (or points, for members seen end-on), shaded and named."""
    h, v = axes
    a = members[[f"{h}0", f"{v}0", f"{h}1", f"{v}1"]].to_numpy(dtype=float)
    # Members that fall on one another here are one drawing: group by rounded, ordered ends.
    ends = np.round(a / SAME_MM).astype(np.int64)
    swap = (ends[:, 0] > ends[:, 2]) | ((ends[:, 0] == ends[:, 2]) & (ends[:, 1] > ends[:, 3]))
    ends[swap] = ends[swap][:, [2, 3, 0, 1]]
    group = pd.DataFrame(ends).groupby([0, 1, 2, 3], sort=False).ngroup().to_numpy()
    lo = a.reshape(-1, 2).min(axis=0)
    hi = a.reshape(-1, 2).max(axis=0)
    span = np.maximum(hi - lo, 1.0)
    scale = min((WIDTH - 2 * PAD) / span[0], (MAX_HEIGHT - 2 * PAD) / span[1])
    if span[1] <= 1.0:  # a flat view (a floor seen from the side): a thin strip
        scale = (WIDTH - 2 * PAD) / span[0]
    height = int(min(MAX_HEIGHT, span[1] * scale + 2 * PAD + 18))

    def px(points: np.ndarray) -> np.ndarray:
        out = np.empty_like(points)
        out[:, 0] = PAD + (points[:, 0] - lo[0]) * scale
        out[:, 1] = height - PAD - (points[:, 1] - lo[1]) * scale  # up is up
        return out

    p0, p1 = px(a[:, :2]), px(a[:, 2:])
    parts = [
        f'<svg id="{escape(svg_id)}" class="plan" xmlns="http://www.w3.org/2000/svg" '
        f'viewBox="0 0 {WIDTH} {height}" role="img" aria-label="{escape(title)}">',
        f'<text x="{PAD}" y="14" class="cap">{escape(title)}; '
        f"{h} {units.to_length(lo[0]):.1f} to {units.to_length(hi[0]):.1f} {units.length}, "
        f"{v} {units.to_length(lo[1]):.1f} to {units.to_length(hi[1]):.1f} {units.length}</text>",
    ]
    anchors = []
    # One drawing per group (a loop over the groups' lines, the SVG's own elements).
    for g in np.unique(group):
        rows = np.flatnonzero(group == g)
        worst = values[rows]
        pick = rows[int(np.nanargmax(worst))] if np.isfinite(worst).any() else rows[0]
        css = classes[pick]
        x0, y0 = p0[pick]
        x1, y1 = p1[pick]
        label = ", ".join(names[rows])
        tip = "; ".join(
            f"{n}: {'–' if not np.isfinite(u) else f'{u:.3f}'}"
            for n, u in zip(names[rows], values[rows], strict=True)
        )
        if abs(x1 - x0) < 0.5 and abs(y1 - y0) < 0.5:  # seen end-on: a square
            parts.append(
                f'<rect x="{x0 - 5:.1f}" y="{y0 - 5:.1f}" width="10" height="10" '
                f'class="{css} pt"><title>{escape(tip)}</title></rect>'
            )
            anchors.append((x0, y0, 0.0, label))
        else:
            parts.append(
                f'<line x1="{x0:.1f}" y1="{y0:.1f}" x2="{x1:.1f}" y2="{y1:.1f}" class="{css}">'
                f"<title>{escape(tip)}</title></line>"
            )
            anchors.append(((x0 + x1) / 2, (y0 + y1) / 2, 1.0, label))
    if len(anchors) <= MAX_LABELS:
        for x, y, text in place_labels(anchors, p0, p1, WIDTH, height):
            parts.append(
                f'<text x="{x:.1f}" y="{y:.1f}" class="name" text-anchor="middle">'
                f"{escape(text)}</text>"
            )
    else:
        parts.append(
            f'<text x="{PAD}" y="{height - 6}" class="tick">{len(anchors)} members: too many to '
            "name here (the tables name them)</text>"
        )
    parts.append("</svg>")
    return "".join(parts)


#: Offsets tried around a label's anchor, nearest first [px] (dx, dy of the label's baseline
#: centre): above and below first, then rings farther out in 16 directions.
OFFSETS = [(0.0, -8.0), (0.0, 16.0)] + [
    (float(r * np.cos(a)), float(r * np.sin(a)) + 4.0)
    for r in (14, 22, 32, 44, 58, 74)
    for a in np.linspace(-np.pi / 2, 1.5 * np.pi, 16, endpoint=False)
]


def _along(p0: np.ndarray, p1: np.ndarray, step: float) -> np.ndarray:
    """Points from each ``p0`` to its ``p1`` at most ``step`` px apart, ends included."""
    n = np.maximum(1, np.ceil(np.hypot(*(p1 - p0).T) / step)).astype(np.int64)
    owner = np.repeat(np.arange(len(p0)), n + 1)
    first = np.concatenate([[0], np.cumsum(n + 1)[:-1]])
    t = (np.arange(len(owner)) - np.repeat(first, n + 1)) / np.repeat(n, n + 1)
    return p0[owner] + (p1[owner] - p0[owner]) * t[:, None]


def label_box(x: float, y: float, text: str, char_px: float = CHAR_PX) -> np.ndarray:
    """The box [left, top, right, bottom] a label of ``text`` takes, baseline centre (x, y)."""
    w = char_px * len(text) + 4
    return np.array([x - w / 2, y + 2 - LABEL_PX, x + w / 2, y + 2])


def place_labels(
    anchors: list[tuple[float, float, float, str]],
    p0: np.ndarray,
    p1: np.ndarray,
    width: float,
    height: float,
    char_px: float = CHAR_PX,
    top: float = 16.0,
) -> list[tuple[float, float, str]]:
    """Place each label near its anchor where it overlaps no placed label and no end point.

    Labels stay inside ``top`` … ``height`` and 0 … ``width`` [px]. Greedy, nearest offset
    first; a label that finds no free place takes its first offset (it is still named; overlaps
    are then possible only in very crowded views).

    Returns:
        (x, y of the text's baseline centre, text) per label; ``label_box`` gives its box.
    """
    boxes = np.empty((0, 4))
    # The drawing is an obstacle too: member ends and points every few px along each line
    # (kept 4 px clear), so that no name sits on a member.
    pts = np.unique(np.round(_along(p0, p1, step=5.0), 1), axis=0)
    out = []
    for x, y, _, text in anchors:
        chosen = None
        for dx, dy in OFFSETS:
            box = label_box(x + dx, y + dy, text, char_px)
            if box[0] < 0 or box[2] > width or box[1] < top or box[3] > height:
                continue
            hit_box = (
                (boxes[:, 0] < box[2])
                & (box[0] < boxes[:, 2])
                & (boxes[:, 1] < box[3])
                & (box[1] < boxes[:, 3])
            ).any()
            hit_pt = (
                (pts[:, 0] > box[0] - 4)
                & (pts[:, 0] < box[2] + 4)
                & (pts[:, 1] > box[1] - 4)
                & (pts[:, 1] < box[3] + 4)
            ).any()
            if not hit_box and not hit_pt:
                chosen = box
                break
        if chosen is None:
            chosen = label_box(x + OFFSETS[0][0], y + OFFSETS[0][1], text, char_px)
        boxes = np.vstack([boxes, chosen])
        out.append(((chosen[0] + chosen[2]) / 2, chosen[3] - 2, text))
    return out
