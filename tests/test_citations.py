"""Every function that implements a clause or a published formula names its source.

A fixed citation line in the docstring (STYLE habit 2); the spelling is checked against the few
forms the project uses, so the same source is always cited the same way.
"""

from __future__ import annotations

import inspect
import re

import pytest
from flangewise.engine import gradient, resistance, sections

CITATION = re.compile(
    r"^(SANS 10162-1:2011, (cl\. 13\.6\(a\)|Table 3)\.|CSA S16-14, cl\. 13\.6\(a\)\(ii\)\."
    r"|AISC 360-16, Eq\. F1-1\.|Timoshenko & Gere \(1961\), ch\. 6\.|El Darwish & Johnston)"
)

CLAUSE_FUNCTIONS = [
    gradient.omega2_from_kappa,
    gradient.kappa_from_ends,
    gradient.end_moment_omega2,
    gradient.omega2_quarter_point,
    gradient.cb_aisc,
    resistance.m_cr,
    resistance.m_r,
    sections.section_properties,
    sections.section_class,
    sections.torsion_constant,
    sections.warping_constant,
]


@pytest.mark.parametrize("func", CLAUSE_FUNCTIONS, ids=lambda f: f.__name__)
def test_clause_function_carries_one_citation_line(func):
    doc = inspect.getdoc(func) or ""
    lines = [line.strip() for line in doc.splitlines()]
    cited = [line for line in lines if CITATION.match(line)]
    assert len(cited) == 1, f"{func.__name__}: expected one citation line, found {cited}"
