"""Invariance of the moment-gradient factors: properties any correct factor must have.

No published values here: each test states a property that follows from the definitions
(SANS 10162-1:2011, cl. 13.6(a), end-moment ω2; CSA S16-14, cl. 13.6(a), quarter-point ω2;
AISC 360-16, Eq. F1-1, Cb; all from memory) and checks it on seeded random diagrams:

- uniform moment gives 1.0 for every factor (κ = −1; Mmax = Ma = Mb = Mc);
- reversing a run (x → L − x, stations in reverse order) changes nothing: κ uses only the two
  end moments, the quarter-point forms are symmetric in Ma and Mc;
- scaling the diagram by any non-zero factor, negative included, changes nothing: every factor
  is a ratio of moments of one diagram;
- a station added on a straight part of the diagram changes nothing: the diagram between
  stations is taken as straight, so such a station adds no information;
- several runs of different lengths and station counts in one ``Runs`` give the same per-run
  results as each run alone.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pytest
from flangewise.engine import gradient

#: The properties are exact in real arithmetic; the code's float operations (interpolation at
#: reversed positions L − x, products of scaled moments) can differ in the last few bits only.
#: 1e-9 is far above that and far below any real change of a factor.
REL = 1.0e-9
REASON = "exact property; only float rounding may differ"

#: Random diagrams per sweep; seeds fixed so a failure repeats.
N_CASES = 200
SEED = 20240611

Diagram = tuple[np.ndarray, np.ndarray, float]


def _runs(*diagrams: Diagram) -> gradient.Runs:
    """Build ``Runs`` from (x [mm], M [N·mm], L [mm]) diagrams, one run each."""
    offsets = np.r_[0, np.cumsum([len(x) for x, _, _ in diagrams])].astype(np.int64)
    return gradient.Runs(
        x=np.concatenate([np.asarray(x, dtype=float) for x, _, _ in diagrams]),
        m=np.concatenate([np.asarray(m, dtype=float) for _, m, _ in diagrams]),
        offsets=offsets,
        length=np.array([length for _, _, length in diagrams], dtype=float),
    )


def _factors(runs: gradient.Runs) -> dict[str, np.ndarray]:
    """Every factor per run: end-moment ω2, quarter-point ω2, Cb, and κ."""
    ends = gradient.end_moment_omega2(runs)
    quarter = gradient.quarter_point_moments(runs)
    return {
        "omega2_end": ends.omega2,
        "kappa": ends.kappa,
        "omega2_qp": gradient.omega2_quarter_point(*quarter),
        "cb": gradient.cb_aisc(*quarter),
    }


def _same(actual: dict[str, np.ndarray], expected: dict[str, np.ndarray], what: str) -> None:
    for name, value in expected.items():
        np.testing.assert_allclose(
            actual[name],
            value,
            rtol=REL,
            atol=1e-12,  # κ may be exactly 0 (one end moment zero)
            equal_nan=True,
            err_msg=f"{name} changed when {what} (rel {REL:g}: {REASON})",
        )


def _random_diagram(rng: np.random.Generator, jumps: bool = True) -> Diagram:
    """A random piecewise-straight diagram: 5 to 30 stations, 3+ of them inside.

    Moments of either sign over several orders of magnitude; sometimes a concentrated moment
    (two stations at one x), sometimes placed exactly on a quarter point.
    """
    length = float(rng.uniform(500.0, 20_000.0))
    n_inside = int(rng.integers(3, 29))
    inside = np.sort(rng.uniform(0.02, 0.98, n_inside)) * length
    if rng.random() < 0.3:  # put one inside station exactly on a quarter point
        inside[rng.integers(n_inside)] = length * rng.choice([0.25, 0.5, 0.75])
        inside = np.sort(inside)
    x = np.r_[0.0, inside, length]
    m = rng.normal(0.0, 1.0, len(x)) * 10.0 ** rng.uniform(4.0, 9.0)
    if jumps and rng.random() < 0.3:  # a concentrated moment: repeat an inside station
        i = int(rng.integers(1, len(x) - 1))
        x = np.insert(x, i + 1, x[i])
        m = np.insert(m, i + 1, m[i] + rng.normal() * abs(m).max())
    return x, m, length


def _sweep(test: Callable[[np.random.Generator], None], seed: int) -> None:
    rng = np.random.default_rng(seed)
    for _ in range(N_CASES):
        test(rng)


# --- Uniform moment ------------------------------------------------------------------------------


def test_uniform_moment_gives_one():
    # SANS 10162-1:2011 cl. 13.6(a): κ = −1 → 1.75 − 1.05 + 0.3 = 1.0; CSA S16-14 cl. 13.6(a):
    # 4M/√(16M²) = 1; AISC 360-16 Eq. F1-1: 12.5M/12.5M = 1 (all from memory).
    def case(rng: np.random.Generator) -> None:
        x, _, length = _random_diagram(rng, jumps=False)
        m0 = rng.choice([-1.0, 1.0]) * 10.0 ** rng.uniform(3.0, 10.0)
        got = _factors(_runs((x, np.full_like(x, m0), length)))
        for name in ("omega2_end", "omega2_qp", "cb"):
            assert got[name][0] == pytest.approx(1.0, rel=REL), (
                f"{name} = {got[name][0]!r} under uniform moment {m0:g} N·mm ({REASON})"
            )

    _sweep(case, SEED)


# --- Reversal ------------------------------------------------------------------------------------


def _reversed(x: np.ndarray, m: np.ndarray, length: float) -> Diagram:
    return length - x[::-1], m[::-1], length


def test_reversal_leaves_every_factor_unchanged():
    def case(rng: np.random.Generator) -> None:
        diagram = _random_diagram(rng)
        _same(_factors(_runs(_reversed(*diagram))), _factors(_runs(diagram)), "run reversed")

    _sweep(case, SEED + 1)


def test_reversal_concentrated_moment_at_a_quarter_point():
    """A jump exactly at the three-quarter point, reversed, lands an ulp off the quarter point.

    L = 4000.3 mm; M = 20 kN·m from the start to 0.75·L, where a concentrated moment lifts it to
    80 kN·m, kept to the end (stations at 0, L/4, L/2, 3L/4 twice, L). Taking the larger side of
    the jump (the rule ``moment_at`` documents), forwards (Mmax, Ma, Mb, Mc) = (80, 20, 20, 80)
    and reversed (80, 80, 20, 20) kN·m: the same factors, by hand
    ω2 = 4·80/√(80² + 4·20² + 7·20² + 4·80²) = 320/√36 400 = 320/190.79 = 1.6773
    (CSA S16-14, cl. 13.6(a), from memory) and
    Cb = 12.5·80/(2.5·80 + 3·20 + 4·20 + 3·80) = 1000/580 = 1.7241 (AISC 360-16, Eq. F1-1).
    Reversed, the jump sits at L − 0.75·L = 1000.0749999999998 mm in floats, while the quarter
    point is 0.25·L = 1000.075 mm: a station position that differs from L·fraction by rounding
    alone must not lose the larger side (a model's positions come from subtractions and unit
    conversions, rarely bit-equal to L·fraction).
    """
    length = 4000.3
    x = length * np.array([0.0, 0.25, 0.5, 0.75, 0.75, 1.0])
    m = np.array([20.0, 20.0, 20.0, 20.0, 80.0, 80.0]) * 1.0e6
    expected = {
        "omega2_qp": np.array([320.0 / np.sqrt(36_400.0)]),  # CSA S16-14, by hand above
        "cb": np.array([1000.0 / 580.0]),  # AISC 360-16 Eq. F1-1, by hand above
    }
    forwards = _factors(_runs((x, m, length)))
    _same({k: forwards[k] for k in expected}, expected, "compared with the hand values (forwards)")
    _same(_factors(_runs(_reversed(x, m, length))), forwards, "the run is reversed")


# --- Scaling -------------------------------------------------------------------------------------


def test_scaling_by_any_nonzero_factor_leaves_every_factor_unchanged():
    def case(rng: np.random.Generator) -> None:
        x, m, length = _random_diagram(rng)
        c = rng.choice([-1.0, 1.0]) * 10.0 ** rng.uniform(-4.0, 4.0)
        _same(_factors(_runs((x, c * m, length))), _factors(_runs((x, m, length))), f"× {c:g}")

    _sweep(case, SEED + 2)


@pytest.mark.parametrize("c", [-1.0, -2.5, 1.0e-6, -1.0e6])
def test_scaling_fixed_factors(c):
    # The same on one fixed diagram, so the sign flip alone (c = −1) is always covered.
    x = np.array([0.0, 1000.0, 2500.0, 3000.0, 4500.0, 6000.0])
    m = np.array([-80.0e6, -20.0e6, 35.0e6, 40.0e6, 10.0e6, 55.0e6])
    _same(_factors(_runs((x, c * m, 6000.0))), _factors(_runs((x, m, 6000.0))), f"× {c:g}")


# --- A station added on a straight part ----------------------------------------------------------


def _with_station(x: np.ndarray, m: np.ndarray, at: float) -> tuple[np.ndarray, np.ndarray]:
    """Insert a station at ``at`` on the straight line between its neighbours."""
    i = int(np.searchsorted(x, at, side="right"))  # x[i - 1] <= at < x[i]
    t = (at - x[i - 1]) / (x[i] - x[i - 1])
    return np.insert(x, i, at), np.insert(m, i, m[i - 1] + t * (m[i] - m[i - 1]))


def test_end_moment_collinear_station_on_a_linear_diagram():
    # A straight diagram (end moments only) with 3+ inside stations; one more station on the
    # line changes neither κ nor ω2 (SANS 10162-1:2011 cl. 13.6(a), from memory).
    def case(rng: np.random.Generator) -> None:
        x, _, length = _random_diagram(rng, jumps=False)
        m_start, m_end = rng.normal(0.0, 1.0, 2) * 10.0 ** rng.uniform(4.0, 9.0)
        m = m_start + (m_end - m_start) * x / length
        at = float(rng.uniform(0.01, 0.99) * length)
        if at in x:
            return
        before = _factors(_runs((x, m, length)))
        after = _factors(_runs((*_with_station(x, m, at), length)))
        _same(after, before, f"a collinear station added at {at:.6g} mm")

    _sweep(case, SEED + 3)


def test_any_factor_station_on_a_straight_stretch():
    # Any piecewise-straight diagram: a station on the straight stretch between two stations
    # changes no factor. Half the time it goes exactly on a quarter point (on the line).
    def case(rng: np.random.Generator) -> None:
        x, m, length = _random_diagram(rng)
        if rng.random() < 0.5:
            at = float(length * rng.choice([0.25, 0.5, 0.75]))
        else:
            at = float(rng.uniform(0.01, 0.99) * length)
        if at in x:
            return
        before = _factors(_runs((x, m, length)))
        after = _factors(_runs((*_with_station(x, m, at), length)))
        _same(after, before, f"a station added on the line at {at:.6g} mm")

    _sweep(case, SEED + 4)


# --- Ragged runs ---------------------------------------------------------------------------------


def _end_result_fields(result: gradient.EndMomentResult, k: int) -> dict[str, np.ndarray]:
    return {
        name: np.asarray(getattr(result, name)[k : k + 1], dtype=float)
        for name in result.__dataclass_fields__
    }


def test_ragged_runs_match_each_run_alone():
    # Several runs of different lengths and station counts (2 stations up to 30, jumps
    # included) in one Runs give, run by run, what each gives alone: every end-moment field,
    # the quarter-point moments and the three factors.
    rng = np.random.default_rng(SEED + 5)
    for _ in range(N_CASES // 10):
        diagrams = [_random_diagram(rng) for _ in range(int(rng.integers(2, 12)))]
        length = float(rng.uniform(500.0, 20_000.0))
        diagrams.append((np.array([0.0, length]), rng.normal(0.0, 1.0e8, 2), length))
        order = rng.permutation(len(diagrams))
        diagrams = [diagrams[i] for i in order]
        runs = _runs(*diagrams)
        together = _factors(runs)
        ends = gradient.end_moment_omega2(runs)
        quarter = gradient.quarter_point_moments(runs)
        for k, diagram in enumerate(diagrams):
            alone_runs = _runs(diagram)
            alone = _factors(alone_runs)
            _same({n: v[k : k + 1] for n, v in together.items()}, alone, f"run {k} in a batch")
            _same(
                _end_result_fields(ends, k),
                _end_result_fields(gradient.end_moment_omega2(alone_runs), 0),
                f"run {k} in a batch (end-moment fields)",
            )
            _same(
                {f"M{i}": q[k : k + 1] for i, q in enumerate(quarter)},
                {f"M{i}": q for i, q in enumerate(gradient.quarter_point_moments(alone_runs))},
                f"run {k} in a batch (Mmax, Ma, Mb, Mc)",
            )
