"""Write ``forces.csv`` of the rolled floor sample: simply supported beams under uniform load.

Each beam spans its element chain between two supports, so M(x) = w·x·(L − x)/2 [kN·m]
(statics of a simple span), at every eighth of each element.
"""

from __future__ import annotations

import csv
from pathlib import Path

HERE = Path(__file__).resolve().parent
#: Beam → (its elements in order, span [m], dead load [kN/m], live load [kN/m]).
BEAMS = {
    "B1": (("E11", "E12"), 9.0, 5.0, 9.0),
    "B2": (("E21", "E22"), 9.0, 3.5, 5.5),
    "B3": (("E31", "E32"), 6.0, 6.0, 10.0),
    "B4": (("E41", "E42"), 6.0, 8.0, 14.0),
}
COMBINATIONS = {"ULS 1.2D+1.6L": (1.2, 1.6), "SLS D+L": (1.0, 1.0)}


def main() -> None:
    """Write forces.csv beside this script."""
    with (HERE / "forces.csv").open("w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh, lineterminator="\n")
        out.writerow(["element", "combination", "position", "M"])
        for combination, (fd, fl) in COMBINATIONS.items():
            for elements, span, dead, live in BEAMS.values():
                w = fd * dead + fl * live
                half = span / len(elements)
                for k, element in enumerate(elements):
                    for i in range(9):
                        s = half * i / 8
                        x = k * half + s
                        out.writerow(
                            [element, combination, f"{s:.4f}", f"{w * x * (span - x) / 2:.3f}"]
                        )


if __name__ == "__main__":
    main()
