"""Damage a bundled sample model at random, run the tool on it, and judge the outcome.

Shared by the fuzz test (``test_damaged_models.py``, a short seeded run in CI) and the long run
(``tests/benchmarks/fuzz_models.py``). One *plan* says what to damage: a cell, a row, a column,
the bytes or encoding of a file, or a key of the settings file. :func:`run_plan` copies the sample,
applies the plan, runs ``flangewise check`` in-process through click's CliRunner and returns a
:class:`Verdict`.

What is judged (the rules of the project, not of any one message):

* The run ends with status 0, 1 or 2: never 4 (an internal failure), never a traceback.
* The output folder is never half-written: after status 2 it is as it was (absent here); after
  0 or 1 it holds the complete result set and no staging folder.
* A damaged number is either refused (status 2) or read exactly as written: when the run passes,
  the model loaded from the damaged folder holds, in that cell, the value the text says (scaled by
  the same unit factor and sign as the undamaged value beside it).
* Damage that must be refused is refused: a number that is not finite, a row with more or fewer
  fields than the header, an empty required table, a file the settings name that is missing, an
  implausible coordinate or plate dimension.
* A run that passes checked something: status 0 never comes with zero checked pairs or with
  pairs left unchecked.
"""

from __future__ import annotations

import csv
import io
import json
import math
import random
import shutil
import tomllib
from dataclasses import dataclass
from importlib.resources import files
from pathlib import Path

from click.testing import CliRunner
from flangewise.postproc.cli import main
from flangewise.readers import InputError, load_model
from flangewise.readers.settings import read_settings

SAMPLES = ("two_span_beam", "industrial_shed", "plant_platform", "rolled_floor")

#: Replacement texts for one cell: numbers, near-numbers, non-finite values, names that parsers
#: like to read as missing, ids that parsers like to read as numbers, and plain junk.
TOKENS = (
    "",
    " ",
    "inf",
    "-inf",
    "Infinity",
    "1e309",
    "-1e309",
    "NaN",
    "nan",
    "NA",
    "N/A",
    "None",
    "null",
    "TRUE",
    "false",
    "1,5",
    "2.5",
    " 3.25 ",
    "007",
    "7",
    "7.0",
    "1e300",
    "1.2e29",
    "-0",
    "0",
    "-1",
    "12345678901234567890123456789",
    "abc",
    "1..2",
    "0x10",
    "1e-320",
    '"',
    "B1",
    "N1",
)

CELL_KINDS = ("cell",)
ROW_KINDS = ("drop-row", "repeat-row", "extra-field", "drop-last-field", "blank-line", "cut-row")
COLUMN_KINDS = ("drop-column", "rename-header", "repeat-column")
FILE_KINDS = ("flip-byte", "bad-utf8", "truncate", "empty-file", "header-only", "bom", "latin1")
SETTINGS_KINDS = ("settings-value", "settings-drop-key", "settings-missing-file")
KINDS = CELL_KINDS * 6 + ROW_KINDS + COLUMN_KINDS + FILE_KINDS + SETTINGS_KINDS

#: Kinds that must always be refused (status 2): the damage cannot be read right. An empty or
#: header-only file is refused only where the table is required: braces and supports may be empty,
#: and so may sections when every element names a catalogue shape (otherwise the elements' section
#: names are refused as unknown).
MUST_REFUSE = frozenset({"extra-field", "drop-last-field", "cut-row", "settings-missing-file"})
EMPTY_KINDS = frozenset({"header-only", "empty-file"})
OPTIONAL_TABLES = frozenset({"braces", "supports", "sections"})

#: Optional numeric columns, where an empty cell means "not given" (README, input reference): the
#: root radius then is 0, fy the settings' default, an override the computed property.
OPTIONAL_NUMBERS = frozenset(
    {"r", "fy", "A", "Ix", "Iy", "Sx", "Zx", "J", "Cw", "N", "V", "M_minor", "T"}
)

