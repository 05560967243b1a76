"""The ``flangewise`` command line: a thin layer that parses, calls readers/engine, and formats.

Every command ends with one of a few exit statuses, each with one meaning (see :data:`EXIT_HELP`):
an internal error never ends with a status that a script could read as a result.
"""

from __future__ import annotations

import dataclasses
import os
import shlex
import sys
import traceback
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from importlib.resources import files
from pathlib import Path
from typing import Any, NoReturn

import click
from flangewise.engine.check import CheckResult, check_model
from flangewise.engine.layout import build_layout
from flangewise.postproc import exports
from flangewise.postproc.cluster import ClusterFailed
from flangewise.postproc.derivation import derivation_text, find_pair
from flangewise.postproc.exports import CAUTION
from flangewise.postproc.files import write_atomic
from flangewise.postproc.full_table import (
    CSV_ROWS,
    FULL_TABLE_CHOICES,
    SPREADSHEET_ROWS,
    full_table_names,
)
from flangewise.postproc.members_view import members_text, segment_rows
from flangewise.postproc.names import UnknownName, unknown_names_message
from flangewise.postproc.provenance import (
    InputFile,
    finish_hashing,
    provenance,
    start_hashing,
)
from flangewise.postproc.report import build_report
from flangewise.postproc.shown_units import SYSTEMS, run_units
from flangewise.postproc.summary import model_summary
from flangewise.readers import InputError, Model, load_model, read_settings
from flangewise.readers.settings import GRADIENT_METHODS

#: The sample model the ``demo`` command runs on, and where it writes.
DEMO_SAMPLE = "industrial_shed"
DEMO_OUT = "flangewise-demo"

#: Exit statuses. 2 is also click's own for a command line it cannot parse.
EXIT_NOT_SHOWN_TO_PASS = 1
EXIT_INPUT = 2
EXIT_NOT_WRITTEN = 3
EXIT_INTERNAL = 4
EXIT_INTERRUPTED = 130  # 128 + SIGINT, as shells report an interrupted program
EXIT_BROKEN_PIPE = 141  # 128 + SIGPIPE: the program reading our output closed it

#: The environment variable that asks for the traceback of an internal error, like ``--debug``.
DEBUG_VARIABLE = "FLANGEWISE_DEBUG"

#: Where click keeps the command line's arguments for the run's record.
_ARGUMENTS = "flangewise.arguments"

#: The statuses every command shares (the help of the group and of check, demo).
_COMMON_EXIT_LINES = """  2  input that cannot be used, or a command line that cannot be parsed
  3  the results could not be written (earlier results are left as they
     were)
  4  an internal error of flangewise: not a result; please report it with
     the command line and the input files (--debug or FLANGEWISE_DEBUG=1
     shows the traceback)
  130  interrupted (Ctrl-C)
  141  the program reading the output closed it early (a pipe)
"""

EXIT_HELP = (
    """\b
Exit status:
  0  done; for check and demo: every pair is shown to pass
  1  check, demo: NOT SHOWN TO PASS: a checked pair is over 1.0, a pair
     with its flange in compression is not checked (class 4), or nothing
     at all was checked (--exit-zero makes this 0)
"""
    + _COMMON_EXIT_LINES
)

CHECK_EXIT_HELP = (
    """\b
Exit status:
  0  every pair is shown to pass
  1  NOT SHOWN TO PASS: a checked pair is over 1.0, a pair with its flange
     in compression is not checked (class 4), or nothing at all was
     checked (unless --exit-zero)
"""
    + _COMMON_EXIT_LINES
)


class ResultsNotWritten(Exception):
    """Writing a result file failed; the earlier file or set is unchanged.

    Attributes:
        error: the operating system's error.
    """

    def __init__(self, error: OSError) -> None:
        super().__init__(str(error))
        self.error = error


@contextmanager
def _writing() -> Iterator[None]:
    """Mark a block as the writing of results: an :class:`OSError` there means exit status 3."""
    try:
        yield
    except OSError as exc:
        raise ResultsNotWritten(exc) from exc


def _debug_asked(ctx: click.Context) -> bool:
    """Whether ``--debug`` was given or the environment variable asks for it."""
    value = os.environ.get(DEBUG_VARIABLE, "").strip().lower()
    return bool(ctx.params.get("debug")) or value in {"1", "true", "yes", "on"}


