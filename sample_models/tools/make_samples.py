"""Generate the ``industrial_shed`` and ``plant_platform`` sample models from a 3D frame analysis.

Both structures, their sections and their loads are invented. The numbers are fixed (nothing is
random), so running this again writes the same files. Run from any folder:
``python sample_models/tools/make_samples.py``.

The internal forces come from :mod:`frame_solver` (first-order linear-elastic 3D frame analysis;
E = 200 GPa, G = 77 GPa; plate-only section properties, fillets ignored, which is enough to
distribute the forces). Each sample folder also gets ``reactions.csv`` (per combination, the sum
of the support reactions: forces the supports exert on the structure) and ``applied_loads.csv``
(per combination, the total applied load), in the folder's own units and CSV dialect, for the
statics tests. The readers ignore both.
"""

from __future__ import annotations

import csv
import itertools
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from frame_solver import END_BENDING, START_MOMENTS, Element, LoadCase, Result, solve

SAMPLES = Path(__file__).resolve().parents[1]

E_KN_M2 = 200.0e6  # 200 GPa
G_KN_M2 = 77.0e6  # 77 GPa
STATIONS = 5  # output stations per element: ends, quarter points, middle
DOWN = np.array([0.0, 0.0, -1.0])


@dataclass(frozen=True)
class Plate:
    """An I-section made of three plates (dimensions in mm, fy in MPa)."""

    name: str
    d: float
    b: float
    tf: float
    tw: float
    r: float
    fy: float

    def element(self, start: int, end: int, **kwargs: object) -> Element:
        """Return a solver element of this section (properties in m; fillets ignored)."""
        d, b, tf, tw = (v / 1000.0 for v in (self.d, self.b, self.tf, self.tw))
        hw = d - 2 * tf
        return Element(
            start,
            end,
            area=2 * b * tf + hw * tw,
            i_minor=(2 * tf * b**3 + hw * tw**3) / 12,
            i_major=(b * d**3 - (b - tw) * hw**3) / 12,
            torsion=(2 * b * tf**3 + (d - tf) * tw**3) / 3,  # thin-walled open section
            **kwargs,  # type: ignore[arg-type]
        )


@dataclass
class Frame:
    """A frame being built: nodes, elements, restraints, and loads per basic load case."""

    node_ids: list[str] = field(default_factory=list)
    xyz: list[tuple[float, float, float]] = field(default_factory=list)
    element_ids: list[str] = field(default_factory=list)
    ends: list[tuple[str, str]] = field(default_factory=list)
    sections: list[str] = field(default_factory=list)
    elements: list[Element] = field(default_factory=list)
    restraints: dict[int, tuple[str, ...]] = field(default_factory=dict)
    nodal: dict[str, dict[int, np.ndarray]] = field(default_factory=dict)
    uniform: dict[str, dict[int, np.ndarray]] = field(default_factory=dict)

    def node(self, nid: str, x: float, y: float, z: float) -> int:
        """Add a node (coordinates in m, rounded to 0.1 mm as they are written)."""
        self.node_ids.append(nid)
        self.xyz.append((round(x, 4), round(y, 4), round(z, 4)))
        return len(self.node_ids) - 1

    def element(self, eid: str, start: str, end: str, plate: Plate, **kwargs: object) -> int:
        """Add an element drawn from node ``start`` to node ``end``."""
        i, j = self.node_ids.index(start), self.node_ids.index(end)
        self.element_ids.append(eid)
        self.ends.append((start, end))
        self.sections.append(plate.name)
        self.elements.append(plate.element(i, j, **kwargs))
        return len(self.elements) - 1

    def add_uniform(self, case: str, element: int, w: Sequence[float]) -> None:
        """Add a uniform load (kN/m of element length, global axes) to a basic load case."""
        loads = self.uniform.setdefault(case, {})
        loads[element] = loads.get(element, np.zeros(3)) + np.asarray(w, float)

    def add_nodal(self, case: str, node: str, f: Sequence[float]) -> None:
        """Add a nodal force (kN, global axes) to a basic load case."""
        loads = self.nodal.setdefault(case, {})
        i = self.node_ids.index(node)
        loads[i] = loads.get(i, np.zeros(6)) + np.r_[np.asarray(f, float), 0.0, 0.0, 0.0]

    def combination(self, factors: Mapping[str, float]) -> LoadCase:
        """Return the factored sum of basic load cases."""
        nodal: dict[int, np.ndarray] = {}
        uniform: dict[int, np.ndarray] = {}
        for case, factor in factors.items():
            for target, source in ((nodal, self.nodal), (uniform, self.uniform)):
                for key, value in source.get(case, {}).items():
                    target[key] = target.get(key, 0.0) + factor * value
        return LoadCase(nodal=nodal, uniform=uniform)

    def analyse(self, combinations: Mapping[str, Mapping[str, float]]) -> dict[str, Result]:
        """Analyse every load combination and check the equilibrium of the whole structure."""
        out = {}
        for name, factors in combinations.items():
            res = solve(
                np.array(self.xyz),
                self.elements,
                self.restraints,
                self.combination(factors),
                e=E_KN_M2,
                g=G_KN_M2,
                stations=STATIONS,
            )
            total = res.reactions[:, :3].sum(axis=0) + res.applied
            assert np.abs(total).max() < 1e-6 * np.abs(res.applied).max(), (name, total)
            out[name] = res
        return out


