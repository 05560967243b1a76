"""A foreign program's export, mapped by the settings file, loads to the same model as ours.

The foreign copy of the base model is made here from the canonical one: other column names,
semicolons, decimal commas, US customary units, positions as fractions of the element length and
the opposite moment sign. Values are converted with the exact definitions of NIST SP 811 (2008),
Appendix B: 1 in = 25.4 mm, 1 ft = 0.3048 m, 1 lbf = 4.4482216152605 N, 1 kip = 1000 lbf.
"""

from __future__ import annotations

import math

import pandas as pd
import pandas.testing as pdt
from flangewise import readers

IN_MM = 25.4  # NIST SP 811 (2008), App. B: 1 in = 25.4 mm, exact
FT_MM = 304.8  # NIST SP 811 (2008), App. B: 1 ft = 0.3048 m, exact
KIP_N = 1000.0 * 4.4482216152605  # NIST SP 811 (2008), App. B: 1 kip = 1000 lbf, exact
KSI_MPA = KIP_N / IN_MM**2  # 1 ksi = 1 kip/in² (definition of the unit)
M_MM = 1000.0  # SI: 1 m = 10³ mm
KNM_NMM = 1.0e6  # SI: 1 kN·m = 10³ N x 10³ mm

#: Relative tolerance between the two loads. The factors are exact definitions and every value is
#: written with Python's shortest round-trip repr, so the two paths differ only by a few float
#: roundings (about 1e-16 each). 1e-9 is far above that, and far below any wrong factor worth
#: catching: the US survey foot, the nearest plausible mistake, differs from the foot by 2e-6.
RTOL = 1e-9

#: The foreign program's column names (invented), per table: ours -> theirs.
FOREIGN_COLUMNS: dict[str, dict[str, str]] = {
    "nodes": {"id": "Joint", "x": "X", "y": "Y", "z": "Z"},
    "elements": {"id": "Frame", "start": "JointI", "end": "JointJ", "section": "Section Name"},
    "sections": {
        "name": "Section Name",
        "d": "Depth",
        "b": "Width",
        "tf": "FlangeThk",
        "tw": "WebThk",
        "r": "Fillet",
        "fy": "Fy",
    },
    "forces": {"element": "Frame", "combination": "OutputCase", "position": "RelDist", "M": "M3"},
    "braces": {"node": "Joint", "flange": "Side"},
    "supports": {"node": "Joint", "restrains": "Fixity"},
}

FOREIGN_SETTINGS = """
[csv]
delimiter = ";"
decimal = ","

[units]
length = "ft"
force = "kip"
moment = "kip*ft"
section = "in"
stress = "ksi"

[forces]
positions = "fraction"
positive_moment = "compresses_bottom"

[flange_words]
top = ["Upper"]
"""


def element_lengths_m(tables: dict[str, list[list[str]]]) -> dict[str, float]:
    """Return each element's length [m] from the canonical nodes and elements tables."""
    nodes = {row[0]: [float(v) for v in row[1:4]] for row in tables["nodes"][1:]}
    header = tables["elements"][0]
    out = {}
    for row in tables["elements"][1:]:
        rec = dict(zip(header, row, strict=True))
        out[rec["id"]] = math.dist(nodes[rec["start"]], nodes[rec["end"]])
    return out


def foreign_tables(tables: dict[str, list[list[str]]]) -> dict[str, list[list[str]]]:
    """Convert canonical tables (m, kN*m, mm, MPa) to the foreign layout's values and names."""
    lengths = element_lengths_m(tables)
    convert = {
        **{("nodes", c): lambda v, rec: float(v) * M_MM / FT_MM for c in "xyz"},
        **{("sections", c): lambda v, rec: float(v) / IN_MM for c in ("d", "b", "tf", "tw", "r")},
        ("sections", "fy"): lambda v, rec: float(v) / KSI_MPA,
        ("forces", "position"): lambda v, rec: float(v) / lengths[rec["element"]],
        # Their positive moment compresses the bottom flange: the opposite of ours.
        ("forces", "M"): lambda v, rec: -float(v) * KNM_NMM / (KIP_N * FT_MM),
        ("braces", "flange"): lambda v, rec: "Upper" if v == "top" else v,
    }
    out = {}
    for table, rows in tables.items():
        header = rows[0]
        body = []
        for row in rows[1:]:
            rec = dict(zip(header, row, strict=True))
            new = []
            for col in header:
                value = convert[table, col](rec[col], rec) if (table, col) in convert else rec[col]
                new.append(repr(value).replace(".", ",") if isinstance(value, float) else value)
            body.append(new)
        out[table] = [[FOREIGN_COLUMNS[table][c] for c in header], *body]
    return out