def _stop(status: int, *lines: str) -> NoReturn:
    for line in lines:
        click.echo(line, err=True)
    sys.exit(status)


class _Commands(click.Group):
    """The command group: one place that turns every way a command can end into its status."""

    def make_context(
        self,
        info_name: str | None,
        args: list[str],
        parent: click.Context | None = None,
        **extra: Any,
    ) -> click.Context:
        """Keep the arguments as given (parsing consumes them), for the run's record."""
        given = list(args)
        ctx = super().make_context(info_name, list(args), parent=parent, **extra)
        ctx.meta[_ARGUMENTS] = given
        return ctx

    def invoke(self, ctx: click.Context) -> Any:
        """Run the command; map each kind of ending to its exit status and a short message."""
        try:
            return super().invoke(ctx)
        except (click.exceptions.ClickException, click.exceptions.Exit, click.exceptions.Abort):
            raise  # click's own: usage errors keep its status 2
        except InputError as exc:
            _stop(EXIT_INPUT, "The input cannot be used:", exc.report())
        except ResultsNotWritten as exc:
            _stop(
                EXIT_NOT_WRITTEN,
                f"Could not write the results: {exc.error}",
                "Earlier results in the output folder are unchanged.",
            )
        except BrokenPipeError:
            # The reader of our output went away (`flangewise summary … | head`): nothing is wrong
            # with the input or the tool. Silence the rest of the output and end as a process
            # stopped by SIGPIPE does, a status that never reads as a result.
            try:
                os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
            except (OSError, ValueError, AttributeError):
                pass  # no real file behind stdout (a test runner's buffer): nothing to silence
            sys.exit(EXIT_BROKEN_PIPE)
        except OSError as exc:
            if exc.filename is None:
                self._internal_error(ctx, exc)
            # Outside the writing of results, a file the system refuses is an input file.
            _stop(EXIT_INPUT, "The input cannot be used:", f"{exc.filename}: {exc.strerror}")
        except ClusterFailed as exc:
            _stop(
                EXIT_INTERNAL,
                f"The check on the cluster failed: {exc}. This is no result: nothing was written, "
                "and earlier results in the output folder are unchanged.",
            )
        except KeyboardInterrupt:
            _stop(EXIT_INTERRUPTED, "Interrupted.")
        except Exception as exc:
            self._internal_error(ctx, exc)

    def _internal_error(self, ctx: click.Context, exc: BaseException) -> NoReturn:
        """Stop with status 4: a short message asking for a report, the traceback on request."""
        command = shlex.join(["flangewise", *ctx.meta.get(_ARGUMENTS, [])])
        lines = [
            f"flangewise stopped on an internal error ({type(exc).__name__}). This is a fault in "
            "flangewise, not a result of the check: nothing printed or written by this run can "
            "be used.",
            "Please report it with this command line and the model's input files (the CSV files "
            "and the settings file):",
            f"  {command}",
        ]
        if _debug_asked(ctx):
            lines.append("".join(traceback.format_exception(exc)).rstrip())
        else:
            lines.append(f"Run it again with --debug (or {DEBUG_VARIABLE}=1) to see the details.")
        _stop(EXIT_INTERNAL, *lines)


def _bad_parameter(name: str, message: str) -> NoReturn:
    """Raise click's usage error for the current command's parameter ``name`` (exit status 2)."""
    ctx = click.get_current_context()
    param = next((p for p in ctx.command.params if p.name == name), None)
    raise click.BadParameter(message, ctx=ctx, param=param)


#: Options shared by several commands.
model_argument = click.argument("model", type=click.Path(file_okay=False, path_type=Path))
settings_option = click.option(
    "--settings",
    "settings_file",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Settings file (TOML) to use instead of the model folder's flangewise.toml.",
)
method_option = click.option(
    "--method",
    type=click.Choice(list(GRADIENT_METHODS)),
    help="Design-basis gradient method (default: the settings file's, else end_moment).",
)


units_option = click.option(
    "--units",
    "units_choice",
    type=click.Choice(list(SYSTEMS), case_sensitive=False),
    help="Units of every output: si (m, mm, kN, kN·m, MPa) or us (ft, in, kip, kip·ft, ksi). "
    "Default: the settings file's [output] units, else the system of the input's moment unit.",
)


