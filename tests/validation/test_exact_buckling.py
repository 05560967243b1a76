"""Exact elastic lateral-torsional buckling (engine/buckling.py) against published values.

References:

- S. P. Timoshenko and J. M. Gere, *Theory of Elastic Stability*, 2nd ed., McGraw-Hill, New
  York, 1961, ch. 6 (**from memory**): I-beam in uniform moment with fork supports,
  Mcr = (π/L)·√(E·Iy·G·J + (π/L)²·E·Iy·E·Cw).
- D. Anderson and N. S. Trahair, "Stability of monosymmetric beams and cantilevers", *Journal of
  the Structural Division*, ASCE, 98(ST1), 1972 (**from memory**; every value used here was
  reproduced within 0.05 % by an independent 4-DOF-per-node beam element before it was written
  down): simply supported beam, fork ends, K = √(π²·E·Cw/(G·J·L²)),
  ε = (a/L)·√(E·Iy/(G·J)) with a the load height above the shear centre;
  γ = Q·L²/√(E·Iy·G·J) for a central point load Q, γ = q·L³/√(E·Iy·G·J) for a uniform load q.
- ENV 1993-1-1:1992, Annex F, Table F.1.1 (k = 1), and NCCI SN003a, Table 3.1 (both **from
  memory**): C1 of a linear end-moment diagram with fork supports, ψ = end-moment ratio.
- SANS 10162-1:2011, cl. 13.6(a) (**from memory**): ω2 = 1.75 + 1.05·κ + 0.3·κ² ≤ 2.5.
- N. S. Trahair, *Flexural-Torsional Buckling of Structures*, E & FN Spon, London, 1993, ch. 6
  (**from memory**): the energy equation the solver discretizes, used for the cross-check with a
  general-purpose eigensolver (scipy.linalg.eigh).

Sections and lengths are invented. The load height ``a`` [mm] is positive towards the flange
that the positive moment compresses: on a sagging span, above the shear centre.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg
from flangewise.engine import buckling
from flangewise.engine.gradient import omega2_from_kappa

#: G·J [N·mm²] of the invented sections; E·Iy and E·Cw follow from the ratios asked.
GJ = 1.0e12


def _solve(
    diagrams: list[tuple[np.ndarray, np.ndarray]],
    e_iy: np.ndarray,
    g_j: np.ndarray,
    e_cw: np.ndarray,
    height: np.ndarray,
    base: int = buckling.BASE_ELEMENTS,
) -> np.ndarray:
    """Mcr [N·mm] of (x [mm], M) diagrams, stacked in one call, M scaled to |M|max = 1."""
    x = np.concatenate([np.asarray(d[0], dtype=float) for d in diagrams])
    m = np.concatenate([np.asarray(d[1], dtype=float) for d in diagrams])
    offsets = np.r_[0, np.cumsum([len(d[0]) for d in diagrams])]
    mesh = buckling.build_mesh(x, m, offsets, base=base)
    n = len(diagrams)
    args = [np.broadcast_to(np.asarray(v, dtype=float), (n,)) for v in (e_iy, g_j, e_cw, height)]
    return buckling.critical_moments(mesh, *args)


def _section(k: float, length: float, ei_over_gj: float = 2.0) -> tuple[float, float, float]:
    """(E·Iy, G·J, E·Cw) of an invented section with torsion parameter K at ``length`` [mm]."""
    return ei_over_gj * GJ, GJ, k**2 * GJ * length**2 / math.pi**2


# ---- Timoshenko & Gere (1961), ch. 6: uniform moment --------------------------------------------

#: The solver integrates a constant moment exactly; the only error is the cubic interpolation of
#: the mode (about 2e-5 at 8 elements, less at 16). 0.05 % is the issue's bar for the closed form.
REL_UNIFORM = 5.0e-4
REASON_UNIFORM = "closed form; only the cubic interpolation of the mode differs"


@pytest.mark.parametrize("k", [0.1, 0.3, 0.6, 1.0, 1.5, 2.0, 3.0])
@pytest.mark.parametrize("length", [1500.0, 6000.0, 14000.0])
def test_timoshenko_gere_ch6_uniform_moment(k: float, length: float) -> None:
    """Uniform moment: Mcr equals the closed form (T & G ch. 6, from memory)."""
    e_iy, g_j, e_cw = _section(k, length, ei_over_gj=0.5 + k)
    x = np.linspace(0.0, length, 7)
    actual = _solve([(x, np.full(7, -3.0e8))], e_iy, g_j, e_cw, 0.0)[0]
    expected = (math.pi / length) * math.sqrt(e_iy * g_j + (math.pi / length) ** 2 * e_iy * e_cw)
    off = actual / expected - 1.0
    assert abs(off) <= REL_UNIFORM, f"K = {k}, L = {length}: {off:+.4%} ({REASON_UNIFORM})"
    helper = buckling.m_cr_uniform(np.array([length]), e_iy, g_j, e_cw)[0]
    assert helper == pytest.approx(expected, rel=1e-12), "m_cr_uniform is the closed form"


# ---- Anderson & Trahair (1972): simply supported, central point load, uniform load --------------

#: The table gives 4 figures (half a unit in the last is up to 0.03 %) and was recalled from
#: memory; the FE mesh adds < 0.1 % and a uniform load seen at 65 stations < 0.05 %. 0.5 % is the
#: issue's bar.
REL_AT = 5.0e-3
REASON_AT = "4-figure table from memory; mesh and station sampling add < 0.15 %"

#: (K, ε, γ central point load, γ uniform load): Anderson & Trahair (1972), from memory.
ANDERSON_TRAHAIR = [
    (0.0, 0.0, 16.94, 28.32),  # row K = 0, ε = 0 (C1 = 1.348 and 1.127)
    (1.0, 0.0, 24.22, 40.22),  # row K = 1, ε = 0
    (1.0, 0.3, 16.76, 29.77),  # row K = 1, ε = +0.3 (load above the shear centre)
    (1.0, -0.3, 34.80, 54.29),  # row K = 1, ε = −0.3 (load below the shear centre)
]

#: Stations along the span for the uniform load: the solver sees the load as the point loads
#: its stations imply (the change of slope of the sampled parabola).
UNIFORM_STATIONS = 65


def _anderson_trahair(k: float, eps: float, load: str, stations: int = UNIFORM_STATIONS) -> float:
    """γ of a simply supported span of 10 m, E·Iy = 2·G·J."""
    length = 10_000.0
    e_iy, g_j, e_cw = _section(k, length)
    a = eps * length / math.sqrt(e_iy / g_j)
    if load == "point":
        x, m = np.array([0.0, length / 2, length]), np.array([0.0, 1.0, 0.0])
        per_gamma = 4.0  # Mmax = Q·L/4
    else:
        x = np.linspace(0.0, length, stations)
        m = 4.0 * x * (length - x) / length**2
        per_gamma = 8.0  # Mmax = q·L²/8
    m_cr = _solve([(x, m)], e_iy, g_j, e_cw, a)[0]
    return per_gamma * length * m_cr / math.sqrt(e_iy * g_j)


@pytest.mark.parametrize(("k", "eps", "gamma_point", "gamma_uniform"), ANDERSON_TRAHAIR)
def test_anderson_trahair_1972_simply_supported(
    k: float, eps: float, gamma_point: float, gamma_uniform: float
) -> None:
    """Central point load and uniform load at three heights (Anderson & Trahair, from memory)."""
    for load, expected in (("point", gamma_point), ("uniform", gamma_uniform)):
        actual = _anderson_trahair(k, eps, load)
        off = actual / expected - 1.0
        assert abs(off) <= REL_AT, (
            f"{load} load, K = {k}, ε = {eps}: γ = {actual:.4f}, table {expected}: "
            f"{off:+.3%} ({REASON_AT})"
        )


@pytest.mark.parametrize(("k", "eps"), [(0.0, 0.0), (1.0, 0.3), (1.0, -0.3)])
def test_anderson_trahair_1972_uniform_load_converges_with_stations(k: float, eps: float) -> None:
    """A uniform load sampled at more stations converges to the table's γ like 1/n².

    Each doubling of the station intervals cuts the error of the sampled load about fourfold
    (lumping a smooth load into point loads is second order); the Richardson extrapolation of
    the last two is within 0.1 % of the table (Anderson & Trahair, from memory).
    """
    expected = {0.0: 28.32, 0.3: 29.77, -0.3: 54.29}[eps]  # uniform-load column, row (K, ε)
    gammas = [_anderson_trahair(k, eps, "uniform", 8 * 2**i + 1) for i in range(4)]
    steps = np.abs(np.diff(gammas))
    assert np.all(steps[1:] < 0.35 * steps[:-1]), f"not converging like 1/n²: {gammas}"
    richardson = gammas[-1] + (gammas[-1] - gammas[-2]) / 3.0
    assert abs(richardson / expected - 1.0) <= 1.0e-3, f"extrapolated {richardson}, {gammas}"


# ---- Linear gradients: ENV 1993-1-1 Annex F, NCCI SN003a, SANS 10162-1 ω2 -----------------------

#: ψ (end-moment ratio, ψ = −κ): ENV 1993-1-1 Table F.1.1 (k = 1) C1, SN003a Table 3.1 C1.
C1_TABLES = [
    (1.00, 1.000, 1.00),  # row ψ = +1 (uniform moment)
    (0.75, 1.141, 1.14),  # row ψ = +0.75
    (0.50, 1.323, 1.31),  # row ψ = +0.5
    (0.25, 1.563, 1.52),  # row ψ = +0.25
    (0.00, 1.879, 1.77),  # row ψ = 0
    (-0.25, 2.281, 2.05),  # row ψ = −0.25
    (-0.50, 2.704, 2.33),  # row ψ = −0.5
    (-0.75, 2.927, 2.57),  # row ψ = −0.75
    (-1.00, 2.752, 2.55),  # row ψ = −1
]

#: The two tables bracket the exact factor, which rises with K: SN003a matches a low torsion
#: parameter, ENV a high one. Both are recalled to 3 figures, and each is itself a fit of
#: numerical results (SN003a rounds to 0.01, up to 0.4 % of 2.5): at K = 0.1 the exact factor is
#: within 1 % of SN003a. ENV's table sits above even the K → ∞ limit on the double-curvature
#: rows (by up to 3.5 % at ψ = −0.5): it is checked as an upper bracket.
REL_SN003A_LOW_K = 0.01
REL_ENV_HIGH_K = 0.035
REASON_C1 = "3-figure tables from memory, each a fit of numerical results"

#: The issue's measurement: the end-moment ω2 is never more than 5 % above the exact factor on a
#: straight diagram (cl. 13.6(a) is a fit of such results; 5 % is EXACT_MARGIN of engine/check.py).
OMEGA2_MARGIN = 0.05


def _linear_factors(k: float, psis: np.ndarray) -> np.ndarray:
    """Exact factor of straight diagrams from 1 to ψ over 8 m, 9 stations."""
    length = 8000.0
    e_iy, g_j, e_cw = _section(k, length)
    t = np.linspace(0.0, 1.0, 9)
    diagrams = [(t * length, 1.0 + (psi - 1.0) * t) for psi in psis]
    m_cr = _solve(diagrams, e_iy, g_j, e_cw, 0.0)
    return m_cr / buckling.m_cr_uniform(np.array([length]), e_iy, g_j, e_cw)


@pytest.mark.parametrize(("psi", "c1_env", "c1_sn003a"), C1_TABLES)
def test_env_1993_table_f11_and_sn003a_table_31_linear(
    psi: float, c1_env: float, c1_sn003a: float
) -> None:
    """Exact factor of a linear diagram against both C1 tables and the end-moment ω2."""
    ks = np.array([0.1, 0.3, 1.0, 3.0])
    factors = np.array([_linear_factors(k, np.array([psi]))[0] for k in ks])
    low, high = factors[0], factors[-1]
    assert abs(low / c1_sn003a - 1.0) <= REL_SN003A_LOW_K, (
        f"ψ = {psi}, K = 0.1: {low:.4f} vs SN003a {c1_sn003a} ({REASON_C1})"
    )
    assert abs(high / c1_env - 1.0) <= REL_ENV_HIGH_K, (
        f"ψ = {psi}, K = 3: {high:.4f} vs ENV {c1_env} ({REASON_C1})"
    )
    assert np.all(np.diff(factors) >= -1e-6), f"ψ = {psi}: not rising with K: {factors}"
    assert c1_sn003a * (1 - REL_SN003A_LOW_K) <= factors.min(), f"ψ = {psi}: {factors}"
    assert factors.max() <= c1_env * (1 + 0.005), f"ψ = {psi}: above ENV: {factors}"


def test_sans_10162_cl_13_6a_omega2_not_above_exact_on_straight_lines() -> None:
    """ω2 from κ (cl. 13.6(a), from memory) ≤ 1.05 × the exact factor, κ from −1 to +1, any K."""
    kappas = np.linspace(-1.0, 1.0, 41)
    omega2 = omega2_from_kappa(kappas)
    for k in (0.05, 0.1, 0.3, 1.0, 3.0):
        exact = _linear_factors(k, -kappas)
        worst = np.max(omega2 / exact - 1.0)
        assert worst <= OMEGA2_MARGIN, (
            f"K = {k}: ω2 exceeds the exact factor by {worst:.2%} at κ = "
            f"{kappas[np.argmax(omega2 / exact)]:.2f} (margin {OMEGA2_MARGIN:.0%})"
        )


# ---- Cross-check against a general-purpose eigensolver ------------------------------------------

#: Both sides solve the same discrete problem; only the route differs (stacked Cholesky and the
#: half-size BᵀB here, LAPACK's generalized symmetric solver there). Well-conditioned K of 30-100
#: DOF keep the rounding near 1e-12; 1e-8 leaves room for it.
REL_SOLVER = 1.0e-8
REASON_SOLVER = "same discrete problem, another eigensolver: rounding only"


def _reference_mcr(mesh: buckling.Mesh, run: int, e_iy: float, g_j: float, e_cw: float, a: float):
    """Smallest positive λ of K·q = λ·G·q by scipy.linalg.eigh, one run, assembled in a loop."""
    starts = np.cumsum(mesh.n_elements) - mesh.n_elements
    n_el = int(mesh.n_elements[run])
    el = starts[run] + np.arange(n_el)
    ones = np.ones(n_el)
    k_u, k_phi, c = buckling.element_matrices(
        mesh.length[el], mesh.m0[el], mesh.m1[el], e_iy * ones, g_j * ones, e_cw * ones
    )
    n = 2 * n_el + 2
    big_k = np.zeros((2 * n, 2 * n))
    big_g = np.zeros((2 * n, 2 * n))
    for e in range(n_el):
        s = slice(2 * e, 2 * e + 4)
        t = slice(n + 2 * e, n + 2 * e + 4)
        big_k[s, s] += k_u[e]
        big_k[t, t] += k_phi[e]
        big_g[s, t] += c[e]
        big_g[t, s] += c[e].T
        big_g[n + 2 * e, n + 2 * e] += mesh.load[el[e]] * a  # Q·a·φ² at the element's start
    held = [0, n - 2, n, 2 * n - 2]  # u and φ at both fork supports
    free = np.setdiff1d(np.arange(2 * n), held)
    mu = scipy.linalg.eigh(big_g[np.ix_(free, free)], big_k[np.ix_(free, free)], eigvals_only=True)
    return 1.0 / mu.max() if mu.max() > 0 else np.inf


def _random_diagram(rng: np.random.Generator, length: float) -> tuple[np.ndarray, np.ndarray]:
    """Random stations and moments, with jumps and sign changes."""
    n = int(rng.integers(3, 20))
    # Stations at least L/200 apart, as an export samples a span (much closer ones make K ill
    # conditioned, where any two routes agree to fewer digits).
    inside = rng.choice(np.arange(1, 200), size=n - 2, replace=False)
    x = np.r_[0.0, np.sort(inside) * length / 200.0, length]
    if rng.random() < 0.4:  # a moment jump: one inside station twice
        i = int(rng.integers(1, n - 1))
        x = np.insert(x, i, x[i])
    m = rng.normal(size=len(x)) + rng.normal() * (rng.random() < 0.5)
    return x, m


def test_trahair_1993_ch6_batched_solver_matches_scipy_eigh() -> None:
    """300 random diagrams, half with loads off the shear centre, some sharing stations."""
    rng = np.random.default_rng(1972)
    diagrams, props = [], []
    for i in range(300):
        length = rng.uniform(1000.0, 12000.0)
        if i % 3 and diagrams:  # same stations and section as the last one: a shared K
            x = diagrams[-1][0]
            diagrams.append((x, rng.normal(size=len(x))))
            props.append((*props[-1][:3], rng.choice([0.0, 1.0, -1.0]) * rng.uniform(50, 300)))
            continue
        diagrams.append(_random_diagram(rng, length))
        e_iy, g_j, e_cw = _section(rng.uniform(0.1, 3.0), length, rng.uniform(0.3, 4.0))
        props.append((e_iy, g_j, e_cw, rng.choice([0.0, 0.0, 1.0, -1.0]) * rng.uniform(50, 300)))
    p = np.array(props)
    x = np.concatenate([d[0] for d in diagrams])
    m = np.concatenate([d[1] for d in diagrams])
    offsets = np.r_[0, np.cumsum([len(d[0]) for d in diagrams])]
    mesh = buckling.build_mesh(x, m, offsets)
    actual = buckling.critical_moments(mesh, p[:, 0], p[:, 1], p[:, 2], p[:, 3])
    for run in range(len(diagrams)):
        expected = _reference_mcr(mesh, run, *p[run])
        assert actual[run] == pytest.approx(expected, rel=REL_SOLVER), (
            f"diagram {run} (height {p[run, 3]:.1f} mm): {actual[run]:.12g} vs scipy "
            f"{expected:.12g} ({REASON_SOLVER})"
        )


# ---- Mesh: doubling BASE_ELEMENTS changes the factor by less than 0.1 % -------------------------

#: The issue's bar: a factor that moves by less than 0.1 % when the mesh is doubled is converged
#: well inside the rounding of exported moments.
REL_MESH = 1.0e-3
REASON_MESH = "mesh converged: doubling the elements moves the factor < 0.1 %"


def _realistic(rng: np.random.Generator, length: float) -> tuple[np.ndarray, np.ndarray]:
    """A diagram a frame program could export: end moments, spans' loads, jumps, reversals."""
    n = int(rng.integers(5, 26))
    x = np.linspace(0.0, length, n)
    t = x / length
    kind = rng.integers(0, 5)
    ends = rng.uniform(-1.0, 1.0, 2)
    m = ends[0] * (1 - t) + ends[1] * t
    if kind == 1:  # uniform load: the parabola sampled at the stations
        m += rng.normal() * 4 * t * (1 - t)
    elif kind == 2:  # point loads at stations
        for i in rng.integers(1, n - 1, size=int(rng.integers(1, 4))):
            m += rng.normal() * np.minimum(t / t[i], (1 - t) / (1 - t[i]))
    elif kind == 3:  # a moment jump at an inside station
        i = int(rng.integers(1, n - 1))
        x = np.insert(x, i, x[i])
        m = np.insert(m, i, m[i])
        m[i + 1 :] += rng.normal()
    elif kind == 4:  # continuous-span-like reversals: several lobes of alternating sign
        m += rng.uniform(0.3, 1.0) * np.sin(np.pi * rng.integers(2, 5) * t + rng.uniform(0, 1))
    if not np.abs(m).max() > 0:
        m = np.ones_like(m)
    return x, m


@pytest.mark.parametrize("height", [0.0, 150.0, -150.0])
def test_mesh_doubling_changes_factor_below_0p1_percent(height: float) -> None:
    """BASE_ELEMENTS vs twice as many on 600 realistic diagrams, loads at three heights."""
    rng = np.random.default_rng(16)
    diagrams, props = [], []
    for _ in range(600):
        length = rng.uniform(1500.0, 12000.0)
        diagrams.append(_realistic(rng, length))
        props.append(_section(rng.uniform(0.1, 3.0), length, rng.uniform(0.3, 4.0)))
    p = np.array(props).T
    base = _solve(diagrams, *p, height)
    fine = _solve(diagrams, *p, height, base=2 * buckling.BASE_ELEMENTS)
    change = np.abs(base / fine - 1.0)
    worst = int(np.argmax(change))
    assert change[worst] <= REL_MESH, (
        f"diagram {worst}: {change[worst]:.3%} between {buckling.BASE_ELEMENTS} and "
        f"{2 * buckling.BASE_ELEMENTS} base elements ({REASON_MESH})"
    )
