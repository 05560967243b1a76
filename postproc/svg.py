"""Small inline SVG charts for the report, written by hand: no plotting library, no network.

Coordinates: the chart area is ``WIDTH`` × ``HEIGHT`` px with margins for labels.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from html import escape

import numpy as np
from flangewise.postproc.keyplan import place_labels
from flangewise.postproc.shown_units import SI, ShownUnits

#: Moment labels (bold 11 px sans-serif): estimated px per character.
LABEL_CHAR_PX = 6.8

WIDTH, HEIGHT = 760, 320
LEFT, RIGHT, TOP, BOTTOM = 64, 20, 40, 70
#: Node ids under the chart: this many px per character (11 px sans-serif) and two rows, the
#: second for an id that would touch its neighbour in the first.
ID_CHAR_PX = 6.2
#: The diagram's sign, in words that match the derivation's ("+ compresses segment's flange, top
#: if either"): the member's own moment, whichever flange a segment checks.
M_SIGN = "+ compresses top flange"
#: At most this many intervals between distance ticks in US customary units.
MAX_TICKS = 6


def number(value: float, digits: int = 1, sign: bool = False) -> str:
    """``value`` to ``digits`` decimals with a true minus sign and never a negative zero.

    A value that rounds to zero prints as 0.0, not −0.0 (a sign with no magnitude reads as a
    result on the other side).
    """
    v = round(float(value), digits) + 0.0  # + 0.0 turns -0.0 into 0.0
    text = f"{v:+.{digits}f}" if sign and v != 0 else f"{v:.{digits}f}"
    return text.replace("-", "−")


def nice_ticks(top: float, most: int = MAX_TICKS) -> tuple[np.ndarray, int]:
    """Ticks from 0 to ``top`` at a round step (1, 2, 2.5 or 5 × 10ⁿ), and decimals to print.

    The step is the smallest such that at most ``most`` intervals fit: 45 ft → every 10 ft,
    30 ft → every 5 ft, 2.2 ft → every 0.5 ft. A ``top`` of 0 or less gives the one tick 0.
    """
    if not top > 0:
        return np.array([0.0]), 0
    n = math.floor(math.log10(top / most))
    k = next(k for k in (1.0, 2.0, 2.5, 5.0, 10.0) if top / (k * 10.0**n) <= most)
    step = k * 10.0**n
    # The decimals the step itself needs: 0.5 → 1, 0.25 → 2, 25 → 0.
    decimals = max(0, -n + (1 if k == 2.5 else 0) - (1 if k == 10.0 else 0))
    return np.arange(0, math.floor(top / step + 1e-9) + 1) * step, decimals


def distance_ticks(s_max: float, units: ShownUnits) -> list[tuple[float, str]]:
    """Ticks along the member [units.length] with their text.

    SI keeps its quarter points (two decimals); US customary ticks stand at a round step, since a
    quarter of a length in feet seldom is one.
    """
    if units.system == "si":
        return [(float(v), number(v, 2)) for v in np.linspace(0.0, s_max, 5)]
    ticks, decimals = nice_ticks(s_max)
    return [(float(v), number(v, decimals)) for v in ticks]


@dataclass(frozen=True)
class Marker:
    """A point of the member under the chart: where, which flange is braced there, its node id.

    ``s`` is the position along the member in the chart's length unit.
    """

    s: float
    flange: str  # "top", "bottom", "both", or "" (a member end that holds neither flange)
    label: str


def _scale(lo: float, hi: float, a: float, b: float):  # type: ignore[no-untyped-def]
    span = hi - lo if hi > lo else 1.0
    return lambda v: a + (np.asarray(v, dtype=float) - lo) / span * (b - a)


def moment_diagram(
    s: np.ndarray,
    m: np.ndarray,
    shade: tuple[float, float],
    markers: list[Marker],
    labels: list[tuple[float, float, str]],
    title: str,
    svg_id: str,
    units: ShownUnits = SI,
) -> str:
    """A member's moment diagram along it, one segment shaded, brace points marked.

    Args:
        s: positions along the member [units.length], in order (repeated at a jump).
        m: moments [units.moment], positive when they compress the top flange (drawn upwards).
        shade: start and end of the segment to shade [units.length].
        markers: brace points and member ends to mark (▼ top flange braced above the chart, ▲
            bottom flange braced below); each one's node id is printed under the chart.
        labels: (s, M, text) labels to place at points of the diagram.
        title: the chart's caption.
        svg_id: the element id (tests and links find the chart by it).
        units: the units of ``s``, ``shade``, ``m`` and the labels, named on the axes.
    """
    x0, x1 = LEFT, WIDTH - RIGHT
    y0, y1 = TOP, HEIGHT - BOTTOM
    s_max = float(s.max()) if len(s) else 1.0
    m_abs = float(np.abs(m).max()) if len(m) else 1.0
    m_abs = m_abs if m_abs > 0 else 1.0
    fx = _scale(0.0, s_max, x0, x1)
    fy = _scale(-m_abs * 1.15, m_abs * 1.15, y1, y0)
    zero = float(fy(0.0))
    parts = [
        f'<svg id="{escape(svg_id)}" class="diagram" xmlns="http://www.w3.org/2000/svg" '
        f'viewBox="0 0 {WIDTH} {HEIGHT}" role="img" aria-label="{escape(title)}">',
        f'<text x="{x0}" y="16" class="cap">{escape(title)}</text>',
        f'<rect x="{float(fx(shade[0])):.1f}" y="{y0}" '
        f'width="{float(fx(shade[1]) - fx(shade[0])):.1f}" height="{y1 - y0}" class="shade"/>',
        f'<line x1="{x0}" y1="{zero:.1f}" x2="{x1}" y2="{zero:.1f}" class="axis"/>',
        f'<line x1="{x0}" y1="{y0}" x2="{x0}" y2="{y1}" class="axis"/>',
    ]
    for v in (-m_abs, m_abs):
        parts.append(
            f'<text x="{x0 - 6}" y="{float(fy(v)) + 4:.1f}" class="tick" text-anchor="end">'
            f"{number(v, 0, sign=True)}</text>"
        )
    parts.append(
        f'<text x="14" y="{(y0 + y1) / 2:.0f}" class="tick" '
        f'transform="rotate(-90 14 {(y0 + y1) / 2:.0f})" text-anchor="middle">'
        f"M [{escape(units.moment)}], {escape(M_SIGN)}</text>"
    )
    for v, text in distance_ticks(s_max, units):
        parts.append(
            f'<text x="{float(fx(v)):.1f}" y="{y1 + 50}" class="tick" text-anchor="middle">'
            f"{text}</text>"
        )
    parts.append(
        f'<text x="{(x0 + x1) / 2:.0f}" y="{HEIGHT - 6}" class="tick" text-anchor="middle">'
        f"distance along the member [{escape(units.length)}]</text>"
    )
    if len(s):
        pts = " ".join(
            f"{a:.1f},{b:.1f}" for a, b in zip(fx(s).tolist(), fy(m).tolist(), strict=True)
        )
        fill = f"{float(fx(s[0])):.1f},{zero:.1f} {pts} {float(fx(s[-1])):.1f},{zero:.1f}"
        parts.append(f'<polygon points="{fill}" class="area"/>')
        parts.append(f'<polyline points="{pts}" class="line"/>')
    for mk in markers:
        x = float(fx(mk.s))
        if mk.flange in ("top", "both"):
            parts.append(
                f'<path d="M{x - 6:.1f},{y0 - 12} L{x + 6:.1f},{y0 - 12} L{x:.1f},{y0 - 2} Z" '
                f'class="brace-top"><title>{escape(mk.label)}: top flange braced</title></path>'
            )
        if mk.flange in ("bottom", "both"):
            parts.append(
                f'<path d="M{x - 6:.1f},{y1 + 12} L{x + 6:.1f},{y1 + 12} L{x:.1f},{y1 + 2} Z" '
                f'class="brace-bottom"><title>{escape(mk.label)}: bottom flange braced</title>'
                "</path>"
            )
    parts.extend(_node_ids(markers, fx, y1))
    dots = np.array([[float(fx(ls)), float(fy(lm))] for ls, lm, _ in labels]).reshape(-1, 2)
    for x, y in dots:
        parts.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3" class="dot"/>')
    # Labels avoid one another, the dots, the brace markers and the curve itself.
    curve = np.column_stack([fx(s), fy(m)]) if len(s) > 1 else np.empty((0, 2))
    # Labels stay inside the plot, below the caption and the top brace markers.
    marks = np.array(
        [[float(fx(mk.s)) + dx, y0 - 7.0] for mk in markers for dx in (-6.0, 0.0, 6.0)]
    ).reshape(-1, 2)
    points = np.vstack([dots, marks])
    a = np.vstack([curve[:-1], points]) if len(curve) else points
    b = np.vstack([curve[1:], points]) if len(curve) else points
    anchors = [(x, y, 0.0, text) for (x, y), (_, _, text) in zip(dots, labels, strict=True)]
    for x, y, text in place_labels(anchors, a, b, WIDTH, y1 + 1, char_px=LABEL_CHAR_PX, top=y0):
        parts.append(
            f'<text x="{x:.1f}" y="{y:.1f}" class="lab" text-anchor="middle">{escape(text)}</text>'
        )
    parts.append("</svg>")
    return "".join(parts)


def _node_ids(markers: list[Marker], fx, y1: float) -> list[str]:  # type: ignore[no-untyped-def]
    """The node id under each marker, in two rows so that neighbours never touch."""
    parts = []
    right_end = [-np.inf, -np.inf]  # where the last id of each row ends [px]
    for mk in sorted(markers, key=lambda k: k.s):
        x = float(fx(mk.s))
        half = ID_CHAR_PX * len(mk.label) / 2 + 2
        row = 0 if x - half > right_end[0] else 1
        right_end[row] = max(right_end[row], x + half)
        parts.append(
            f'<text x="{x:.1f}" y="{y1 + 24 + 11 * row}" class="tick node" '
            f'text-anchor="middle">{escape(mk.label)}</text>'
        )
    return parts


def utilization_bars(names: list[str], values: list[float], svg_id: str) -> str:
    """A bar per member: its governing utilization, with the 1.0 line."""
    n = len(names)
    row = 16
    height = TOP + n * row + 30
    x0, x1 = 120, WIDTH - 60
    top = max([1.2, *[v for v in values if np.isfinite(v)]])
    fx = _scale(0.0, top, x0, x1)
    parts = [
        f'<svg id="{escape(svg_id)}" class="bars" xmlns="http://www.w3.org/2000/svg" '
        f'viewBox="0 0 {WIDTH} {height}" role="img" aria-label="governing utilization per member">',
        f'<text x="{x0}" y="16" class="cap">Governing utilization of every member</text>',
    ]
    for i, (name, v) in enumerate(zip(names, values, strict=True)):
        y = TOP + i * row
        parts.append(
            f'<text x="{x0 - 6}" y="{y + 11}" class="tick" text-anchor="end">{escape(name)}</text>'
        )
        if np.isfinite(v):
            cls = "bar over" if v > 1.0 else "bar"
            parts.append(
                f'<rect x="{x0}" y="{y + 2}" width="{float(fx(v)) - x0:.1f}" height="{row - 4}" '
                f'class="{cls}"/>'
            )
            parts.append(
                f'<text x="{float(fx(v)) + 4:.1f}" y="{y + 11}" class="tick">{number(v, 2)}</text>'
            )
        else:
            parts.append(f'<text x="{x0 + 4}" y="{y + 11}" class="tick">not critical</text>')
    one = float(fx(1.0))
    parts.append(
        f'<line x1="{one:.1f}" y1="{TOP - 4}" x2="{one:.1f}" y2="{TOP + n * row}" class="limit"/>'
    )
    parts.append(
        f'<text x="{one:.1f}" y="{TOP + n * row + 14}" class="tick" text-anchor="middle">1.0</text>'
    )
    parts.append("</svg>")
    return "".join(parts)
