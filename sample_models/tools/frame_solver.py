"""A compact linear-elastic 3D frame solver, written to give the sample models real internal forces.

Formulation: the direct stiffness method with two-node, 12-DOF prismatic Euler-Bernoulli
beam-column elements (no shear deformation, no warping, small displacements, first order).
Six DOFs per node, in global axes: ux, uy, uz, rx, ry, rz.

Sources (all from memory; the formulation is the standard one of any matrix-analysis text):

- Element elastic stiffness matrix in local axes: McGuire, Gallagher & Ziemian, *Matrix Structural
  Analysis*, 2nd ed. (2000), ch. 4, the 3D frame element (axial EA/L, St Venant torsion GJ/L,
  bending 12EI/L³, 6EI/L², 4EI/L, 2EI/L in each principal plane) — from memory.
- Transformation to global axes, k_g = Γᵀ k Γ with Γ = diag(γ, γ, γ, γ) and γ the direction
  cosines of the local axes: same text, ch. 5 — from memory.
- Uniform element load: work-equivalent nodal loads (the fixed-end forces reversed), wL/2 and
  wL²/12 at each end; common practice, found in any structural analysis text.
- End releases: static condensation of the released DOFs (same text, the chapter on condensation
  and releases — from memory).
- Recovery: element end forces f = k Γ d − f_eq; internal forces at a station from the
  equilibrium of the part of the element between its start node and the station.

Local axes: x from the start node to the end node; y is the part of the element's ``up`` vector
square to x (for beams and rafters ``up`` is global z, so local y points up and the local x-y
plane is the vertical plane through the element); z = x × y. The major axis is local z
(``i_major``): major-axis bending is bending in the local x-y plane.

Output sign conventions, per station s (distance from the start node):

- ``N``: axial force, tension positive.
- ``M``: major-axis moment, positive when it compresses the local +y side (for a beam or rafter
  with ``up`` = global z: the top flange). The sign does not depend on the direction the element
  is drawn in.
- ``V``: shear in the local x-y plane, V = dM/ds.

Any consistent unit set works; the samples use kN and m.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

#: Names of the six DOFs of a node, in order.
DOF_NAMES = ("ux", "uy", "uz", "rx", "ry", "rz")

#: Local DOF numbers for ``releases``: torsion and both bending moments at the start node, and the
#: two bending moments at the end node. A pin-ended beam releases both; its torsion is released at
#: one end only, else it could spin about its own axis.
START_MOMENTS = (3, 4, 5)
END_BENDING = (10, 11)
PINNED_BOTH_ENDS = START_MOMENTS + END_BENDING


@dataclass(frozen=True)
class Element:
    """One prismatic frame element.

    Attributes:
        start: index of the start node.
        end: index of the end node.
        area: cross-section area A.
        i_minor: second moment of area about local y (minor axis).
        i_major: second moment of area about local z (major axis).
        torsion: St Venant torsion constant J.
        up: a vector in the local x-y plane, not parallel to the element (global z for beams;
            for vertical elements the direction the web points in, e.g. global x).
        releases: local DOF numbers (0-11) that carry no force, e.g. :data:`PINNED_BOTH_ENDS`.
    """

    start: int
    end: int
    area: float
    i_minor: float
    i_major: float
    torsion: float
    up: tuple[float, float, float] = (0.0, 0.0, 1.0)
    releases: tuple[int, ...] = ()


@dataclass(frozen=True)
class LoadCase:
    """Loads of one load combination (global axes).

    Attributes:
        nodal: node index -> (Fx, Fy, Fz, Mx, My, Mz).
        uniform: element index -> (wx, wy, wz), force per unit length of the element, acting
            along its whole length.
    """

    nodal: Mapping[int, Sequence[float]]
    uniform: Mapping[int, Sequence[float]]


@dataclass(frozen=True)
class Result:
    """Results of one load case.

    Attributes:
        displacements: (nodes, 6) global DOF values.
        reactions: (nodes, 6) forces and moments the supports exert on the structure (zero where a
            DOF is free).
        positions: (elements, stations) distances from each element's start node.
        N: (elements, stations) axial force, tension positive.
        V: (elements, stations) shear in the local x-y plane, dM/ds.
        M: (elements, stations) major-axis moment, positive when it compresses the local +y side.
        applied: total applied load (Fx, Fy, Fz): nodal loads plus w times element length.
    """

    displacements: np.ndarray
    reactions: np.ndarray
    positions: np.ndarray
    N: np.ndarray
    V: np.ndarray
    M: np.ndarray
    applied: np.ndarray


def local_axes(start: np.ndarray, end: np.ndarray, up: Sequence[float]) -> tuple[np.ndarray, float]:
    """Return (γ, L): the rows of γ are the local x, y, z unit vectors in global axes."""
    d = np.asarray(end, float) - np.asarray(start, float)
    length = float(np.linalg.norm(d))
    ex = d / length
    u = np.asarray(up, float)
    y = u - (u @ ex) * ex
    if np.linalg.norm(y) < 1e-9 * np.linalg.norm(u):
        raise ValueError("the element's 'up' vector is parallel to the element")
    ey = y / np.linalg.norm(y)
    return np.vstack([ex, ey, np.cross(ex, ey)]), length


def local_stiffness(length: float, e: float, g: float, el: Element) -> np.ndarray:
    """Return the 12×12 elastic stiffness matrix in local axes (DOFs u, v, w, θx, θy, θz per end).

    McGuire, Gallagher & Ziemian (2000), ch. 4 (from memory). θz = dv/dx and θy = −dw/dx
    (right-hand rule), which gives the sign pattern of the x-z plane.
    """
    L = length
    k = np.zeros((12, 12))
    a = e * el.area / L
    t = g * el.torsion / L
    k[np.ix_([0, 6], [0, 6])] = [[a, -a], [-a, a]]
    k[np.ix_([3, 9], [3, 9])] = [[t, -t], [-t, t]]
    bz = e * el.i_major / L**3  # bending in the x-y plane: v1, θz1, v2, θz2
    k[np.ix_([1, 5, 7, 11], [1, 5, 7, 11])] = bz * np.array(
        [
            [12, 6 * L, -12, 6 * L],
            [6 * L, 4 * L**2, -6 * L, 2 * L**2],
            [-12, -6 * L, 12, -6 * L],
            [6 * L, 2 * L**2, -6 * L, 4 * L**2],
        ]
    )
    by = e * el.i_minor / L**3  # bending in the x-z plane: w1, θy1, w2, θy2
    k[np.ix_([2, 4, 8, 10], [2, 4, 8, 10])] = by * np.array(
        [
            [12, -6 * L, -12, -6 * L],
            [-6 * L, 4 * L**2, 6 * L, 2 * L**2],
            [-12, 6 * L, 12, 6 * L],
            [-6 * L, 2 * L**2, 6 * L, 4 * L**2],
        ]
    )
    return k


def equivalent_loads(length: float, w_local: np.ndarray) -> np.ndarray:
    """Return the work-equivalent nodal loads (local axes) of a uniform load w = (wx, wy, wz)."""
    L = length
    wx, wy, wz = w_local
    half = np.array([wx, wy, wz]) * L / 2
    return np.concatenate(
        [half, [0.0, -wz * L**2 / 12, wy * L**2 / 12], half, [0.0, wz * L**2 / 12, -wy * L**2 / 12]]
    )


def condense(
    k: np.ndarray, f: np.ndarray, released: Sequence[int]
) -> tuple[np.ndarray, np.ndarray]:
    """Condense out the released DOFs statically; they keep zero rows, columns and load."""
    if not released:
        return k, f
    c = np.array(sorted(released))
    r = np.setdiff1d(np.arange(12), c)
    kcc_inv_kcr = np.linalg.solve(k[np.ix_(c, c)], k[np.ix_(c, r)])
    kcc_inv_fc = np.linalg.solve(k[np.ix_(c, c)], f[c])
    k_out = np.zeros_like(k)
    f_out = np.zeros_like(f)
    k_out[np.ix_(r, r)] = k[np.ix_(r, r)] - k[np.ix_(r, c)] @ kcc_inv_kcr
    f_out[r] = f[r] - k[np.ix_(r, c)] @ kcc_inv_fc
    return k_out, f_out


def solve(
    nodes: np.ndarray,
    elements: Sequence[Element],
    restraints: Mapping[int, Sequence[str]],
    load: LoadCase,
    *,
    e: float,
    g: float,
    stations: int = 5,
) -> Result:
    """Analyse the frame for one load case.

    Args:
        nodes: (n, 3) node coordinates.
        elements: the elements.
        restraints: node index -> names of restrained DOFs (from :data:`DOF_NAMES`).
        load: the loads.
        e: elastic modulus.
        g: shear modulus.
        stations: evenly spaced output stations per element, ends included.

    Raises:
        numpy.linalg.LinAlgError: the structure is a mechanism (singular stiffness matrix).
    """
    nodes = np.asarray(nodes, float)
    ndof = 6 * len(nodes)
    K = np.zeros((ndof, ndof))
    F = np.zeros(ndof)
    applied = np.zeros(3)
    for node, values in load.nodal.items():
        F[6 * node : 6 * node + 6] += values
        applied += np.asarray(values[:3], float)

    parts = []  # per element: (dofs, Γ, condensed k, condensed f_eq, L, local w)
    for i, el in enumerate(elements):
        gamma, L = local_axes(nodes[el.start], nodes[el.end], el.up)
        big_gamma = np.kron(np.eye(4), gamma)
        w_global = np.asarray(load.uniform.get(i, (0.0, 0.0, 0.0)), float)
        w_local = gamma @ w_global
        applied += w_global * L
        k, f_eq = condense(local_stiffness(L, e, g, el), equivalent_loads(L, w_local), el.releases)
        dofs = np.r_[6 * el.start : 6 * el.start + 6, 6 * el.end : 6 * el.end + 6]
        K[np.ix_(dofs, dofs)] += big_gamma.T @ k @ big_gamma
        F[dofs] += big_gamma.T @ f_eq
        parts.append((dofs, big_gamma, k, f_eq, L, w_local))

    fixed = np.zeros(ndof, dtype=bool)
    for node, names in restraints.items():
        for name in names:
            fixed[6 * node + DOF_NAMES.index(name)] = True
    free = ~fixed
    d = np.zeros(ndof)
    d[free] = np.linalg.solve(K[np.ix_(free, free)], F[free])
    reactions = K @ d - F
    reactions[~fixed] = 0.0

    s_unit = np.linspace(0.0, 1.0, stations)
    pos, axial, shear, moment = (np.zeros((len(elements), stations)) for _ in range(4))
    for i, (dofs, big_gamma, k, f_eq, L, w) in enumerate(parts):
        f = k @ (big_gamma @ d[dofs]) - f_eq  # forces the nodes exert on the element, local
        s = s_unit * L
        pos[i] = s
        # Equilibrium of the part [0, s]: end forces f[0:6] at s = 0, the load w·s, and the
        # section forces the rest of the element exerts at the cut (moments taken about the cut).
        axial[i] = -(f[0] + w[0] * s)
        shear[i] = f[1] + w[1] * s
        moment[i] = -f[5] + f[1] * s + w[1] * s**2 / 2
    return Result(
        displacements=d.reshape(-1, 6),
        reactions=reactions.reshape(-1, 6),
        positions=pos,
        N=axial,
        V=shear,
        M=moment,
        applied=applied,
    )
