"""Sample models with their forces turned into a folder per load combination, for cluster tests.

Fixtures: ``make_dataset`` copies a sample model, converts its forces with ``flangewise
partition`` and points the settings at the folder; ``scheduler`` is the address of one local
Dask cluster of two worker processes shared by the tests of a module (starting one costs
seconds).
"""

from __future__ import annotations

import logging
import shutil
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from click.testing import CliRunner
from flangewise.postproc.cli import main, sample_path

#: The folder the forces are converted into, inside the model folder.
DATASET = "forces_ds"


@pytest.fixture
def make_dataset(tmp_path: Path) -> Callable[[str], Path]:
    """Return a function: sample name -> a copy whose forces are a folder per combination."""

    def make(sample: str) -> Path:
        folder = tmp_path / sample
        shutil.copytree(sample_path(sample), folder)
        result = CliRunner().invoke(
            main, ["partition", str(folder), "--out", str(folder / DATASET)]
        )
        assert result.exit_code == 0, result.output
        settings = folder / "flangewise.toml"
        if settings.exists():
            lines = [
                f'forces = "{DATASET}"' if line.startswith("forces =") else line
                for line in settings.read_text(encoding="utf-8").splitlines()
            ]
            settings.write_text("\n".join(lines) + "\n", encoding="utf-8")
        else:
            settings.write_text(f'[files]\nforces = "{DATASET}"\n', encoding="utf-8")
        return folder

    return make


@pytest.fixture(scope="module")
def scheduler() -> Iterator[str]:
    """The scheduler address of a local cluster of two worker processes, for a module's tests."""
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=True,
        memory_limit="1GiB",
        dashboard_address=":0",
        silence_logs=logging.CRITICAL,
    ) as cluster:
        yield cluster.scheduler_address
