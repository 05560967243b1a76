"""Statics of the frame-analysis samples, checked from their exported files.

``sample_models/industrial_shed`` (canonical layout) and ``sample_models/plant_platform`` (a foreign
layout with its own ``flangewise.toml``) hold internal forces from a 3D frame analysis. These tests
do not trust that analysis: they load each sample through ``readers.load_model`` and check what the
files say against statics alone, using the loads and connection details stated in each sample's
README.md (repeated below as constants).

Checks, all common practice in checking any frame analysis output:

- equilibrium of the whole structure: per load combination, the support reactions balance the
  applied loads, and the applied loads are those the README states;
- the same from the internal forces: the axial and shear forces at the column bases balance the
  applied loads;
- a moment is zero at a free end, at a pinned base and at a pinned member end;
- at a node of a continuous member where nothing applies a moment, the two elements report the
  same moment (joint equilibrium); likewise at the portal knees and the apex;
- closed forms of statically determinate parts: a simply supported beam under uniform load has
  midspan moment wL²/8, a cantilever has root moment −(Pa + wa²/2).

Tolerances come from the rounding of the files: a value written to d decimals is within half a
unit of its last digit (``UNIT``) of the analysis value; two such values differ by at most one
unit; n of them summed by at most n/2 units. The analysis' own round-off (about 1e-12 of the
values) is far below that. Internal units throughout: N, mm, N·mm (1 kN/m = 1 N/mm).
"""

from __future__ import annotations

import functools
import math
from importlib.resources import files
from itertools import combinations
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from flangewise.readers import load_model
from flangewise.readers.model import Model
from flangewise.readers.units import factor

SHED = "industrial_shed"
PLATFORM = "plant_platform"
SAMPLES = (SHED, PLATFORM)

#: One unit in the last written digit, per sample, in internal units: moments (N·mm) in the
#: forces file, axial and shear forces (N) in the forces file, and the totals files (N).
#: industrial_shed: kN·m and kN to 3 decimals; plant_platform: N·mm to 0 decimals, N to 1.
UNIT = {
    SHED: {"M": 1.0e-3 * 1.0e6, "force": 1.0e-3 * 1.0e3, "total": 1.0e-3 * 1.0e3},
    PLATFORM: {"M": 1.0, "force": 0.1, "total": 0.1},
}

#: Sections whose members have pinned connections at both ends (the sample READMEs).
PINNED_SECTIONS = {SHED: (), PLATFORM: ("SB310",)}

#: How many places each check finds, from the READMEs' geometry, so that no check passes by
#: finding nothing. Shed, per frame: 3 interior nodes per column x 2 and 7 per rafter half x 2.
#: Platform: per girder 16 nodes less 4 column tops and the tip; 8 column mid-heights; 3 interior
#: nodes per secondary beam x 4.
EXPECTED_COUNTS = {
    SHED: {"free": 0, "pinned_bases": 8, "pinned_ends": 0, "continuous": 4 * (6 + 14)},
    PLATFORM: {"free": 2, "pinned_bases": 0, "pinned_ends": 8, "continuous": 2 * 11 + 8 + 12},
}

# --- industrial_shed: the stated loads (sample_models/industrial_shed/README.md) ---------------
SHED_ROOF_DEAD = 0.25e-3  # N/mm² of roof surface (0.25 kPa)
SHED_RAFTER_SELF = 0.45  # N/mm (0.45 kN/m)
SHED_COLUMN_SELF = 0.60  # N/mm
SHED_WALL_DEAD = 0.15e-3  # N/mm² of wall, carried by the columns
SHED_ROOF_LIVE = 0.25e-3  # N/mm² of plan
SHED_WIND_Q = 1.0e-3  # N/mm² (1.0 kPa)
SHED_WALL_CP = {"windward": 0.7, "leeward": 0.3}  # both push towards +x
SHED_ROOF_CP = {"windward": 0.9, "leeward": 0.5}  # suction, normal to the roof, outwards
SHED_BAY = 6000.0  # mm; end frames carry half a bay
SHED_FACTORS = {
    "ULS1 1.2D+1.6L": {"D": 1.2, "L": 1.6},
    "ULS2 0.9D+1.3W": {"D": 0.9, "W": 1.3},
}

