"""Exact elastic lateral-torsional buckling of segments under their own moment diagrams.

Thin-walled (Vlasov) beam theory of a doubly symmetric I-section: lateral displacement u(x) and
twist φ(x), each interpolated with cubic Hermite functions (DOF u, u′, φ, φ′ per node). Fork
supports at both ends of a segment: u = φ = 0, lateral rotation u′ and warping φ′ free. Buckling is
where the second variation of

    ½∫(E·Iy·u″² + G·J·φ′² + E·Cw·φ″²) dx  −  λ·[ ∫M·u″·φ dx  +  ½·Σ Qi·a·φ(xi)² ]

stops being positive (Trahair, Flexural-Torsional Buckling of Structures, 1993; Timoshenko & Gere,
Theory of Elastic Stability, 1961, ch. 6). M(x) is the segment's diagram, linear between its
stations (two stations at one x are a moment jump); Qi are the transverse point loads the diagram
implies at its stations (its change of slope, M″ = −q), acting at a height a above the shear centre.
Every station is a mesh node. The diagram is scaled to |M|max = 1, so the smallest positive
eigenvalue λ of K·q = λ·G·q is the elastic critical moment Mcr itself (N·mm).

Two solvers, both stacked over many segments at once (no Python loop per segment). The fork
supports' DOF are dropped, and K is factorized once per stiffness group (:func:`stiffness_groups`:
the same elements and section, as every load combination of one segment has), W = L⁻¹; per run
only the moment coupling is assembled and B = W_u·G_uφ·W_φᵀ formed by two matrix products.

* loads at the shear centre (a = 0): K has no u–φ coupling and G only couples u with φ, so with
  K_u = L_u·L_uᵀ and K_φ = L_φ·L_φᵀ the eigenvalues μ = 1/λ of L⁻¹·G·L⁻ᵀ are ± the singular values
  of B = L_u⁻¹·G_uφ·L_φ⁻ᵀ. The smallest positive λ is 1/σmax(B), from the largest eigenvalue of the
  half-size matrix BᵀB. This is why the ± pairs of a doubly symmetric section need no care here.
* loads off the shear centre: the full symmetric problem L⁻¹·G·L⁻ᵀ, its largest positive
  eigenvalue μ, λ = 1/μ.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
from flangewise.engine.gradient import Runs
from flangewise.readers.settings import CheckSettings, LoadHeight

#: Gauss-Legendre points and weights on [0, 1]. Four points integrate degree 7 exactly, above the
#: highest product integrated here (M linear × u″ linear × φ cubic = degree 5).
_XI, _W = np.polynomial.legendre.leggauss(4)
_XI = 0.5 * (_XI + 1.0)
_W = 0.5 * _W

#: Elements per segment before each station interval is given at least one. 16 cubic elements
#: change the factor by less than 0.1 % when doubled, on rough diagrams too (tested in
#: tests/validation/test_exact_buckling.py); 8 do not on about 7 % of random diagrams.
BASE_ELEMENTS = 16

#: Two stations closer than this [mm] are one place (a moment jump when their moments differ).
SAME_PLACE_MM = 1.0e-3

#: Runs meshed and solved as one block by :func:`exact_factors`: bounds the memory of the mesh
#: and the grouping (about 200 MB per block), whatever the number of pairs.
BLOCK = 50_000

#: Segments solved together: bounds the memory to a few × CHUNK × (4·elements)² × 8 bytes.
CHUNK = 1024


@dataclass(frozen=True)
class Mesh:
    """Finite elements of many segments (runs), flat, in run order.

    Attributes:
        run: run number per element.
        length: element length [mm].
        m0: moment at the element's start, divided by its run's |M|max [-].
        m1: the same at the element's end [-].
        load: transverse point load at the element's START node [1/mm], downward positive,
            divided by the run's |M|max (0 at the run's first node, which is a support).
        n_elements: elements per run.
    """

    run: np.ndarray
    length: np.ndarray
    m0: np.ndarray
    m1: np.ndarray
    load: np.ndarray
    n_elements: np.ndarray


def build_mesh(
    x: np.ndarray, m: np.ndarray, offsets: np.ndarray, base: int = BASE_ELEMENTS
) -> Mesh:
    """Mesh every run so that each station is a node.

    A station interval of length ℓ in a run of length L gets ceil(base·ℓ/L) equal elements, so a
    run has from ``base`` to ``base`` + (its intervals) elements. M is linear along an interval.

    Args:
        x: station positions from each run's start [mm], non-decreasing within a run.
        m: moments at the stations (any unit; each run is scaled to |M|max = 1 here).
        offsets: start of each run in ``x`` and ``m``, with the total appended.
        base: elements per run before the rounding up per interval.
    """
    n_runs = len(offsets) - 1
    counts = np.diff(offsets)
    run_of = np.repeat(np.arange(n_runs), counts)
    peak = np.zeros(n_runs)
    if len(m):
        peak = np.maximum.reduceat(np.abs(m), np.minimum(offsets[:-1], len(m) - 1))
        peak = np.where(counts > 0, peak, 0.0)
    mn = m / np.where(peak > 0.0, peak, 1.0)[run_of]
    i = np.flatnonzero((run_of[:-1] == run_of[1:]) & (np.diff(x) > SAME_PLACE_MM))
    run = run_of[i]
    ell = x[i + 1] - x[i]
    m_l, m_r = mn[i], mn[i + 1]
    total = np.bincount(run, weights=ell, minlength=n_runs)
    sub = np.maximum(1, np.ceil(base * ell / total[run] - 1e-9)).astype(np.int64)
    slope = (m_r - m_l) / ell
    first = np.r_[True, run[1:] != run[:-1]] if len(run) else np.zeros(0, dtype=bool)
    # The point load at an interval's start node: M″ = −q, so Q = slope before − slope after.
    q = np.where(first, 0.0, np.r_[0.0, slope[:-1]] - slope)
    e = np.repeat(np.arange(len(i)), sub)
    j = np.arange(len(e)) - np.repeat(np.cumsum(sub) - sub, sub)
    s = sub[e]
    dm = (m_r - m_l)[e]
    return Mesh(
        run=run[e],
        length=(ell / sub)[e],
        m0=m_l[e] + dm * j / s,
        m1=m_l[e] + dm * (j + 1) / s,
        load=np.where(j == 0, q[e], 0.0),
        n_elements=np.bincount(run[e], minlength=n_runs),
    )


def _unit_element() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Integrals over an element of unit length, by Gauss quadrature of the Hermite cubics.

    Returns ∫N̂″N̂″ᵀ, ∫N̂′N̂′ᵀ, ∫(1−ξ)·N̂″N̂ᵀ and ∫ξ·N̂″N̂ᵀ over ξ ∈ [0, 1] (4 × 4 each). An element of
    length ℓ scales them with T = diag(1, ℓ, 1, ℓ): see :func:`element_matrices`.
    """
    x = _XI
    n = np.stack([1 - 3 * x**2 + 2 * x**3, x - 2 * x**2 + x**3, 3 * x**2 - 2 * x**3, x**3 - x**2])
    d1 = np.stack([6 * x**2 - 6 * x, 1 - 4 * x + 3 * x**2, 6 * x - 6 * x**2, 3 * x**2 - 2 * x])
    d2 = np.stack([12 * x - 6, 6 * x - 4, 6 - 12 * x, 6 * x - 2])
    bend = (d2[:, None, :] * d2[None, :, :] * _W).sum(axis=-1)
    twist = (d1[:, None, :] * d1[None, :, :] * _W).sum(axis=-1)
    c0 = (d2[:, None, :] * n[None, :, :] * (1 - x) * _W).sum(axis=-1)
    c1 = (d2[:, None, :] * n[None, :, :] * x * _W).sum(axis=-1)
    return bend, twist, c0, c1


