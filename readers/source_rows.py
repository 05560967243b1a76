"""The CSV rows of a converted forces dataset: a problem found in it also names the row exported.

``flangewise partition`` turns a forces CSV file into a folder of Parquet files, keeping
each record's spreadsheet row in the CSV file in a column (:data:`SOURCE_ROW`) and the CSV file's
name in each file's metadata (:data:`SOURCE_KEY`). A problem found later in the folder names its
file and the row within it, as for any folder of Parquet files; :func:`with_source_rows` adds the
row the analysis program wrote it at, where the export is to be mended.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pyarrow as pa
from flangewise.readers.errors import Problem

#: The column of a converted dataset holding each record's spreadsheet row in the CSV file.
SOURCE_ROW = "flangewise csv row"

#: The schema metadata key of a converted dataset naming the CSV file it came from.
SOURCE_KEY = b"flangewise source"


def with_source_rows(problems: list[Problem], root: Path, name: str) -> list[Problem]:
    """Add to each problem in a converted dataset the row of the CSV file it came from.

    A problem names a file of the folder ``root`` (as ``<name>/<file>``) and the row within it;
    when that file has the column :data:`SOURCE_ROW`, the row it held in the CSV file is added
    to what was expected, so that the export can be mended where the analysis wrote it.
    Problems elsewhere are left as they are.
    """
    import pyarrow.parquet as pq

    prefix = f"{name.rstrip('/')}/"
    out = []
    cache: dict[str, tuple[np.ndarray, str] | None] = {}
    for p in problems:
        if p.row is None or not p.file.startswith(prefix):
            out.append(p)
            continue
        relative = p.file[len(prefix) :]
        if relative not in cache:
            try:
                table = pq.read_table(root / relative, columns=[SOURCE_ROW])
                meta = table.schema.metadata or {}
                source = meta.get(SOURCE_KEY, b"the CSV file").decode("utf-8", "replace")
                cache[relative] = (table.column(0).to_numpy(), source)
            except (pa.ArrowException, OSError, KeyError, ValueError):
                cache[relative] = None
        found = cache[relative]
        record = p.row - 2
        if found is None or not 0 <= record < len(found[0]):
            out.append(p)
            continue
        rows, source = found
        out.append(
            dataclasses.replace(
                p, expected=f"{p.expected} [row {int(rows[record])} of {source} as exported]"
            )
        )
    return out