# --- plant_platform: the stated loads (sample_models/plant_platform/README.md) ----------------
GIRDER_DEAD = 6.0  # N/mm (6.0 kN/m)
SECONDARY_DEAD = 3.0
SECONDARY_LIVE = 12.0
COLUMN_DEAD = 0.7
TIP_DEAD = 3.0e3  # N at each cantilever tip
TIP_LIVE = 6.0e3
NOTIONAL = 2.0e3  # N towards +x at each column top
Q1_SECONDARY_X = (3000.0, 16500.0)  # mm; live pattern Q1 also loads the tips, Q2 the others
PLATFORM_FACTORS = {
    "K1 1,2G+1,6Q": {"G": 1.2, "Q1": 1.6, "Q2": 1.6, "H": 0.0},
    "K2 1,2G+1,6Q spans 1+3": {"G": 1.2, "Q1": 1.6, "Q2": 0.0, "H": 0.0},
    "K3 1,2G+1,6Q span 2": {"G": 1.2, "Q1": 0.0, "Q2": 1.6, "H": 0.0},
    "K4 1,2G+0,5Q+H": {"G": 1.2, "Q1": 0.5, "Q2": 0.5, "H": 1.0},
}
GIRDER = "PG410"
SECONDARY = "SB310"
COLUMN = "PC260"


def folder(sample: str) -> Path:
    return Path(str(files("flangewise.sample_models").joinpath(sample)))


@functools.cache
def model(sample: str) -> Model:
    """Load a sample once per test session."""
    return load_model(folder(sample))


def totals(sample: str, file: str) -> pd.DataFrame:
    """Read reactions.csv or applied_loads.csv (the folder's own dialect and force unit) in N."""
    s = model(sample).settings
    df = pd.read_csv(folder(sample) / file, sep=s.delimiter, decimal=s.decimal)
    df = df.set_index("combination")[["Fx", "Fy", "Fz"]]
    return df * factor("force", s.units.force)


def at_ends(m: Model) -> pd.DataFrame:
    """Per (element, combination): M, N, V at the start (position 0) and end (position length)."""
    f = m.forces
    g = f.groupby(["element", "combination"], observed=True)["position"]
    first, last = f.loc[g.idxmin()], f.loc[g.idxmax()]
    out = pd.DataFrame(index=pd.MultiIndex.from_frame(first[["element", "combination"]]))
    for c in ("M", "N", "V"):
        out[f"{c}_start"] = first[c].to_numpy()
        out[f"{c}_end"] = last[c].to_numpy()
    return out


def incident(m: Model) -> dict[str, list[tuple[str, str]]]:
    """Per node: the (element, 'start' or 'end') pairs that meet there."""
    out: dict[str, list[tuple[str, str]]] = {n: [] for n in m.nodes.index}
    for e, row in m.elements.iterrows():
        out[row["start"]].append((str(e), "start"))
        out[row["end"]].append((str(e), "end"))
    return out


def moment_at(ends: pd.DataFrame, element: str, end: str) -> pd.Series:
    """The moment at one end of an element, per combination."""
    return ends.xs(element, level="element")[f"M_{end}"]


def away(m: Model, element: str, end: str) -> np.ndarray:
    """Unit vector from the element's ``end`` node towards its other node."""
    row = m.elements.loc[element]
    here, there = (row["start"], row["end"]) if end == "start" else (row["end"], row["start"])
    d = m.nodes.loc[there, ["x", "y", "z"]].to_numpy(float) - m.nodes.loc[
        here, ["x", "y", "z"]
    ].to_numpy(float)
    return d / np.linalg.norm(d)


