"""The order of the force stations along members: one stable integer sort, the same order as a
full sort by (combination, element, s), whatever the row order of the forces file.

Our own checks of the engine's bookkeeping (no published values are involved): the stations of a
segment's diagram must come out in the same order as a lexicographic sort by (combination,
element, position along the member) with ties in file order, for rows in file order, shuffled,
with elements drawn against their member and with two stations at one place (a moment jump).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest
from flangewise.engine.check import check_model
from flangewise.engine.diagrams import _station_order
from flangewise.postproc.cli import sample_path
from flangewise.readers import load_model


def _reference(ccode: np.ndarray, erow: np.ndarray, n_el: int, s: np.ndarray) -> np.ndarray:
    """The order by a full lexicographic sort: (combination, element row, s), ties by row."""
    return np.lexsort((s, ccode.astype(np.int64) * (n_el + 1) + erow))


def _stations(rng: np.random.Generator, n_el: int, n_comb: int, per: int, jumps: bool):
    """Stations of ``n_el`` elements of 1500 mm, ``per`` along each, in file order."""
    e = np.repeat(np.arange(n_el), per)
    t = np.tile(np.linspace(0.0, 1.0, per), n_el)
    if jumps:  # a second station at mid-length on every third element: a moment jump
        extra = np.flatnonzero((e % 3 == 0) & (t == t[per // 2]))
        e = np.insert(e, extra + 1, e[extra])
        t = np.insert(t, extra + 1, t[extra])
    e = np.tile(e, n_comb)
    t = np.tile(t, n_comb)
    c = np.repeat(np.arange(n_comb), len(e) // n_comb)
    backwards_el = rng.random(n_el) < 0.4
    # A backwards element is written from its own start: s falls as the position rises.
    s = e * 1500.0 + np.where(backwards_el[e], 1.0 - t, t) * 1500.0
    return c.astype(np.int8), e.astype(np.int32), s, backwards_el[e]


@pytest.mark.parametrize("jumps", [False, True])
@pytest.mark.parametrize("shuffle", ["none", "rows", "element-major"])
def test_one_stable_integer_sort_gives_the_lexicographic_order(jumps, shuffle):
    rng = np.random.default_rng(11)
    n_el, n_comb = 60, 7
    c, e, s, back = _stations(rng, n_el, n_comb, 5, jumps)
    if shuffle == "rows":
        perm = rng.permutation(len(s))
    elif shuffle == "element-major":
        perm = np.lexsort((c, e))
    else:
        perm = np.arange(len(s))
    c, e, s, back = c[perm], e[perm], s[perm], back[perm]
    order = _station_order(c, e, n_el, s, back)
    got = np.arange(len(s)) if order is None else order
    np.testing.assert_array_equal(got, _reference(c, e, n_el, s))


def test_rows_already_in_order_need_no_reordering():
    rng = np.random.default_rng(5)
    c, e, s, back = _stations(rng, 20, 3, 5, jumps=False)
    # Only elements drawn along their member: the file order is the order, no copy is made.
    keep = ~back
    assert _station_order(c[keep], e[keep], 20, s[keep], back[keep]) is None


def test_check_results_do_not_depend_on_the_row_order_of_the_forces():
    # Rows shuffled, except that rows at one (element, combination, position) keep their order
    # among themselves (a jump's two values are told apart by file order).
    model = load_model(sample_path("industrial_shed"))
    f = model.forces
    rng = np.random.default_rng(2)
    perm = rng.permutation(len(f))
    key = pd.DataFrame(
        {
            "e": f["element"].cat.codes.to_numpy()[perm],
            "c": f["combination"].cat.codes.to_numpy()[perm],
            "p": f["position"].to_numpy()[perm],
        }
    )
    fixed = perm.copy()
    dup = key.duplicated(["e", "c", "p"], keep=False).to_numpy()
    fixed[dup] = np.sort(perm[dup])  # the places of duplicates, refilled in file order
    shuffled = dataclasses.replace(model, forces=f.iloc[fixed].reset_index(drop=True))
    a = check_model(model, exact=False).results
    b = check_model(shuffled, exact=False).results
    pd.testing.assert_frame_equal(a, b, check_exact=True)