_BEND, _TWIST, _C0, _C1 = _unit_element()


def element_matrices(
    length: np.ndarray,
    m0: np.ndarray,
    m1: np.ndarray,
    e_iy: np.ndarray,
    g_j: np.ndarray,
    e_cw: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return per element the stiffness of u, of φ, and the u–φ moment coupling, each (E, 4, 4).

    Rows and columns in the order (w1, w1′, w2, w2′) of u or φ. With N = T·N̂(ξ), T = diag(1, ℓ, 1,
    ℓ), x = ℓ·ξ: ∫EIy·u″² dx gives EIy·T·∫N̂″N̂″ᵀ·T/ℓ³, ∫GJ·φ′² dx gives GJ·T·∫N̂′N̂′ᵀ·T/ℓ, and the
    coupling C with qᵤᵀ·C·q_φ = ∫M·u″·φ dx, M linear from ``m0`` to ``m1``, is
    T·(m0·Ĉ0 + m1·Ĉ1)·T/ℓ.

    Args:
        length: element length [mm].
        m0: moment at the element's start (any unit).
        m1: moment at the element's end (same unit).
        e_iy: E·Iy [N·mm²].
        g_j: G·J [N·mm²].
        e_cw: E·Cw [N·mm⁴].
    """
    ell = np.asarray(length, dtype=np.float64)
    t = np.ones((len(ell), 4))
    t[:, 1] = ell
    t[:, 3] = ell
    tt = t[:, :, None] * t[:, None, :]
    bend = tt * _BEND / (ell**3)[:, None, None]
    twist = tt * _TWIST / ell[:, None, None]
    k_u = bend * e_iy[:, None, None]
    k_phi = twist * g_j[:, None, None] + bend * e_cw[:, None, None]
    coupling = tt * (m0[:, None, None] * _C0 + m1[:, None, None] * _C1) / ell[:, None, None]
    return k_u, k_phi, coupling


def _assemble(blocks: np.ndarray, n_el: int) -> np.ndarray:
    """Assemble element blocks (P·n_el, 4, 4) of one field into (P, 2n_el+2, 2n_el+2).

    A field has two DOF per node (w, w′); element ``e`` holds global DOF 2e … 2e+3.
    """
    p = len(blocks) // n_el
    out = np.zeros((p, 2 * n_el + 2, 2 * n_el + 2))
    b = blocks.reshape(p, n_el, 4, 4)
    for e in range(n_el):  # over element positions (a few dozen), never over segments
        out[:, 2 * e : 2 * e + 4, 2 * e : 2 * e + 4] += b[:, e]
    return out


def _free(n_el: int) -> np.ndarray:
    """DOF of one field left free by the fork supports: all but w at the first and last node."""
    keep = np.ones(2 * n_el + 2, dtype=bool)
    keep[[0, 2 * n_el]] = False
    return np.flatnonzero(keep)


def _reduce(a: np.ndarray, free: np.ndarray) -> np.ndarray:
    """Rows and columns ``free`` of every stacked matrix (the fork supports' DOF dropped)."""
    return a[:, free[:, None], free[None, :]]


def stiffness_groups(mesh: Mesh, e_iy: np.ndarray, g_j: np.ndarray, e_cw: np.ndarray) -> np.ndarray:
    """Number the runs whose stiffness matrices are identical (same elements, same section).

    K depends only on a run's element lengths and section, not on its moments: every load
    combination of one segment has the same stations, so one Cholesky factorization serves them
    all. Runs with another element count are never in one group.

    Returns:
        per run, a group number; runs without elements get -1.
    """
    n_runs = len(mesh.n_elements)
    group = np.full(n_runs, -1, dtype=np.int64)
    starts = np.cumsum(mesh.n_elements) - mesh.n_elements
    top = 0
    for n_el in np.unique(mesh.n_elements[mesh.n_elements > 0]):  # a few dozen element counts
        runs = np.flatnonzero(mesh.n_elements == n_el)
        el = starts[runs][:, None] + np.arange(n_el)[None, :]
        key = np.column_stack([mesh.length[el], e_iy[runs], g_j[runs], e_cw[runs]])
        _, inverse = np.unique(key, axis=0, return_inverse=True)
        inverse = inverse.reshape(-1)
        group[runs] = top + inverse
        top += int(inverse.max()) + 1
    return group


def _inverse_factor(k: np.ndarray) -> np.ndarray:
    """Return W = L⁻¹ with K = L·Lᵀ for every stacked symmetric positive definite K.

    An explicit inverse, so that every run of a stiffness group shares it. It costs digits when
    element lengths differ a lot (K's condition grows with the cube of their ratio): against a
    general eigensolver, about 1e-10 with stations at least L/200 apart, 1e-7 to 1e-8 with a
    4 mm interval beside 500 mm elements; either is far below the mesh's own 0.1 %.
    """
    return np.linalg.inv(np.linalg.cholesky(k))


def _solve_chunk(
    mesh: Mesh,
    runs: np.ndarray,
    n_el: int,
    starts: np.ndarray,
    e_iy: np.ndarray,
    g_j: np.ndarray,
    e_cw: np.ndarray,
    height: np.ndarray,
    group: np.ndarray,
) -> np.ndarray:
    """Mcr [N·mm] of the runs ``runs``, which all have ``n_el`` elements."""
    free = _free(n_el)
    # One factorization per stiffness group: W = L⁻¹ with K = L·Lᵀ, for u and for φ.
    _ids, first, local = np.unique(group[runs], return_index=True, return_inverse=True)
    rep = runs[first]
    el_rep = (starts[rep][:, None] + np.arange(n_el)[None, :]).ravel()
    rr = np.repeat(rep, n_el)
    zero = np.zeros(len(el_rep))
    k_u, k_phi, _ = element_matrices(mesh.length[el_rep], zero, zero, e_iy[rr], g_j[rr], e_cw[rr])
    w_u = _inverse_factor(_reduce(_assemble(k_u, n_el), free))
    w_phi = _inverse_factor(_reduce(_assemble(k_phi, n_el), free))
    # Per run only the moment coupling: B = L_u⁻¹·G_uφ·L_φ⁻ᵀ.
    el = (starts[runs][:, None] + np.arange(n_el)[None, :]).ravel()
    ell = mesh.length[el]
    t = np.ones((len(el), 4))
    t[:, 1] = ell
    t[:, 3] = ell
    c = (
        (t[:, :, None] * t[:, None, :])
        * (mesh.m0[el][:, None, None] * _C0 + mesh.m1[el][:, None, None] * _C1)
        / ell[:, None, None]
    )
    g = _reduce(_assemble(c, n_el), free)
    w_phi_run = w_phi[local]
    b = w_u[local] @ g @ np.swapaxes(w_phi_run, 1, 2)
    a = height[runs]
    loaded = a != 0.0
    out = np.empty(len(runs))
    if (~loaded).any():
        bb = b[~loaded]
        s2 = np.linalg.eigvalsh(np.swapaxes(bb, 1, 2) @ bb)[:, -1]
        out[~loaded] = _inverse(np.sqrt(np.maximum(s2, 0.0)))
    if loaded.any():
        # ½·Q·a·φ² at each loaded node: the φ DOF of node k is 2k in the φ field, 2k − 1 once
        # the first node's w is dropped; the first and last nodes are supports (no Q·a·φ²).
        q = mesh.load[el].reshape(len(runs), n_el)[loaded] * a[loaded, None]
        diag = np.zeros((len(q), len(free)))
        diag[:, 2 * np.arange(1, n_el) - 1] = q[:, 1:]
        wl = w_phi_run[loaded]
        d = (wl * diag[:, None, :]) @ np.swapaxes(wl, 1, 2)
        nu, nphi = b.shape[1], b.shape[2]
        full = np.zeros((len(d), nu + nphi, nu + nphi))
        full[:, :nu, nu:] = b[loaded]
        full[:, nu:, :nu] = np.swapaxes(b[loaded], 1, 2)
        full[:, nu:, nu:] = 0.5 * (d + np.swapaxes(d, 1, 2))
        out[loaded] = _inverse(np.linalg.eigvalsh(full)[:, -1])
    return out


def _inverse(mu: np.ndarray) -> np.ndarray:
    """λ = 1/μ for the largest eigenvalue μ; infinite where no μ is positive (never buckles)."""
    with np.errstate(divide="ignore"):
        return np.where(mu > 0.0, 1.0 / np.where(mu > 0.0, mu, 1.0), np.inf)


def critical_moments(
    mesh: Mesh,
    e_iy: np.ndarray,
    g_j: np.ndarray,
    e_cw: np.ndarray,
    height: np.ndarray,
    workers: int | None = None,
) -> np.ndarray:
    """Return the elastic critical moment of every run of ``mesh`` [N·mm], fork supports.

    Trahair (1993), ch. 6; Timoshenko & Gere (1961), ch. 6.

    Mcr is the largest |M| of the run's diagram at buckling. Runs of the same element count are
    solved stacked, in chunks of ``CHUNK``, on ``workers`` threads (numpy's LAPACK calls release
    the GIL; each works on one chunk with a single-threaded BLAS). NaN for a run without elements.

    Args:
        mesh: the runs' elements (:func:`build_mesh`).
        e_iy: per run, E·Iy [N·mm²].
        g_j: per run, G·J [N·mm²].
        e_cw: per run, E·Cw [N·mm⁴].
        height: per run, the height of the transverse loads above the shear centre [mm],
            positive towards the flange that the run's positive moment compresses.
        workers: threads; the machine's cores by default.
    """
    n_runs = len(mesh.n_elements)
    out = np.full(n_runs, np.nan)
    starts = np.cumsum(mesh.n_elements) - mesh.n_elements
    group = stiffness_groups(mesh, e_iy, g_j, e_cw)
    jobs = []
    for n_el in np.unique(mesh.n_elements[mesh.n_elements > 0]):
        runs = np.flatnonzero(mesh.n_elements == n_el)
        # Runs of one stiffness group side by side, so that a chunk factorizes each K once.
        runs = runs[np.argsort(group[runs], kind="stable")]
        jobs += [(runs[c : c + CHUNK], int(n_el)) for c in range(0, len(runs), CHUNK)]

    def work(job: tuple[np.ndarray, int]) -> None:
        runs, n_el = job
        out[runs] = _solve_chunk(mesh, runs, n_el, starts, e_iy, g_j, e_cw, height, group)

    with _single_threaded_blas():
        n_workers = min(workers or os.cpu_count() or 1, max(len(jobs), 1))
        if n_workers <= 1:
            for job in jobs:
                work(job)
        else:
            with ThreadPoolExecutor(max_workers=n_workers) as pool:
                list(pool.map(work, jobs))
    return out


class _single_threaded_blas:
    """Limit BLAS to one thread while the stacked small problems run.

    Threads of our own share the chunks instead: a multi-threaded BLAS on matrices of 30 to 60
    DOF spends most of its time waking threads (5 to 8 times slower here).
    """

    def __enter__(self) -> None:
        from threadpoolctl import threadpool_limits

        self._limits = threadpool_limits(limits=1, user_api="blas")

    def __exit__(self, *exc: object) -> None:
        self._limits.restore_original_limits()


def m_cr_uniform(
    length: np.ndarray, e_iy: np.ndarray, g_j: np.ndarray, e_cw: np.ndarray
) -> np.ndarray:
    """Return Mcr of a segment in uniform moment with fork supports [N·mm].

    Timoshenko & Gere (1961), ch. 6.

    Mcr = (π/L)·√(E·Iy·G·J + (π/L)²·E·Iy·E·Cw).

    Args:
        length: unbraced length L [mm].
        e_iy: E·Iy [N·mm²].
        g_j: G·J [N·mm²].
        e_cw: E·Cw [N·mm⁴].
    """
    k = np.pi / np.asarray(length, dtype=np.float64)
    return k * np.sqrt(e_iy * g_j + k**2 * e_iy * e_cw)


#: Why a checked pair has no exact factor (code 0: it has one).
EXACT_NOTES = (
    "",
    "free end: fork supports do not model a cantilever",
    "flange not braced at one end: fork supports do not hold",
    "not analysed: the exact analysis was switched off for this run",
)


@dataclass(frozen=True)
class ExactResult:
    """Exact elastic buckling per run.

    Attributes:
        m_cr: elastic critical moment Mcr_exact [N·mm] (NaN where not computed).
        factor: Mcr_exact ÷ Mcr of uniform moment over the same length [-] (NaN likewise).
        elements: finite elements used (0 where not computed).
    """

    m_cr: np.ndarray
    factor: np.ndarray
    elements: np.ndarray


def load_heights(flange: np.ndarray, h0: np.ndarray, where: LoadHeight) -> np.ndarray:
    """Return per run the load height a above the shear centre [mm], in the run's own sign.

    A run's positive moment compresses its own flange: for a bottom-flange run the vertical is
    turned over, so a load on the top flange sits at −h0/2 there. Members steeper than 45° have no
    top or bottom: their loads are taken at the shear centre.

    Args:
        flange: per run, 0 top, 1 bottom, 2 either (code of ``FLANGES``).
        h0: distance between the flange centroids d − tf [mm].
        where: the ``[check] load_height`` setting.
    """
    above = {"shear_centre": 0.0, "top_flange": 0.5, "bottom_flange": -0.5}[where]
    sign = np.select([flange == 0, flange == 1], [1.0, -1.0], 0.0)
    return above * sign * h0


def exact_factors(
    runs: Runs,
    solve: np.ndarray,
    flange: np.ndarray,
    iy: np.ndarray,
    j: np.ndarray,
    cw: np.ndarray,
    h0: np.ndarray,
    settings: CheckSettings,
) -> ExactResult:
    """Exact elastic critical moment and factor of the runs marked ``solve``.

    Trahair (1993), ch. 6; Timoshenko & Gere (1961), ch. 6.

    Runs not marked carry NaN: the caller marks only pairs whose fork supports hold (and says
    why the others have no exact factor, :data:`EXACT_NOTES`).

    Args:
        runs: every pair's diagram (positive M compresses the run's flange).
        solve: per run, whether to analyse it.
        flange: per run, 0 top, 1 bottom, 2 either.
        iy: minor-axis second moment of area [mm⁴].
        j: St Venant torsion constant [mm⁴].
        cw: warping constant [mm⁶].
        h0: distance between the flange centroids [mm].
        settings: E, G and the load height.
    """
    n = len(runs.length)
    e, g = settings.E, settings.G
    m_cr = np.full(n, np.nan)
    elements = np.zeros(n, dtype=np.int64)
    idx = np.flatnonzero(solve)
    counts = runs.counts
    # Runs with the same stations and section (every combination of one segment) share one
    # stiffness factorization: put them side by side, then solve in blocks that bound the memory.
    run = runs.run_of_station
    s1 = np.bincount(run, weights=runs.x, minlength=n)
    s2 = np.bincount(run, weights=runs.x * runs.x, minlength=n)
    order = idx[
        np.lexsort((s2[idx], s1[idx], counts[idx], runs.length[idx], cw[idx], j[idx], iy[idx]))
    ]
    for b in range(0, len(order), BLOCK):
        sel = order[b : b + BLOCK]
        c = counts[sel]
        first = runs.starts[sel]
        stations = np.repeat(first - (np.cumsum(c) - c), c) + np.arange(int(c.sum()))
        mesh = build_mesh(runs.x[stations], runs.m[stations], np.r_[0, np.cumsum(c)])
        height = load_heights(flange[sel], h0[sel], settings.load_height)
        m_cr[sel] = critical_moments(mesh, e * iy[sel], g * j[sel], e * cw[sel], height)
        elements[sel] = mesh.n_elements
    uniform = m_cr_uniform(runs.length, e * iy, g * j, e * cw)
    return ExactResult(m_cr=m_cr, factor=m_cr / uniform, elements=elements)
