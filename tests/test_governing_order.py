"""The governing row of each member and the worst pair, against a plain reference on random tables.

The fast paths order only the candidate rows; the reference orders every row by the stated rule
(exports.WORST_RULE): highest utilization, then member, segment and combination in natural and
file order. Ties are made on purpose (utilizations drawn from a few values, common practice for
testing a tie-break).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from flangewise.postproc import exports
from hypothesis import given, settings
from hypothesis import strategies as st

STATUS = ["ok", "over", "not critical", "not checked", "verify length"]


def _reference_governing(seg: pd.DataFrame) -> pd.DataFrame:
    checked = seg["status"].isin(exports.CHECKED).to_numpy()
    unchecked = (seg["status"] == "not checked").to_numpy()
    kind = np.where(checked, 0, np.where(unchecked, 1, 2))
    order = exports.worst_order(seg)
    order = order[np.argsort(kind[order], kind="stable")]
    names, inverse = np.unique(seg["member"].astype(str).to_numpy(), return_inverse=True)
    member = exports.natural_rank(names)[inverse]
    first = order[~pd.Series(member[order]).duplicated().to_numpy()]
    return seg.iloc[first[np.argsort(member[first], kind="stable")]].reset_index(drop=True)


@st.composite
def tables(draw: st.DrawFn) -> pd.DataFrame:
    n = draw(st.integers(1, 60))
    members = [f"M{draw(st.integers(1, 12))}" for _ in range(n)]
    segments = [f"{m}-top-{draw(st.integers(1, 11))}" for m in members]
    combos = [f"C{draw(st.integers(1, 3))}" for _ in range(n)]
    status = [draw(st.sampled_from(STATUS)) for _ in range(n)]
    util = [
        draw(st.sampled_from([0.2, 0.5, 0.5, 0.9, float("nan")]))
        if s in exports.CHECKED
        else np.nan
        for s in status
    ]
    return pd.DataFrame(
        {
            "member": pd.Categorical(members),
            "segment": pd.Categorical(segments),
            "combination": pd.Categorical(combos, categories=["C3", "C1", "C2"]),
            "utilization": util,
            "status": pd.Categorical(status, categories=STATUS),
        }
    )


@settings(max_examples=100, deadline=None)
@given(tables())
def test_governing_equals_the_reference(seg):
    pd.testing.assert_frame_equal(exports.governing_table(seg), _reference_governing(seg))


@settings(max_examples=100, deadline=None)
@given(tables())
def test_the_worst_row_is_first_in_worst_order(seg):
    checked = seg["status"].isin(exports.CHECKED).to_numpy()
    if not checked.any():
        return
    expected = seg[checked].iloc[exports.worst_order(seg[checked])[0]]
    got = seg.iloc[exports.worst_row(seg, checked)]
    assert (got["member"], got["segment"], got["combination"]) == (
        expected["member"],
        expected["segment"],
        expected["combination"],
    )
