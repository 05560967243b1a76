"""The full result table as CSV or Parquet, and flagged.csv limited to flags that act.

The two formats carry the same table: Parquet at full precision, CSV to 6 significant figures
(common practice: the CSV's stated precision), so they are compared to that precision.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
from click.testing import CliRunner
from flangewise.postproc import exports, full_table
from flangewise.postproc.cli import main, sample_path
from flangewise.postproc.shown_units import SI, US

SHED = sample_path("industrial_shed")

#: 6 significant figures in the CSV: half a unit in the 6th figure, relative.
REL = 5e-6


def _check(out: Path, *args: str, model: Path = SHED) -> list[str]:
    result = CliRunner().invoke(main, ["check", str(model), "--out", str(out), *args])
    assert result.exit_code == 0, result.output
    return sorted(p.name for p in out.iterdir())


def _csv(path: Path) -> pd.DataFrame:
    return pd.read_csv(path, dtype={"from node": str, "to node": str}, keep_default_na=False)


def test_a_small_model_gets_its_full_table_as_csv_only(tmp_path):
    names = _check(tmp_path / "o")
    assert "segments.csv" in names and "segments.parquet" not in names


def test_parquet_reads_back_equal_to_the_csv(tmp_path, monkeypatch):
    monkeypatch.setattr(full_table, "ROW_GROUP", 50)  # the shed's 192 rows in 4 row groups
    names = _check(tmp_path / "o", "--full-table", "both")
    assert {"segments.csv", "segments.parquet"} <= set(names)
    csv = _csv(tmp_path / "o" / "segments.csv")
    par = pd.read_parquet(tmp_path / "o" / "segments.parquet")
    assert list(par.columns) == list(csv.columns)
    assert len(par) == len(csv)
    assert pq.ParquetFile(tmp_path / "o" / "segments.parquet").num_row_groups == 4
    for column in csv.columns:
        if pd.api.types.is_float_dtype(par[column]):
            a = par[column].to_numpy(dtype=float)
            b = pd.to_numeric(csv[column].replace("", np.nan)).to_numpy(dtype=float)
            np.testing.assert_allclose(a, b, rtol=REL, atol=1e-12, err_msg=column)
        elif pd.api.types.is_integer_dtype(par[column]):
            assert (par[column].to_numpy() == csv[column].to_numpy()).all(), column
        else:
            assert list(par[column].astype(str).replace("nan", "")) == list(
                csv[column].astype(str)
            ), column


def test_parquet_columns_carry_their_units_and_the_run_its_notes(tmp_path):
    _check(tmp_path / "o", "--full-table", "parquet", "--units", "us")
    schema = pq.read_schema(tmp_path / "o" / "segments.parquet")
    units = {f.name: f.metadata[b"unit"].decode() for f in schema}
    assert units["Mr [kip·ft]"] == "kip·ft"
    assert units["Lu [ft]"] == "ft"
    assert units[exports.m_start_header(US)] == "kip·ft"
    assert units["utilization"] == ""
    meta = {
        k.decode(): v.decode() for k, v in schema.metadata.items() if not k.startswith(b"pandas")
    }
    assert "competent engineer" in meta["caution"]
    assert "US customary" in meta["units"]
    assert exports.SIGN in meta["sign"]


def test_auto_switches_to_parquet_above_the_row_limit(tmp_path, monkeypatch):
    monkeypatch.setattr(full_table, "CSV_ROWS", 10)
    names = _check(tmp_path / "o")
    assert "segments.parquet" in names and "segments.csv" not in names
    assert {"governing.csv", "flagged.csv", "summary.json"} <= set(names)
    # The next, smaller run takes the earlier run's Parquet file away: one run's files only.
    monkeypatch.setattr(full_table, "CSV_ROWS", 100_000)
    names = _check(tmp_path / "o")
    assert "segments.parquet" not in names and "segments.csv" in names


def test_the_setting_chooses_the_format_and_a_bad_value_is_refused(tmp_path):
    folder = tmp_path / "shed"
    shutil.copytree(SHED, folder)
    (folder / "flangewise.toml").write_text('[output]\nfull_table = "parquet"\n', encoding="utf-8")
    assert "segments.parquet" in _check(tmp_path / "a", model=folder)
    (folder / "flangewise.toml").write_text('[output]\nfull_table = "xlsx"\n', encoding="utf-8")
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(tmp_path / "b")])
    assert result.exit_code == 2
    assert "output.full_table" in result.output and "xlsx" in result.output


def test_flagged_csv_holds_exactly_the_rows_with_a_flag_that_acts(tmp_path):
    _check(tmp_path / "o")
    # As text: the rows must be the same rows, cell for cell as written.
    seg = pd.read_csv(tmp_path / "o" / "segments.csv", dtype=str, keep_default_na=False)
    flagged = pd.read_csv(tmp_path / "o" / "flagged.csv", dtype=str, keep_default_na=False)
    acting = seg["flags"].str.split().apply(lambda f: any(n not in exports.INFORMATIVE for n in f))
    assert acting.any() and (~acting & (seg["flags"] != "")).any()  # both kinds in the shed
    expected = seg[acting].reset_index(drop=True)
    pd.testing.assert_frame_equal(flagged, expected)
    info = json.loads((tmp_path / "o" / "summary.json").read_text(encoding="utf-8"))
    # The counts still cover every flag, informative ones included.
    assert info["flags"]["sign-change"] == int(seg["flags"].str.contains("sign-change").sum())


def test_a_csv_longer_than_a_spreadsheet_says_so(tmp_path, monkeypatch):
    # A common spreadsheet shows 1 048 576 rows, the header included (common practice).
    monkeypatch.setattr("flangewise.postproc.cli.SPREADSHEET_ROWS", 10)
    result = CliRunner().invoke(
        main, ["check", str(SHED), "--out", str(tmp_path / "o"), "--full-table", "csv"]
    )
    assert result.exit_code == 0, result.output
    assert "a common spreadsheet shows only the first 10" in result.output


def test_a_parquet_run_keeps_flagged_csv_to_the_reading_columns(tmp_path):
    _check(tmp_path / "p", "--full-table", "parquet")
    _check(tmp_path / "c")
    narrow = _csv(tmp_path / "p" / "flagged.csv")
    wide = _csv(tmp_path / "c" / "flagged.csv")
    assert list(narrow.columns) == exports.reading_columns(SI)
    pd.testing.assert_frame_equal(narrow, wide[list(narrow.columns)])
