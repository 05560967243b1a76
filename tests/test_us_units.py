"""A model given in US customary units against its SI twin: every output in the engineer's units.

The twin is the demo shed with every number converted to ft, in, kip, kip·ft and ksi by the
exact definitions of NIST SP 811 (2008), Appendix B (1 ft = 0.3048 m, 1 in = 25.4 mm,
1 kip = 4.4482216152605 kN): the same structure, so the same results once converted back.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from flangewise.postproc.cli import main, sample_path

FT = 0.3048  # m per ft, NIST SP 811 App. B (exact)
IN = 25.4  # mm per in, NIST SP 811 App. B (exact)
KIP = 4.4482216152605  # kN per kip, NIST SP 811 App. B
KIP_FT = KIP * FT  # kN·m per kip·ft
KSI = KIP / IN**2 * 1000.0  # MPa per ksi (kip/in² in N/mm²)

#: The result CSVs hold 6 significant figures; a value converted twice may differ in the last one.
REL = 2e-5

SETTINGS = """
[units]
length = "ft"
force = "kip"
moment = "kip*ft"
section = "in"
stress = "ksi"
"""


def _us_twin(tmp_path: Path) -> Path:
    """The shed with every number in US customary units and a settings file saying so."""
    source = sample_path("industrial_shed")
    folder = tmp_path / "shed_us"
    shutil.copytree(source, folder)
    nodes = pd.read_csv(source / "nodes.csv", dtype={"id": str})
    nodes[["x", "y", "z"]] = nodes[["x", "y", "z"]] / FT
    nodes.to_csv(folder / "nodes.csv", index=False, float_format="%.17g")
    sections = pd.read_csv(source / "sections.csv", dtype={"name": str})
    sections[["d", "b", "tf", "tw", "r"]] = sections[["d", "b", "tf", "tw", "r"]] / IN
    sections["fy"] = sections["fy"] / KSI
    sections.to_csv(folder / "sections.csv", index=False, float_format="%.17g")
    forces = pd.read_csv(source / "forces.csv", dtype={"element": str, "combination": str})
    forces["position"] = forces["position"] / FT
    forces["M"] = forces["M"] / KIP_FT
    forces[["N", "V"]] = forces[["N", "V"]] / KIP
    forces.to_csv(folder / "forces.csv", index=False, float_format="%.17g")
    (folder / "flangewise.toml").write_text(SETTINGS, encoding="utf-8")
    return folder


def _check(folder: Path, out: Path, *args: str) -> tuple[pd.DataFrame, dict, str]:
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(out), *args])
    assert result.exit_code == 0, result.output
    seg = pd.read_csv(out / "segments.csv", dtype={"from node": str, "to node": str})
    info = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    return seg, info, result.output


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("us")
    twin = _us_twin(tmp)
    return {
        "si": _check(sample_path("industrial_shed"), tmp / "si"),
        "us": _check(twin, tmp / "us"),
        "us as si": _check(twin, tmp / "us_si", "--units", "si"),
    }


#: Each SI column, its US twin and the factor from the US value to the SI one.
PAIRS = [
    ("start [m]", "start [ft]", FT),
    ("Lu [m]", "Lu [ft]", FT),
    ("inside peak at [m]", "inside peak at [ft]", FT),
    ("|M| max [kN·m]", "|M| max [kip·ft]", KIP_FT),
    ("|M| inside peak [kN·m]", "|M| inside peak [kip·ft]", KIP_FT),
    ("Mcr [kN·m]", "Mcr [kip·ft]", KIP_FT),
    ("Mcr exact [kN·m]", "Mcr exact [kip·ft]", KIP_FT),
    ("Mp or My [kN·m]", "Mp or My [kip·ft]", KIP_FT),
    ("Mr [kN·m]", "Mr [kip·ft]", KIP_FT),
    ("demand [kN·m]", "demand [kip·ft]", KIP_FT),
    ("utilization", "utilization", 1.0),
    ("κ", "κ", 1.0),
    ("exact factor", "exact factor", 1.0),
]


def test_a_us_model_is_answered_in_us_units_everywhere(runs):
    seg, info, text = runs["us"]
    headers = " ".join(seg.columns)
    assert "kip·ft" in headers and "[ft]" in headers
    assert "kN" not in headers and "[m]" not in headers
    assert info["output units"] == "us"
    assert "E [ksi]" in info and "Mr [kip·ft]" in info["worst"]
    # E = 200 000 MPa = 29 008 ksi (NIST SP 811 App. B factor above).
    assert info["E [ksi]"] == pytest.approx(200_000.0 / KSI, rel=REL)
    assert "kip·ft" in text and "kN" not in text


@pytest.mark.parametrize(("si", "us", "factor"), PAIRS)
def test_us_results_equal_the_si_twin_after_conversion(runs, si, us, factor):
    a = runs["si"][0]
    b = runs["us"][0]
    assert list(a["segment"]) == list(b["segment"])
    assert list(a["status"]) == list(b["status"])
    np.testing.assert_allclose(b[us].to_numpy() * factor, a[si].to_numpy(), rtol=REL, atol=1e-9)


def test_the_us_model_shown_in_si_equals_the_si_model(runs):
    a, info_a, _ = runs["si"]
    b, info_b, _ = runs["us as si"]
    assert list(a.columns) == list(b.columns)
    numbers = [c for c in a.columns if pd.api.types.is_float_dtype(a[c])]
    np.testing.assert_allclose(b[numbers], a[numbers], rtol=REL, atol=1e-9)
    assert info_a["worst"]["segment"] == info_b["worst"]["segment"]


def test_the_setting_chooses_the_units_and_the_option_overrides_it(tmp_path):
    folder = tmp_path / "shed"
    shutil.copytree(sample_path("industrial_shed"), folder)
    (folder / "flangewise.toml").write_text('[output]\nunits = "us"\n', encoding="utf-8")
    seg, info, _ = _check(folder, tmp_path / "a")
    assert "Mr [kip·ft]" in seg.columns and info["output units"] == "us"
    seg, info, _ = _check(folder, tmp_path / "b", "--units", "si")
    assert "Mr [kN·m]" in seg.columns and info["output units"] == "si"


def test_an_unknown_output_unit_system_is_refused(tmp_path):
    folder = tmp_path / "shed"
    shutil.copytree(sample_path("industrial_shed"), folder)
    (folder / "flangewise.toml").write_text('[output]\nunits = "imperial"\n', encoding="utf-8")
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "o")])
    assert result.exit_code == 2
    assert "output.units" in result.output and "imperial" in result.output


def test_members_and_summary_follow_the_units(tmp_path):
    twin = _us_twin(tmp_path)
    out = CliRunner().invoke(main, ["members", str(twin)])
    assert out.exit_code == 0, out.output
    assert " ft" in out.output and " m," not in out.output
    out = CliRunner().invoke(main, ["summary", str(twin)])
    assert out.exit_code == 0, out.output
    assert "[kip·ft]" in out.output and "kN·m" not in out.output


def test_the_report_and_explain_of_a_us_model_are_in_us_units(tmp_path):
    twin = _us_twin(tmp_path)
    out = tmp_path / "o"
    result = CliRunner().invoke(main, ["check", str(twin), "--out", str(out), "--report"])
    assert result.exit_code == 0, result.output
    report = (out / "report.html").read_text(encoding="utf-8")
    assert "kip·ft" in report and "kN·m" not in report
    worst = json.loads((out / "summary.json").read_text(encoding="utf-8"))["worst"]
    text = CliRunner().invoke(main, ["explain", str(twin), worst["segment"], worst["combination"]])
    assert text.exit_code == 0, text.output
    assert "kip·ft" in text.output and "kN·m" not in text.output
    assert f"{worst['utilization']:.3f}" in text.output
