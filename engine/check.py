"""The buckling check of every segment and load combination, vectorized over all pairs.

For each (segment, combination) pair whose flange is in compression: the three gradient factors
side by side, the design-basis factor with its fall-backs to 1.0, Mcr, Mr, the demand and the
utilization, with flags saying where and why the tool was conservative.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from flangewise.engine import gradient, resistance
from flangewise.engine.buckling import EXACT_NOTES, ExactResult, exact_factors
from flangewise.engine.flags import flag_labels
from flangewise.engine.layout import Layout, build_layout
from flangewise.engine.sections import section_class, section_properties
from flangewise.engine.segments import FLANGES
from flangewise.readers.model import Model
from flangewise.readers.settings import CheckSettings

#: Result states, in code order.  "verify length": a checked cantilever pair at or below 1.0, whose
#: result stands only once the engineer has verified its effective length (the tool takes the
#: actual length, and the effective length of a cantilever depends on its root and tip restraint).
STATUS = ["ok", "over", "not critical", "not checked", "verify length"]

#: Column holding each method's factor in the results.
METHOD_COLUMN = {
    "end_moment": "omega2_end",
    "quarter_point": "omega2_qp",
    "cb": "cb",
    "exact": "exact_factor",
}

#: A design-basis factor more than this fraction above the exact factor is flagged
#: ``code-factor-high`` (common practice: 5 % covers the spread of published C1 tables for one
#: diagram and the rounding of exported moments; beyond it the shortcut is on the unsafe side).
EXACT_MARGIN = 0.05

#: An inside station farther than this share of |M|max from the straight line between the end
#: moments means the segment carries more than end moments (common practice: well above the
#: rounding of exported moments, well below a transverse load that changes ω2 noticeably).
LINE_SHARE = 0.05

#: An axial force above this share of the squash load A·fy is flagged ``axial-force`` (common
#: practice: below about 5 % the axial force barely changes a member's bending resistance, which
#: is why design codes let a lightly loaded member be checked for bending alone; above it the
#: interaction of axial force and bending needs its own check, which this tool does not make).
AXIAL_SHARE = 0.05


@dataclass(frozen=True)
class DiagramShape:
    """How far a diagram departs from end moments only.

    Attributes:
        departure: largest |M − line| over the stations ÷ |M|max, the line running straight
            between the end moments [-].
        jump: the moment jumps inside the segment by more than ``LINE_SHARE`` of |M|max.
    """

    departure: np.ndarray
    jump: np.ndarray


def diagram_shape(runs: gradient.Runs, m_max: np.ndarray) -> DiagramShape:
    """Measure each run's departure from a straight line between its end moments (vectorized)."""
    n = len(runs.length)
    if n == 0:
        return DiagramShape(np.zeros(0), np.zeros(0, dtype=bool))
    last = runs.offsets[1:] - 1
    m0, m1 = runs.m[runs.starts], runs.m[last]
    with np.errstate(invalid="ignore", divide="ignore"):
        t = runs.spread(runs.length)
        np.divide(runs.x, t, out=t)
        np.clip(t, 0.0, 1.0, out=t)
        scale = np.where(m_max > 0.0, m_max, 1.0)
    # line = m0 + (m1 − m0)·t, built in two buffers: each new array is a pass over every station.
    line = runs.spread(m1 - m0)
    line *= t
    line += runs.gather(m0, out=t)
    del t
    np.subtract(runs.m, line, out=line)
    departure = np.maximum.reduceat(np.abs(line, out=line), runs.starts) / scale
    # A jump: the next station of the same run at the same x, inside, a step above the share.
    jump_at = np.r_[np.diff(runs.x) <= gradient.STATION_MERGE_MM, False]
    jump_at[last] = False
    jump_at &= runs.inside
    step = np.diff(runs.m)
    np.abs(step, out=step)
    jump_at[:-1] &= step > runs.gather(LINE_SHARE * scale, out=line)[:-1]
    jump = runs.count(jump_at) > 0
    return DiagramShape(departure, jump)