def sample_path(name: str) -> Path:
    """Return the folder of a bundled sample model."""
    return Path(str(files("flangewise.sample_models").joinpath(name)))


@click.group(
    cls=_Commands,
    context_settings={"help_option_names": ["-h", "--help"]},
    epilog=EXIT_HELP,
)
@click.version_option(package_name="flangewise")
@click.option(
    "--debug",
    is_flag=True,
    help=f"On an internal error (exit status 4), also show the traceback; {DEBUG_VARIABLE}=1 "
    "in the environment does the same.",
)
def main(debug: bool) -> None:
    """Lateral-torsional buckling checks of steel beam segments from frame-analysis CSV exports."""


@main.command()
@model_argument
@settings_option
@units_option
def summary(model: Path, settings_file: Path | None, units_choice: str | None) -> None:
    """Load MODEL (a folder of CSV files), validate it and summarise what was read.

    It validates exactly what 'check' does (members and segments included): input that check
    refuses, summary refuses too, with exit status 2.
    """
    loaded = load_model(model, settings_file)
    layout = build_layout(loaded)
    click.echo(model_summary(loaded, layout, run_units(units_choice, loaded.settings)))
    click.echo(CAUTION)


@main.command()
@model_argument
@settings_option
@click.option(
    "--csv",
    "csv_file",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Also write one row per segment to this CSV file.",
)
@units_option
def members(
    model: Path, settings_file: Path | None, csv_file: Path | None, units_choice: str | None
) -> None:
    """Show how MODEL's elements chain into members and where each flange is braced.

    For every member: its elements in order, length, section, the braced nodes of each flange,
    and its unbraced segments with start, end and length, and the load combinations that put
    the segment's flange in compression.
    """
    loaded = load_model(model, settings_file)
    layout = build_layout(loaded)
    units = run_units(units_choice, loaded.settings)
    click.echo(members_text(layout.members, layout.segments, layout.diagrams, units))
    if csv_file is not None:
        rows = segment_rows(layout.members, layout.segments, layout.diagrams, units)
        with _writing():
            write_atomic(csv_file, lambda fh: rows.to_csv(fh, index=False, float_format="%.4f"))
        click.echo(f"Segments written to {csv_file}")
    click.echo(CAUTION)


@dataclasses.dataclass(frozen=True)
class _Run:
    """What one check run is asked to do (from the command line)."""

    model: Path
    settings_file: Path | None
    out: Path
    members: tuple[str, ...] = ()
    combinations: tuple[str, ...] = ()
    method: str | None = None
    report: bool = False
    units: str | None = None
    full_table: str | None = None
    cluster: str | None = None
    workers: int | None = None
    worker_memory: str | None = None
    exact: bool = True


def _load_and_hash(run: _Run) -> tuple[Model, list[InputFile]]:
    """Load the model while its input files are hashed alongside; return both."""
    hashing = start_hashing(read_settings(run.model, run.settings_file))
    try:
        loaded = load_model(run.model, run.settings_file, combinations=run.combinations or None)
    except BaseException:
        for future in hashing:
            future.cancel()
        raise
    return loaded, finish_hashing(hashing)


def _members_of_run(result: CheckResult, wanted: Sequence[str]) -> list[str]:
    """The members ``--member`` names, each once, in the order given; every one must exist."""
    known = [str(m) for m in result.layout.members.table.index]
    present = set(known)
    unknown = [m for m in dict.fromkeys(wanted) if m not in present]
    if unknown:
        _bad_parameter(
            "members_wanted",
            unknown_names_message("member", unknown, known, "'flangewise members MODEL'"),
        )
    return list(dict.fromkeys(wanted))


def _selection_line(run: _Run) -> str:
    parts = []
    if run.members:
        parts.append(f"members {', '.join(dict.fromkeys(run.members))} (--member)")
    if run.combinations:
        parts.append(f"load combinations {', '.join(run.combinations)} (--combination)")
    return "; ".join(parts)