def columns_toml() -> str:
    """Return the ``[columns.<table>]`` sections naming the foreign columns."""
    parts = []
    for table, names in FOREIGN_COLUMNS.items():
        parts.append(f"[columns.{table}]")
        parts += [f'{ours} = "{theirs}"' for ours, theirs in names.items()]
    return "\n" + "\n".join(parts) + "\n"


def test_foreign_layout_loads_to_the_same_model(model_files):
    canonical = model_files("canonical")
    foreign = model_files("foreign")
    foreign.tables = foreign_tables(canonical.tables)
    foreign.settings = FOREIGN_SETTINGS + columns_toml()
    foreign.write(delimiter=";")
    assert ";" in (foreign.folder / "forces.csv").read_text()  # the foreign dialect is in use

    ours, theirs = canonical.load(), readers.load_model(foreign.folder)

    for table in ("nodes", "elements", "sections", "braces", "supports"):
        pdt.assert_frame_equal(
            getattr(theirs, table), getattr(ours, table), rtol=RTOL, atol=0.0, obj=table
        )
    pdt.assert_frame_equal(
        theirs.forces[["element", "combination", "position", "M"]],
        ours.forces[["element", "combination", "position", "M"]],
        rtol=RTOL,
        atol=0.0,
        obj="forces",
    )


def test_vertical_y_maps_coordinates(model_files):
    canonical = model_files("z_up")
    y_up = model_files("y_up")
    # The same points with Y up: (X, Y, Z) = (x, z, -y), a rotation about x keeping a
    # right-handed system.
    for row in y_up.tables["nodes"][1:]:
        x, y, z = row[1:4]
        row[1:4] = [x, z, str(-float(y))]
    y_up.settings = '[geometry]\nvertical = "y"\n'

    ours, theirs = canonical.load(), y_up.load()

    pdt.assert_series_equal(theirs.elements["length"], ours.elements["length"])
    pdt.assert_series_equal(theirs.nodes["z"], ours.nodes["z"])
    # Elevation 3 m in the input, in mm.
    assert theirs.nodes["z"].tolist() == [3000.0] * 3


def test_backwards_flips_sign_negates_backwards_elements_only(model_files):
    plain = model_files("plain")
    flips = model_files("flips")
    for m in (plain, flips):
        m.set("elements", row=3, column="start", value="N3")  # E2 drawn from N3 back to N2
        m.set("elements", row=3, column="end", value="N2")
    flips.settings = "[forces]\nbackwards_flips_sign = true\n"

    as_given, flipped = plain.load(), flips.load()

    # E2 points towards -x: drawn backwards by the README's definition; E1 towards +x.
    assert flipped.elements["backwards"].tolist() == [False, True]
    file_m = pd.Series([float(row[3]) for row in flips.tables["forces"][1:]])
    is_e2 = (flipped.forces["element"] == "E2").to_numpy()
    expected = file_m.where(~is_e2, -file_m) * KNM_NMM
    assert flipped.forces["M"].tolist() == expected.tolist()
    assert as_given.forces["M"].tolist() == (file_m * KNM_NMM).tolist()


def test_numeric_looking_ids_keep_their_text(model):
    # Programs that number their elements may pad the numbers: "01" must stay "01", not 1.
    model.set("elements", row=2, column="id", value="01")
    model.set("elements", row=3, column="id", value="02")
    for row in model.tables["forces"][1:]:
        row[0] = {"E1": "01", "E2": "02"}[row[0]]

    loaded = model.load()

    assert list(loaded.forces["element"].cat.categories) == ["01", "02"]
    assert set(loaded.forces["element"]) == {"01", "02"}
