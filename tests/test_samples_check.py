"""Both sample models through the check command, with the governing segments their READMEs
predict from the structure (geometry and bracing by construction, moments from statics)."""

from __future__ import annotations

import pandas as pd
import pytest
from click.testing import CliRunner
from flangewise.postproc import exports
from flangewise.postproc.cli import main, sample_path

#: Exit status of each sample's check: the platform's cantilever tips are "verify length" (the
#: actual length taken as the effective length), so it is not shown to pass (status 1).
EXIT = {"industrial_shed": 0, "plant_platform": 1}


def _check(name: str, tmp_path_factory) -> dict[str, pd.DataFrame]:
    out = tmp_path_factory.mktemp(name)
    result = CliRunner().invoke(main, ["check", str(sample_path(name)), "--out", str(out)])
    assert result.exit_code == EXIT[name], result.output
    assert "competent engineer" in result.output
    return {
        f: pd.read_csv(out / f"{f}.csv", dtype={"from node": str, "to node": str})
        for f in ("segments", "governing", "flagged")
    }


@pytest.fixture(scope="module")
def shed(tmp_path_factory):
    return _check("industrial_shed", tmp_path_factory)


@pytest.fixture(scope="module")
def platform(tmp_path_factory):
    return _check("plant_platform", tmp_path_factory)


def _member_of(seg: pd.DataFrame, node_a: str, node_b: str) -> str:
    hit = seg[(seg["from node"] == node_a) & (seg["to node"] == node_b)]
    assert len(hit), (node_a, node_b)
    return str(hit["member"].iloc[0])


@pytest.mark.parametrize("frame", ["B", "C"])
def test_shed_gravity_governs_at_the_knee_on_the_bottom_flange(shed, frame):
    seg = shed["segments"]
    member = _member_of(seg, f"{frame}04", f"{frame}06")
    uls1 = seg[(seg["member"] == member) & (seg["combination"] == "ULS1 1.2D+1.6L")]
    checked = uls1[uls1["status"].isin(list(exports.CHECKED))]
    top = checked.loc[checked["utilization"].idxmax()]
    # Knee hogging compresses the bottom flange from the knee to the first fly brace (06).
    assert (top["flange"], top["from node"], top["to node"]) == (
        "bottom",
        f"{frame}04",
        f"{frame}06",
    )
    # Purlins every 1.515 m hold the top flange: under gravity the top-flange segments near the
    # knee see no compression at all.
    knee_top = uls1[(uls1["flange"] == "top") & (uls1["from node"] == f"{frame}04")]
    assert (knee_top["status"] == "not critical").all()


def test_shed_uplift_compresses_the_bottom_flange_between_fly_braces(shed):
    seg = shed["segments"]
    uplift = seg[
        (seg["combination"] == "ULS2 0.9D+1.3W")
        & (seg["from node"] == "B06")
        & (seg["to node"] == "B11")
    ]
    assert len(uplift) == 1
    row = uplift.iloc[0]
    assert row["flange"] == "bottom"
    # x = 3.0 to 10.5 m on an 8° slope: 7.5 / cos 8° = 7.574 m (geometry).
    assert row["Lu [m]"] == pytest.approx(7.5 / 0.990268, rel=1e-3)
    assert row["status"] in exports.CHECKED


def test_platform_girder_without_kickers_governs_over_the_middle_span(platform):
    gov = platform["governing"]
    seg = platform["segments"]
    girder1 = _member_of(seg, "105", "110")
    row = gov[gov["member"] == girder1].iloc[0]
    # Only the columns (x = 6.0 and 13.5 m) hold girder 1's bottom flange: one 7.5 m segment.
    assert (row["flange"], row["from node"], row["to node"]) == ("bottom", "105", "110")
    assert row["Lu [m]"] == pytest.approx(7.5, rel=1e-4)
    assert row["combination"] == "K1 1,2G+1,6Q"
    # Girder 2 has kickers at x = 7.5 and 12.0 m: its bottom flange there is cut shorter.
    girder2 = _member_of(seg, "205", "206")
    g2 = seg[(seg["member"] == girder2) & (seg["flange"] == "bottom")]
    assert g2["Lu [m]"].max() < 7.5


def test_platform_inside_peak_rejects_the_end_moment_formula(platform):
    flagged = platform["flagged"]
    hit = flagged[
        (flagged["from node"] == "106")
        & (flagged["to node"] == "109")
        & (flagged["combination"] == "K1 1,2G+1,6Q")
    ]
    assert len(hit) == 1
    row = hit.iloc[0]
    assert "peak-inside" in row["flags"]
    # README: ends 19.4 and 20.3 kN·m, 38.1 inside (the girder's own load between the braces).
    assert row["|M| inside peak [kN·m]"] > max(row[exports.M_START], row[exports.M_END])
    assert row["ω2 end-moment"] == 1.0
    assert row["factor used"] == 1.0


def test_platform_cantilever_to_the_free_tip_is_flagged(platform):
    flagged = platform["flagged"]
    tip = flagged[flagged["to node"] == "116"]
    assert len(tip)
    assert tip["flags"].str.contains("cantilever").all()
    assert (tip["factor used"] == 1.0).all()
    # A cantilever at or below 1.0 never reads "ok": its effective length is still to verify.
    assert set(tip["status"]) <= {"verify length", "over"}
    assert "verify length" in set(tip["status"])
    seg = platform["segments"]
    assert not ((seg["status"] == "ok") & seg["flags"].str.contains("cantilever", na=False)).any()
