"""The full result table sized for its reader: CSV for a spreadsheet, Parquet for millions of rows.

A spreadsheet opens a CSV of a few thousand rows by double-click and stops at 1 048 576 rows; well
before that a table is too long to read, and writing it as text costs more than the check. So by
default (``auto``) the full table (every segment in every load combination) is a CSV up to
:data:`CSV_ROWS` rows and a Parquet file beyond: typed columns, the units in each column's metadata,
read back exactly by pandas, pyarrow, polars, DuckDB or R's arrow package. ``governing.csv`` and
``flagged.csv`` are always CSV: they are the tables a person reads.
"""

from __future__ import annotations

import re
from importlib.metadata import version
from pathlib import Path
from typing import Literal

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

FullTable = Literal["auto", "csv", "parquet", "both"]
FULL_TABLE_CHOICES: tuple[str, ...] = ("auto", "csv", "parquet", "both")

#: ``auto`` writes the full table as CSV up to this many rows (a table still worth scrolling in a
#: spreadsheet, and written in well under a second), as Parquet beyond.
CSV_ROWS = 100_000

#: The most data rows a common spreadsheet shows: 1 048 576 rows less the header.
SPREADSHEET_ROWS = 1_048_575

#: A header's unit: the text in brackets up to a comma (``M start [kN·m, + compresses …]``).
_UNIT = re.compile(r"\[([^\],]+)")


def full_table_names(rows: int, choice: FullTable) -> list[str]:
    """The file name(s) the full table is written to, for a table of ``rows`` rows."""
    if choice == "both":
        return ["segments.csv", "segments.parquet"]
    if choice == "parquet" or (choice == "auto" and rows > CSV_ROWS):
        return ["segments.parquet"]
    return ["segments.csv"]


def column_unit(header: str) -> str:
    """The unit a header names in brackets ("kN·m" of "Mr [kN·m]"); "" for a pure number."""
    found = _UNIT.search(header)
    return found.group(1).strip() if found else ""


def arrow_table(table: pd.DataFrame, notes: dict[str, str]) -> pa.Table:
    """The table as Arrow: each field's metadata gives its unit, the schema's the run's notes.

    Categorical columns stay dictionary-encoded, so a name repeated on a million rows is stored
    once.
    """
    arrow = pa.Table.from_pandas(table, preserve_index=False)
    fields = [
        field.with_metadata({"unit": column_unit(field.name), "header": field.name})
        for field in arrow.schema
    ]
    meta = {"tool": f"flangewise {version('flangewise')}", **notes}
    schema = pa.schema(fields, metadata={k: str(v) for k, v in meta.items()})
    return pa.Table.from_arrays(arrow.columns, schema=schema)


#: Rows converted to Arrow and written at a time: memory stays bounded by one slice.
ROW_GROUP = 262_144


def write_parquet(path: Path, table: pd.DataFrame, notes: dict[str, str]) -> None:
    """Write the full table as one Parquet file, a slice of :data:`ROW_GROUP` rows at a time.

    Names (categorical columns) are dictionary-encoded and carry statistics, so a reader can
    skip row groups by member or combination; numbers are stored plain (dictionaries and
    statistics of millions of distinct floats cost more time than they save). Snappy
    compression: about as small as the others here, and the fastest to write.
    """
    names = [c for c in table.columns if isinstance(table[c].dtype, pd.CategoricalDtype)]
    writer: pq.ParquetWriter | None = None
    try:
        for start in range(0, max(len(table), 1), ROW_GROUP):
            part = arrow_table(table.iloc[start : start + ROW_GROUP], notes)
            if writer is None:
                writer = pq.ParquetWriter(
                    path,
                    part.schema,
                    compression="snappy",
                    use_dictionary=names,
                    write_statistics=names,
                )
            else:  # a slice where a text column is all empty would otherwise type it "null"
                part = part.cast(writer.schema)
            writer.write_table(part, row_group_size=ROW_GROUP)
    finally:
        if writer is not None:
            writer.close()
