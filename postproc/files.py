"""Writing result files atomically: a run that fails never leaves a half-written file."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import IO


def write_atomic(path: Path, write: Callable[[IO[str]], None]) -> None:
    """Write a text file through ``write`` into a temporary file beside it, then rename it.

    The rename is atomic on one file system, so ``path`` holds either its old content or the
    complete new one, never a part.
    """
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            write(fh)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
