"""Values at the edges of what the readers accept check without a numpy warning or a crash.

The readers refuse coordinates beyond 10 000 km, plates outside the common-practice ranges of
``readers/load.py`` and moments beyond 1e7 kN·m; everything inside must run through the engine
cleanly (no division by zero, no overflow). Invented models; m and kN·m as in ``conftest.py``.
"""

from __future__ import annotations

import numpy as np
import pytest
from flangewise.engine.check import check_model

#: Sections at the corners of the accepted plate ranges: (d, b, tf, tw, r [mm], fy [MPa]).
EDGE_SECTIONS = {
    "BIG": (5000.0, 2000.0, 250.0, 250.0, 0.0, 1000.0),
    "SMALL": (50.0, 25.0, 1.0, 1.0, 11.0, 150.0),  # r just below (25 - 1) / 2 = 12 mm
}


@pytest.mark.filterwarnings("error")
@pytest.mark.parametrize("section", sorted(EDGE_SECTIONS))
@pytest.mark.parametrize("moment", [1.0e-6, 9.9e6])
def test_model_at_the_edges_of_the_ranges_checks_cleanly(frame, section, moment):
    # A two-span beam 9 990 km from the origin (map-grid coordinates near the limit), braced at
    # midspan of each span.
    f = frame()
    f.sections = dict(EDGE_SECTIONS)
    x0 = 9.99e6
    for i in range(5):
        f.node(f"N{i}", x0 + 2.0 * i, -9.99e6, 9.99e6)
    for i in range(4):
        f.element(f"E{i}", f"N{i}", f"N{i + 1}", section=section)
    f.support("N0").support("N2").support("N4").brace("N1", "top").brace("N3", "bottom")
    f.moment_field("C1", lambda x, y, z: moment * np.sin((x - x0) * np.pi / 4.0), stations=7)
    result = check_model(f.load())
    r = result.results
    assert len(r) > 0
    numbers = r[["length", "Mcr", "Mr", "demand", "factor"]].to_numpy(dtype=float)
    assert np.isfinite(numbers).all()
    assert (r.loc[r["status"] != "not checked", "utilization"].dropna() >= 0.0).all()