def fmt(value: float, decimals: int, mark: str = ".") -> str:
    """Format a number with a fixed number of decimals and the given decimal mark, no '-0'."""
    text = f"{value:.{decimals}f}"
    if float(text) == 0.0:
        text = f"{0.0:.{decimals}f}"
    return text.replace(".", mark)


def write_csv(
    path: Path, header: Sequence[str], rows: Iterable[Sequence[object]], sep: str
) -> None:
    """Write one CSV file (UTF-8, Unix line ends)."""
    with path.open("w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh, delimiter=sep, lineterminator="\n")
        out.writerow(header)
        out.writerows(rows)


# ---------------------------------------------------------------------------------------------
# industrial_shed: canonical layout, SI units (m, kN, kN*m, mm, MPa), z up
# ---------------------------------------------------------------------------------------------

SHED_FRAMES = {"A": 0.0, "B": 6.0, "C": 12.0, "D": 18.0}  # frame letter -> y [m]
SHED_BAY = 6.0  # frame spacing [m]
SHED_SPAN = 24.0  # [m]
SHED_EAVES = 6.0  # [m]
SHED_PITCH_DEG = 8.0
SHED_PURLIN_X = 1.5  # plan spacing of rafter nodes (purlins) [m]
SHED_COLUMN_ELEMENTS = 4
SHED_COLUMN = Plate("COL-460", 460, 200, 14, 8, 0, 355)
SHED_RAFTER = Plate("RAF-360", 360, 170, 10, 6, 0, 355)

ROOF_DEAD_KPA = 0.25  # cladding, purlins, services: per m² of roof surface
RAFTER_SELF_KN_M = 0.45
COLUMN_SELF_KN_M = 0.60
WALL_DEAD_KPA = 0.15  # side cladding and girts, carried by the columns
ROOF_LIVE_KPA = 0.25  # per m² of plan
WIND_Q_KPA = 1.0
WIND_WALL = {"windward": 0.7, "leeward": 0.3}  # pressure / suction, both push towards +x
WIND_ROOF = {"windward": 0.9, "leeward": 0.5}  # suction, normal to the roof, outwards
SHED_COMBINATIONS = {
    "ULS1 1.2D+1.6L": {"D": 1.2, "L": 1.6},
    "ULS2 0.9D+1.3W": {"D": 0.9, "W": 1.3},
}
FLY_BRACE_X = (3.0, 10.5, 13.5, 21.0)  # plan x of the bottom-flange braces [m]


def shed_frame() -> Frame:
    """Build the four portal frames and their basic load cases D, L, W (wind towards +x)."""
    fr = Frame()
    tan = math.tan(math.radians(SHED_PITCH_DEG))
    n_half = round(SHED_SPAN / 2 / SHED_PURLIN_X)
    for letter, y in SHED_FRAMES.items():
        end_frame = y in (min(SHED_FRAMES.values()), max(SHED_FRAMES.values()))
        width = SHED_BAY / 2 if end_frame else SHED_BAY  # tributary width [m]
        path = []  # node ids from the left base round to the right base
        for k in range(SHED_COLUMN_ELEMENTS + 1):
            z = SHED_EAVES * k / SHED_COLUMN_ELEMENTS
            path.append(fr.node(f"{letter}{len(path):02d}", 0.0, y, z))
        for k in range(1, 2 * n_half):
            x = k * SHED_PURLIN_X
            z = SHED_EAVES + tan * min(x, SHED_SPAN - x)
            path.append(fr.node(f"{letter}{len(path):02d}", x, y, z))
        for k in range(SHED_COLUMN_ELEMENTS, -1, -1):
            z = SHED_EAVES * k / SHED_COLUMN_ELEMENTS
            path.append(fr.node(f"{letter}{len(path):02d}", SHED_SPAN, y, z))
        ids = [fr.node_ids[i] for i in path]
        nc = SHED_COLUMN_ELEMENTS
        left = ids[: nc + 1]
        rafter = ids[nc : len(ids) - nc]
        right = ids[len(ids) - nc - 1 :][::-1]  # base upwards
        # Columns: local y (the 'up' of the solver) points into the frame, so a positive
        # column moment compresses the inside flange.
        for side, chain, inward in (("L", left, (1.0, 0.0, 0.0)), ("R", right, (-1.0, 0.0, 0.0))):
            for k in range(nc):
                e = fr.element(
                    f"{letter}-C{side}{k + 1}", chain[k], chain[k + 1], SHED_COLUMN, up=inward
                )
                fr.add_uniform("D", e, (COLUMN_SELF_KN_M + WALL_DEAD_KPA * width) * DOWN)
                wall = WIND_WALL["windward" if side == "L" else "leeward"]
                fr.add_uniform("W", e, (wall * WIND_Q_KPA * width, 0.0, 0.0))
        cos, sin = math.cos(math.radians(SHED_PITCH_DEG)), math.sin(math.radians(SHED_PITCH_DEG))
        for k in range(len(rafter) - 1):
            e = fr.element(f"{letter}-R{k + 1:02d}", rafter[k], rafter[k + 1], SHED_RAFTER)
            fr.add_uniform("D", e, (ROOF_DEAD_KPA * width + RAFTER_SELF_KN_M) * DOWN)
            fr.add_uniform("L", e, ROOF_LIVE_KPA * width * cos * DOWN)  # plan load on a slope
            windward = k < n_half
            normal = (-sin, 0.0, cos) if windward else (sin, 0.0, cos)  # outward roof normal
            suction = WIND_ROOF["windward" if windward else "leeward"] * WIND_Q_KPA * width
            fr.add_uniform("W", e, suction * np.array(normal))
        fr.restraints[path[0]] = ("ux", "uy", "uz")
        fr.restraints[path[-1]] = ("ux", "uy", "uz")
        # Longitudinal bracing holds the knees and the apex out of the frame's plane.
        for i in (path[nc], path[nc + n_half], path[-1 - nc]):
            fr.restraints[i] = ("uy",)
    return fr


def write_shed() -> None:
    """Write the industrial_shed sample (canonical layout, SI units)."""
    folder = SAMPLES / "industrial_shed"
    folder.mkdir(exist_ok=True)
    fr = shed_frame()
    results = fr.analyse(SHED_COMBINATIONS)
    write_csv(
        folder / "nodes.csv",
        ["id", "x", "y", "z"],
        [(n, *(fmt(c, 4) for c in p)) for n, p in zip(fr.node_ids, fr.xyz, strict=True)],
        ",",
    )
    write_csv(
        folder / "elements.csv",
        ["id", "start", "end", "section"],
        [(e, *ends, s) for e, ends, s in zip(fr.element_ids, fr.ends, fr.sections, strict=True)],
        ",",
    )
    write_csv(
        folder / "sections.csv",
        ["name", "d", "b", "tf", "tw", "r", "fy"],
        [(p.name, p.d, p.b, p.tf, p.tw, p.r, p.fy) for p in (SHED_COLUMN, SHED_RAFTER)],
        ",",
    )
    n_half = round(SHED_SPAN / 2 / SHED_PURLIN_X)
    braces = []
    for letter in SHED_FRAMES:
        for k in range(1, 2 * n_half):  # every rafter node except the knees is a purlin
            nid = f"{letter}{SHED_COLUMN_ELEMENTS + k:02d}"
            braces.append((nid, "top"))
            if k * SHED_PURLIN_X in FLY_BRACE_X:
                braces.append((nid, "bottom"))
    write_csv(folder / "braces.csv", ["node", "flange"], braces, ",")
    bases = [n for n, p in zip(fr.node_ids, fr.xyz, strict=True) if p[2] == 0.0]
    write_csv(folder / "supports.csv", ["node", "restrains"], [(n, "ux uy uz") for n in bases], ",")
    rows = []
    for name, res in results.items():
        for e, eid in enumerate(fr.element_ids):
            for s, n, v, m in zip(res.positions[e], res.N[e], res.V[e], res.M[e], strict=True):
                rows.append((eid, name, fmt(s, 4), fmt(m, 3), fmt(n, 3), fmt(v, 3)))
    write_csv(
        folder / "forces.csv", ["element", "combination", "position", "M", "N", "V"], rows, ","
    )
    write_totals(folder, results, ",", ".", 1.0, 3)
    report_shed(fr, results)


def write_totals(
    folder: Path, results: Mapping[str, Result], sep: str, mark: str, scale: float, decimals: int
) -> None:
    """Write reactions.csv and applied_loads.csv (sums per combination, scaled from kN)."""
    for file, pick in (
        ("reactions.csv", lambda r: r.reactions[:, :3].sum(axis=0)),
        ("applied_loads.csv", lambda r: r.applied),
    ):
        rows = [
            (name, *(fmt(v * scale, decimals, mark) for v in pick(res)))
            for name, res in results.items()
        ]
        write_csv(folder / file, ["combination", "Fx", "Fy", "Fz"], rows, sep)


def report_shed(fr: Frame, results: Mapping[str, Result]) -> None:
    """Print the values the sample's README quotes; check the uplift does what it is for."""
    for name, res in results.items():
        print(f"industrial_shed {name}: applied {np.round(res.applied, 2)} kN")
        for letter in ("A", "B"):
            raf = [i for i, e in enumerate(fr.element_ids) if e.startswith(f"{letter}-R")]
            m = res.M[raf]
            print(
                f"  frame {letter} rafter M: knee {m[0, 0]:.1f}, min {m.min():.1f}, "
                f"max {m.max():.1f}, apex {m[len(raf) // 2, 0]:.1f} kN*m; "
                f"hogging at {np.mean(m < 0):.0%} of rafter stations"
            )
            if "W" in name:  # net uplift: the bottom flange is in compression over most rafters
                assert np.mean(m < 0) > 0.5, name


# ---------------------------------------------------------------------------------------------
# plant_platform: a foreign layout (settings file), N and mm, decimal comma, fractions
# ---------------------------------------------------------------------------------------------

DECK_Z = 4.5  # [m]
GIRDER_Y = {"1": 0.0, "2": 4.8}  # girder line -> y [m]
COLUMN_X = (0.0, 6.0, 13.5, 19.5)  # [m]
TIP_X = 21.0  # free end of the cantilevers [m]
SECONDARY_X = (3.0, 7.5, 12.0, 16.5)  # [m]
BACKWARDS_SECONDARY_X = 12.0  # this secondary beam is drawn from girder 2 to girder 1
#: Kickers (bottom-flange braces) on girder 2 only, at the secondary beams of span 2: the two
#: girders carry the same moments (the platform is symmetric about y = 2.4 m), so comparing them
#: shows what the kickers do.
KICKER_LINE = "2"
KICKER_X = (7.5, 12.0)
GIRDER_STEP = 1.5  # element length along the girders between columns [m]
SECONDARY_ELEMENTS = 4
COLUMN_ELEMENTS = 2
GIRDER = Plate("PG410", 410, 180, 13, 8, 12, 350)
SECONDARY = Plate("SB310", 310, 165, 9.5, 6, 10, 350)
COLUMN = Plate("PC260", 260, 260, 15, 9.5, 18, 350)

GIRDER_DEAD_KN_M = 6.0  # girder self weight, pipes and cable trays
SECONDARY_DEAD_KN_M = 3.0  # grating, skid frames, self weight
SECONDARY_LIVE_KN_M = 12.0  # pump skids, operating contents, access
COLUMN_DEAD_KN_M = 0.7
TIP_DEAD_KN = 3.0  # ladder landing at each cantilever tip
TIP_LIVE_KN = 6.0
NOTIONAL_KN = 2.0  # horizontal, towards +x, at every column top
PLATFORM_COMBINATIONS = {
    "K1 1,2G+1,6Q": {"G": 1.2, "Q1": 1.6, "Q2": 1.6},
    "K2 1,2G+1,6Q spans 1+3": {"G": 1.2, "Q1": 1.6},
    "K3 1,2G+1,6Q span 2": {"G": 1.2, "Q2": 1.6},
    "K4 1,2G+0,5Q+H": {"G": 1.2, "Q1": 0.5, "Q2": 0.5, "H": 1.0},
}
#: Secondary beams (by x) and cantilever tips loaded in live-load pattern Q1; Q2 loads span 2.
Q1_SECONDARIES = (3.0, 16.5)
PLATFORM_SETTINGS = """\
# Maps the invented 'deck export' layout of this sample onto flangewise's tables.
[files]
nodes = "knots.csv"
elements = "pieces.csv"
sections = "profiles.csv"
forces = "piece_results.csv"
braces = "restraint_points.csv"
supports = "foundations.csv"

[csv]
delimiter = ";"
decimal = ","

[units]
length = "mm"
force = "N"
moment = "N*mm"
section = "mm"
stress = "MPa"

[forces]
positions = "fraction"
positive_moment = "compresses_bottom"

[columns.nodes]
id = "KnotRef"
x = "PosX"
y = "PosY"
z = "PosZ"

[columns.elements]
id = "PieceRef"
start = "FromKnot"
end = "ToKnot"
section = "Profile"

[columns.sections]
name = "Profile"
d = "Height"
b = "FlgWidth"
tf = "FlgThick"
tw = "WebThick"
r = "RootRad"
fy = "Yield"

[columns.forces]
element = "PieceRef"
combination = "LoadSet"
position = "RelPos"
M = "Mbend"
N = "Naxial"
V = "Vshear"

[columns.braces]
node = "KnotRef"
flange = "Face"

[columns.supports]
node = "KnotRef"
restrains = "HeldDofs"

[flange_words]
top = ["upper"]
bottom = ["lower"]
"""


def platform_frame() -> tuple[Frame, list[tuple[str, str]]]:
    """Build the platform and its basic load cases G, Q1, Q2, H; return it and its braces."""
    fr = Frame()
    girder_x = [
        *np.arange(0.0, COLUMN_X[-1] + 1e-9, GIRDER_STEP),
        (COLUMN_X[-1] + TIP_X) / 2,
        TIP_X,
    ]
    braces: list[tuple[str, str]] = []
    piece = {"1": 1000, "2": 2000, "3": 3000, "4": 4000}

    def next_piece(group: str) -> str:
        piece[group] += 1
        return str(piece[group])

    knot = {}  # (line, x) -> knot id
    for line, y in GIRDER_Y.items():
        for k, x in enumerate(girder_x):
            knot[line, round(x, 3)] = fr.node(f"{line}{k + 1:02d}", x, y, DECK_Z)
    kid = lambda line, x: fr.node_ids[knot[line, round(x, 3)]]  # noqa: E731
    for line in GIRDER_Y:
        for x0, x1 in itertools.pairwise(girder_x):
            a, b = kid(line, x0), kid(line, x1)
            # Drawn backwards: girder 2's middle span, and girder 1's last cantilever element.
            if (line == "2" and COLUMN_X[1] <= x0 < COLUMN_X[2]) or (line == "1" and x1 == TIP_X):
                a, b = b, a
            e = fr.element(next_piece(line), a, b, GIRDER)
            fr.add_uniform("G", e, GIRDER_DEAD_KN_M * DOWN)
        tip = kid(line, TIP_X)
        fr.add_nodal("G", tip, TIP_DEAD_KN * DOWN)
        fr.add_nodal("Q1", tip, TIP_LIVE_KN * DOWN)
        for x in SECONDARY_X:
            braces.append((kid(line, x), "UPPER"))
            if line == KICKER_LINE and x in KICKER_X:
                braces.append((kid(line, x), "LOWER"))
        for x in COLUMN_X:
            braces.append((kid(line, x), "BOTH"))

    count = 0
    for line, y in GIRDER_Y.items():
        for x in COLUMN_X:
            count += 1  # knots 30c at the base and 31c at mid-height of column c
            chain = [f"3{j}{count}" for j in range(COLUMN_ELEMENTS)]
            for j, nid in enumerate(chain):
                fr.node(nid, x, y, DECK_Z * j / COLUMN_ELEMENTS)
            chain.append(kid(line, x))
            fr.restraints[fr.node_ids.index(chain[0])] = ("ux", "uy", "uz", "rx", "ry", "rz")
            for a, b in itertools.pairwise(chain):
                e = fr.element(next_piece("3"), a, b, COLUMN, up=(1.0, 0.0, 0.0))
                fr.add_uniform("G", e, COLUMN_DEAD_KN_M * DOWN)
            fr.add_nodal("H", chain[-1], (NOTIONAL_KN, 0.0, 0.0))

    span_y = GIRDER_Y["2"] - GIRDER_Y["1"]
    for j, x in enumerate(SECONDARY_X):
        inner = [
            fr.node(f"4{j + 1}{k}", x, span_y * k / SECONDARY_ELEMENTS, DECK_Z)
            for k in range(1, SECONDARY_ELEMENTS)
        ]
        chain = [kid("1", x), *(fr.node_ids[i] for i in inner), kid("2", x)]
        if x == BACKWARDS_SECONDARY_X:
            chain.reverse()  # drawn backwards, from girder 2 to girder 1
        live = "Q1" if x in Q1_SECONDARIES else "Q2"
        for k, (a, b) in enumerate(itertools.pairwise(chain)):
            # Pinned (shear-plate) connections at both ends of the beam.
            releases = (START_MOMENTS if k == 0 else ()) + (
                END_BENDING if k == SECONDARY_ELEMENTS - 1 else ()
            )
            e = fr.element(next_piece("4"), a, b, SECONDARY, releases=releases)
            fr.add_uniform("G", e, SECONDARY_DEAD_KN_M * DOWN)
            fr.add_uniform(live, e, SECONDARY_LIVE_KN_M * DOWN)
    return fr, braces


def write_platform() -> None:
    """Write the plant_platform sample in its foreign layout (N, mm, ';', decimal comma)."""
    folder = SAMPLES / "plant_platform"
    folder.mkdir(exist_ok=True)
    fr, braces = platform_frame()
    results = fr.analyse(PLATFORM_COMBINATIONS)
    (folder / "flangewise.toml").write_text(PLATFORM_SETTINGS, encoding="utf-8")
    sep, mark = ";", ","
    write_csv(
        folder / "knots.csv",
        ["KnotRef", "PosX", "PosY", "PosZ"],
        [
            (n, *(fmt(c * 1000, 0, mark) for c in p))
            for n, p in zip(fr.node_ids, fr.xyz, strict=True)
        ],
        sep,
    )
    write_csv(
        folder / "pieces.csv",
        ["PieceRef", "FromKnot", "ToKnot", "Profile"],
        [(e, *ends, s) for e, ends, s in zip(fr.element_ids, fr.ends, fr.sections, strict=True)],
        sep,
    )
    write_csv(
        folder / "profiles.csv",
        ["Profile", "Height", "FlgWidth", "FlgThick", "WebThick", "RootRad", "Yield"],
        [
            (p.name, *(fmt(v, 1, mark) for v in (p.d, p.b, p.tf, p.tw, p.r, p.fy)))
            for p in (GIRDER, SECONDARY, COLUMN)
        ],
        sep,
    )
    write_csv(folder / "restraint_points.csv", ["KnotRef", "Face"], braces, sep)
    bases = [fr.node_ids[i] for i in fr.restraints]
    write_csv(folder / "foundations.csv", ["KnotRef", "HeldDofs"], [(b, "all") for b in bases], sep)
    rows = []
    for name, res in results.items():
        for e, eid in enumerate(fr.element_ids):
            frac = res.positions[e] / res.positions[e, -1]
            for s, n, v, m in zip(frac, res.N[e], res.V[e], res.M[e], strict=True):
                # This layout's moments are positive when they compress the bottom flange, and
                # its shear is dM/ds in that sign: both opposite to the solver's.
                rows.append(
                    (
                        eid,
                        name,
                        fmt(s, 4, mark),
                        fmt(-m * 1e6, 0, mark),  # kN*m -> N*mm
                        fmt(n * 1e3, 1, mark),  # kN -> N
                        fmt(-v * 1e3, 1, mark),
                    )
                )
    write_csv(
        folder / "piece_results.csv",
        ["PieceRef", "LoadSet", "RelPos", "Mbend", "Naxial", "Vshear"],
        rows,
        sep,
    )
    write_totals(folder, results, sep, mark, 1e3, 1)
    report_platform(fr, results)


def report_platform(fr: Frame, results: Mapping[str, Result]) -> None:
    """Print the values the sample's README quotes; check the segment it is built to show.

    Moments in the solver's sign (positive compresses the top flange), kN*m, along girder 1.
    """
    xyz = np.array(fr.xyz)
    for name, res in results.items():
        print(f"plant_platform {name}: applied {np.round(res.applied, 2)} kN")
        x, m = [], []
        for e, eid in enumerate(fr.element_ids):
            if eid.startswith("1"):  # girder 1
                el = fr.elements[e]
                x.append(np.linspace(xyz[el.start, 0], xyz[el.end, 0], STATIONS))
                m.append(res.M[e])
        xs, ms = np.concatenate(x), np.concatenate(m)
        for lo, hi in itertools.pairwise((0.0, 3.0, 6.0, 7.5, 12.0, 13.5, 16.5, 19.5, TIP_X)):
            inside = (xs > lo + 1e-9) & (xs < hi - 1e-9)
            ends = [ms[np.isclose(xs, v)] for v in (lo, hi)]
            print(
                f"  girder 1, x {lo:4.1f} to {hi:4.1f} m: M at ends {ends[0].round(1)} "
                f"{ends[1].round(1)}, inside {ms[inside].min():.1f} to {ms[inside].max():.1f}"
            )
        # By construction: between the secondary beams of span 2 the sagging moment inside the
        # segment exceeds both end moments (the girder's own distributed load).
        inside = (xs > 7.5 + 1e-9) & (xs < 12.0 - 1e-9)
        end_max = np.abs(ms[np.isclose(xs, 7.5) | np.isclose(xs, 12.0)]).max()
        assert ms[inside].max() > end_max, name


if __name__ == "__main__":
    write_shed()
    write_platform()
