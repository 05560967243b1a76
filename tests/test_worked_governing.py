"""A governing segment of the shed sample, worked by hand from the exported forces.

Frame B's left rafter (member from knee B04 to apex B12), bottom flange, load combination
ULS1 1.2D+1.6L: the segment from the knee to fly brace B06. Everything expected here is computed
in this file from the sample's CSV files and the published equations, not taken from the tool:

* section properties of the welded RAF-360 from its plates (r = 0): the plate formulas for a
  doubly symmetric I-section (Timoshenko & Gere, Theory of Elastic Stability, 2nd ed. (1961),
  ch. 6, from memory: Cw = Iy·h0²/4; J = Σ b·t³/3; common practice for A, I and Z of plates);
* κ, ω2, Mcr and Mr from SANS 10162-1:2011, cl. 13.6(a) (from memory, as REFERENCES.md records).
"""

from __future__ import annotations

import math

import pandas as pd
import pytest
from click.testing import CliRunner
from flangewise.postproc import exports
from flangewise.postproc.cli import main, sample_path

SAMPLE = sample_path("industrial_shed")
COMBO = "ULS1 1.2D+1.6L"
E, G, PHI = 200_000.0, 77_000.0, 0.9  # MPa, MPa, -: SANS 10162-1:2011 defaults (from memory)

#: Results are written to 4 decimals; hand values carry no other error.
REL = 1e-3


@pytest.fixture(scope="module")
def row(tmp_path_factory) -> pd.Series:
    out = tmp_path_factory.mktemp("shed")
    result = CliRunner().invoke(main, ["check", str(SAMPLE), "--out", str(out)])
    assert result.exit_code == 0, result.output
    seg = pd.read_csv(out / "segments.csv")
    hit = seg[
        (seg["from node"] == "B04")
        & (seg["to node"] == "B06")
        & (seg["flange"] == "bottom")
        & (seg["combination"] == COMBO)
    ]
    assert len(hit) == 1
    return hit.iloc[0]


def _forces() -> pd.DataFrame:
    f = pd.read_csv(SAMPLE / "forces.csv")
    return f[f["combination"] == COMBO]


def test_positions_and_length(row):
    nodes = pd.read_csv(SAMPLE / "nodes.csv").set_index("id")
    a, b = nodes.loc["B04"], nodes.loc["B06"]
    # Along the rafter slope: √(Δx² + Δz²) = √(3.0² + 0.4216²) m.
    length = math.hypot(b["x"] - a["x"], b["z"] - a["z"])
    assert row["start [m]"] == pytest.approx(0.0, abs=1e-4)
    assert row["end [m]"] == pytest.approx(length, rel=REL)
    assert row["Lu [m]"] == pytest.approx(length, rel=REL)


def test_end_moments_kappa_and_omega2(row):
    f = _forces()
    # Knee end: B-R01 at position 0 (drawn from B04); brace end: B-R02 at its far end (B06).
    m_knee = f[(f["element"] == "B-R01") & (f["position"] == 0.0)]["M"].item()
    r02 = f[f["element"] == "B-R02"]
    m_brace = r02.loc[r02["position"].idxmax(), "M"]
    # Both hogging (negative = bottom flange in compression); the tool reports moments as
    # compression of the segment's own flange, so the signs flip.
    assert row[exports.M_START] == pytest.approx(-m_knee, rel=REL)
    assert row[exports.M_END] == pytest.approx(-m_brace, rel=REL)
    # Same sign at both ends: single curvature, κ negative (cl. 13.6(a)).
    kappa = -abs(m_brace) / abs(m_knee)
    assert row["κ"] == pytest.approx(kappa, abs=1e-4)
    # No station inside exceeds the knee moment (the diagram falls away from the knee), so the
    # end-moment formula applies: ω2 = 1.75 + 1.05κ + 0.3κ² ≤ 2.5.
    inside = pd.concat([f[f["element"] == "B-R01"], r02])["M"].abs()
    assert inside.max() == pytest.approx(abs(m_knee))
    omega2 = min(1.75 + 1.05 * kappa + 0.3 * kappa**2, 2.5)
    assert row["ω2 end-moment"] == pytest.approx(omega2, abs=1e-4)
    assert row["factor used"] == pytest.approx(omega2, abs=1e-4)
    assert pd.isna(row["flags"]) or row["flags"] == ""


def test_mcr_mr_and_utilization(row):
    d, b, tf, tw, fy = 360.0, 170.0, 10.0, 6.0, 355.0  # sections.csv, RAF-360 (welded, r = 0)
    h = d - 2 * tf
    iy = 2 * tf * b**3 / 12 + h * tw**3 / 12  # plates about the web axis
    j = (2 * b * tf**3 + h * tw**3) / 3  # Σ b·t³/3
    cw = iy * (d - tf) ** 2 / 4  # Iy·h0²/4
    zx = b * tf * (d - tf) + tw * h**2 / 4  # plastic modulus of plates
    mp = zx * fy  # class 2: b/2tf = 8.5 ≤ 170/√355 = 9.02; h/w = 56.7 ≤ 1100/√355 = 58.4
    assert row["class"] == 2
    assert row["Mp or My [kN·m]"] == pytest.approx(mp / 1e6, rel=REL)

    f = _forces()
    m_knee = abs(f[(f["element"] == "B-R01") & (f["position"] == 0.0)]["M"].item())
    r02 = f[f["element"] == "B-R02"]
    kappa = -abs(r02.loc[r02["position"].idxmax(), "M"]) / m_knee
    omega2 = 1.75 + 1.05 * kappa + 0.3 * kappa**2
    length = row["Lu [m]"] * 1000.0
    mcr = (omega2 * math.pi / length) * math.sqrt(
        E * iy * G * j + (math.pi * E / length) ** 2 * iy * cw
    )
    assert row["Mcr [kN·m]"] == pytest.approx(mcr / 1e6, rel=REL)
    # Mcr > 0.67·Mp: inelastic branch, Mr = 1.15·φ·Mp·(1 − 0.28·Mp/Mcr) ≤ φ·Mp.
    assert mcr > 0.67 * mp
    mr = min(1.15 * PHI * mp * (1 - 0.28 * mp / mcr), PHI * mp)
    assert row["Mr [kN·m]"] == pytest.approx(mr / 1e6, rel=REL)
    assert row["demand [kN·m]"] == pytest.approx(m_knee, rel=REL)
    assert row["utilization"] == pytest.approx(m_knee * 1e6 / mr, rel=REL)