def pinned_bases(m: Model) -> list[str]:
    """Support nodes that restrain no rotation."""
    out = []
    for node, text in zip(m.supports["node"], m.supports["restrains"], strict=True):
        words = set(str(text).split())
        if "all" not in words and not words & {"rx", "ry", "rz"}:
            out.append(node)
    return out


@pytest.mark.parametrize("sample", SAMPLES)
def test_sample_loads_without_error(sample):
    m = model(sample)
    assert len(m.elements) > 50
    # Every element has forces in every combination (the readers check the counts per pair).
    assert m.forces["element"].nunique() == len(m.elements)
    assert set(m.combinations) == set(SHED_FACTORS if sample == SHED else PLATFORM_FACTORS)


def test_platform_has_elements_drawn_backwards():
    assert model(PLATFORM).elements["backwards"].sum() >= 3


@pytest.mark.parametrize("sample", SAMPLES)
def test_reactions_balance_the_applied_loads(sample):
    """Equilibrium of the whole structure: sum of reactions + sum of applied loads = 0."""
    reactions, applied = totals(sample, "reactions.csv"), totals(sample, "applied_loads.csv")
    assert list(reactions.index) == list(applied.index) == model(sample).combinations
    tol = UNIT[sample]["total"] * (1.0 + 1e-9)  # two values, each within half a unit
    np.testing.assert_allclose((reactions + applied).to_numpy(), 0.0, rtol=0, atol=tol)


def shed_applied_loads(m: Model) -> pd.DataFrame:
    """Total applied load (N) per combination, from the README's loads and the files' geometry."""
    el = m.elements
    xyz = m.nodes[["x", "y", "z"]]
    d = xyz.loc[el["end"]].to_numpy() - xyz.loc[el["start"]].to_numpy()
    y = xyz.loc[el["start"], "y"].to_numpy()
    mid_x = (xyz.loc[el["start"], "x"].to_numpy() + xyz.loc[el["end"], "x"].to_numpy()) / 2
    span_mid = (xyz["x"].min() + xyz["x"].max()) / 2
    rafter = (el["section"] == "RAF-360").to_numpy()
    column = (el["section"] == "COL-460").to_numpy()
    ends = (y == xyz["y"].min()) | (y == xyz["y"].max())
    width = np.where(ends, SHED_BAY / 2, SHED_BAY)  # tributary width of each element's frame
    length = el["length"].to_numpy()
    windward = mid_x < span_mid
    dead = np.where(
        rafter,
        (SHED_ROOF_DEAD * width + SHED_RAFTER_SELF) * length,
        (SHED_COLUMN_SELF + SHED_WALL_DEAD * width) * length,
    ).sum()
    live = (SHED_ROOF_LIVE * width * np.abs(d[:, 0]))[rafter].sum()  # per m² of plan
    q_w = SHED_WIND_Q * width
    wall = np.where(windward, SHED_WALL_CP["windward"], SHED_WALL_CP["leeward"])
    roof = np.where(windward, SHED_ROOF_CP["windward"], SHED_ROOF_CP["leeward"])
    # Suction p along the outward normal of a roof slope: over an element, p·(−dz, |dx|) on the
    # windward (rising) half and p·(+|dz|, |dx|) on the leeward half, i.e. p·(−dz, |dx|) on both.
    wind_x = (q_w * wall * length)[column].sum() + (q_w * roof * -d[:, 2])[rafter].sum()
    wind_z = (q_w * roof * np.abs(d[:, 0]))[rafter].sum()
    case = {"D": (0.0, -dead), "L": (0.0, -live), "W": (wind_x, wind_z)}
    rows = {
        name: [sum(f * case[c][i] for c, f in fac.items()) for i in (0, 1)]
        for name, fac in SHED_FACTORS.items()
    }
    return pd.DataFrame(rows, index=["Fx", "Fz"]).T


