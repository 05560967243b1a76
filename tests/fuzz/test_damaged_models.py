"""Damaged sample models: every run is refused cleanly or read right, never a crash.

A short, seeded run of the harness in ``damage.py`` (its docstring lists the rules judged). The
long run is ``tests/benchmarks/fuzz_models.py``. Hypothesis draws the damage plans; with
``derandomize`` the same plans are drawn on every machine, so CI is repeatable, and a failure is
shrunk to a small plan that names the damage.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

_spec = importlib.util.spec_from_file_location("fuzz_damage", Path(__file__).with_name("damage.py"))
damage = importlib.util.module_from_spec(_spec)
sys.modules["fuzz_damage"] = damage
_spec.loader.exec_module(damage)

plans = st.builds(
    damage.Plan,
    sample=st.sampled_from(damage.SAMPLES),
    kind=st.sampled_from(sorted(set(damage.KINDS))),
    table=st.integers(0, 5),
    pick=st.floats(0.0, 0.999),
    pick2=st.floats(0.0, 0.999),
    token=st.sampled_from(damage.TOKENS),
    seed=st.integers(0, 2**31 - 1),
)


@settings(
    max_examples=200,
    deadline=None,
    derandomize=True,
    database=None,
    # The plan is its own readable report (Verdict.detail); shrinking a run of the whole tool
    # costs minutes for little gain.
    phases=(Phase.explicit, Phase.generate),
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(plan=plans)
def test_a_damaged_model_is_refused_or_read_right(plan, tmp_path):
    verdict = damage.run_plan(plan, tmp_path / "run")
    assert verdict.ok, verdict.detail
