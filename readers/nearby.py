"""Pairs of points closer than a distance, without paying for a spatial index when there are none.

Real models' nodes lie far apart compared with the node coincidence distance, so the usual answer
is "no pair", and proving it must be cheap: a handful of hash passes (:func:`may_have_pairs`).
Only when two points may be close is ``scipy.spatial`` imported (a third of a second) and its
k-d tree asked for the exact pairs.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Cells are this much wider than twice the distance: rounding of the coordinates (relative
#: 1e-16, so 1e-6 mm at the 1e10 mm coordinate limit) can never move a close pair apart.
_MARGIN = 1.001

#: Odd 64-bit multipliers mixing the three cell indices into one hash (wrapping arithmetic; a
#: collision only sends the points to the exact search).
_MIX = (np.int64(-7046029254386353131), np.int64(-4658895280553007687), np.int64(1))


def may_have_pairs(points: np.ndarray, r: float) -> bool:
    """Return ``False`` only when no two of ``points`` lie within ``r`` of each other.

    Two points within ``r`` differ by at most ``r`` along each axis. Along one axis, the
    boundaries of two grids of cells ``L = 2.002 r`` wide, one shifted by ``L/2`` against the
    other, lie ``L/2 > r`` apart, so at most one boundary falls between the two points: they
    share a cell in one grid or the other. In three axes they share a cell in one of the 8
    combinations of shifts. So if no cell of the 8 grids holds two points, no pair is close.

    Args:
        points: (n, 3) finite coordinates.
        r: the distance (> 0), in the coordinates' unit.
    """
    if len(points) < 2:
        return False
    width = 2.0 * r * _MARGIN
    for shift in range(8):
        offset = np.array([(shift >> axis) & 1 for axis in range(3)]) * (width / 2.0)
        cells = np.floor((points + offset) / width).astype(np.int64)
        with np.errstate(over="ignore"):
            mixed = cells @ np.array(_MIX)  # wraps on overflow: only a hash
        if not pd.Index(mixed).is_unique:
            return True
    return False


def close_pairs(points: np.ndarray, r: float) -> np.ndarray:
    """Return every pair (i, j), i < j, of ``points`` at most ``r`` apart, shape (pairs, 2).

    Args:
        points: (n, 3) finite coordinates.
        r: the distance (> 0), in the coordinates' unit.
    """
    if not may_have_pairs(points, r):
        return np.zeros((0, 2), dtype=np.int64)
    from scipy.spatial import cKDTree  # only here: the import alone costs a third of a second

    return cKDTree(points).query_pairs(r=r, output_type="ndarray")
