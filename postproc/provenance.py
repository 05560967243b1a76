"""How a result set was made: tool, settings in force, filters, command line, input file hashes.

Recorded in ``summary.json`` so that a checker can tell which input and which settings a result
came from: a sha256 and a size for every file the readers read (the settings file and each
table's CSV file), the settings file's own text, and every resolved setting.
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
from collections.abc import Mapping, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from importlib.metadata import version
from pathlib import Path
from typing import Any

from flangewise.readers import InputError, Problem
from flangewise.readers.settings import TABLES, CheckSettings, Settings

#: Bytes hashed per read; large reads let hashlib work without holding the GIL.
HASH_CHUNK = 1 << 20


@dataclasses.dataclass(frozen=True)
class InputFile:
    """One input file as it was when hashed.

    Attributes:
        path: the file.
        sha256: hex digest of its bytes.
        size: its size in bytes.
        stamp: (size, modification time in ns) before it was hashed, to see a change later.
        content: the bytes themselves, kept for the settings file only (recorded as text).
    """

    path: Path
    sha256: str
    size: int
    stamp: tuple[int, int]
    content: bytes | None = None


def input_paths(settings: Settings) -> list[Path]:
    """Every file the readers read for these settings: the settings file, then each table's.

    An optional table whose file is absent is not read, so it is not listed. A table given as a
    folder (forces as Parquet files) lists every file in it that the readers read.
    """
    paths = [settings.source] if settings.source is not None else []
    for table in TABLES:
        path = settings.path(table)
        if path.is_file():
            paths.append(path)
        elif path.is_dir():  # a folder of Parquet files (forces): every file the readers read
            paths += sorted(
                (f for f in path.rglob("*") if f.is_file() and not _hidden(f.relative_to(path))),
                key=lambda f: str(f.relative_to(path)),
            )
    return list(dict.fromkeys(paths))  # one file named for two tables is read, and listed, once


def _hidden(relative: Path) -> bool:
    """A path the readers skip in a folder of Parquet files: a part starting with _ or ."""
    return any(part.startswith(("_", ".")) for part in relative.parts)


def hash_file(path: Path, keep: bool = False) -> InputFile:
    """Return the sha256 and size of ``path``, with its size and time stamp before hashing.

    Args:
        path: the file.
        keep: also return its bytes (for a small file whose text is recorded).
    """
    st = path.stat()
    digest = hashlib.sha256()
    kept = bytearray()
    with path.open("rb") as fh:
        while chunk := fh.read(HASH_CHUNK):
            digest.update(chunk)
            if keep:
                kept += chunk
    stamp = (st.st_size, st.st_mtime_ns)
    return InputFile(path, digest.hexdigest(), st.st_size, stamp, bytes(kept) if keep else None)


def start_hashing(settings: Settings) -> list[Future[InputFile]]:
    """Hash the input files in background threads (while the model is read); one future each."""
    paths = input_paths(settings)
    pool = ThreadPoolExecutor(max_workers=max(1, min(len(paths), os.cpu_count() or 1)))
    futures = [pool.submit(hash_file, p, p == settings.source) for p in paths]
    pool.shutdown(wait=False)
    return futures


def finish_hashing(futures: Sequence[Future[InputFile]]) -> list[InputFile]:
    """Wait for the hashes; refuse the run when a file changed while it was being read.

    Raises:
        InputError: a file's size or time stamp now differs from when it was hashed, so the
            results and the recorded hash could describe different contents.
    """
    done = [f.result() for f in futures]
    changed = []
    for item in done:
        st = item.path.stat()
        if (st.st_size, st.st_mtime_ns) != item.stamp:
            changed.append(item.path)
    if changed:
        raise InputError(
            [
                Problem(
                    str(p),
                    None,
                    None,
                    None,
                    "a file that stays unchanged while flangewise reads it (it changed during "
                    "this run; run again once it is complete)",
                )
                for p in changed
            ]
        )
    return done


def relative(path: Path, folder: Path) -> str:
    """``path`` relative to the model folder, with forward slashes (``..`` when outside it)."""
    return Path(os.path.relpath(path.resolve(), folder.resolve())).as_posix()


def plain(value: object) -> Any:
    """Turn settings (frozen dataclasses, read-only mappings, tuples, paths) into JSON values."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, Mapping):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple | set | frozenset):
        return [plain(v) for v in value]
    if isinstance(value, Path):
        return str(value)
    if value is None or isinstance(value, str | int | float | bool):
        return value
    return str(value)


def provenance(
    settings: Settings,
    check: CheckSettings,
    inputs: Sequence[InputFile],
    filters: Mapping[str, object],
    arguments: Sequence[str],
) -> dict[str, Any]:
    """Return the record of how a result set was made, JSON-ready.

    Args:
        settings: the settings the model was read with (after command-line overrides).
        check: the check settings in force (after ``--method``).
        inputs: the hashed input files.
        filters: the command line's filters (``--member``, ``--combination``, ``--method``).
        arguments: the command line's arguments, after the program name.
    """
    folder = settings.folder
    resolved = plain(settings)
    resolved["check"] = plain(check)
    source = next((f for f in inputs if f.path == settings.source), None)
    return {
        "tool": "flangewise",
        "version": version("flangewise"),
        "command line": list(arguments),
        "model folder": str(folder),
        "settings file": None
        if source is None or source.content is None
        else {
            "path": relative(source.path, folder),
            "text": source.content.decode("utf-8"),
        },
        "settings": resolved,
        "filters": plain(filters),
        "inputs": [
            {"path": relative(f.path, folder), "sha256": f.sha256, "bytes": f.size} for f in inputs
        ],
    }
