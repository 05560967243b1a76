"""Members chained and overlaps found in numpy alone, the same as a graph library and a k-d tree.

Our own checks of the engine's bookkeeping (no published values are involved): the vectorized
union-find numbers the chains exactly as networkx numbers connected components; the grid of
cells finds every node within the coincidence distance of an element that a brute-force distance
finds; and a check imports neither networkx nor scipy's k-d tree.
"""

from __future__ import annotations

import subprocess
import sys

import networkx as nx
import numpy as np
import pytest
from flangewise.engine.members import _chains, _nodes_near
from flangewise.engine.proximity import near_segment_pairs


def _networkx_labels(n: int, pairs: np.ndarray) -> np.ndarray:
    graph = nx.Graph()
    graph.add_nodes_from(range(n))
    graph.add_edges_from(pairs.tolist())
    label = np.empty(n, dtype=np.int64)
    for k, comp in enumerate(nx.connected_components(graph)):
        label[list(comp)] = k
    return label


@pytest.mark.parametrize("seed", range(6))
def test_chain_numbers_are_networkx_component_numbers(seed):
    # Chains of 1 to 40 elements (a member's elements in a row), rows numbered at random.
    rng = np.random.default_rng(seed)
    sizes = rng.integers(1, 41, size=300)
    n = int(sizes.sum())
    rows = rng.permutation(n)
    ends = np.cumsum(sizes)
    link = np.ones(n - 1, dtype=bool)
    link[ends[:-1] - 1] = False  # no link between one chain's last and the next one's first
    pairs = np.column_stack([rows[:-1][link], rows[1:][link]])
    pairs = pairs[rng.permutation(len(pairs))]
    np.testing.assert_array_equal(_chains(n, pairs), _networkx_labels(n, pairs))


def test_chain_numbers_without_any_continuation():
    pairs = np.zeros((0, 2), dtype=np.int64)
    np.testing.assert_array_equal(_chains(5, pairs), np.arange(5))


def _close_pairs(points, start, unit, length, r) -> set[tuple[int, int]]:
    """Brute force: (segment, point) with the point closer than r to the segment."""
    rel = points[None, :, :] - start[:, None, :]
    t = np.clip((rel * unit[:, None, :]).sum(axis=2), 0.0, length[:, None])
    dist = np.linalg.norm(rel - t[:, :, None] * unit[:, None, :], axis=2)
    s, p = np.nonzero(dist < r)
    return set(zip(s.tolist(), p.tolist(), strict=True))


@pytest.mark.parametrize("seed", range(5))
def test_the_grid_finds_every_node_near_an_element(seed):
    # Segments of 0.5 to 12 m in any direction in a 30 m box; nodes scattered, plus nodes put
    # on segments (within 0.9 mm of the axis) and just off them (1.1 mm); r = 1 mm.
    rng = np.random.default_rng(seed)
    n = 400
    start = rng.uniform(0.0, 30_000.0, (n, 3))
    unit = rng.normal(size=(n, 3))
    unit[: n // 2, 1:] = 0.0  # half of them along x, as beams of a grid are
    unit /= np.linalg.norm(unit, axis=1)[:, None]
    length = rng.uniform(500.0, 12_000.0, n)
    on = rng.integers(0, n, 300)
    side = np.cross(unit[on], rng.normal(size=(300, 3)))
    side /= np.linalg.norm(side, axis=1)[:, None]
    offset = np.where(rng.random(300) < 0.5, 0.9, 1.1)[:, None] * side
    placed = start[on] + unit[on] * (rng.random(300) * length[on])[:, None] + offset
    points = np.vstack([rng.uniform(0.0, 30_000.0, (500, 3)), placed])
    found = near_segment_pairs(points, start, unit, length, 1.0)
    assert found is not None
    got = set(zip(found[0].tolist(), found[1].tolist(), strict=True))
    want = _close_pairs(points, start, unit, length, 1.0)
    assert want, "the sweep should place some nodes within 1 mm"
    assert want <= got, sorted(want - got)[:5]


def test_a_very_uneven_model_falls_back_to_the_k_d_tree_and_still_finds_the_node():
    # 2 000 elements of 1 m and one of 100 000 km: the grid would need millions of pieces.
    n = 2001
    start = np.zeros((n, 3))
    start[:, 1] = np.arange(n) * 5_000.0
    unit = np.tile([1.0, 0.0, 0.0], (n, 1))
    length = np.full(n, 1_000.0)
    length[-1] = 1.0e11
    xyz = np.vstack([start, start + unit * length[:, None], [[5.0e10, start[-1, 1], 0.0]]])
    assert near_segment_pairs(xyz, start, unit, length, 1.0) is None
    si, ei = np.arange(n), np.arange(n) + n
    elem, node = _nodes_near(xyz, si, ei, unit, length)
    assert (n - 1, 2 * n) in set(zip(elem.tolist(), node.tolist(), strict=True))


def test_a_check_imports_neither_networkx_nor_the_k_d_tree():
    # What the readers import is theirs; the engine must add neither library to a check.
    code = (
        "import sys\n"
        "from importlib.resources import files\n"
        "from flangewise.readers import load_model\n"
        "model = load_model(str(files('flangewise.sample_models') / 'industrial_shed'))\n"
        "assert not [m for m in sys.modules if m.startswith('flangewise.engine')]\n"
        "before = {'networkx', 'scipy.spatial'} & set(sys.modules)\n"
        "from flangewise.engine.check import check_model\n"
        "check_model(model)\n"
        "print(sorted(({'networkx', 'scipy.spatial'} & set(sys.modules)) - before))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]", out.stdout + out.stderr
