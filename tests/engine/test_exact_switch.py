"""The check with the exact buckling analysis switched off (``check_model(..., exact=False)``).

Our own checks (no published values are involved): switched off, the exact columns are empty and
say why, nothing is limited to an exact factor, and every other number is the one the full check
gives where the exact factor did not limit it.
"""

from __future__ import annotations

import numpy as np
import pytest
from flangewise.engine.buckling import EXACT_NOTES
from flangewise.engine.check import check_model
from flangewise.postproc.cli import sample_path
from flangewise.readers import load_model

#: Columns that come from the exact analysis, or from the factor it may limit.
EXACT_DEPENDENT = {
    "exact_factor",
    "Mcr_exact",
    "exact_elements",
    "exact_note",
    "Mr_exact",
    "utilization_exact",
    "factor",
    "Mcr",
    "Mr",
    "utilization",
    "status",
    "flags",
    "flag_code-factor-high",
}


@pytest.fixture(scope="module")
def both():
    model = load_model(sample_path("industrial_shed"))
    return check_model(model).results, check_model(model, exact=False).results


def test_without_the_exact_analysis_the_other_columns_are_unchanged(both):
    on, off = both
    for column in on.columns.difference(sorted(EXACT_DEPENDENT)):
        assert on[column].equals(off[column]), column
    # Where the exact factor limited nothing, the factor and all that follows are the same too.
    free = ~on["flag_code-factor-high"].to_numpy()
    for column in ("factor", "Mcr", "Mr", "utilization"):
        np.testing.assert_array_equal(on[column].to_numpy()[free], off[column].to_numpy()[free])


def test_without_the_exact_analysis_nothing_is_limited_and_the_note_says_why(both):
    on, off = both
    assert on["flag_code-factor-high"].any(), "the shed should have a limited pair to compare"
    assert not off["flag_code-factor-high"].any()
    np.testing.assert_array_equal(off["factor"].to_numpy(), off["factor_basis"].to_numpy())
    assert off["exact_factor"].isna().all() and (off["exact_elements"] == 0).all()
    analysed = on["exact_factor"].notna().to_numpy()
    assert set(off["exact_note"].to_numpy()[analysed]) == {EXACT_NOTES[3]}
    # Pairs with no fork supports keep their own reason.
    reasons = on["exact_note"].to_numpy()[~analysed]
    np.testing.assert_array_equal(off["exact_note"].to_numpy()[~analysed], reasons)


def test_the_exact_basis_needs_the_exact_analysis():
    model = load_model(sample_path("two_span_beam"))
    settings = model.settings.check.__class__(gradient="exact")
    with pytest.raises(ValueError, match="exact"):
        check_model(model, settings, exact=False)
