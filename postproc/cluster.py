"""``flangewise check --cluster``: the check of a model whose forces outgrow one machine, on Dask.

The forces are a folder of Parquet files partitioned by load combination
(:func:`flangewise.readers.forces_part.partitions`). On this machine (the client) the model's
other tables are read and validated, and the members, segments and section properties are built,
once; they go to every worker once (``scatter``). Each task then checks a few whole load
combinations (:func:`flangewise.postproc.partition_check.check_task`): it reads and validates
their forces, checks their pairs, writes its part of the full table and of ``flagged.csv`` into
the run's staging folder, and returns only small partial results, which the client puts together
(:class:`flangewise.postproc.partition_check.Reduction`) into ``governing.csv``, ``flagged.csv``
and ``summary.json``, identical to a check of the whole model on one machine. The result set is
moved into the output folder as one, like every run's (:func:`exports.write_results`).

The cluster is a local one by default (worker processes on this machine, each with a memory
limit), or an existing one given its scheduler's address; then the workers need flangewise
installed (the same version) and must see the model and the output folder at the same paths (a
shared file system). Dask is an optional extra (``pip install "flangewise[cluster]"``): it is
imported only here, only when a check on a cluster is asked for.
"""

from __future__ import annotations

import dataclasses
import logging
import os
import shutil
import signal
import uuid
import warnings
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future
from contextlib import contextmanager
from dataclasses import dataclass
from importlib.metadata import version
from pathlib import Path
from typing import Any

import pandas as pd
from flangewise.engine.check import CheckResult
from flangewise.engine.layout import Layout
from flangewise.engine.members import build_members
from flangewise.engine.sections import section_class, section_properties
from flangewise.engine.segments import build_segments
from flangewise.postproc import exports
from flangewise.postproc.names import UnknownName, unknown_names_message
from flangewise.postproc.partition_check import (
    DATASET,
    FLAGGED_PARTS,
    NotWritten,
    Reduction,
    Shared,
    Task,
    check_task,
    join_flagged,
    part_name,
)
from flangewise.postproc.provenance import (
    InputFile,
    finish_hashing,
    provenance,
    start_hashing,
)
from flangewise.postproc.shown_units import run_units
from flangewise.readers.forces_part import (
    Partition,
    checked_combinations,
    load_frame,
    missing_combinations,
    partitions,
)
from flangewise.readers.settings import read_settings

#: The pip extra that installs Dask (named in messages).
EXTRA = 'pip install "flangewise[cluster]"'

#: Worker processes of a local cluster when not given.
LOCAL_WORKERS = 2

#: Memory limit of each worker of a local cluster when not given (Dask restarts a worker that
#: goes beyond it). A task of :data:`TASK_ROWS` force rows needs well under half of it.
WORKER_MEMORY = "1GiB"

#: Force rows per task, at most (a single load combination with more is one task of its own):
#: enough to keep a worker busy for seconds, little enough to stay far below its memory limit.
TASK_ROWS = 600_000

#: Seconds to wait for an existing cluster's scheduler to answer.
CONNECT_SECONDS = 20


class ClusterUnavailable(Exception):
    """The cluster cannot be used as asked: Dask missing, no scheduler there, workers unfit.

    Attributes:
        param: the command-line parameter to name ("cluster", "worker_memory").
    """

    def __init__(self, message: str, param: str = "cluster") -> None:
        super().__init__(message)
        self.param = param


class ClusterFailed(Exception):
    """The cluster failed during the check (a worker died, the scheduler was lost): no result."""


@dataclass(frozen=True)
class ClusterOptions:
    """Where the check runs.

    Attributes:
        address: ``"local"`` for a cluster of worker processes on this machine, else the
            address of an existing cluster's scheduler (``tcp://host:8786``).
        workers: worker processes of a local cluster.
        memory: memory limit of each worker of a local cluster (``"1GiB"``, ``"800MB"``).
    """

    address: str = "local"
    workers: int = LOCAL_WORKERS
    memory: str = WORKER_MEMORY

    def words(self) -> str:
        """The cluster in words, for the terminal and the run's record."""
        if self.address == "local":
            return f"local: {self.workers} worker process(es), {self.memory} each"
        return f"scheduler at {self.address}"


@dataclass(frozen=True)
class ClusterRun:
    """One check on a cluster, as the command line asks for it."""

    model: Path
    settings_file: Path | None
    out: Path
    options: ClusterOptions
    members: tuple[str, ...] = ()
    combinations: tuple[str, ...] = ()
    method: str | None = None
    units: str | None = None
    arguments: tuple[str, ...] = ()
    exact: bool = True