@dataclass(frozen=True)
class CheckResult:
    """Results of a check.

    Attributes:
        results: one row per (segment, combination) pair with forces; internal units (mm, N,
            N·mm, MPa). Columns: see :func:`check_pairs`.
        sections: section properties and class per section name.
        layout: the members, segments and diagrams the check used.
        settings: the check settings used.
    """

    results: pd.DataFrame
    sections: pd.DataFrame
    layout: Layout
    settings: CheckSettings


def check_model(
    model: Model, settings: CheckSettings | None = None, *, exact: bool = True
) -> CheckResult:
    """Check every segment of ``model`` in every load combination.

    Args:
        model: the validated model.
        settings: check settings; the model's own ``[check]`` settings by default.
        exact: run the exact buckling analysis (see :func:`check_pairs`).
    """
    settings = settings or model.settings.check
    layout = build_layout(model)
    props = section_properties(model.sections)
    flange_cls, web_cls, cls = section_class(
        props["b"], props["tf"], props["d"], props["tw"], props["fy"]
    )
    props = props.assign(class_flange=flange_cls, class_web=web_cls, section_class=cls)
    return CheckResult(
        results=check_pairs(layout, props, settings, exact=exact),
        sections=props,
        layout=layout,
        settings=settings,
    )


def check_pairs(
    layout: Layout, props: pd.DataFrame, settings: CheckSettings, *, exact: bool = True
) -> pd.DataFrame:
    """Return one row per (segment, combination) pair with every number of the check.

    With ``exact`` off the exact buckling analysis is not run (to measure the rest of the check
    without it): the exact columns are NaN with the note saying so, ``code-factor-high`` is never
    raised and nothing is limited to an exact factor. The ``exact`` design basis needs it on.

    Columns: ``segment_row`` (row of ``Segments.table``), ``segment``, ``member``, ``flange``,
    ``combination``, ``section``, ``length`` [mm], ``section_class``, ``M_start``, ``M_end``
    [N·mm, positive compresses the segment's flange],
    ``M_max``, ``inside_peak``, ``inside_peak_at`` [mm], ``M_a``, ``M_b``, ``M_c``, ``kappa``,
    ``omega2_formula``, ``omega2_end``, ``omega2_qp``, ``cb`` (uncapped, as published),
    ``line_departure`` (largest distance of an inside station from the straight line between the
    end moments, ÷ |M|max), ``inside_jump`` (a moment jump inside), ``exact_factor`` (Mcr_exact ÷
    Mcr of uniform moment; NaN with ``exact_note`` saying why), ``Mcr_exact`` [N·mm],
    ``exact_elements`` (finite elements used), ``exact_note``, ``method``, ``factor_basis`` (the
    design-basis factor with its fall-backs), ``factor`` (the factor used: the basis factor,
    limited to the exact factor where flagged ``code-factor-high`` and ``limit_to_exact`` is on),
    ``Mcr``, ``M_base`` (Mp for class 1-2, My for class 3), ``Mr``, ``Mr_exact``, ``demand``,
    ``utilization``, ``utilization_exact``, ``axial_share`` (largest |N| of the run ÷ A·fy; NaN
    without an N column), ``status`` ("ok", "over", "not critical", "not checked", "verify
    length"), ``flags`` and one boolean column per flag name (``flag_<name>``).
    """
    seg = layout.segments.table
    diag = layout.diagrams
    pairs = diag.pairs
    k = pairs["segment"].to_numpy()
    length = seg["length"].to_numpy()[k]
    runs = gradient.Runs(x=diag.x, m=diag.m, offsets=diag.offsets, length=length)

    ends = gradient.end_moment_omega2(runs)
    m_max, m_a, m_b, m_c = gradient.quarter_point_moments(runs)
    omega2_qp = gradient.omega2_quarter_point(m_max, m_a, m_b, m_c)
    cb = gradient.cb_aisc(m_max, m_a, m_b, m_c)
    m_min_signed = pairs["m_lowest"].to_numpy()
    m_max_signed = pairs["m_highest"].to_numpy()
    sign_change = (m_max_signed > 1.0e-3 * m_max) & (m_min_signed < -1.0e-3 * m_max)

    cantilever = seg["cantilever"].to_numpy()[k]
    end_unbraced = ~(seg["braced_start"].to_numpy()[k] & seg["braced_end"].to_numpy()[k])
    fallback = cantilever | end_unbraced | ends.few_stations

    # Text columns as categoricals: codes per pair, each distinct text made once.
    seg_codes = seg["member"].astype("category")
    member = pd.Categorical.from_codes(
        seg_codes.cat.codes.to_numpy()[k], categories=seg_codes.cat.categories
    )
    section = pd.Categorical(layout.members.table["section"].reindex(member.categories).to_numpy())[
        member.codes
    ]
    # Section properties per pair through the section codes: a gather, not a label look-up.
    where = props.index.get_indexer(pd.Index(section.categories))[section.codes]

    def prop(name: str) -> np.ndarray:
        return props[name].to_numpy()[where]

    cls = prop("section_class")
    compressed = pairs["compressed"].to_numpy()
    class4 = cls >= 4
    flange_code = pd.Categorical(seg["flange"].to_numpy(), categories=list(FLANGES)).codes[k]

    # Exact elastic buckling of the sampled diagram, where its fork supports hold.
    fork = compressed & ~class4 & ~cantilever & ~end_unbraced
    if exact:
        solved = exact_factors(
            runs,
            fork,
            flange_code,
            prop("Iy"),
            prop("J"),
            prop("Cw"),
            prop("d") - prop("tf"),
            settings,
        )
    elif settings.gradient == "exact":
        raise ValueError("the exact design basis needs the exact analysis: exact=True")
    else:
        nan = np.full(len(k), np.nan)
        solved = ExactResult(m_cr=nan, factor=nan, elements=np.zeros(len(k), dtype=np.int64))
    shape = diagram_shape(runs, m_max)
    del runs  # its per-station arrays are not needed past here: not kept beside the results

    by_method = {
        "end_moment": ends.omega2,
        "quarter_point": omega2_qp,
        # Cb is published uncapped; used as ω2 in the Mcr formula it is held to the same 2.5.
        "cb": np.minimum(cb, gradient.OMEGA2_CAP),
        "exact": np.nan_to_num(solved.factor, nan=1.0),
    }
    basis = np.where(fallback, 1.0, by_method[settings.gradient])
    capped = (
        ~fallback
        & (settings.gradient != "exact")
        & (np.where(settings.gradient == "cb", cb, basis) >= gradient.OMEGA2_CAP)
    )
    # A code factor above the exact one overestimates Mcr for this diagram; being more
    # conservative than a code shortcut is always allowed, so by default the factor is limited.
    high = basis > (1.0 + EXACT_MARGIN) * solved.factor  # False where the exact factor is NaN
    factor = np.where(high & settings.limit_to_exact, solved.factor, basis)
    formula_used = (
        (settings.gradient == "end_moment") & ~fallback & (ends.omega2 == ends.omega2_formula)
    )
    off_line = (
        formula_used
        & ~ends.peak_inside
        & ~ends.zero_ends
        & ((shape.departure > LINE_SHARE) | shape.jump)
    )

    m_base = np.where(cls <= 2, prop("Zx"), prop("Sx")) * prop("fy")
    mcr = resistance.m_cr(factor, length, prop("Iy"), prop("J"), prop("Cw"), settings.E, settings.G)
    mr = resistance.m_r(mcr, m_base, settings.phi)
    mr_exact = resistance.m_r(solved.m_cr, m_base, settings.phi)
    checked = compressed & ~class4
    demand = pairs["demand"].to_numpy()
    # The settings give no sign convention for N: take |N| (tension counts too, conservative).
    with np.errstate(invalid="ignore", divide="ignore"):
        axial = pairs["axial"] if "axial" in pairs else np.full(len(pairs), np.nan)
        axial_share = np.asarray(axial, dtype=np.float64) / (prop("A") * prop("fy"))
    with np.errstate(invalid="ignore", divide="ignore"):
        utilization = np.where(checked, demand / mr, np.nan)
        utilization_exact = np.where(checked, demand / mr_exact, np.nan)
    status_code = np.where(
        ~compressed,
        2,
        np.where(class4, 3, np.where(utilization > 1.0, 1, np.where(cantilever, 4, 0))),
    ).astype(np.int8)
    status = pd.Categorical.from_codes(status_code, categories=pd.Index(STATUS))
    flags = {
        "peak-inside": ends.peak_inside & compressed,
        "omega2-cap": capped & compressed,
        "cantilever": cantilever & compressed,
        "class-4": class4 & compressed,
        "sign-change": sign_change & compressed,
        "few-stations": ends.few_stations & compressed,
        "end-unbraced": end_unbraced & compressed,
        "zero-ends": ends.zero_ends & compressed,
        "assumed-brace": seg["assumed"].to_numpy()[k] & compressed,
        "code-factor-high": high & checked,
        "not-end-moments": off_line & checked,
        "axial-force": (axial_share > AXIAL_SHARE) & checked,  # False where N is missing (NaN)
    }
    return pd.DataFrame(
        {
            "segment_row": k,
            "segment": pd.Categorical.from_codes(k, categories=seg.index),
            "member": member,
            "flange": pd.Categorical.from_codes(flange_code, categories=pd.Index(FLANGES)),
            "combination": pd.Categorical.from_codes(
                pairs["combination"].to_numpy().astype(np.int32),
                categories=pd.Index(diag.combinations),
            ),
            "section": section,
            "length": length,
            "section_class": cls,
            "M_start": ends.m_start,
            "M_end": ends.m_end,
            "M_max": m_max,
            "inside_peak": ends.inside_peak,
            "inside_peak_at": ends.inside_peak_at,
            "M_a": m_a,
            "M_b": m_b,
            "M_c": m_c,
            "kappa": ends.kappa,
            "omega2_formula": ends.omega2_formula,
            "omega2_end": ends.omega2,
            "omega2_qp": omega2_qp,
            "cb": cb,
            "line_departure": shape.departure,
            "inside_jump": shape.jump,
            "exact_factor": np.where(checked, solved.factor, np.nan),
            "Mcr_exact": np.where(checked, solved.m_cr, np.nan),
            "exact_elements": np.where(checked, solved.elements, 0),
            "exact_note": pd.Categorical.from_codes(
                np.where(
                    checked,
                    np.where(cantilever, 1, np.where(end_unbraced, 2, 0 if exact else 3)),
                    0,
                ).astype(np.int8),
                categories=pd.Index(EXACT_NOTES),
            ),
            # One word for every row: a categorical, not a million copies of one string.
            "method": pd.Categorical.from_codes(
                np.zeros(len(k), dtype=np.int8), categories=pd.Index([settings.gradient])
            ),
            "factor_basis": basis,
            "factor": factor,
            "Mcr": mcr,
            "M_base": m_base,
            "Mr": mr,
            "Mr_exact": np.where(checked, mr_exact, np.nan),
            "demand": demand,
            "axial_share": axial_share,
            "utilization": utilization,
            "utilization_exact": utilization_exact,
            "status": status,
            "flags": flag_labels(flags),
            **{f"flag_{name}": flag for name, flag in flags.items()},
        },
        copy=False,  # one block per column: no copy of a million-row table into 2D blocks
    )
