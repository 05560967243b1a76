"""Write the forces table of the two-span beam sample from the closed-form moment diagrams.

Two equal spans L continuous over a middle support, uniform load w (elastic beam theory, e.g. any
structural analysis textbook's table of continuous-beam coefficients):
both spans loaded:   R_end = 3wL/8, M_middle = -wL²/8;
first span only:     M_middle = -wL²/16, the second span carries only the linear hogging diagram.
Positive moment compresses the top flange (sagging).
Run from this folder: ``python make_forces.py``.
"""

from __future__ import annotations

import csv

import numpy as np

SPAN_M = 6.0
ELEMENT_M = 1.5
STATIONS = 5


def moment(x: np.ndarray, w1: float, w2: float) -> np.ndarray:
    """Moment [kN·m] at x [m] from the left end for span loads w1, w2 [kN/m]."""
    L = SPAN_M
    m_mid = -(w1 + w2) * L**2 / 16.0  # superposition of the two one-span cases
    left = x <= L
    r_a = w1 * L / 2 + m_mid / L
    xr = 2 * L - x
    r_c = w2 * L / 2 + m_mid / L
    return np.where(left, r_a * x - w1 * x**2 / 2, r_c * xr - w2 * xr**2 / 2)


def main() -> None:
    """Write forces.csv for both load combinations."""
    combos = {"ULS-1 gravity": (24.0, 24.0), "ULS-2 pattern": (24.0, 6.0)}
    # Elements B1..B8 along x; B6 is drawn backwards (from x = 9.0 m to x = 7.5 m).
    rows = []
    for combo, (w1, w2) in combos.items():
        for k in range(8):
            x0, x1 = k * ELEMENT_M, (k + 1) * ELEMENT_M
            backwards = k == 5
            for s in np.linspace(0.0, ELEMENT_M, STATIONS):
                x = (x1 - s) if backwards else (x0 + s)
                m = float(moment(np.array([x]), w1, w2)[0])
                rows.append((f"B{k + 1}", combo, round(s, 4), round(m, 3)))
    with open("forces.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["element", "combination", "position", "M"])
        out.writerows(rows)


if __name__ == "__main__":
    main()