@dataclass(frozen=True)
class ClusterOutcome:
    """What a check on a cluster gave.

    Attributes:
        info: the summary (``summary.json``).
        written: the result files and the full table's folder.
        rows: pairs in the full table.
    """

    info: dict[str, Any]
    written: list[Path]
    rows: int


def check_on_cluster(
    run: ClusterRun, progress: Callable[[int, int], None] | None = None
) -> ClusterOutcome:
    """Check ``run.model`` partition by partition on a cluster; write one result set.

    Args:
        run: what to check, where, and where to write.
        progress: called with (tasks done, tasks) as tasks finish.

    Raises:
        InputError: the input cannot be used (every problem of every partition listed).
        UnknownName: a ``--member`` the model does not have.
        ClusterUnavailable: Dask is not installed, or the cluster cannot be reached or used.
        ClusterFailed: the cluster failed during the check.
        NotWritten: the results could not be written (the output folder is as it was).
    """
    _distributed()  # fails early, before reading anything, when Dask is missing
    _memory_bytes(run.options)
    hashing = start_hashing(read_settings(run.model, run.settings_file))
    try:
        return _check(run, hashing, progress)
    except BaseException:
        for future in hashing:
            future.cancel()  # no hashing of big files left to wait for once the run has failed
        raise


def _check(
    run: ClusterRun,
    hashing: list[Future[InputFile]],
    progress: Callable[[int, int], None] | None,
) -> ClusterOutcome:
    """:func:`check_on_cluster` once the input files are being hashed."""
    frame, from_option = load_frame(run.model, run.settings_file, run.combinations or None)
    parts = partitions(frame.model.settings)
    names = [p.combination for p in parts]
    checked = checked_combinations(frame, names, from_option)
    settings = frame.model.settings
    check = settings.check
    if run.method:
        check = dataclasses.replace(check, gradient=run.method)
    members = build_members(frame.model, settings.members)
    segments = build_segments(frame.model, members, settings.members)
    scope = _scope(members.table.index, run.members)
    units = run_units(run.units, settings)
    try:
        stage = exports.make_stage(run.out)
    except OSError as exc:
        raise NotWritten(str(exc)) from exc
    try:
        shared = Shared(
            frame=frame,
            members=members,
            segments=segments,
            props=section_table(frame.model.sections),
            check=check,
            exact=run.exact,
            units=units,
            root=settings.path("forces").resolve(),
            combinations=tuple(checked),
            scope=scope,
            stage=stage.resolve(),
            notes={
                "units": units.words,
                "sign": f"M start, M end: {exports.SIGN}",
                "caution": exports.CAUTION,
            },
        )
        tasks = plan_tasks(parts)
        reduction = Reduction(shared)
        with _client(run.options) as client:
            _probe(client, shared)
            _run_tasks(client, shared, tasks, reduction, progress)
        problems = reduction.problems()
        missing_combinations(frame, names, reduction.present(), problems)
        problems.raise_if_any()
        inputs = finish_hashing(hashing)
        # What the summary needs of a check's result besides its table: members and settings.
        layout = Layout(members, segments, None)  # type: ignore[arg-type]
        stub = CheckResult(reduction.table().iloc[:0], shared.props, layout, check)
        info = reduction.summary(run.model, stub)
        filters = {
            "member": list(run.members),
            "combination": list(run.combinations),
            "method": run.method,
        }
        info["provenance"] = provenance(settings, check, inputs, filters, run.arguments)
        info["provenance"]["cluster"] = {
            "run on": run.options.words(),
            "partitions": len(parts),
            "tasks": len(tasks),
            "full table": f"{DATASET}/ (one Parquet file per task, in the model's order)",
        }
        try:
            rows = _finish_parts(reduction, shared)
            written = exports.write_results(
                run.out,
                {DATASET: None, "governing.csv": reduction.table(), "flagged.csv": None},
                info,
                stage=stage,
            )
        except OSError as exc:
            raise NotWritten(str(exc)) from exc
        return ClusterOutcome(info, written, rows)
    finally:
        shutil.rmtree(stage, ignore_errors=True)


def section_table(sections: pd.DataFrame) -> pd.DataFrame:
    """Section properties and class per section name, as the plain check computes them."""
    props = section_properties(sections)
    flange_cls, web_cls, cls = section_class(
        props["b"], props["tf"], props["d"], props["tw"], props["fy"]
    )
    return props.assign(class_flange=flange_cls, class_web=web_cls, section_class=cls)


