"""Named flags: the reasons a result needs a second look, and how they are written."""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Flag names (our own) and what each means, as the README and report explain them.
FLAGS: dict[str, str] = {
    "peak-inside": "a moment inside the segment exceeds the larger end moment: the end-moment "
    "formula does not apply there, ω2 = 1.0",
    "omega2-cap": "the design-basis factor reached its cap of 2.5",
    "cantilever": "the segment reaches a free end: factor 1.0, and L is the actual length; the "
    "effective length of a cantilever depends on the restraint at its root and tip and may be "
    "longer: verify",
    "class-4": "the section is class 4 in flexure: not checked by this tool",
    "sign-change": "the moment changes sign inside the segment (double curvature)",
    "few-stations": "fewer than 3 force stations inside the segment: the tool cannot see the "
    "diagram between the ends, factor 1.0",
    "end-unbraced": "the compression flange is not braced at one end: factor 1.0",
    "zero-ends": "both end moments are zero: no end-moment ratio, ω2 = 1.0",
    "assumed-brace": "an end of the segment is held only by an inferred (assumed) brace",
    "code-factor-high": "the design-basis factor is more than 5 % above the exact factor of this "
    "diagram (elastic buckling analysis): the code's shortcut overestimates Mcr here; the factor "
    "used is limited to the exact factor unless [check] limit_to_exact = false",
    "not-end-moments": "the end-moment formula was used on a diagram that is not end moments "
    "only: an inside station lies more than 5 % of |M|max off the straight line between the end "
    "moments, or the moment jumps inside (see the departure and jump columns)",
    "axial-force": "the segment carries an axial force above 5 % of its squash load A·fy (column "
    "|N|/(A·fy)): axial force and its interaction with bending are NOT checked by this tool. The "
    "file's sign of N is not known, so |N| is taken and tension counts too (conservative)",
}


def join_words(flags: dict[str, np.ndarray], sep: str = "+") -> np.ndarray:
    """Join, per row, the names of the flags that are true (vectorized over rows)."""
    n = len(next(iter(flags.values()))) if flags else 0
    out = np.full(n, "", dtype=object)
    for word, flag in flags.items():
        out = np.where(flag, np.where(out == "", word, out + sep + word), out)
    return out


def flag_labels(flags: dict[str, np.ndarray], sep: str = " ") -> pd.Categorical[str]:
    """Return, per row, the names of its true flags joined by ``sep``, as a categorical.

    Rows are encoded as bit masks first, so only each distinct combination of flags is turned into
    text: no string is built per row.
    """
    names = list(flags)
    n = len(flags[names[0]]) if names else 0
    mask = np.zeros(n, dtype=np.int64)
    for bit, name in enumerate(names):
        mask |= flags[name].astype(np.int64) << bit
    # Masks are small integers: count them instead of sorting them.
    present = np.flatnonzero(np.bincount(mask, minlength=1))
    code_of = np.full(int(present[-1]) + 1 if len(present) else 1, -1, dtype=np.int32)
    code_of[present] = np.arange(len(present), dtype=np.int32)
    labels = [
        sep.join(name for bit, name in enumerate(names) if (int(u) >> bit) & 1) for u in present
    ]
    return pd.Categorical.from_codes(code_of[mask], categories=pd.Index(labels))
