"""Points lying near line segments, found through a grid of cells (numpy only).

A member check runs on every model, so finding nodes that lie on an element must cost no import of
a spatial index (a third of a second per run). Each element is cut into pieces no longer than the
grid's cell; a point within ``r`` of an element lies within ``r`` of one of its pieces, so inside
that piece's box widened by ``r``, so in one of the few cells that box touches. Pairing every piece
with the points of those cells gives a superset of the close pairs; the caller keeps the exact ones.
"""

from __future__ import annotations

import numpy as np

#: Widen each piece's box by this much more than ``r``: the rounding of the piece ends (relative
#: 1e-16 of the coordinates) can never put a point within ``r`` outside the box.
_PAD = 1.01

#: Give up (return ``None``) beyond these many pieces or candidate pairs per segment, on average
#: (lengths spread over orders of magnitude, or points crowded into a few cells): the caller
#: then uses a spatial index, whose cost no longer matters beside such a model's.
_MAX_PIECES = 16
_MAX_PAIRS = 64


def near_segment_pairs(
    points: np.ndarray,
    start: np.ndarray,
    direction: np.ndarray,
    length: np.ndarray,
    r: float,
) -> tuple[np.ndarray, np.ndarray] | None:
    """Return (segment, point) index pairs, sorted and unique, that include every close pair.

    A close pair is a point within ``r`` of a segment's points ``start + direction·t``,
    0 ≤ t ≤ ``length``. Pairs farther apart may be returned too: the caller decides exactly.

    Args:
        points: (m, 3) finite coordinates [mm].
        start: (n, 3) segment starts [mm].
        direction: (n, 3) unit vectors along the segments [-].
        length: (n,) segment lengths [mm].
        r: the distance [mm], > 0.

    Returns:
        ``None`` when the grid would be out of proportion for these segments and points (see
        ``_MAX_PIECES`` and ``_MAX_PAIRS``).
    """
    n, m = len(start), len(points)
    empty = (np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64))
    if n == 0 or m == 0:
        return empty
    width = max(float(np.median(length)), 4.0 * r)
    pieces = np.maximum(np.ceil(length / width), 1.0).astype(np.int64)
    if pieces.sum() > _MAX_PIECES * n + 1_000_000:
        return None
    seg = np.repeat(np.arange(n), pieces)
    j = np.arange(len(seg)) - np.repeat(np.cumsum(pieces) - pieces, pieces)
    t0 = length[seg] * (j / pieces[seg])
    t1 = length[seg] * ((j + 1) / pieces[seg])
    p0 = start[seg] + direction[seg] * t0[:, None]
    p1 = start[seg] + direction[seg] * t1[:, None]
    pad = _PAD * r
    origin = np.minimum(points.min(axis=0), np.minimum(p0, p1).min(axis=0)) - 2.0 * pad
    lo = np.floor((np.minimum(p0, p1) - pad - origin) / width).astype(np.int64)
    hi = np.floor((np.maximum(p0, p1) + pad - origin) / width).astype(np.int64)
    cell = np.floor((points - origin) / width).astype(np.int64)
    extent = np.maximum(hi.max(axis=0), cell.max(axis=0)) + 1
    if float(np.prod(extent.astype(np.float64))) >= 2.0**62:
        return None

    def key(c: np.ndarray) -> np.ndarray:
        return (c[:, 0] * extent[1] + c[:, 1]) * extent[2] + c[:, 2]

    # Every cell each piece's box touches (at most 3 along each axis): ragged, no loop.
    span = hi - lo + 1
    per_piece = span.prod(axis=1)
    piece = np.repeat(np.arange(len(seg)), per_piece)
    k = np.arange(len(piece)) - np.repeat(np.cumsum(per_piece) - per_piece, per_piece)
    sy, sz = span[piece, 1], span[piece, 2]
    touched = lo[piece] + np.column_stack([k // (sy * sz), (k // sz) % sy, k % sz])
    # The points of each touched cell, through the points sorted by cell.
    order = np.argsort(key(cell), kind="stable")
    sorted_keys = key(cell)[order]
    wanted = key(touched)
    first = np.searchsorted(sorted_keys, wanted, side="left")
    count = np.searchsorted(sorted_keys, wanted, side="right") - first
    total = int(count.sum())
    if total > _MAX_PAIRS * n + 1_000_000:
        return None
    at = np.repeat(first - (np.cumsum(count) - count), count) + np.arange(total)
    pair = np.unique(seg[np.repeat(piece, count)] * np.int64(m) + order[at])
    return pair // m, pair % m