def _run_check(run: _Run) -> dict[str, Any]:
    """Load, check, write and summarise; return the summary (with the run's outcome)."""
    if run.cluster is not None:
        return _run_on_cluster(run)
    show = sys.stdout.isatty()
    stages = ["reading", "checking", "writing"]
    with click.progressbar(stages, label="flangewise", file=None if show else _Null()) as bar:
        it = iter(bar)
        next(it)
        loaded, inputs = _load_and_hash(run)
        settings = loaded.settings.check
        if run.method:
            settings = dataclasses.replace(settings, gradient=run.method)
        next(it, None)
        result = check_model(loaded, settings, exact=run.exact)
        scope = None
        if run.members:
            # Narrow the results themselves, so that every output describes the same set.
            scope = _members_of_run(result, run.members)
            result = exports.select_members(result, scope)
        units = run_units(run.units, loaded.settings)
        seg = exports.segment_table(result, units)
        next(it, None)
        info = exports.summary(result, seg, run.model, members=scope, units=units)
        if not run.report:
            # Only the report reads the engine's own rows again: let them go before writing,
            # which needs memory of its own (a large run's results are the largest thing held).
            result = dataclasses.replace(result, results=result.results.iloc[:0])
        filters = {
            "member": list(run.members),
            "combination": list(run.combinations),
            "method": run.method,
        }
        arguments = click.get_current_context().meta.get(_ARGUMENTS, [])
        info["provenance"] = provenance(loaded.settings, settings, inputs, filters, arguments)
        text = exports.summary_text(info)  # before writing: nothing can fail after the results
        texts = {}
        if run.report:
            texts["report.html"] = build_report(
                result,
                run.model,
                _settings_line(loaded),
                _selection_line(run),
                exports.outcome_line(info["result"]).replace("Result         :", "Result:"),
                info["members without forces (not checked)"],
                info["provenance"],
                units=units,
            )
        tables = dict.fromkeys(
            full_table_names(len(seg), run.full_table or loaded.settings.full_table), seg
        )
        tables["governing.csv"] = exports.governing_table(seg)
        # A full table in Parquet only: flagged.csv keeps the columns a reviewer reads first.
        narrow = "segments.csv" not in tables
        tables["flagged.csv"] = exports.flagged_table(
            seg, exports.reading_columns(units) if narrow else None
        )
        notes = {
            "units": units.words,
            "sign": f"M start, M end: {exports.SIGN}",
            "caution": CAUTION,
        }
        with _writing():
            written = exports.write_results(run.out, tables, info, texts=texts, notes=notes)
    click.echo(text)
    names = ", ".join(p.name for p in written)
    click.echo(f"Results        : {run.out}/ ({names})")
    if "segments.csv" in tables and len(seg) > SPREADSHEET_ROWS:
        click.echo(
            f"NOTE           : segments.csv has {len(seg):,} rows; a common spreadsheet shows "
            f"only the first {SPREADSHEET_ROWS:,} (--full-table parquet keeps them all typed)"
        )
    click.echo(CAUTION)
    return info


