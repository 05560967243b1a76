"""The result files as a checking engineer reads them: order, encoding, digits, signs, flags."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
from click.testing import CliRunner
from flangewise.postproc import exports
from flangewise.postproc.cli import main, sample_path


def _check(model: Path, out: Path) -> tuple[int, str]:
    result = CliRunner().invoke(main, ["check", str(model), "--out", str(out)])
    return result.exit_code, result.output


def test_natural_rank_puts_numbers_in_number_order():
    # common practice: "natural" order of names with numbers in them, as a person sorts them.
    names = ["M10", "M2", "M4-top-10", "M4-top-2", "M4", "M4-bottom-1", "B1", "M07", "M7"]
    ranked = [names[i] for i in np.argsort(exports.natural_rank(names))]
    assert ranked == ["B1", "M2", "M4", "M4-bottom-1", "M4-top-2", "M4-top-10", "M07", "M7", "M10"]


def test_governing_members_and_worst_in_natural_order(tmp_path):
    code, output = _check(sample_path("plant_platform"), tmp_path / "r")
    assert code in (0, 1), output
    gov = pd.read_csv(tmp_path / "r" / "governing.csv", encoding="utf-8-sig")
    members = gov["member"].tolist()
    assert members.index("M2") < members.index("M10") < members.index("M14")
    assert members == sorted(members, key=lambda m: int(m[1:]))
    info = json.loads((tmp_path / "r" / "summary.json").read_text(encoding="utf-8"))
    worst = info["worst"]
    seg = pd.read_csv(tmp_path / "r" / "segments.csv", encoding="utf-8-sig")
    top = seg["utilization"].max()
    assert worst["utilization"] == top  # both to 6 significant figures
    # The worst pair is the governing row of its member, and the terminal names the same one.
    row = gov[gov["member"] == worst["member"]].iloc[0]
    assert (row["segment"], row["combination"]) == (worst["segment"], worst["combination"])
    assert f"member {worst['member']}, segment {worst['segment']}" in output
    assert "natural order" in worst["chosen by"]


def test_ties_go_to_the_member_first_in_natural_order():
    seg = pd.DataFrame(
        {
            "member": pd.Categorical(["M10", "M2", "M2", "M9"]),
            "segment": pd.Categorical(["M10-top-1", "M2-top-10", "M2-top-2", "M9-top-1"]),
            "combination": pd.Categorical(["C1", "C1", "C1", "C1"]),
            "utilization": [0.8, 0.8, 0.8, 0.5],
            "status": ["ok", "ok", "ok", "ok"],
        }
    )
    assert exports.worst_order(seg).tolist() == [2, 1, 0, 3]
    gov = exports.governing_table(seg)
    assert gov["segment"].astype(str).tolist() == ["M2-top-2", "M9-top-1", "M10-top-1"]


def test_result_csvs_start_with_a_byte_order_mark_and_read_back(tmp_path):
    code, output = _check(sample_path("plant_platform"), tmp_path / "r")
    assert code in (0, 1), output
    for name in ("segments.csv", "governing.csv", "flagged.csv"):
        data = (tmp_path / "r" / name).read_bytes()
        assert data.startswith(b"\xef\xbb\xbf"), name
        assert data.count(b"\xef\xbb\xbf") == 1, name
        table = pd.read_csv(tmp_path / "r" / name, encoding="utf-8-sig")
        assert table.columns[0] == "member"
        assert "κ" in table.columns and "Mr [kN·m]" in table.columns


def test_numbers_keep_six_significant_figures_not_four_decimals():
    values = np.array([0.001857123, -0.0000123456789, 123456789.0, 2.0 / 3.0, -0.0, np.nan])
    rounded = exports.significant(values)
    # common practice: rounding to 6 significant figures.
    assert rounded[0] == 0.00185712
    assert rounded[1] == -0.0000123457
    assert rounded[2] == 123457000.0
    assert rounded[3] == 0.666667
    assert str(rounded[4]) == "0.0"
    assert np.isnan(rounded[5])


def test_csv_in_many_chunks_is_one_file_with_one_header(tmp_path):
    n = 25
    table = pd.DataFrame(
        {"name": pd.Categorical([f"M{i}" for i in range(n)]), "ω2": 0.001857123 * np.arange(n)}
    )
    exports.write_csv(tmp_path / "a.csv", table, chunk=4)
    exports.write_csv(tmp_path / "b.csv", table, chunk=1000)
    data = (tmp_path / "a.csv").read_bytes()
    assert data == (tmp_path / "b.csv").read_bytes()
    assert data.startswith(b'\xef\xbb\xbf"name","\xcf\x892"\n"M0",0\n"M1",0.00185712\n')
    back = pd.read_csv(tmp_path / "a.csv", encoding="utf-8-sig")
    assert back["name"].tolist() == table["name"].tolist()
    np.testing.assert_allclose(back["ω2"], table["ω2"], rtol=5e-6)


def test_signed_moments_say_their_sign_in_the_header(tmp_path):
    code, output = _check(sample_path("two_span_beam"), tmp_path / "r")
    assert code == 0, output
    seg = pd.read_csv(tmp_path / "r" / "segments.csv", encoding="utf-8-sig")
    signed = "M start [kN·m, + compresses segment's flange, top if either]"
    assert signed in seg.columns
    assert "M end [kN·m, + compresses segment's flange, top if either]" in seg.columns
    assert "M start [kN·m]" not in seg.columns
    # Every other moment column is a size and says |M|.
    moments = [c for c in seg.columns if "kN·m" in c and c.startswith("M") and "|" not in c]
    assert sorted(moments) == sorted(
        [
            signed,
            "M end [kN·m, + compresses segment's flange, top if either]",
            "Mcr [kN·m]",
            "Mcr exact [kN·m]",
            "Mp or My [kN·m]",
            "Mr [kN·m]",
            "Mr exact [kN·m]",
        ]
    )
    # A checked pair's demand is the larger of its compressing moments: a signed end moment above
    # it would contradict the stated sign.
    checked = seg[seg["status"].isin(list(exports.CHECKED))]
    assert (checked[signed] <= checked["demand [kN·m]"] + 1e-6).all()


def _scaled_axial(tmp_path: Path, factor: float) -> Path:
    folder = tmp_path / "shed"
    shutil.copytree(sample_path("industrial_shed"), folder)
    forces = pd.read_csv(folder / "forces.csv", dtype={"combination": str})
    forces["N"] = forces["N"] * factor
    forces.to_csv(folder / "forces.csv", index=False)
    return folder


def test_axial_force_above_five_percent_of_squash_load_is_flagged(tmp_path):
    code, output = _check(sample_path("industrial_shed"), tmp_path / "a")
    assert code == 0, output
    plain = pd.read_csv(tmp_path / "a" / "segments.csv", encoding="utf-8-sig")
    ratio = plain["|N|/(A·fy)"]
    assert ratio.notna().all() and (ratio > 0.0).all()
    assert ratio.max() < 0.05  # the sample's rafters and posts carry little axial force
    assert not plain["flags"].fillna("").str.contains("axial-force").any()

    code, output = _check(_scaled_axial(tmp_path, 5.0), tmp_path / "b")
    seg = pd.read_csv(tmp_path / "b" / "segments.csv", encoding="utf-8-sig")
    # |N|/(A·fy) is linear in N (common practice: the squash load A·fy does not depend on N).
    np.testing.assert_allclose(seg["|N|/(A·fy)"], 5.0 * ratio, rtol=1e-4)
    checked = seg["status"].isin(list(exports.CHECKED))
    flagged = seg["flags"].fillna("").str.contains("axial-force")
    assert flagged.any() and (~flagged).any()
    assert (flagged == (checked & (seg["|N|/(A·fy)"] > 0.05))).all()
    assert "axial-force" in output
    info = json.loads((tmp_path / "b" / "summary.json").read_text(encoding="utf-8"))
    assert info["flags"]["axial-force"] == int(flagged.sum())
    assert "not checked" in info["flag meanings"]["axial-force"].lower()


def test_no_axial_column_means_no_ratio_and_no_flag(tmp_path):
    code, output = _check(sample_path("two_span_beam"), tmp_path / "r")
    assert code == 0, output
    seg = pd.read_csv(tmp_path / "r" / "segments.csv", encoding="utf-8-sig")
    assert seg["|N|/(A·fy)"].isna().all()
    assert not seg["flags"].fillna("").str.contains("axial-force").any()


def test_explain_never_prints_a_negative_zero():
    # A moment rounded to zero prints without a minus sign (common practice in calculations);
    # a real negative number keeps it.
    from flangewise.postproc.derivation import no_negative_zero

    assert no_negative_zero("M at start = -0.00 kN·m, M at end = -12.50 kN·m") == (
        "M at start = 0.00 kN·m, M at end = -12.50 kN·m"
    )
    assert no_negative_zero("κ = −0.0; x = -0.05 m") == "κ = 0.0; x = -0.05 m"


def test_report_names_the_same_worst_pair_as_summary_json(tmp_path):
    # The demo shed has two mirror members with equal utilization (M4 and M6): the stated
    # tie-break (natural member order) must pick the same one in the report and summary.json.
    import json
    import re

    from flangewise.postproc.cli import sample_path

    out = tmp_path / "out"
    result = CliRunner().invoke(
        main, ["check", str(sample_path("industrial_shed")), "--out", str(out), "--report"]
    )
    assert result.exit_code == 0, result.output
    worst = json.loads((out / "summary.json").read_text(encoding="utf-8"))["worst"]
    html = (out / "report.html").read_text(encoding="utf-8")
    table = html[html.index("Members nearest failure") :]
    first = re.search(r"<td>(M\d+)</td>\s*<td>([^<]+)</td>", table)
    assert first is not None
    assert (first.group(1), first.group(2)) == (worst["member"], worst["segment"])