#: Far outside any frame or I-section [mm]: such a value must be refused, whatever the ranges the
#: readers choose (common practice: no building is 100 km across; no plate is 10 m thick).
IMPLAUSIBLE_COORDINATE_MM = 1.0e8
IMPLAUSIBLE_PLATE_MM = 1.0e4

#: Relative tolerance for "read as written": the value goes through one float parse and one unit
#: factor, so it agrees with the text to a few ulps.
READ_TOLERANCE = 1.0e-9


@dataclass(frozen=True)
class Plan:
    """What to damage. ``pick`` and ``pick2`` are fractions in [0, 1) that choose a table, row or
    column, so that one plan means the same damage on every run."""

    sample: str
    kind: str
    table: int
    pick: float
    pick2: float
    token: str
    seed: int

    def describe(self) -> str:
        """One line naming the damage, for failure messages."""
        return (
            f"{self.sample}: {self.kind} table#{self.table} pick={self.pick:.4f} "
            f"pick2={self.pick2:.4f} token={self.token!r} seed={self.seed}"
        )


@dataclass
class Verdict:
    """What happened to one plan.

    Attributes:
        plan: the plan.
        status: the exit status.
        crash: the run ended in an internal failure (status 4, other status, or a traceback).
        wrong: a damaged input was accepted when it must not be, or read wrong.
        half_written: the output folder was left inconsistent.
        detail: what was damaged and why the verdict, for the report.
    """

    plan: Plan
    status: int
    crash: bool
    wrong: bool
    half_written: bool
    detail: str

    @property
    def ok(self) -> bool:
        """Whether the run met every rule."""
        return not (self.crash or self.wrong or self.half_written)


def sample_folder(name: str) -> Path:
    """Return a bundled sample's folder."""
    return Path(str(files("flangewise.sample_models").joinpath(name)))


def random_plan(rng: random.Random) -> Plan:
    """Draw a plan from a seeded random generator."""
    return Plan(
        sample=rng.choice(SAMPLES),
        kind=rng.choice(KINDS),
        table=rng.randrange(6),
        pick=rng.random(),
        pick2=rng.random(),
        token=rng.choice(TOKENS),
        seed=rng.randrange(2**31),
    )


# --- applying a plan ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Damage:
    """Where a cell was damaged, for the read-as-written oracle (``None`` for other kinds)."""

    table: str
    record: int  # 0 for the first data row
    column: str  # our column name
    old: str
    new: str


def _layout(folder: Path) -> tuple[dict[str, Path], dict[str, dict[str, str]], str, str]:
    """Files, column maps, delimiter and decimal mark of an (undamaged) sample."""
    settings = read_settings(folder)
    paths = {t: settings.path(t) for t in settings.files}
    columns = {t: dict(settings.columns[t]) for t in settings.columns}
    return paths, columns, settings.delimiter, settings.decimal


def _read_rows(path: Path, delimiter: str) -> list[list[str]]:
    with path.open(encoding="utf-8", newline="") as fh:
        return [row for row in csv.reader(fh, delimiter=delimiter)]


def _write_rows(path: Path, rows: list[list[str]], delimiter: str) -> None:
    buffer = io.StringIO()
    csv.writer(buffer, delimiter=delimiter, lineterminator="\n").writerows(rows)
    path.write_text(buffer.getvalue(), encoding="utf-8")


def damaged_table(plan: Plan, folder: Path) -> str:
    """The table a plan damages (one of the tables whose file the sample has)."""
    paths, _, _, _ = _layout(folder)
    existing = [t for t, p in paths.items() if p.is_file()]
    return existing[plan.table % len(existing)]


