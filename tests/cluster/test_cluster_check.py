"""``check --cluster``: the plain check's results, partition by partition on Dask.

The sample models are checked twice from the same forces folder (one folder per load
combination, made by ``flangewise partition``): plainly, and on a local cluster of two worker
processes shared by the tests of this module. The result files must be identical (summary.json
except the record of how the run was made), and so must the full table, read back and sorted.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner
from flangewise.postproc import cluster
from flangewise.postproc.cli import main

pytest.importorskip("distributed")

SAMPLES = ("industrial_shed", "plant_platform", "two_span_beam", "rolled_floor")


def check(model: Path, out: Path, *extra: str):
    return CliRunner().invoke(
        main, ["check", str(model), "--out", str(out), "--exit-zero", *[str(e) for e in extra]]
    )


def summary(folder: Path) -> dict:
    """summary.json without what says how the run was made (its command line, the cluster)."""
    info = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    info["provenance"].pop("command line")
    info["provenance"].pop("cluster", None)
    return info


def full_table(path: Path) -> pd.DataFrame:
    """A full table read back (a file or a folder of parts), names as text, sorted by pair."""
    table = pq.read_table(path).to_pandas()
    for column in table.columns:
        if isinstance(table[column].dtype, pd.CategoricalDtype):
            table[column] = table[column].astype(object)
    return table.sort_values(["combination", "segment"], kind="stable").reset_index(drop=True)


def assert_same_results(plain: Path, on_cluster: Path) -> None:
    for name in ("governing.csv", "flagged.csv"):
        assert (plain / name).read_bytes() == (on_cluster / name).read_bytes(), name
    assert summary(plain) == summary(on_cluster)
    mine = full_table(plain / "segments.parquet")
    theirs = full_table(on_cluster / "segments.parquet")
    assert list(mine.columns) == list(theirs.columns)
    pd.testing.assert_frame_equal(mine, theirs, check_dtype=False, check_exact=True)


@pytest.mark.parametrize("sample", SAMPLES)
def test_a_cluster_run_gives_the_plain_results(sample, make_dataset, scheduler, tmp_path):
    model = make_dataset(sample)
    plain = check(model, tmp_path / "plain", "--full-table", "parquet")
    on_cluster = check(model, tmp_path / "cluster", "--cluster", scheduler)
    assert plain.exit_code == 0, plain.output
    assert on_cluster.exit_code == 0, on_cluster.output
    assert_same_results(tmp_path / "plain", tmp_path / "cluster")
    # The terminal's summary is the same, down to the outcome line.
    head = plain.output.split("Results        :")[0]
    assert on_cluster.output.startswith(head.split("\nResult         :")[0])
    assert (tmp_path / "cluster" / "segments.parquet").is_dir()


@pytest.mark.parametrize(
    "options",
    [
        ("--member", "M4", "--member", "M6", "--combination", "ULS2 0.9D+1.3W"),
        ("--no-exact", "--method", "quarter_point", "--units", "us"),
    ],
)
def test_options_act_on_both_runs_alike(options, make_dataset, scheduler, tmp_path):
    model = make_dataset("industrial_shed")
    plain = check(model, tmp_path / "plain", "--full-table", "parquet", *options)
    on_cluster = check(model, tmp_path / "cluster", "--cluster", scheduler, *options)
    assert plain.exit_code == on_cluster.exit_code == 0, on_cluster.output
    assert_same_results(tmp_path / "plain", tmp_path / "cluster")


def _damage(folder: Path, combination: str, record: int, column: str, value: object) -> None:
    """Write one cell of a partition's file anew (the file's own type, or text)."""
    path = folder / f"combination={combination}" / "part-0.parquet"
    table = pq.read_table(path)
    values = table.column(column).to_pylist()
    values[record] = value
    kind = pa.string() if isinstance(value, str) else table.schema.field(column).type
    at = table.schema.get_field_index(column)
    table = table.set_column(at, pa.field(column, kind), pa.array(values, kind))
    pq.write_table(table.replace_schema_metadata(table.schema.metadata), path)


def test_a_damaged_partition_is_named_as_the_plain_run_names_it(make_dataset, scheduler, tmp_path):
    model = make_dataset("industrial_shed")
    out = tmp_path / "out"
    assert check(model, out, "--cluster", scheduler).exit_code == 0  # a result set to keep
    kept = {p.name: p.stat().st_mtime_ns for p in out.iterdir()}
    _damage(model / "forces_ds", "ULS2%200.9D%2B1.3W", 4, "M", float("nan"))
    plain = check(model, tmp_path / "plain")
    on_cluster = check(model, out, "--cluster", scheduler)
    assert plain.exit_code == on_cluster.exit_code == 2
    assert "Traceback" not in on_cluster.output
    # Record 4 is row 6 of the file; the CSV held the combination's rows after the first 480.
    line = (
        "forces_ds/combination=ULS2%200.9D%2B1.3W/part-0.parquet, row 6, column 'M': got "
        "'nan'; expected a finite number [row 486 of forces.csv as exported]"
    )
    assert line in on_cluster.output.splitlines()
    assert on_cluster.output == plain.output
    # The earlier results are as they were, and no staging folder is left.
    assert {p.name: p.stat().st_mtime_ns for p in out.iterdir()} == kept


def test_an_element_missing_from_one_combination_is_refused_across_partitions(
    make_dataset, scheduler, tmp_path
):
    model = make_dataset("two_span_beam")
    path = next((model / "forces_ds").glob("combination=ULS-2*/part-0.parquet"))
    table = pq.read_table(path)
    element = table.column("element")[0].as_py()
    keep = pa.compute.not_equal(table.column("element"), element)
    pq.write_table(table.filter(keep), path)
    plain = check(model, tmp_path / "plain")
    on_cluster = check(model, tmp_path / "cluster", "--cluster", scheduler)
    assert plain.exit_code == on_cluster.exit_code == 2
    assert on_cluster.output == plain.output
    assert f"got '{element}'; expected rows for combination 'ULS-2" in on_cluster.output


def test_the_folder_holds_one_run_whichever_path_wrote_it(make_dataset, scheduler, tmp_path):
    model = make_dataset("two_span_beam")
    out = tmp_path / "out"
    assert check(model, out, "--report").exit_code == 0
    assert check(model, out, "--cluster", scheduler).exit_code == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == ["flagged.csv", "governing.csv", "segments.parquet", "summary.json"]
    assert check(model, out).exit_code == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == ["flagged.csv", "governing.csv", "segments.csv", "summary.json"]


def test_a_local_cluster_is_started_and_stopped(make_dataset, tmp_path):
    model = make_dataset("two_span_beam")
    result = check(model, tmp_path / "out", "--cluster", "local", "--workers", "2")
    assert result.exit_code == 0, result.output
    assert "local: 2 worker process(es), 1GiB each" in result.output
    assert summary(tmp_path / "out")["result"]["shown to pass"] is not None


def test_options_that_do_not_fit_a_cluster_are_refused(make_dataset, tmp_path, monkeypatch):
    model = make_dataset("two_span_beam")
    out = tmp_path / "out"
    for extra, words in (
        (["--cluster", "local", "--report"], "not with --cluster"),
        (["--cluster", "local", "--full-table", "csv"], "segments.parquet/"),
        (["--cluster", "tcp://127.0.0.1:9", "--workers", "2"], "local cluster only"),
        (["--cluster", "local", "--worker-memory", "lots"], "no memory size"),
    ):
        result = check(model, out, *extra)
        assert result.exit_code == 2, result.output
        assert words in result.output
    monkeypatch.setattr(cluster, "CONNECT_SECONDS", 1)
    result = check(model, out, "--cluster", "tcp://127.0.0.1:9")
    assert result.exit_code == 2 and "no Dask scheduler answers" in result.output
    assert not out.exists() or not any(p.name != ".gitkeep" for p in out.iterdir())


def test_csv_forces_are_pointed_to_the_conversion(tmp_path):
    from flangewise.postproc.cli import sample_path

    result = check(sample_path("two_span_beam"), tmp_path / "out", "--cluster", "local")
    assert result.exit_code == 2
    assert "flangewise partition MODEL --out FOLDER" in result.output


def test_without_dask_the_extra_is_named(make_dataset, tmp_path, monkeypatch):
    model = make_dataset("two_span_beam")
    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed fails
    result = check(model, tmp_path / "out", "--cluster", "local")
    assert result.exit_code == 2
    assert 'pip install "flangewise[cluster]"' in result.output


def test_the_plain_path_does_not_import_dask(make_dataset, tmp_path):
    model = make_dataset("two_span_beam")
    code = (
        "import sys\n"
        "from flangewise.postproc.cli import main\n"
        "try:\n"
        f"    main(['check', {str(model)!r}, '--out', {str(tmp_path / 'out')!r}])\n"
        "except SystemExit as exc:\n"
        "    assert exc.code == 0, exc.code\n"
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed')))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip().splitlines()[-1] == "[]"


class _Future:
    """A task as the client hands it back once done: finished, failed or cancelled."""

    def __init__(self, status: str, error: BaseException | None = None) -> None:
        self.status = status
        self._error = error

    def exception(self) -> BaseException | None:
        return self._error

    def traceback(self) -> None:
        return None

    def result(self) -> str:
        return "partial"

    def release(self) -> None:
        pass


class _Client:
    """Hands back, per submission, the next of ``outcomes`` (the last one repeats)."""

    def __init__(self, *outcomes: _Future, at_scatter: BaseException | None = None) -> None:
        self.outcomes = list(outcomes)
        self.at_scatter = at_scatter
        self.scattered = 0

    def scatter(self, *args: object, **kwargs: object) -> _Future:
        if self.at_scatter is not None:
            raise self.at_scatter
        self.scattered += 1
        # The data lives on the workers: a cancelled task means it was lost with them.
        return _Future("lost" if self.outcomes[0].status == "cancelled" else "finished")

    def submit(self, *args: object, **kwargs: object) -> _Future:
        return self.outcomes.pop(0) if len(self.outcomes) > 1 else self.outcomes[0]


class _AsCompleted:
    def __init__(self, futures: list) -> None:
        self.futures = list(futures)

    def __iter__(self):
        while self.futures:
            yield self.futures.pop(0)

    def add(self, future: _Future) -> None:
        self.futures.append(future)


def _tasks(client: _Client, monkeypatch) -> list:
    distributed = pytest.importorskip("distributed")
    monkeypatch.setattr(distributed, "as_completed", _AsCompleted)
    added: list = []
    reduction = SimpleNamespace(add=added.append)
    cluster._run_tasks(client, SimpleNamespace(), [SimpleNamespace(number=0)], reduction, None)
    return added


def test_a_dead_worker_is_a_cluster_failure_not_a_result(monkeypatch):
    from distributed.comm import CommClosedError
    from distributed.scheduler import KilledWorker

    killed = _Future("error", KilledWorker("task", "worker", 3))
    with pytest.raises(cluster.ClusterFailed, match="worker process died"):
        _tasks(_Client(killed), monkeypatch)
    with pytest.raises(cluster.ClusterFailed, match="connection to the cluster was lost"):
        _tasks(_Client(killed, at_scatter=CommClosedError("gone")), monkeypatch)
    with pytest.raises(ZeroDivisionError):  # a fault of a task: raised as it was, exit status 4
        _tasks(_Client(_Future("error", ZeroDivisionError("a fault"))), monkeypatch)
    # Workers that keep dying with the shared data: sent again a few times, then a failure.
    with pytest.raises(cluster.ClusterFailed, match="worker process died"):
        _tasks(_Client(_Future("cancelled")), monkeypatch)


def test_tasks_cancelled_with_a_lost_worker_run_again(monkeypatch):
    client = _Client(_Future("cancelled"), _Future("finished"))
    assert _tasks(client, monkeypatch) == ["partial"]
    assert client.scattered == 2  # the shared data was sent again


def test_a_cluster_failure_ends_with_status_4_and_writes_nothing(
    make_dataset, tmp_path, monkeypatch
):
    model = make_dataset("two_span_beam")

    def fail(*args: object, **kwargs: object) -> None:
        raise cluster.ClusterFailed("a worker process died while checking")

    monkeypatch.setattr(cluster, "_run_tasks", fail)
    out = tmp_path / "out"
    result = check(model, out, "--cluster", "local", "--workers", "1")
    assert result.exit_code == 4
    assert "The check on the cluster failed: a worker process died" in result.output
    assert "Traceback" not in result.output
    assert not any(out.iterdir())  # no staging folder left behind


def test_full_table_parts_follow_the_models_order(make_dataset, scheduler, tmp_path):
    model = make_dataset("plant_platform")
    assert check(model, tmp_path / "out", "--cluster", scheduler).exit_code == 0
    parts = sorted((tmp_path / "out" / "segments.parquet").iterdir())
    assert [p.name for p in parts] == [f"part-{i:05d}.parquet" for i in range(len(parts))]
    combos = pq.read_table(tmp_path / "out" / "segments.parquet").column("combination")
    firsts = list(dict.fromkeys(combos.to_pylist()))
    info = json.loads((tmp_path / "out" / "summary.json").read_text(encoding="utf-8"))
    assert len(firsts) == info["load combinations"]
    assert np.all(pq.read_metadata(parts[0]).num_rows > 0)


def test_ctrl_c_shuts_the_local_cluster_down(make_dataset, tmp_path):
    import signal

    psutil = pytest.importorskip("psutil")
    model = make_dataset("two_span_beam")
    out = tmp_path / "out"
    command = [str(Path(sys.executable).parent / "flangewise"), "check", str(model)]
    command += ["--out", str(out), "--cluster", "local", "--workers", "2"]
    child = subprocess.Popen(
        command,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL),
    )
    workers: list = []
    while not workers and child.poll() is None:  # Ctrl-C as the workers start
        try:
            kids = psutil.Process(child.pid).children(recursive=True)
            workers = [k for k in kids if "spawn_main" in " ".join(k.cmdline())]
        except psutil.Error:
            pass  # a process that ended while being looked at
        time.sleep(0.02)
    child.send_signal(signal.SIGINT)
    _, err = child.communicate(timeout=60)
    assert child.returncode == 130, err
    assert err.strip() == "Interrupted."
    psutil.wait_procs(workers, timeout=10)
    assert not [w for w in workers if w.is_running() and w.status() != psutil.STATUS_ZOMBIE]
    assert not out.exists() or not any(out.iterdir())
