"""Invariance of the exact buckling factor: properties any correct solution must have.

No published values here: each test states a property that follows from the energy equation of
lateral-torsional buckling with fork supports (Trahair, *Flexural-Torsional Buckling of
Structures*, 1993, ch. 6; Timoshenko & Gere, *Theory of Elastic Stability*, 1961, ch. 6; both
from memory), checked on seeded random diagrams through ``buckling.exact_factors``:

- uniform moment gives 1.0 (the factor is Mcr ÷ Mcr of uniform moment);
- reversing a run end for end changes nothing (the beam and its supports are symmetric);
- scaling the diagram by any non-zero factor changes nothing: Mcr is the peak |M| at buckling;
  a negative factor only mirrors the mode for loads at the shear centre (with loads off it, a
  negative factor turns the loads over, so there only positive factors are checked);
- a station added on a straight part of the diagram adds no information about the moments, so
  it may change the factor only by the mesh's own error (a node more).
"""

from __future__ import annotations

import numpy as np
import pytest
from flangewise.engine import buckling
from flangewise.engine.gradient import Runs
from flangewise.readers.settings import CheckSettings

#: Reversal and scaling give the same discrete problem up to float rounding in the element
#: positions and the |M|max scaling; 1e-9 is far above that and far below any real change.
REL = 1.0e-9
REASON = "exact property; only float rounding may differ"

#: A station on a straight part moves a node of the mesh: the factor may change by the mesh
#: error, which tests/validation/test_exact_buckling.py bounds at 0.1 % (doubling the mesh).
REL_MESH = 1.0e-3
REASON_MESH = "a node more in the mesh: within the mesh's own error"

#: The closed form's mode is a half sine; 16 cubic elements reproduce its Mcr within 1e-5.
REL_UNIFORM = 1.0e-4

N_CASES = 150
SEED = 20240612

#: Torsion parameter 0.1 to 3, E = 200 000 MPa, G = 77 000 MPa.
SETTINGS = {
    "centre": CheckSettings(),
    "top": CheckSettings(load_height="top_flange"),
    "bottom": CheckSettings(load_height="bottom_flange"),
}


def _factors(diagrams: list[tuple[np.ndarray, np.ndarray]], props: np.ndarray, where: str):
    """Exact factor of every (x [mm], M [N·mm]) diagram; props rows (L, Iy, J, Cw, h0)."""
    runs = Runs(
        x=np.concatenate([d[0] for d in diagrams]),
        m=np.concatenate([d[1] for d in diagrams]),
        offsets=np.r_[0, np.cumsum([len(d[0]) for d in diagrams])],
        length=props[:, 0],
    )
    n = len(diagrams)
    result = buckling.exact_factors(
        runs,
        np.ones(n, dtype=bool),
        np.zeros(n, dtype=np.int8),  # top-flange runs: a positive moment compresses the top
        props[:, 1],
        props[:, 2],
        props[:, 3],
        props[:, 4],
        SETTINGS[where],
    )
    return result.factor


def _cases(seed: int = SEED) -> tuple[list[tuple[np.ndarray, np.ndarray]], np.ndarray]:
    """Random diagrams (jumps, sign changes, parabolas) on random invented sections."""
    rng = np.random.default_rng(seed)
    diagrams, props = [], []
    for _ in range(N_CASES):
        length = rng.uniform(1500.0, 12000.0)
        n = int(rng.integers(3, 20))
        inside = rng.choice(np.arange(1, 100), size=n - 2, replace=False)
        x = np.r_[0.0, np.sort(inside) * length / 100.0, length]
        m = rng.normal(size=n) * 1e8 + rng.normal() * 1e8
        if rng.random() < 0.3:  # a moment jump
            i = int(rng.integers(1, n - 1))
            x, m = np.insert(x, i, x[i]), np.insert(m, i, m[i] + rng.normal() * 1e8)
        d, b, tf = rng.uniform(200, 600), rng.uniform(100, 300), rng.uniform(8, 25)
        iy = tf * b**3 / 6
        j = 2 * b * tf**3 / 3 + (d - 2 * tf) * rng.uniform(5, 15) ** 3 / 3
        h0 = d - tf
        diagrams.append((x, m))
        props.append((length, iy, j, iy * h0**2 / 4, h0))
    return diagrams, np.array(props)