def _run_on_cluster(run: _Run) -> dict[str, Any]:
    """Check on a Dask cluster (:mod:`postproc.cluster`); print as the plain check does."""
    from flangewise.postproc import cluster

    if run.report:
        _bad_parameter(
            "report",
            "the report draws diagrams from the whole model in memory: not with --cluster (run "
            "a plain check of the members or combinations to report, with --member and "
            "--combination)",
        )
    if run.full_table not in (None, "auto", "parquet"):
        _bad_parameter(
            "full_table", "with --cluster the full table is the folder segments.parquet/"
        )
    local = run.cluster.strip().lower() == "local"
    if not local and (run.workers or run.worker_memory):
        _bad_parameter("workers", "--workers and --worker-memory are for a local cluster only")
    options = cluster.ClusterOptions(
        "local" if local else run.cluster.strip(),
        run.workers or cluster.LOCAL_WORKERS,
        run.worker_memory or cluster.WORKER_MEMORY,
    )
    job = cluster.ClusterRun(
        run.model,
        run.settings_file,
        run.out,
        options,
        run.members,
        run.combinations,
        run.method,
        run.units,
        tuple(click.get_current_context().meta.get(_ARGUMENTS, [])),
        run.exact,
    )
    bar: Any = None

    def progress(done: int, total: int) -> None:
        nonlocal bar
        if bar is None:
            bar = click.progressbar(length=total, label="flangewise (cluster)")
            bar.__enter__()
        bar.update(1)

    try:
        outcome = cluster.check_on_cluster(job, progress if sys.stdout.isatty() else None)
    except cluster.ClusterUnavailable as exc:
        _bad_parameter(exc.param, str(exc))
    except UnknownName as exc:
        _bad_parameter(exc.param, exc.message)
    except cluster.NotWritten as exc:
        raise ResultsNotWritten(OSError(str(exc))) from exc
    finally:
        if bar is not None:
            bar.__exit__(None, None, None)
    info = outcome.info
    click.echo(exports.summary_text(info))
    ran = info["provenance"]["cluster"]
    click.echo(
        f"Run on         : {ran['run on']}; {ran['partitions']} partitions in {ran['tasks']} tasks"
    )
    names = ", ".join(p.name + ("/" if p.is_dir() else "") for p in outcome.written)
    click.echo(f"Results        : {run.out}/ ({names}; {outcome.rows:,} rows in the full table)")
    if info["provenance"]["settings"].get("full_table") in ("csv", "both"):
        click.echo(
            "NOTE           : [output] full_table does not apply to a check on a cluster: the "
            "full table is the folder segments.parquet/"
        )
    click.echo(CAUTION)
    return info


def _settings_line(model: Model) -> str:
    s = model.settings
    u = s.units
    source = s.source.name if s.source else "no settings file (canonical layout)"
    return (
        f"{source}; input units {u.length}, {u.force}, {u.moment}, sections {u.section}, "
        f"{u.stress}; {len(model.combinations)} load combinations"
    )


class _Null:
    """A file that swallows the progress bar when output is not a terminal."""

    def write(self, text: str) -> int:
        return len(text)

    def flush(self) -> None:
        """Nothing to flush."""

    def isatty(self) -> bool:
        return False


@main.command(epilog=CHECK_EXIT_HELP)
@model_argument
@settings_option
@click.option(
    "--out",
    type=click.Path(file_okay=False, path_type=Path),
    default=Path("flangewise-results"),
    show_default=True,
    help="Folder for the result files (earlier results there are replaced only on success).",
)
@click.option("--member", "members_wanted", multiple=True, help="Check only this member (repeat).")
@click.option(
    "--combination", "combinations", multiple=True, help="Only this load combination (repeat)."
)
@method_option
@units_option
@click.option(
    "--full-table",
    type=click.Choice(list(FULL_TABLE_CHOICES), case_sensitive=False),
    help=f"How to write the full table of every segment in every combination: auto (CSV up to "
    f"{CSV_ROWS:,} rows, Parquet beyond), csv, parquet or both. Default: the settings file's "
    "[output] full_table, else auto.",
)
@click.option(
    "--report",
    is_flag=True,
    help="Also write report.html: diagrams and step-by-step checks for review.",
)
@click.option(
    "--no-exact",
    "no_exact",
    is_flag=True,
    help="Skip the exact elastic buckling analysis (for speed on very large runs). The code "
    "factors are then not compared with it: no code-factor-high check, and the summary says so.",
)
@click.option(
    "--exit-zero",
    is_flag=True,
    help="Exit with status 0 even when the results are not shown to pass (the summary still "
    "says why).",
)
@click.option(
    "--cluster",
    metavar="local|ADDRESS",
    help="Check on a Dask cluster, partition by partition: 'local' (worker processes on this "
    "machine) or an existing cluster's scheduler address (tcp://host:8786). The forces must be "
    "a folder partitioned by load combination (see the partition command); the full table is "
    'written as the folder segments.parquet/. Needs the extra: pip install "flangewise[cluster]".',
)
@click.option(
    "--workers",
    type=click.IntRange(1),
    help="Worker processes of a local cluster (default 2).",
)
@click.option(
    "--worker-memory",
    metavar="SIZE",
    help="Memory limit of each worker of a local cluster, such as 1GiB or 800MB (default 1GiB).",
)
def check(
    model: Path,
    settings_file: Path | None,
    out: Path,
    members_wanted: tuple[str, ...],
    combinations: tuple[str, ...],
    method: str | None,
    units_choice: str | None,
    full_table: str | None,
    report: bool,
    no_exact: bool,
    exit_zero: bool,
    cluster: str | None,
    workers: int | None,
    worker_memory: str | None,
) -> None:
    """Check every unbraced segment of MODEL in every load combination.

    The results are shown to pass only when something was checked, no checked pair is over
    1.0 and every pair with its flange in compression was checked. Every output (the terminal
    summary, the CSV files, summary.json and report.html) describes the same set: the members
    and load combinations chosen with --member and --combination. summary.json records how the
    results were made: tool version, settings, filters, command line and a sha256 of every input
    file. The output folder ends up holding exactly this run's result files.
    """
    run = _Run(
        model,
        settings_file,
        out,
        members_wanted,
        combinations,
        method,
        report,
        units_choice,
        full_table.lower() if full_table else None,
        cluster,
        workers,
        worker_memory,
        not no_exact,
    )
    if no_exact and (method or read_settings(model, settings_file).check.gradient) == "exact":
        _bad_parameter(
            "no_exact", "the design basis 'exact' needs the exact analysis: drop --no-exact"
        )
    info = _run_check(run)
    if not info["result"]["shown to pass"] and not exit_zero:
        sys.exit(EXIT_NOT_SHOWN_TO_PASS)