def plan_tasks(parts: Sequence[Partition], rows: int = TASK_ROWS) -> list[Task]:
    """Group consecutive partitions into tasks of at most ``rows`` force rows (one at least)."""
    tasks: list[Task] = []
    group: list[Partition] = []
    held = 0
    for part in parts:
        if group and held + part.rows > rows:
            tasks.append(Task(len(tasks), tuple(group)))
            group, held = [], 0
        group.append(part)
        held += part.rows
    if group:
        tasks.append(Task(len(tasks), tuple(group)))
    return tasks


def _scope(known: pd.Index, wanted: Sequence[str]) -> tuple[str, ...] | None:
    """The members ``--member`` names, each once, in the order given (``None``: all)."""
    if not wanted:
        return None
    names = [str(m) for m in known]
    present = set(names)
    unknown = [m for m in dict.fromkeys(wanted) if m not in present]
    if unknown:
        raise UnknownName(
            "members_wanted",
            unknown_names_message("member", unknown, names, "'flangewise members MODEL'"),
        )
    return tuple(dict.fromkeys(wanted))


def _finish_parts(reduction: Reduction, shared: Shared) -> int:
    """Put flagged.csv together in the staging folder; return the full table's rows.

    A run whose tasks wrote no rows (``--member`` of a member without forces) gets a full
    table of one empty file, so that the folder still says what its columns are.
    """
    empty = reduction.table().iloc[:0]
    header = exports.csv_text(empty[exports.reading_columns(shared.units)], True)
    join_flagged(reduction.flagged_parts(), header, shared.stage / "flagged.csv")
    shutil.rmtree(shared.stage / FLAGGED_PARTS, ignore_errors=True)
    folder = shared.stage / DATASET
    # Only the parts of this run's tasks are published: nothing a dead worker left half written.
    wanted = {part_name(n) for n in reduction.numbers()}
    for path in folder.iterdir() if folder.is_dir() else ():
        if path.name not in wanted:
            path.unlink()
    if not reduction.numbers():
        from flangewise.postproc.full_table import write_parquet

        folder.mkdir(exist_ok=True)
        write_parquet(folder / part_name(0), empty, shared.notes)
    return sum(reduction._rows.values())


def _distributed() -> Any:
    """The ``distributed`` package, or a clear message naming the extra that installs it."""
    try:
        import distributed
    except ImportError:
        raise ClusterUnavailable(
            f"a check on a cluster needs Dask and distributed, which are not installed: {EXTRA}"
        ) from None
    return distributed


def _memory_bytes(options: ClusterOptions) -> int:
    """The memory limit of each local worker in bytes; a size Dask cannot read is refused."""
    from dask.utils import parse_bytes

    try:
        size = int(parse_bytes(options.memory))
    except (ValueError, TypeError):
        size = 0
    if size <= 0:
        raise ClusterUnavailable(
            f"'{options.memory}' is no memory size: write it as 1GiB, 800MB or 2GB",
            "worker_memory",
        )
    return size


@contextmanager
def _client(options: ClusterOptions) -> Iterator[Any]:
    """A client of the cluster asked for: a local one (shut down after) or an existing one."""
    distributed = _distributed()
    import dask

    quiet = logging.getLogger("distributed")
    level = quiet.level
    # Dask's own warnings (memory use, restarts) are not for the user: failures are reported here.
    quiet.setLevel(logging.CRITICAL)
    caught = warnings.catch_warnings()
    caught.__enter__()
    warnings.simplefilter("ignore")
    try:
        if options.address == "local":
            # Ctrl-C while the workers start would leave them half started, for Dask to fail
            # closing at exit (with a traceback): the interrupt waits until they are up.
            # Dask's sampling profiler of each worker costs CPU the check needs.
            with (
                _interrupt_deferred() as interrupted,
                dask.config.set({"distributed.worker.profile.enabled": False}),
            ):
                cluster = distributed.LocalCluster(
                    n_workers=options.workers,
                    threads_per_worker=1,
                    processes=True,
                    memory_limit=options.memory,
                    # A free port for its web pages: never a warning that 8787 is taken.
                    dashboard_address=":0",
                    silence_logs=logging.CRITICAL,
                )
            with cluster, distributed.Client(cluster) as client:
                if interrupted:
                    raise KeyboardInterrupt
                yield client
            return
        try:
            client = distributed.Client(options.address, timeout=CONNECT_SECONDS)
        except (OSError, TimeoutError, ValueError) as exc:
            raise ClusterUnavailable(
                f"no Dask scheduler answers at '{options.address}' ({type(exc).__name__}): give "
                "the address its scheduler prints (tcp://host:8786), or 'local'"
            ) from None
        with client:
            yield client
    finally:
        quiet.setLevel(level)
        caught.__exit__(None, None, None)