def _assert_same(actual: np.ndarray, expected: np.ndarray, rel: float, why: str) -> None:
    off = np.abs(actual / expected - 1.0)
    worst = int(np.argmax(off))
    assert off[worst] <= rel, f"case {worst}: {actual[worst]} vs {expected[worst]} ({why})"


@pytest.mark.parametrize("where", ["centre", "top", "bottom"])
def test_uniform_moment_gives_one(where: str) -> None:
    """Uniform moment of either sign: factor 1.0 (no transverse load, so no load height)."""
    _, props = _cases()
    diagrams = [
        (np.linspace(0.0, p[0], 5), np.full(5, s * 1e8))
        for p, s in zip(props, np.resize([1.0, -1.0], len(props)), strict=True)
    ]
    factor = _factors(diagrams, props, where)
    _assert_same(factor, np.ones(len(props)), REL_UNIFORM, "uniform moment")


@pytest.mark.parametrize("where", ["centre", "top", "bottom"])
def test_reversed_end_for_end(where: str) -> None:
    """x → L − x with the stations in reverse order: the same factor, loads at any height."""
    diagrams, props = _cases()
    reversed_ = [(p[0] - x[::-1], m[::-1]) for (x, m), p in zip(diagrams, props, strict=True)]
    _assert_same(_factors(reversed_, props, where), _factors(diagrams, props, where), REL, REASON)


@pytest.mark.parametrize("scale", [3.7, 1e-3, -1.0, -250.0])
def test_scaled_at_shear_centre(scale: float) -> None:
    """Any non-zero factor, negative included, with the loads at the shear centre."""
    diagrams, props = _cases()
    scaled = [(x, m * scale) for x, m in diagrams]
    _assert_same(
        _factors(scaled, props, "centre"), _factors(diagrams, props, "centre"), REL, REASON
    )


@pytest.mark.parametrize("where", ["top", "bottom"])
@pytest.mark.parametrize("scale", [2.5, 1e-4])
def test_scaled_positive_off_shear_centre(where: str, scale: float) -> None:
    """A positive factor with the loads above or below the shear centre."""
    diagrams, props = _cases()
    scaled = [(x, m * scale) for x, m in diagrams]
    _assert_same(_factors(scaled, props, where), _factors(diagrams, props, where), REL, REASON)


def test_negative_scale_off_shear_centre_turns_the_loads_over() -> None:
    """Not an invariance: −M with top-flange loads is M with bottom-flange loads (same run)."""
    diagrams, props = _cases()
    flipped = [(x, -m) for x, m in diagrams]
    _assert_same(_factors(flipped, props, "top"), _factors(diagrams, props, "bottom"), REL, REASON)


@pytest.mark.parametrize("where", ["centre", "top"])
def test_station_added_on_straight_part(where: str) -> None:
    """A station on the line between two stations changes the factor only by the mesh error."""
    rng = np.random.default_rng(SEED + 1)
    diagrams, props = _cases()
    more = []
    for x, m in diagrams:
        gaps = np.flatnonzero(np.diff(x) > 0.0)
        i = int(rng.choice(gaps))
        t = rng.uniform(0.1, 0.9)
        more.append(
            (
                np.insert(x, i + 1, x[i] + t * (x[i + 1] - x[i])),
                np.insert(m, i + 1, m[i] + t * (m[i + 1] - m[i])),
            )
        )
    _assert_same(
        _factors(more, props, where), _factors(diagrams, props, where), REL_MESH, REASON_MESH
    )
