"""Small inline SVG charts for the report, written by hand: no plotting library, no network.

Coordinates: the chart area is ``WIDTH`` × ``HEIGHT`` px with margins for labels.
"""

from __future__ import annotations

from dataclasses import dataclass
from html import escape

import numpy as np

WIDTH, HEIGHT = 760, 300
LEFT, RIGHT, TOP, BOTTOM = 64, 20, 36, 44


@dataclass(frozen=True)
class Marker:
    """A brace point under the chart: position along the member [m] and which flange."""

    s: float
    flange: str  # "top", "bottom" or "both"
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
) -> str:
    """A member's moment diagram [kN·m] along it [m], one segment shaded, brace points marked.

    Args:
        s: positions along the member [m], in order (repeated at a jump).
        m: moments [kN·m], positive when they compress the top flange (drawn upwards).
        shade: start and end of the segment to shade [m].
        markers: brace points to mark (▼ top flange above the chart, ▲ bottom flange below).
        labels: (s, M, text) labels to place at points of the diagram.
        title: the chart's caption.
        svg_id: the element id (tests and links find the chart by it).
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
            f"{v:+.0f}</text>"
        )
    parts.append(
        f'<text x="14" y="{(y0 + y1) / 2:.0f}" class="tick" '
        f'transform="rotate(-90 14 {(y0 + y1) / 2:.0f})" text-anchor="middle">'
        "M [kN·m], + compresses top</text>"
    )
    for v in np.linspace(0.0, s_max, 5):
        parts.append(
            f'<text x="{float(fx(v)):.1f}" y="{y1 + 16}" class="tick" text-anchor="middle">'
            f"{v:.2f}</text>"
        )
    parts.append(
        f'<text x="{(x0 + x1) / 2:.0f}" y="{HEIGHT - 6}" class="tick" text-anchor="middle">'
        "distance along the member [m]</text>"
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
    for i, (ls, lm, text) in enumerate(labels):
        x, y = float(fx(ls)), float(fy(lm))
        # End labels outside the curve; later labels (the inside peak) on the other side, so
        # that a peak close to an end does not print over the end's label.
        outside = lm >= 0
        dy = (-8 if outside else 16) if i < 2 else (16 if outside else -8)
        text = text.replace("-", "−")
        parts.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3" class="dot"/>')
        # Keep labels inside the picture near its left and right edges.
        anchor = "end" if x > x1 - 60 else ("start" if x < x0 + 60 else "middle")
        parts.append(
            f'<text x="{x:.1f}" y="{y + dy:.1f}" class="lab" text-anchor="{anchor}">'
            f"{escape(text)}</text>"
        )
    parts.append("</svg>")
    return "".join(parts)


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
                f'<text x="{float(fx(v)) + 4:.1f}" y="{y + 11}" class="tick">{v:.2f}</text>'
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
