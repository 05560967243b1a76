"""The result files as a checking engineer reads them: order, encoding, digits, signs, flags."""

from __future__ import annotations

import json
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
    assert worst["utilization"] == round(top, 4)
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