def platform_applied_loads(m: Model) -> pd.DataFrame:
    """Total applied load (N) per combination, from the README's loads and the files' geometry."""
    el = m.elements
    x = m.nodes.loc[el["start"], "x"].to_numpy()
    length = el["length"]
    girder = length[el["section"] == GIRDER].sum()
    secondary = el["section"] == SECONDARY
    columns = el["section"] == COLUMN
    tips = 2
    q1 = secondary.to_numpy() & np.isin(x, Q1_SECONDARY_X)
    dead = (
        GIRDER_DEAD * girder
        + SECONDARY_DEAD * length[secondary].sum()
        + COLUMN_DEAD * length[columns].sum()
        + TIP_DEAD * tips
    )
    live = {
        "Q1": SECONDARY_LIVE * length[q1].sum() + TIP_LIVE * tips,
        "Q2": SECONDARY_LIVE * length[secondary.to_numpy() & ~q1].sum(),
    }
    column_tops = columns.sum() // 2  # two elements per column
    rows = {
        name: [
            fac["H"] * NOTIONAL * column_tops,
            -(fac["G"] * dead + fac["Q1"] * live["Q1"] + fac["Q2"] * live["Q2"]),
        ]
        for name, fac in PLATFORM_FACTORS.items()
    }
    return pd.DataFrame(rows, index=["Fx", "Fz"]).T


@pytest.mark.parametrize("sample", SAMPLES)
def test_applied_loads_are_the_stated_loads(sample):
    """The totals file holds the README's loads, integrated over the files' geometry."""
    m = model(sample)
    expected = shed_applied_loads(m) if sample == SHED else platform_applied_loads(m)
    applied = totals(sample, "applied_loads.csv").loc[expected.index]
    assert (applied["Fy"] == 0.0).all()
    # Coordinates are written to 0.1 mm, so element lengths and slopes carry a relative error of
    # up to about 1e-4 / 1.5 m ≈ 7e-5; the analysis applied the loads on the same written nodes,
    # but with the roof pitch's exact sine and cosine where this uses dx and dz.
    np.testing.assert_allclose(
        applied[["Fx", "Fz"]].to_numpy(),
        expected[["Fx", "Fz"]].to_numpy(),
        rtol=1e-4,
        atol=UNIT[sample]["total"],
    )


@pytest.mark.parametrize("sample", SAMPLES)
def test_column_base_forces_balance_the_applied_loads(sample):
    """Equilibrium of the whole structure, from the internal forces at the column bases.

    Every column is drawn from its base upwards (READMEs). With N tension positive, the vertical
    reaction at a base is −N there. V = dM/ds in the local axis the moment sign refers to; the
    horizontal reaction is V along that axis (industrial_shed: the column's inside face, towards
    the middle of the span; plant_platform: +x, with the file's V of the opposite sign because
    its moments are).
    """
    m = model(sample)
    ends = at_ends(m)
    bases = list(m.supports["node"])
    applied = totals(sample, "applied_loads.csv")
    span_mid = (m.nodes["x"].min() + m.nodes["x"].max()) / 2
    rx = pd.Series(0.0, index=m.combinations)
    rz = pd.Series(0.0, index=m.combinations)
    meeting = incident(m)
    for node in bases:
        ((element, end),) = meeting[node]
        assert end == "start", f"column {element} is not drawn from its base upwards"
        here = ends.xs(element, level="element")
        x = m.nodes.loc[node, "x"]
        direction = np.sign(span_mid - x) if sample == SHED else -1.0
        rx += direction * here["V_start"].reindex(rx.index)
        rz += -here["N_start"].reindex(rz.index)
    # n rounded values summed, and the rounded total.
    tol = (len(bases) / 2 * UNIT[sample]["force"] + 0.5 * UNIT[sample]["total"]) * (1 + 1e-9)
    np.testing.assert_allclose(rx + applied["Fx"].reindex(rx.index), 0.0, atol=tol)
    np.testing.assert_allclose(rz + applied["Fz"].reindex(rz.index), 0.0, atol=tol)