@main.command()
@model_argument
@settings_option
@click.option(
    "--out",
    type=click.Path(file_okay=False, path_type=Path),
    required=True,
    help="The folder to write (it must not exist yet, or be empty).",
)
def partition(model: Path, settings_file: Path | None, out: Path) -> None:
    """Turn MODEL's forces CSV file into a folder of Parquet files, one folder per combination.

    Writes OUT/<combination column>=<name>/part-0.parquet, the layout 'check --cluster' reads,
    in bounded memory. The file is read through the settings (columns, delimiter, decimal mark)
    and every cell is checked as 'check' checks it; nothing is written unless the whole file
    converts. Then name the folder in the settings file: [files] forces = "OUT".
    """
    from flangewise.postproc.convert import partition_forces as convert
    from flangewise.postproc.partition_check import NotWritten

    try:
        done = convert(model, settings_file, out)
    except FileExistsError as exc:
        _bad_parameter("out", str(exc))
    except NotWritten as exc:
        raise ResultsNotWritten(OSError(str(exc))) from exc
    try:
        shown = Path(os.path.relpath(out.resolve(), model.resolve())).as_posix()
    except ValueError:  # another drive
        shown = str(out.resolve())
    click.echo(
        f"Forces         : {done.source} ({done.rows:,} rows, {done.combinations} load "
        f"combinations)"
    )
    click.echo(f"Written        : {out}/{done.key}=<name>/ ({done.files} Parquet files)")
    click.echo(f'Settings       : name the folder in [files]: forces = "{shown}"')


@main.command()
@model_argument
@click.argument("segment")
@click.argument("combination")
@settings_option
@method_option
@units_option
def explain(
    model: Path,
    segment: str,
    combination: str,
    settings_file: Path | None,
    method: str | None,
    units_choice: str | None,
) -> None:
    """Show the check of one SEGMENT in one load COMBINATION of MODEL, step by step.

    SEGMENT is a name as 'flangewise members' or the results show it (such as M3-top-2).
    """
    loaded = load_model(model, settings_file)
    settings = loaded.settings.check
    if method:
        settings = dataclasses.replace(settings, gradient=method)
    result = check_model(loaded, settings)
    try:
        row = find_pair(result, segment, combination)
    except UnknownName as exc:
        _bad_parameter(exc.param, exc.message)
    click.echo(derivation_text(result, row, units=run_units(units_choice, loaded.settings)))
    click.echo(CAUTION)


@main.command(epilog=CHECK_EXIT_HELP)
def demo() -> None:
    """Check the bundled sample model into ./flangewise-demo (no arguments needed)."""
    folder = sample_path(DEMO_SAMPLE)
    click.echo(f"Sample model: {DEMO_SAMPLE}")
    info = _run_check(_Run(folder, None, Path(DEMO_OUT), report=True))
    if not info["result"]["shown to pass"]:
        sys.exit(EXIT_NOT_SHOWN_TO_PASS)