def apply_plan(plan: Plan, folder: Path) -> tuple[str, Damage | None]:
    """Damage the model copied into ``folder``; return a description and the damaged cell."""
    rng = random.Random(plan.seed)
    paths, columns, delim, _ = _layout(folder)
    existing = [t for t, p in paths.items() if p.is_file()]
    table = existing[plan.table % len(existing)]
    path = paths[table]
    kind = plan.kind

    if kind.startswith("settings"):
        return _damage_settings(plan, folder, rng), None
    if kind in FILE_KINDS:
        return _damage_bytes(plan, path, rng), None

    rows = _read_rows(path, delim)
    header, data = rows[0], rows[1:]
    if not data:
        return f"{table}: no data rows to damage", None
    r = int(plan.pick * len(data))
    c = int(plan.pick2 * len(header))
    what = f"{path.name} row {r + 2}"
    damage = None
    if kind == "cell":
        old = data[r][c]
        data[r][c] = plan.token
        ours = {v: k for k, v in columns[table].items()}.get(header[c].strip())
        if ours is not None:
            damage = Damage(table, r, ours, old, plan.token)
        what += f" column '{header[c]}': {old!r} -> {plan.token!r}"
    elif kind == "drop-row":
        del data[r]
        what += " deleted"
    elif kind == "repeat-row":
        data.insert(r, list(data[r]))
        what += " repeated"
    elif kind == "extra-field":
        data[r] = [*data[r], plan.token or "x"]
        what += " given one more field"
    elif kind == "drop-last-field":
        data[r] = data[r][:-1]
        what += " lost its last field"
    elif kind == "blank-line":
        data.insert(r, [])
        what += " preceded by a blank line"
    elif kind == "cut-row":
        data[r] = data[r][: max(1, c)] if c < len(header) - 1 else data[r][:1]
        what += f" cut to {len(data[r])} field(s)"
    elif kind == "drop-column":
        for row in [header, *data]:
            if c < len(row):
                del row[c]
        what = f"{path.name} column '{rows[0][c] if c < len(rows[0]) else c}' deleted"
    elif kind == "rename-header":
        what = f"{path.name} header '{header[c]}' -> '{plan.token}'"
        header[c] = plan.token
    elif kind == "repeat-column":
        for row in [header, *data]:
            if c < len(row):
                row.append(row[c])
        what = f"{path.name} column '{header[c]}' repeated at the end"
    _write_rows(path, [header, *data], delim)
    return what, damage


def _damage_bytes(plan: Plan, path: Path, rng: random.Random) -> str:
    raw = path.read_bytes()
    kind = plan.kind
    if kind == "flip-byte" and raw:
        i = int(plan.pick * len(raw))
        raw = raw[:i] + bytes([raw[i] ^ (1 << rng.randrange(8))]) + raw[i + 1 :]
        what = f"{path.name}: byte {i} flipped"
    elif kind == "bad-utf8" and raw:
        i = int(plan.pick * len(raw))
        raw = raw[:i] + b"\xff\xfe" + raw[i:]
        what = f"{path.name}: invalid UTF-8 at byte {i}"
    elif kind == "truncate":
        i = int(plan.pick * len(raw))
        raw = raw[:i]
        what = f"{path.name}: cut at byte {i}"
    elif kind == "empty-file":
        raw = b""
        what = f"{path.name}: emptied"
    elif kind == "header-only":
        raw = raw.split(b"\n", 1)[0] + b"\n"
        what = f"{path.name}: header only"
    elif kind == "bom":
        raw = b"\xef\xbb\xbf" + raw
        what = f"{path.name}: byte-order mark added"
    else:  # latin1
        text = raw.decode("utf-8")
        lines = text.split("\n")
        i = 1 + int(plan.pick * max(1, len(lines) - 2))
        lines[i] = lines[i].replace(lines[i][:1], "é", 1) if lines[i] else "é"
        raw = "\n".join(lines).encode("latin-1", errors="replace")
        what = f"{path.name}: Latin-1 text on line {i + 1}"
    path.write_bytes(raw)
    return what


