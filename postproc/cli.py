"""The ``flangewise`` command line: a thin layer that parses, calls readers/engine, and formats."""

from __future__ import annotations

import dataclasses
import sys
from collections.abc import Callable
from functools import wraps
from importlib.resources import files
from pathlib import Path
from typing import Any, TypeVar

import click
from flangewise.engine.check import check_model
from flangewise.engine.layout import build_layout
from flangewise.postproc import exports
from flangewise.postproc.derivation import derivation_text, find_pair
from flangewise.postproc.exports import CAUTION
from flangewise.postproc.files import write_atomic
from flangewise.postproc.members_view import members_text, segment_rows
from flangewise.postproc.report import build_report
from flangewise.postproc.summary import model_summary
from flangewise.readers import InputError, Model, load_model
from flangewise.readers.settings import GRADIENT_METHODS

F = TypeVar("F", bound=Callable[..., Any])

#: The sample model the ``demo`` command runs on, and where it writes.
DEMO_SAMPLE = "industrial_shed"
DEMO_OUT = "flangewise-demo"


def _input_errors_exit_2(func: F) -> F:
    """Turn an :class:`InputError` into its message on stderr and exit status 2, no traceback."""

    @wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return func(*args, **kwargs)
        except InputError as exc:
            click.echo("The input cannot be used:", err=True)
            click.echo(exc.report(), err=True)
            sys.exit(2)
        except OSError as exc:
            click.echo(f"Could not write the results: {exc}", err=True)
            click.echo("Earlier results in the output folder are unchanged.", err=True)
            sys.exit(3)

    return wrapper  # type: ignore[return-value]


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


def sample_path(name: str) -> Path:
    """Return the folder of a bundled sample model."""
    return Path(str(files("flangewise.sample_models").joinpath(name)))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="flangewise")
def main() -> None:
    """Lateral-torsional buckling checks of steel beam segments from frame-analysis CSV exports."""


@main.command()
@model_argument
@settings_option
@_input_errors_exit_2
def summary(model: Path, settings_file: Path | None) -> None:
    """Load MODEL (a folder of CSV files), validate it and summarise what was read."""
    loaded = load_model(model, settings_file)
    click.echo(model_summary(loaded))
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
@_input_errors_exit_2
def members(model: Path, settings_file: Path | None, csv_file: Path | None) -> None:
    """Show how MODEL's elements chain into members and where each flange is braced.

    For every member: its elements in order, length, section, the braced nodes of each flange,
    and its unbraced segments with start, end and length, and the load combinations that put
    the segment's flange in compression.
    """
    loaded = load_model(model, settings_file)
    layout = build_layout(loaded)
    click.echo(members_text(layout.members, layout.segments, layout.diagrams))
    if csv_file is not None:
        rows = segment_rows(layout.members, layout.segments, layout.diagrams)
        write_atomic(csv_file, lambda fh: rows.to_csv(fh, index=False, float_format="%.4f"))
        click.echo(f"Segments written to {csv_file}")
    click.echo(CAUTION)


def _run_check(
    model: Path,
    settings_file: Path | None,
    out: Path,
    members_wanted: tuple[str, ...],
    combinations: tuple[str, ...],
    method: str | None,
    report: bool = False,
) -> int:
    """Load, check, write and summarise; return the number of pairs over 1.0."""
    show = sys.stdout.isatty()
    stages = ["reading", "checking", "writing"]
    with click.progressbar(stages, label="flangewise", file=None if show else _Null()) as bar:
        it = iter(bar)
        next(it)
        loaded = load_model(model, settings_file, combinations=combinations or None)
        settings = loaded.settings.check
        if method:
            settings = dataclasses.replace(settings, gradient=method)
        next(it, None)
        result = check_model(loaded, settings)
        seg = exports.segment_table(result)
        if members_wanted:
            unknown = sorted(set(members_wanted) - set(seg["member"]))
            if unknown:
                raise click.BadParameter(
                    f"no member named {', '.join(unknown)} (see 'flangewise members')",
                    param_hint="--member",
                )
            seg = seg[seg["member"].isin(members_wanted)].reset_index(drop=True)
        next(it, None)
        info = exports.summary(result, seg, model)
        texts = {}
        if report:
            texts["report.html"] = build_report(result, model, _settings_line(loaded))
        exports.write_results(
            out,
            {
                "segments.csv": seg,
                "governing.csv": exports.governing_table(seg),
                "flagged.csv": exports.flagged_table(seg),
            },
            info,
            texts=texts,
        )
    click.echo(exports.summary_text(info))
    names = ", ".join([*exports.RESULT_FILES, *texts])
    click.echo(f"Results        : {out}/ ({names})")
    click.echo(CAUTION)
    return int(info["pairs over 1.0"])


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


@main.command()
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
@click.option(
    "--report",
    is_flag=True,
    help="Also write report.html: diagrams and step-by-step checks for review.",
)
@click.option(
    "--exit-zero",
    is_flag=True,
    help="Exit with status 0 even when a segment is over 1.0.",
)
@_input_errors_exit_2
def check(
    model: Path,
    settings_file: Path | None,
    out: Path,
    members_wanted: tuple[str, ...],
    combinations: tuple[str, ...],
    method: str | None,
    report: bool,
    exit_zero: bool,
) -> None:
    """Check every unbraced segment of MODEL in every load combination.

    Exit status: 0 when every checked segment passes, 1 when any is over 1.0 (unless
    --exit-zero), 2 for input that cannot be used, 3 when the results could not be written
    (earlier results are then left as they were).
    """
    over = _run_check(model, settings_file, out, members_wanted, combinations, method, report)
    if over and not exit_zero:
        sys.exit(1)


@main.command()
@model_argument
@click.argument("segment")
@click.argument("combination")
@settings_option
@method_option
@_input_errors_exit_2
def explain(
    model: Path, segment: str, combination: str, settings_file: Path | None, method: str | None
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
    except KeyError as exc:
        raise click.BadParameter(str(exc.args[0])) from None
    click.echo(derivation_text(result, row))
    click.echo(CAUTION)


@main.command()
@_input_errors_exit_2
def demo() -> None:
    """Check the bundled sample model into ./flangewise-demo (no arguments needed)."""
    folder = sample_path(DEMO_SAMPLE)
    click.echo(f"Sample model: {DEMO_SAMPLE}")
    _run_check(folder, None, Path(DEMO_OUT), (), (), None, report=True)