@contextmanager
def _interrupt_deferred() -> Iterator[list[int]]:
    """Hold back Ctrl-C for a block; the list says whether it came (raise it after the block).

    Only the main thread can take signals; elsewhere the block runs as it is.
    """
    came: list[int] = []
    try:
        before = signal.signal(signal.SIGINT, lambda signum, frame: came.append(signum))
    except ValueError:  # not the main thread
        yield came
        return
    try:
        yield came
    finally:
        signal.signal(signal.SIGINT, before)


def _workers_see(root: str, stage: str) -> tuple[str, bool, bool]:
    """On a worker: its flangewise version, whether it sees the forces and the staging folder."""
    return version("flangewise"), os.path.isdir(root), os.path.isdir(stage)


def _probe(client: Any, shared: Shared) -> None:
    """Make sure every worker can do the work: same version, same paths."""
    try:
        seen = client.run(_workers_see, str(shared.root), str(shared.stage))
    except Exception as exc:
        raise ClusterUnavailable(
            f"the cluster's workers cannot run flangewise ({type(exc).__name__}): install "
            f"flangewise {version('flangewise')} on every worker"
        ) from None
    if not seen:
        raise ClusterUnavailable("the cluster has no workers")
    mine = version("flangewise")
    for worker, (theirs, root, stage) in seen.items():
        if theirs != mine:
            raise ClusterUnavailable(
                f"worker {worker} runs flangewise {theirs}, this machine {mine}: install the "
                "same version everywhere"
            )
        if not (root and stage):
            missing = shared.root if not root else shared.stage
            raise ClusterUnavailable(
                f"worker {worker} does not see {missing}: the workers must reach the model and "
                "the output folder at the same paths as this machine (a shared file system)"
            )


#: Times the data every task needs is sent again after the workers holding it died (a lone
#: worker restarted after going beyond its memory limit takes it down with it).
RESENDS = 3

#: What a run says when workers keep dying.
WORKER_DIED = (
    "a worker process died while checking (most often: it went beyond its memory limit; give "
    "the workers more memory, or make the partitions smaller)"
)


def _run_tasks(
    client: Any,
    shared: Shared,
    tasks: Sequence[Task],
    reduction: Reduction,
    progress: Callable[[int, int], None] | None,
) -> None:
    """Run every task on the cluster; add each partial to ``reduction`` as it comes.

    A task whose worker died is run again by Dask on another (or the restarted) worker. The
    shared data lives only on the workers: when every copy is gone with them, the tasks waiting
    for it are cancelled; it is then sent again and they are submitted again, up to
    :data:`RESENDS` times.
    """
    distributed = _distributed()
    from distributed.scheduler import KilledWorker

    run = uuid.uuid4().hex[:8]
    waiting = {task.number: task for task in tasks}
    sent = 0
    try:
        on_workers = client.scatter(shared, broadcast=True, hash=False)
        futures = {
            client.submit(
                check_task, on_workers, task, key=f"flangewise-{run}-{task.number}-0"
            ): task.number
            for task in tasks
        }
        running = distributed.as_completed(list(futures))
        for future in running:
            number = futures.pop(future)
            if future.status == "finished":
                reduction.add(future.result())
                future.release()
                del waiting[number]
                if progress is not None:
                    progress(len(tasks) - len(waiting), len(tasks))
                continue
            if future.status == "error":
                error, trace = future.exception(), future.traceback()
                if isinstance(error, KilledWorker):
                    raise ClusterFailed(WORKER_DIED)
                break
            # Cancelled: the shared data was lost with the workers that held it.
            if on_workers.status != "finished":
                sent += 1
                if sent > RESENDS:
                    raise ClusterFailed(WORKER_DIED)
                on_workers = client.scatter(shared, broadcast=True, hash=False)
            again = client.submit(
                check_task, on_workers, waiting[number], key=f"flangewise-{run}-{number}-{sent}"
            )
            futures[again] = number
            running.add(again)
        else:
            return
    except OSError as exc:  # the connection closed (CommClosedError is one), a socket failed
        raise ClusterFailed(
            f"the connection to the cluster was lost ({type(exc).__name__})"
        ) from exc
    except TimeoutError as exc:
        raise ClusterFailed("the cluster stopped answering") from exc
    # A task's own error (a fault of flangewise, or results it could not write): as raised there.
    raise error.with_traceback(trace)