def _damage_settings(plan: Plan, folder: Path, rng: random.Random) -> str:
    """Damage the settings file (writing one for a canonical sample first)."""
    toml = folder / "flangewise.toml"
    data = tomllib.loads(toml.read_text(encoding="utf-8")) if toml.is_file() else {}
    if plan.kind == "settings-missing-file":
        table = ("braces", "supports")[plan.table % 2]
        data.setdefault("files", {})[table] = f"{table}-typo.csv"
        _write_toml(toml, data)
        return f"settings: [files] {table} names a file that does not exist"
    keys = [(s, k) for s, v in data.items() if isinstance(v, dict) for k in v] or [("csv", "x")]
    section, key = keys[int(plan.pick * len(keys))]
    if plan.kind == "settings-drop-key":
        data.get(section, {}).pop(key, None)
        what = f"settings: [{section}] {key} removed"
    else:
        value: object = plan.token
        if rng.random() < 0.3:
            value = rng.choice([float("nan"), -1.0, 0.0, 1e300, True, ["bottom"], "\n", ";"])
        data.setdefault(section, {})[key] = value
        what = f"settings: [{section}] {key} = {value!r}"
    _write_toml(toml, data)
    return what


def _write_toml(path: Path, data: dict) -> None:
    """Write a two-level TOML document (enough for our settings files)."""
    lines = []
    for section, values in data.items():
        if not isinstance(values, dict):
            lines.append(f"{section} = {_toml_value(values)}")
    for section, values in data.items():
        if isinstance(values, dict):
            flat = {k: v for k, v in values.items() if not isinstance(v, dict)}
            lines.append(f"[{section}]")
            lines += [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in flat.items()]
            for sub, subvalues in values.items():
                if isinstance(subvalues, dict):
                    lines.append(f"[{section}.{_toml_key(sub)}]")
                    lines += [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in subvalues.items()]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def _toml_key(key: str) -> str:
    return key if key.replace("_", "").isalnum() else json.dumps(key)


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "nan" if math.isnan(value) else ("inf" if math.isinf(value) else repr(value))
    if isinstance(value, int):
        return str(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return json.dumps(str(value))


# --- running and judging -----------------------------------------------------------------------

RESULT_SET = ("segments.csv", "governing.csv", "flagged.csv", "summary.json")


def run_plan(plan: Plan, work: Path) -> Verdict:
    """Copy the sample into ``work``, damage it, run ``check`` and judge the outcome."""
    folder = work / "model"
    shutil.rmtree(work, ignore_errors=True)
    shutil.copytree(sample_folder(plan.sample), folder)
    baseline = load_model(folder)
    table = damaged_table(plan, folder)
    what, damage = apply_plan(plan, folder)
    out = work / "out"
    result = CliRunner().invoke(main, ["check", str(folder), "--out", str(out)])
    status = result.exit_code
    text = (result.output or "") + (result.stderr if result.stderr_bytes is not None else "")
    crash = status not in (0, 1, 2) or "Traceback" in text
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        crash = True
        text += f"\n{type(result.exception).__name__}: {result.exception}"
    half = _half_written(out, status)
    wrong, why = False, ""
    if not crash and status in (0, 1):
        wrong, why = _accepted_wrongly(plan, table, status, folder, out, damage, baseline)
    detail = f"{plan.describe()}\n  damage: {what}\n  status {status}"
    if why:
        detail += f"\n  wrong: {why}"
    if half:
        detail += "\n  output folder half-written"
    if crash:
        detail += "\n  " + "\n  ".join(text.strip().splitlines()[-6:])
    return Verdict(plan, status, crash, wrong, half, detail)


def _half_written(out: Path, status: int) -> bool:
    if not out.exists():
        return False
    names = {p.name for p in out.iterdir()}
    if any(n.startswith(".") for n in names):
        return True  # a staging folder or temporary file left behind
    if status == 2:
        return bool(names)  # refused input writes nothing
    return not set(RESULT_SET) <= names


def _accepted_wrongly(
    plan: Plan,
    table: str,
    status: int,
    folder: Path,
    out: Path,
    damage: Damage | None,
    baseline,
) -> tuple[bool, str]:
    """Whether a run that passed accepted damage it must refuse, or read a number wrong."""
    if plan.kind in MUST_REFUSE:
        return True, f"'{plan.kind}' damage was accepted"
    if plan.kind in EMPTY_KINDS and table not in OPTIONAL_TABLES:
        return True, f"an empty {table} table was accepted"
    info = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    checked = int(info.get("pairs checked", 0))
    unchecked = int(info.get("pairs not checked (class 4)", 0))
    if status == 0 and not (checked > 0 and unchecked == 0):
        return True, "status 0 with nothing, or not everything, checked"
    if damage is None:
        return False, ""
    try:
        model = load_model(folder)
    except InputError as exc:  # check passed but a plain load refuses: inconsistent
        return True, f"check passed but load_model refused: {exc.report()[:200]}"
    value = _model_value(model, damage)
    before = _model_value(baseline, damage)
    if value is None or before is None:
        return False, ""
    decimal = model.settings.decimal
    written = _as_number(damage.new, decimal)
    old = _as_number(damage.old, decimal)
    if written is None and not damage.new.strip() and damage.column in OPTIONAL_NUMBERS:
        return False, ""  # an empty optional cell means "not given": its documented default
    if written is None:
        return True, f"the text {damage.new!r} is not a finite number but was read as {value!r}"
    if damage.column in ("x", "y", "z") and abs(value) > IMPLAUSIBLE_COORDINATE_MM:
        return True, f"coordinate {value:g} mm accepted"
    if damage.column in ("d", "b", "tf", "tw", "r") and abs(value) > IMPLAUSIBLE_PLATE_MM:
        return True, f"plate dimension {value:g} mm accepted"
    if damage.table == "forces" and damage.column == "position":
        return False, ""  # positions near the ends are snapped onto them by design
    if old is not None and old != 0.0 and before != 0.0:
        expected = before * written / old
        if not math.isclose(value, expected, rel_tol=READ_TOLERANCE, abs_tol=1e-300):
            return True, f"{damage.new!r} read as {value!r}, expected {expected!r}"
    return False, ""


def _as_number(text: str, decimal: str) -> float | None:
    """The number a cell's text says (blanks stripped, the file's decimal mark), or None."""
    t = text.strip()
    if decimal == ",":
        if "." in t:
            return None
        t = t.replace(",", ".")
    try:
        v = float(t)
    except ValueError:
        return None
    # Python reads "nan", "inf", "infinity" and hexadecimal-free forms; only finite numbers count.
    return v if math.isfinite(v) else None


def _model_value(model, damage: Damage) -> float | None:
    """The model's value in the damaged cell (internal units), or None where it has no single
    place (an id column, an optional column dropped from the model)."""
    t, r, col = damage.table, damage.record, damage.column
    try:
        if t == "forces" and col in model.forces:
            return float(model.forces[col].to_numpy()[r])
        if t == "nodes" and col in ("x", "y", "z"):
            ident = _id_of(model, "nodes", r)
            return float(model.nodes.loc[ident, col]) if ident is not None else None
        if t == "sections" and col in model.sections:
            ident = _id_of(model, "sections", r)
            return float(model.sections.loc[ident, col]) if ident is not None else None
    except (KeyError, IndexError, TypeError, ValueError):
        return None
    return None


def _id_of(model, table: str, record: int) -> str | None:
    """The id written in a record of the damaged table (read back from its file)."""
    s = model.settings
    rows = _read_rows(s.path(table), s.delimiter)
    id_col = s.columns[table]["id" if table == "nodes" else "name"]
    header = [h.strip() for h in rows[0]]
    if id_col not in header or record + 1 >= len(rows):
        return None
    return rows[record + 1][header.index(id_col)].strip()