@pytest.mark.parametrize("sample", SAMPLES)
def test_moment_is_zero_at_free_ends_pinned_bases_and_pinned_ends(sample):
    m = model(sample)
    ends = at_ends(m)
    meeting = incident(m)
    supported = set(m.supports["node"])
    section = m.elements["section"]
    free = [n for n, at in meeting.items() if len(at) == 1 and n not in supported]
    pins = pinned_bases(m)
    pinned_ends = [
        (e, end)
        for n, at in meeting.items()
        for e, end in at
        if section[e] in PINNED_SECTIONS[sample]
        and any(section[other] not in PINNED_SECTIONS[sample] for other, _ in at)
    ]
    counts = EXPECTED_COUNTS[sample]
    assert (len(free), len(pins), len(pinned_ends)) == (
        counts["free"],
        counts["pinned_bases"],
        counts["pinned_ends"],
    )
    places = [meeting[n][0] for n in free + pins] + pinned_ends
    tol = 0.5 * UNIT[sample]["M"] * (1.0 + 1e-9)  # a zero written to the file's last digit
    for element, end in places:
        m_end = moment_at(ends, element, end)
        assert np.abs(m_end).max() <= tol, (element, end, m_end.to_dict())


@pytest.mark.parametrize("sample", SAMPLES)
def test_moments_agree_at_interior_nodes_of_continuous_members(sample):
    """Joint equilibrium at a node of a straight, continuous member where nothing applies a moment.

    Such a node joins two collinear elements of one section and is not a support; any other
    element there is one whose connection is pinned (PINNED_SECTIONS).
    """
    m = model(sample)
    ends = at_ends(m)
    section = m.elements["section"]
    supported = set(m.supports["node"])
    checked = 0
    for node, at in incident(m).items():
        if node in supported:
            continue
        for (e1, end1), (e2, end2) in combinations(at, 2):
            others = [e for e, _ in at if e not in (e1, e2)]
            if section[e1] != section[e2] or any(
                section[o] not in PINNED_SECTIONS[sample] for o in others
            ):
                continue
            if away(m, e1, end1) @ away(m, e2, end2) > -math.cos(math.radians(0.5)):
                continue  # not collinear
            m1, m2 = moment_at(ends, e1, end1), moment_at(ends, e2, end2)
            np.testing.assert_allclose(
                m1, m2.reindex(m1.index), rtol=0, atol=UNIT[sample]["M"] * (1 + 1e-9)
            )
            checked += 1
    assert checked == EXPECTED_COUNTS[sample]["continuous"]


def test_shed_knee_and_apex_joints_are_in_equilibrium():
    """At a two-element joint with no applied moment, the end moments balance.

    Apex: both rafters use 'positive compresses the top flange', so their moments are equal.
    Knee: the column's moment is positive when it compresses the inside flange, the rafter's when
    it compresses the top (outside) flange, so the column's moment is minus the rafter's.
    """
    m = model(SHED)
    ends = at_ends(m)
    section = m.elements["section"]
    knees = apexes = 0
    for at in incident(m).values():
        if len(at) != 2:
            continue
        (e1, end1), (e2, end2) = at
        if away(m, e1, end1) @ away(m, e2, end2) < -math.cos(math.radians(0.5)):
            continue  # collinear: checked as a continuous member
        m1 = moment_at(ends, e1, end1)
        m2 = moment_at(ends, e2, end2).reindex(m1.index)
        if section[e1] == section[e2]:
            apexes += 1
            np.testing.assert_allclose(m1, m2, rtol=0, atol=UNIT[SHED]["M"] * (1 + 1e-9))
        else:
            knees += 1
            np.testing.assert_allclose(m1, -m2, rtol=0, atol=UNIT[SHED]["M"] * (1 + 1e-9))
    assert (knees, apexes) == (8, 4)


