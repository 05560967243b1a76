"""The ``flangewise`` command line: a thin layer that parses, calls readers/engine, and formats."""

from __future__ import annotations

import sys
from collections.abc import Callable
from functools import wraps
from importlib.resources import files
from pathlib import Path
from typing import Any, TypeVar

import click

from engine.layout import build_layout
from postproc.files import write_atomic
from postproc.members_view import members_text, segment_rows
from postproc.summary import model_summary
from readers import InputError, load_model

F = TypeVar("F", bound=Callable[..., Any])

CAUTION = (
    "CAUTION: results are an aid to design, not a design. They must be verified by a competent "
    "engineer; the local design code and licensed practice govern."
)

#: The sample model the ``demo`` command runs on.
DEMO_SAMPLE = "two_span_beam"


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

    return wrapper  # type: ignore[return-value]


def sample_path(name: str) -> Path:
    """Return the folder of a bundled sample model."""
    return Path(str(files("sample_models").joinpath(name)))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="flangewise")
def main() -> None:
    """Lateral-torsional buckling checks of steel beam segments from frame-analysis CSV exports."""


@main.command()
@click.argument("model", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--settings",
    "settings_file",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Settings file (TOML) to use instead of the model folder's flangewise.toml.",
)
@_input_errors_exit_2
def summary(model: Path, settings_file: Path | None) -> None:
    """Load MODEL (a folder of CSV files), validate it and summarise what was read."""
    loaded = load_model(model, settings_file)
    click.echo(model_summary(loaded))
    click.echo(CAUTION)


@main.command()
@click.argument("model", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--settings",
    "settings_file",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Settings file (TOML) to use instead of the model folder's flangewise.toml.",
)
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


@main.command()
@_input_errors_exit_2
def demo() -> None:
    """Load the bundled sample model and summarise it (no arguments needed)."""
    folder = sample_path(DEMO_SAMPLE)
    click.echo(f"Sample model: {DEMO_SAMPLE} ({folder})")
    click.echo(model_summary(load_model(folder)))
    click.echo(CAUTION)
