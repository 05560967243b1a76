"""The shape catalogues shipped with flangewise: rolled I-shapes named as steel tables name them.

Each file in ``catalogues/`` is one published table: a ``# source:`` line naming the table, its
edition and the package it was taken from, a ``# label:`` line (the short form shown in
``summary``, ``explain`` and the report), notes, then ``name, d, b, tf, tw, r`` [mm] and the
tabulated ``A`` [mm²], ``Ix``, ``Iy`` [mm⁴], ``Sx``, ``Zx`` [mm³], ``J`` [mm⁴], ``Cw`` [mm⁶].
``sample_models/tools/make_catalogues.py`` builds them and checks every row against its own plates.

A designation is matched after the usual ways of writing it are folded together (case, blanks,
``x``/``X``/``×``; ``HE300B``, ``HE 300 B``, ``HEB300`` and ``HEB 300`` are one shape), and never
guessed: a written name that fits two shapes matches neither.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

#: Where the shipped tables are.
FOLDER = Path(__file__).resolve().parent / "catalogues"

#: Tabulated properties of a catalogue row, as the sections table's override columns name them.
PROPERTIES: tuple[str, ...] = ("A", "Ix", "Iy", "Sx", "Zx", "J", "Cw")

#: Plates of a catalogue row, as the sections table names them.
PLATES: tuple[str, ...] = ("d", "b", "tf", "tw", "r")

_BLANKS = re.compile(r"\s+")
#: ``HEB300`` (the German way) → ``HE300B`` (EN 10365).
_HE_SERIES_FIRST = re.compile(r"^HE([ABM])(\d+)$")


def normalise(name: str) -> str:
    """Return the matching key of a designation: upper case, no blanks, one way of writing it.

    Args:
        name: a designation as written, e.g. ``"w410x60"``, ``"IPE 300"``, ``"HEB 300"``.
    """
    key = _BLANKS.sub("", name).upper().replace("×", "X")
    return _HE_SERIES_FIRST.sub(r"HE\2\1", key)


@dataclass(frozen=True)
class Catalogue:
    """Every shipped shape.

    Attributes:
        shapes: index ``name`` (the table's designation); columns ``d``, ``b``, ``tf``, ``tw``,
            ``r`` [mm], the tabulated ``A`` … ``Cw`` and ``source`` (the table's label).
        keys: matching key → the designations that have it (more than one: ambiguous).
        sources: per file name, its ``# source:`` line.
    """

    shapes: pd.DataFrame
    keys: dict[str, tuple[str, ...]]
    sources: dict[str, str]

    def match(self, written: pd.Series) -> tuple[pd.Series, pd.Series]:
        """Return, per written name, its catalogue designation and the shapes it could be.

        Args:
            written: section names as the user wrote them (missing values allowed).

        Returns:
            ``(found, ambiguous)``: the designation where exactly one shape matches (else
            missing), and where several match, their designations joined by ``" or "``.
        """
        names = written.dropna().astype(str)
        hits = [self.keys.get(normalise(n), ()) for n in names.unique()]
        one = {n: h[0] for n, h in zip(names.unique(), hits, strict=True) if len(h) == 1}
        many = {n: " or ".join(h) for n, h in zip(names.unique(), hits, strict=True) if len(h) > 1}
        return written.map(one), written.map(many)


def _read(path: Path) -> tuple[pd.DataFrame, str, str]:
    """One table, its source line and its label."""
    lines = path.read_text(encoding="utf-8").splitlines()
    head = {
        k: v.strip()
        for k, _, v in (line[1:].strip().partition(":") for line in lines if line.startswith("#"))
    }
    df = pd.read_csv(path, comment="#", dtype={"name": str})
    df["source"] = head["label"]
    return df, head["source"], head["label"]


@functools.cache
def catalogue() -> Catalogue:
    """Return every shipped shape (read once per process)."""
    tables, sources = [], {}
    for path in sorted(FOLDER.glob("*.csv")):
        df, source, _ = _read(path)
        tables.append(df)
        sources[path.name] = source
    shapes = pd.concat(tables, ignore_index=True)
    keys: dict[str, list[str]] = {}
    for name in shapes["name"].tolist():  # a few hundred names, read once
        keys.setdefault(normalise(name), []).append(name)
    shapes = shapes.drop_duplicates("name", keep=False).set_index("name")
    return Catalogue(
        shapes=shapes[[*PLATES, *PROPERTIES, "source"]].astype(
            {c: np.float64 for c in (*PLATES, *PROPERTIES)}
        ),
        keys={k: tuple(v) for k, v in keys.items()},
        sources=sources,
    )