def secondary_beams(m: Model) -> dict[float, tuple[list[str], str, float]]:
    """Per secondary beam (by its x): its elements, its midspan node and its span [mm]."""
    el = m.elements[m.elements["section"] == SECONDARY]
    xyz = m.nodes
    out = {}
    for x in sorted(set(xyz.loc[el["start"], "x"])):
        mine = el[xyz.loc[el["start"], "x"].to_numpy() == x]
        nodes = xyz.loc[sorted(set(mine["start"]) | set(mine["end"]))]
        y_lo, y_hi = nodes["y"].min(), nodes["y"].max()
        mid = nodes.index[np.isclose(nodes["y"], (y_lo + y_hi) / 2)]
        out[float(x)] = (list(mine.index), str(mid[0]), float(y_hi - y_lo))
    return out


@pytest.mark.parametrize("combination", list(PLATFORM_FACTORS))
def test_simply_supported_secondary_beams_have_wl2_over_8_at_midspan(combination):
    """M_mid = wL²/8 for a simply supported beam under uniform load (common practice).

    The secondary beams are pinned to the girders at both ends (README), so they are statically
    determinate: the girders' deflection does not change their moments.
    """
    m = model(PLATFORM)
    ends = at_ends(m)
    fac = PLATFORM_FACTORS[combination]
    beams = secondary_beams(m)
    assert len(beams) == 4
    for x, (elements, mid, span) in beams.items():
        live = fac["Q1"] if x in Q1_SECONDARY_X else fac["Q2"]
        w = fac["G"] * SECONDARY_DEAD + live * SECONDARY_LIVE  # N/mm
        expected = w * span**2 / 8
        at_mid = [
            ends.loc[(e, combination), "M_start" if m.elements.loc[e, "start"] == mid else "M_end"]
            for e in elements
            if mid in (m.elements.loc[e, "start"], m.elements.loc[e, "end"])
        ]
        assert len(at_mid) == 2
        # The file's moments are whole N·mm: within half a unit of the analysis value.
        np.testing.assert_allclose(at_mid, expected, rtol=0, atol=0.5 * UNIT[PLATFORM]["M"] + 1e-6)


@pytest.mark.parametrize("combination", list(PLATFORM_FACTORS))
def test_cantilever_root_moment_is_statics(combination):
    """Root moment of a cantilever with tip load P and uniform load w over a: −(Pa + wa²/2).

    Common practice; hogging, so negative in the internal sign (positive compresses the top).
    """
    m = model(PLATFORM)
    ends = at_ends(m)
    fac = PLATFORM_FACTORS[combination]
    meeting = incident(m)
    tips = [n for n, at in meeting.items() if len(at) == 1 and n not in set(m.supports["node"])]
    assert len(tips) == 2
    p = fac["G"] * TIP_DEAD + fac["Q1"] * TIP_LIVE
    w = fac["G"] * GIRDER_DEAD
    columns = m.elements[m.elements["section"] == COLUMN]
    column_tops = set(columns["end"])
    for tip in tips:
        # Walk along the girder from the tip to the first column top: that node is the root.
        node, element, moments = tip, meeting[tip][0][0], None
        while node not in column_tops:
            row = m.elements.loc[element]
            at_far = "end" if row["start"] == node else "start"
            node = row[at_far]
            moments = ends.loc[(element, combination), f"M_{at_far}"]
            element = next(
                e
                for e, _ in meeting[node]
                if e != element and m.elements.loc[e, "section"] == GIRDER
            )
        a = float(
            np.linalg.norm(m.nodes.loc[node, ["x", "y", "z"]] - m.nodes.loc[tip, ["x", "y", "z"]])
        )
        assert a == pytest.approx(1500.0)
        expected = -(p * a + w * a**2 / 2)
        assert moments == pytest.approx(expected, abs=0.5 * UNIT[PLATFORM]["M"] + 1e-6)
