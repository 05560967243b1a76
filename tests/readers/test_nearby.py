"""The cheap proof that no two nodes coincide never misses a close pair, and saves the import.

The reference is the definition itself: every pair whose Euclidean distance is at most r, found
by brute force.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from flangewise.readers.nearby import close_pairs, may_have_pairs

R = 1.0  # mm, as COINCIDENT_MM


def brute_pairs(points: np.ndarray, r: float) -> set[tuple[int, int]]:
    """Every pair (i < j) at most ``r`` apart, by the definition."""
    d = np.sqrt(((points[:, None, :] - points[None, :, :]) ** 2).sum(axis=2))
    i, j = np.nonzero(np.triu(d <= r, k=1))
    return set(zip(i.tolist(), j.tolist(), strict=True))


@pytest.mark.parametrize("seed", range(40))
def test_a_planted_close_pair_is_always_suspected(seed):
    rng = np.random.default_rng(seed)
    scale = [1.0e2, 1.0e5, 1.0e9][seed % 3]  # up to map-grid coordinates
    points = rng.uniform(-scale, scale, size=(30, 3))
    # One pair at most R apart in a random direction, anywhere against the cells.
    direction = rng.normal(size=3)
    direction /= np.linalg.norm(direction)
    points[7] = points[3] + direction * R * rng.uniform(0.0, 1.0)
    assert brute_pairs(points, R)
    assert may_have_pairs(points, R)
    assert {tuple(p) for p in close_pairs(points, R).tolist()} == brute_pairs(points, R)


@pytest.mark.parametrize("axis", range(3))
def test_a_pair_exactly_r_apart_across_cell_boundaries_is_suspected(axis):
    # Cells are 2.002 R wide and shifted by half of that: put the pair on every kind of boundary.
    width = 2.0 * R * 1.001
    for start in (0.0, width / 2.0, width, width - R, width / 2.0 - R / 2.0, -width / 2.0):
        a = np.zeros(3)
        a[axis] = start
        b = a.copy()
        b[axis] += R
        points = np.array([a, b, [500.0, 500.0, 500.0]])
        assert may_have_pairs(points, R), start
        assert close_pairs(points, R).tolist() == [[0, 1]]


def test_far_apart_points_are_cleared_without_a_spatial_index():
    # A 3-D grid of nodes 50 mm apart: no cell of any grid holds two.
    g = np.arange(20) * 50.0
    points = np.stack(np.meshgrid(g, g, g), axis=-1).reshape(-1, 3)
    assert not may_have_pairs(points, R)
    assert close_pairs(points, R).shape == (0, 2)


def test_random_clouds_agree_with_brute_force():
    rng = np.random.default_rng(11)
    for n in (2, 5, 50, 200):
        points = rng.uniform(0.0, 12.0, size=(n, 3))  # dense enough for many close pairs
        got = {tuple(p) for p in close_pairs(points, R).tolist()}
        assert got == brute_pairs(points, R)


def test_reading_a_model_without_close_nodes_does_not_import_scipy_spatial():
    code = (
        "import sys\n"
        "from flangewise.readers import load_model\n"
        "from flangewise.sample_models import __file__ as f\n"
        "from pathlib import Path\n"
        "load_model(Path(f).parent / 'industrial_shed')\n"
        "print('scipy.spatial' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
