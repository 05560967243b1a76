"""The settings file: which file is which table, column names, CSV dialect, units, signs.

Read with the standard library (``tomllib``). Every key is optional; with no settings file at
all our canonical file names, column names and SI units apply (see README, "Input reference").
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Literal

from flangewise.readers import units
from flangewise.readers.errors import InputError, Problem

#: The settings file looked for in a model folder when none is named.
SETTINGS_NAME = "flangewise.toml"

TableName = Literal["nodes", "elements", "sections", "forces", "braces", "supports"]
TABLES: tuple[TableName, ...] = ("nodes", "elements", "sections", "forces", "braces", "supports")

#: Tables a model may leave out (sections: when every element names a catalogue shape).
OPTIONAL_TABLES: frozenset[str] = frozenset({"sections", "braces", "supports"})

#: Canonical column names per table: (name, required).
COLUMNS: dict[str, tuple[tuple[str, bool], ...]] = {
    "nodes": (("id", True), ("x", True), ("y", True), ("z", True)),
    "elements": (
        ("id", True),
        ("start", True),
        ("end", True),
        ("section", True),
        ("member", False),
    ),
    "sections": (
        ("name", True),
        ("d", True),
        ("b", True),
        ("tf", True),
        ("tw", True),
        ("r", False),
        ("fy", False),
        ("A", False),
        ("Ix", False),
        ("Iy", False),
        ("Sx", False),
        ("Zx", False),
        ("J", False),
        ("Cw", False),
    ),
    "forces": (
        ("element", True),
        ("combination", True),
        ("position", True),
        ("M", True),
        ("N", False),
        ("V", False),
        ("M_minor", False),
        ("T", False),
    ),
    "braces": (("node", True), ("flange", True)),
    "supports": (("node", True), ("restrains", False)),
}

FLANGE_WORDS: tuple[str, ...] = ("top", "bottom", "both")

#: Yield stresses outside this range [MPa] are almost always a units mistake (common practice:
#: structural steel grades lie between about 200 and 700 MPa).
FY_RANGE_MPA = (150.0, 1000.0)

#: Characters that cannot separate fields: they end rows, quote values or occur in numbers.
_BAD_DELIMITERS = frozenset('\n\r"0123456789.+-eE')


@dataclass(frozen=True)
class Units:
    """Units of the input files (names as in :mod:`readers.units`)."""

    length: str = "m"
    force: str = "kN"
    moment: str = "kN*m"
    section: str = "mm"
    stress: str = "MPa"


@dataclass(frozen=True)
class MemberSettings:
    """How elements chain into members and where flanges are braced (``[members]``).

    Attributes:
        angle_tolerance: largest angle [degrees] between two elements that still continue one
            straight member.
        breaks: node ids where every member ends, collinear or not.
        connected_ends_brace: whether a member end that connects to another element or a support
            braces both flanges.
        infer_braces: whether an element framing into a member at ``infer_min_angle`` or more
            braces it (marked as assumed wherever it is used).
        infer_min_angle: smallest angle [degrees] between a member and an element framing into it
            for that element to count as a brace.
        infer_flange: the flange such an inferred brace holds.
    """

    angle_tolerance: float = 0.5
    breaks: tuple[str, ...] = ()
    connected_ends_brace: bool = True
    infer_braces: bool = False
    infer_min_angle: float = 60.0
    infer_flange: Literal["top", "bottom", "both"] = "top"


GradientMethod = Literal["end_moment", "quarter_point", "cb", "exact"]
GRADIENT_METHODS: tuple[str, ...] = ("end_moment", "quarter_point", "cb", "exact")

LoadHeight = Literal["shear_centre", "top_flange", "bottom_flange"]
LOAD_HEIGHTS: tuple[str, ...] = ("shear_centre", "top_flange", "bottom_flange")


@dataclass(frozen=True)
class CheckSettings:
    """Material constants, resistance factor and the design-basis gradient method (``[check]``).

    Attributes:
        gradient: the moment-gradient method the check is based on: "end_moment" (ω2 from κ,
            SANS 10162-1:2011 cl. 13.6(a)), "quarter_point" (CSA S16-14 cl. 13.6(a)(ii)), "cb"
            (AISC 360-16 Eq. F1-1) or "exact" (the factor from an elastic buckling analysis of
            the segment's own diagram). All four are always reported.
        E: elastic modulus [MPa].
        G: shear modulus [MPa].
        phi: resistance factor φ [-].
        load_height: where the transverse loads of every segment act, for the exact analysis:
            at the shear centre, on the top flange (destabilising under gravity) or on the bottom
            flange.
        limit_to_exact: whether a design-basis factor more than 5 % above the exact factor is
            limited to the exact factor (flag ``code-factor-high``).
    """

    gradient: GradientMethod = "end_moment"
    E: float = 200_000.0
    G: float = 77_000.0
    phi: float = 0.9
    load_height: LoadHeight = "shear_centre"
    limit_to_exact: bool = True


@dataclass(frozen=True)
class Settings:
    """Everything the readers need to map one program's export onto our model.

    Attributes:
        folder: the model folder; file names are relative to it.
        source: the settings file read, or ``None`` for the built-in defaults.
        files: file name per table.
        named_files: the tables whose file the settings file names in ``[files]``; such a file
            must exist even for an optional table (a misspelt name is not "no braces").
        columns: per table, our column name -> the file's column name.
        delimiter: CSV field delimiter.
        decimal: decimal mark ("." or ",").
        units: units of the files.
        positions: "distance" from the element's start node, or "fraction" of its length.
        positive_moment: which flange a positive major-axis moment compresses.
        backwards_flips_sign: whether the program reports the opposite moment sign for an element
            drawn backwards (see README, "Sign convention").
        combinations: load combinations to include; empty for all.
        vertical: the global axis that points up.
        default_fy: yield stress [MPa] for sections that give none.
        flange_words: per flange word of ours, the extra words that mean it in the braces file.
        members: member chaining and bracing settings (``[members]``).
        check: material constants, φ and the gradient method (``[check]``).
        output_units: the unit system of every output, "si" or "us" (``[output] units``);
            ``None`` for the system of the input units.
        full_table: how the full result table is written (``[output] full_table``): "auto"
            (CSV for a table a spreadsheet can take, Parquet for a large one), "csv", "parquet"
            or "both".
    """

    folder: Path
    source: Path | None = None
    files: Mapping[str, str] = field(
        default_factory=lambda: MappingProxyType({t: f"{t}.csv" for t in TABLES})
    )
    named_files: frozenset[str] = frozenset()
    columns: Mapping[str, Mapping[str, str]] = field(
        default_factory=lambda: MappingProxyType(
            {t: MappingProxyType({c: c for c, _ in COLUMNS[t]}) for t in TABLES}
        )
    )
    delimiter: str = ","
    decimal: str = "."
    units: Units = field(default_factory=Units)
    positions: Literal["distance", "fraction"] = "distance"
    positive_moment: Literal["compresses_top", "compresses_bottom"] = "compresses_top"
    backwards_flips_sign: bool = False
    combinations: tuple[str, ...] = ()
    vertical: Literal["z", "y"] = "z"
    default_fy: float = 350.0
    flange_words: Mapping[str, tuple[str, ...]] = field(
        default_factory=lambda: MappingProxyType({w: () for w in FLANGE_WORDS})
    )
    members: MemberSettings = field(default_factory=MemberSettings)
    check: CheckSettings = field(default_factory=CheckSettings)
    output_units: Literal["si", "us"] | None = None
    full_table: Literal["auto", "csv", "parquet", "both"] = "auto"

    def path(self, table: str) -> Path:
        """Return the path of a table's file."""
        return self.folder / self.files[table]


#: Settings tables read for the engine (chaining, bracing, check constants).
_ENGINE_SECTIONS = ("members", "check")
_FLOAT = (int, float)
_CHOICES: dict[tuple[str, str], tuple[str, ...]] = {
    ("forces", "positions"): ("distance", "fraction"),
    ("forces", "positive_moment"): ("compresses_top", "compresses_bottom"),
    ("geometry", "vertical"): ("z", "y"),
}


def _expect(problems: list[Problem], name: str, key: str, value: object, expected: str) -> None:
    problems.append(Problem(name, None, key, str(value), expected))


def read_settings(folder: Path | str, settings_file: Path | str | None = None) -> Settings:
    """Read the settings for the model in ``folder``.

    Args:
        folder: the model folder holding the CSV files.
        settings_file: a settings file to use; by default ``flangewise.toml`` in ``folder`` if it
            exists, else the built-in defaults.

    Raises:
        InputError: the file is missing (when named), is not valid TOML, or holds an unknown key or
            an unknown unit or choice. Every problem is listed.
    """
    folder = Path(folder)
    if settings_file is None:
        candidate = folder / SETTINGS_NAME
        if not candidate.is_file():
            return Settings(folder=folder)
        settings_file = candidate
    path = Path(settings_file)
    name = str(path)
    if not path.is_file():
        raise InputError([Problem(name, None, None, None, "a settings file at this path")])
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputError([Problem(name, None, None, None, f"valid TOML ({exc})")]) from None
    return _settings_from_dict(folder, path, data)


def _settings_from_dict(folder: Path, path: Path, data: dict[str, Any]) -> Settings:
    name = str(path)
    problems: list[Problem] = []
    known = {
        "files",
        "columns",
        "csv",
        "units",
        "forces",
        "geometry",
        "material",
        "flange_words",
        "output",
    }
    for key in data:
        if key not in known | set(_ENGINE_SECTIONS):
            _expect(problems, name, key, key, f"one of the tables {sorted(known)}")

    def table(key: str) -> dict[str, Any]:
        value = data.get(key, {})
        if not isinstance(value, dict):
            _expect(problems, name, key, value, "a table ([" + key + "])")
            return {}
        return value

    def check_keys(section: str, got: dict[str, Any], allowed: tuple[str, ...]) -> None:
        for key in got:
            if key not in allowed:
                _expect(problems, name, f"{section}.{key}", key, f"one of {list(allowed)}")

    files_in = table("files")
    check_keys("files", files_in, TABLES)
    files: dict[str, str] = {t: str(files_in.get(t, f"{t}.csv")) for t in TABLES}

    columns_in = table("columns")
    check_keys("columns", columns_in, TABLES)
    columns: dict[str, Mapping[str, str]] = {}
    for t in TABLES:
        given = columns_in.get(t, {})
        ours = tuple(c for c, _ in COLUMNS[t])
        if not isinstance(given, dict):
            _expect(problems, name, f"columns.{t}", given, "a table of our name = their name")
            given = {}
        check_keys(f"columns.{t}", given, ours)
        columns[t] = MappingProxyType({c: str(given.get(c, c)) for c in ours})
        _one_file_column_each(name, t, columns[t], problems)

    csv_in = table("csv")
    check_keys("csv", csv_in, ("delimiter", "decimal"))
    delimiter = str(csv_in.get("delimiter", ","))
    decimal = str(csv_in.get("decimal", "."))
    if len(delimiter) != 1 or delimiter in _BAD_DELIMITERS:
        _expect(
            problems,
            name,
            "csv.delimiter",
            delimiter,
            "one character, such as ',' or ';' (not a line break, a quote, a digit, '.', '+', "
            "'-' or 'e')",
        )
    if decimal not in (".", ","):
        _expect(problems, name, "csv.decimal", decimal, "'.' or ','")
    if decimal == delimiter:
        _expect(problems, name, "csv.decimal", decimal, "a decimal mark other than the delimiter")

    units_in = table("units")
    check_keys("units", units_in, ("length", "force", "moment", "section", "stress"))
    defaults = Units()
    unit_values = {k: str(units_in.get(k, getattr(defaults, k))) for k in defaults.__dict__}
    kinds: dict[str, units.UnitKind] = {
        "length": "length",
        "section": "length",
        "force": "force",
        "moment": "moment",
        "stress": "stress",
    }
    for key, kind in kinds.items():
        try:
            units.factor(kind, unit_values[key])
        except KeyError:
            _expect(
                problems,
                name,
                f"units.{key}",
                unit_values[key],
                f"one of {units.known_units(kind)}",
            )

    forces_in = table("forces")
    check_keys(
        "forces",
        forces_in,
        ("positions", "positive_moment", "backwards_flips_sign", "combinations"),
    )
    geometry_in = table("geometry")
    check_keys("geometry", geometry_in, ("vertical",))
    for (section, key), allowed in _CHOICES.items():
        value = (forces_in if section == "forces" else geometry_in).get(key)
        if value is not None and value not in allowed:
            _expect(problems, name, f"{section}.{key}", value, f"one of {list(allowed)}")
    flips = forces_in.get("backwards_flips_sign", False)
    if not isinstance(flips, bool):
        _expect(problems, name, "forces.backwards_flips_sign", flips, "true or false")
    combos = forces_in.get("combinations", [])
    if not isinstance(combos, list):
        _expect(problems, name, "forces.combinations", combos, "a list of combination names")
        combos = []

    material_in = table("material")
    check_keys("material", material_in, ("fy",))
    # 350 MPa is a common structural grade; a model in another grade names its own (README).
    default_fy = 350.0
    if "fy" in material_in:
        stress = unit_values["stress"]
        fy = _yield_stress(material_in["fy"], units.STRESS_TO_MPA.get(stress, 1.0))
        if fy is None:
            lo, hi = FY_RANGE_MPA
            _expect(
                problems,
                name,
                "material.fy",
                material_in["fy"],
                f"a yield stress of {lo:g} to {hi:g} MPa once converted from '{stress}' "
                "(a value outside is almost always a units mistake: check [units] stress)",
            )
        else:
            default_fy = fy

    words_in = table("flange_words")
    check_keys("flange_words", words_in, FLANGE_WORDS)
    flange_words = _flange_words(name, words_in, problems)

    members = _member_settings(name, table("members"), problems)
    check = _check_settings(name, table("check"), problems)
    output_in = table("output")
    output_units = _output_units(name, output_in, problems)
    full_table = _full_table(name, output_in, problems)

    if problems:
        raise InputError(problems)
    return Settings(
        folder=folder,
        source=path,
        files=MappingProxyType(files),
        named_files=frozenset(t for t in TABLES if t in files_in),
        columns=MappingProxyType(columns),
        delimiter=delimiter,
        decimal=decimal,
        units=Units(**unit_values),
        positions=forces_in.get("positions", "distance"),
        positive_moment=forces_in.get("positive_moment", "compresses_top"),
        backwards_flips_sign=bool(flips),
        combinations=tuple(str(c) for c in combos),
        vertical=geometry_in.get("vertical", "z"),
        default_fy=default_fy,
        flange_words=MappingProxyType(flange_words),
        members=members,
        check=check,
        output_units=output_units,
        full_table=full_table,
    )


#: Unit systems of the outputs (``[output] units``).
OUTPUT_UNITS: tuple[str, ...] = ("si", "us")


def _output_units(
    name: str, given: dict[str, Any], problems: list[Problem]
) -> Literal["si", "us"] | None:
    """Read ``[output]``: ``units`` is "si" or "us" (any case); absent means the input's system."""
    for key in given:
        if key not in ("units", "full_table"):
            _expect(problems, name, f"output.{key}", key, "one of ['units', 'full_table']")
    if "units" not in given:
        return None
    value = given["units"]
    text = value.strip().lower() if isinstance(value, str) else None
    if text == "si":
        return "si"
    if text == "us":
        return "us"
    _expect(
        problems,
        name,
        "output.units",
        value,
        "'si' (m, mm, kN, kN·m, MPa) or 'us' (ft, in, kip, kip·ft, ksi); leave it out for the "
        "system of the input units",
    )
    return None


#: How the full result table may be written (``[output] full_table``).
FULL_TABLE: tuple[str, ...] = ("auto", "csv", "parquet", "both")


def _full_table(
    name: str, given: dict[str, Any], problems: list[Problem]
) -> Literal["auto", "csv", "parquet", "both"]:
    """Read ``[output] full_table``; absent means "auto"."""
    value = given.get("full_table", "auto")
    text = value.strip().lower() if isinstance(value, str) else None
    if text in ("auto", "csv", "parquet", "both"):
        return text  # type: ignore[return-value]
    _expect(
        problems,
        name,
        "output.full_table",
        value,
        "'auto' (CSV up to 100 000 rows, Parquet beyond), 'csv', 'parquet' or 'both'",
    )
    return "auto"


def _one_file_column_each(
    name: str, table: str, mapping: Mapping[str, str], problems: list[Problem]
) -> None:
    """Record every file column that two of our columns are mapped to (blanks ignored)."""
    owner: dict[str, str] = {}
    for ours, theirs in mapping.items():
        key = theirs.strip()
        if key in owner:
            _expect(
                problems,
                name,
                f"columns.{table}.{ours}",
                theirs,
                f"a file column of its own: [columns.{table}] {owner[key]} is already mapped to "
                f"'{key}' (by default our names map to the file columns of the same name)",
            )
        else:
            owner[key] = ours


def _yield_stress(value: object, to_mpa: float) -> float | None:
    """Return ``value`` in MPa when it is a finite number in :data:`FY_RANGE_MPA`, else ``None``."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return None
    mpa = float(value) * to_mpa
    lo, hi = FY_RANGE_MPA
    # NaN fails both comparisons; infinities fail one.
    return mpa if lo <= mpa <= hi else None


def _flange_words(
    name: str, given: dict[str, Any], problems: list[Problem]
) -> dict[str, tuple[str, ...]]:
    """Read ``[flange_words]``: extra words per flange, lower case.

    An extra word may not be one of ours (``top = ["bottom"]`` would brace the wrong flange) nor
    mean two flanges; it must not be empty.
    """
    out: dict[str, tuple[str, ...]] = {}
    owner: dict[str, str] = {}
    for w in FLANGE_WORDS:
        where = f"flange_words.{w}"
        words = given.get(w, [])
        if isinstance(words, str):
            words = [words]
        if not isinstance(words, list):
            _expect(problems, name, where, words, "a word or a list of words")
            words = []
        kept = []
        for raw in words:
            word = str(raw).strip().lower()
            if not isinstance(raw, str) or not word:
                _expect(problems, name, where, raw, "a word (text that is not empty)")
            elif word in FLANGE_WORDS:
                _expect(
                    problems,
                    name,
                    where,
                    raw,
                    f"a word other than our own {list(FLANGE_WORDS)}, which always mean themselves",
                )
            elif word in owner and owner[word] != w:
                _expect(
                    problems,
                    name,
                    where,
                    raw,
                    f"a word that means one flange only: flange_words.{owner[word]} has it too",
                )
            else:
                owner[word] = w
                kept.append(word)
        out[w] = tuple(kept)
    return out


def _member_settings(name: str, given: dict[str, Any], problems: list[Problem]) -> MemberSettings:
    """Read ``[members]``; record every bad key or value."""
    default = MemberSettings()
    allowed = tuple(default.__dict__)
    values: dict[str, Any] = {}
    for key, value in given.items():
        where = f"members.{key}"
        if key not in allowed:
            _expect(problems, name, where, key, f"one of {list(allowed)}")
        elif key in ("angle_tolerance", "infer_min_angle"):
            ok = isinstance(value, _FLOAT) and not isinstance(value, bool) and 0 < value < 90
            if not ok:
                _expect(problems, name, where, value, "an angle in degrees between 0 and 90")
            else:
                values[key] = float(value)
        elif key in ("connected_ends_brace", "infer_braces"):
            if not isinstance(value, bool):
                _expect(problems, name, where, value, "true or false")
            else:
                values[key] = value
        elif key == "breaks":
            if not isinstance(value, list):
                _expect(problems, name, where, value, "a list of node ids")
            else:
                values[key] = tuple(str(v).strip() for v in value)
        elif key == "infer_flange":
            if value not in FLANGE_WORDS:
                _expect(problems, name, where, value, f"one of {list(FLANGE_WORDS)}")
            else:
                values[key] = value
    return MemberSettings(**values)


def _check_settings(name: str, given: dict[str, Any], problems: list[Problem]) -> CheckSettings:
    """Read ``[check]``; record every bad key or value."""
    default = CheckSettings()
    allowed = tuple(default.__dict__)
    values: dict[str, Any] = {}
    ranges = {"E": (1.0e4, 1.0e6), "G": (1.0e4, 1.0e6), "phi": (0.5, 1.0)}
    for key, value in given.items():
        where = f"check.{key}"
        if key not in allowed:
            _expect(problems, name, where, key, f"one of {list(allowed)}")
        elif key == "gradient":
            if value not in GRADIENT_METHODS:
                _expect(problems, name, where, value, f"one of {list(GRADIENT_METHODS)}")
            else:
                values[key] = value
        elif key == "load_height":
            if value not in LOAD_HEIGHTS:
                _expect(problems, name, where, value, f"one of {list(LOAD_HEIGHTS)}")
            else:
                values[key] = value
        elif key == "limit_to_exact":
            if not isinstance(value, bool):
                _expect(problems, name, where, value, "true or false")
            else:
                values[key] = value
        else:
            lo, hi = ranges[key]
            ok = isinstance(value, _FLOAT) and not isinstance(value, bool) and lo <= value <= hi
            if not ok:
                unit = "" if key == "phi" else " MPa"
                _expect(problems, name, where, value, f"a number from {lo:g} to {hi:g}{unit}")
            else:
                values[key] = float(value)
    return CheckSettings(**values)
