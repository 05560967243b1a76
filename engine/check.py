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
from flangewise.engine.flags import flag_labels
from flangewise.engine.layout import Layout, build_layout
from flangewise.engine.sections import section_class, section_properties
from flangewise.engine.segments import FLANGES
from flangewise.readers.model import Model
from flangewise.readers.settings import CheckSettings

#: Result states, in code order.
STATUS = ["ok", "over", "not critical", "not checked"]

#: Column holding each method's factor in the results.
METHOD_COLUMN = {"end_moment": "omega2_end", "quarter_point": "omega2_qp", "cb": "cb"}


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


def check_model(model: Model, settings: CheckSettings | None = None) -> CheckResult:
    """Check every segment of ``model`` in every load combination.

    Args:
        model: the validated model.
        settings: check settings; the model's own ``[check]`` settings by default.
    """
    settings = settings or model.settings.check
    layout = build_layout(model)
    props = section_properties(model.sections)
    flange_cls, web_cls, cls = section_class(
        props["b"], props["tf"], props["d"], props["tw"], props["fy"]
    )
    props = props.assign(class_flange=flange_cls, class_web=web_cls, section_class=cls)
    return CheckResult(
        results=check_pairs(layout, props, settings),
        sections=props,
        layout=layout,
        settings=settings,
    )


def check_pairs(layout: Layout, props: pd.DataFrame, settings: CheckSettings) -> pd.DataFrame:
    """Return one row per (segment, combination) pair with every number of the check.

    Columns: ``segment_row`` (row of ``Segments.table``), ``segment``, ``member``, ``flange``,
    ``combination``, ``section``, ``length`` [mm], ``section_class``, ``M_start``, ``M_end``
    [N·mm, positive compresses the segment's flange],
    ``M_max``, ``inside_peak``, ``inside_peak_at`` [mm], ``M_a``, ``M_b``, ``M_c``, ``kappa``,
    ``omega2_formula``, ``omega2_end``, ``omega2_qp``, ``cb``, ``method``, ``factor``,
    ``Mcr``, ``M_base`` (Mp for class 1-2, My for class 3), ``Mr``, ``demand``, ``utilization``,
    ``status`` ("ok", "over", "not critical", "not checked"), ``flags`` and one boolean column
    per flag name (``flag_<name>``).
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
    m_min_signed = np.minimum.reduceat(diag.m, runs.starts) if len(k) else np.zeros(0)
    m_max_signed = np.maximum.reduceat(diag.m, runs.starts) if len(k) else np.zeros(0)
    sign_change = (m_max_signed > 1.0e-3 * m_max) & (m_min_signed < -1.0e-3 * m_max)

    cantilever = seg["cantilever"].to_numpy()[k]
    end_unbraced = ~(seg["braced_start"].to_numpy()[k] & seg["braced_end"].to_numpy()[k])
    fallback = cantilever | end_unbraced | ends.few_stations
    by_method = {"end_moment": ends.omega2, "quarter_point": omega2_qp, "cb": cb}
    factor = np.where(fallback, 1.0, by_method[settings.gradient])
    capped = ~fallback & (factor >= gradient.OMEGA2_CAP) & (settings.gradient != "cb")

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
    m_base = np.where(cls <= 2, prop("Zx"), prop("Sx")) * prop("fy")
    mcr = resistance.m_cr(factor, length, prop("Iy"), prop("J"), prop("Cw"), settings.E, settings.G)
    mr = resistance.m_r(mcr, m_base, settings.phi)
    compressed = pairs["compressed"].to_numpy()
    class4 = cls >= 4
    checked = compressed & ~class4
    demand = pairs["demand"].to_numpy()
    with np.errstate(invalid="ignore", divide="ignore"):
        utilization = np.where(checked, demand / mr, np.nan)
    status_code = np.where(
        ~compressed, 2, np.where(class4, 3, np.where(utilization > 1.0, 1, 0))
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
    }
    out = pd.DataFrame(
        {
            "segment_row": k,
            "segment": pd.Categorical.from_codes(k, categories=seg.index),
            "member": member,
            "flange": pd.Categorical.from_codes(
                pd.Categorical(seg["flange"].to_numpy(), categories=list(FLANGES)).codes[k],
                categories=pd.Index(FLANGES),
            ),
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
            "method": settings.gradient,
            "factor": factor,
            "Mcr": mcr,
            "M_base": m_base,
            "Mr": mr,
            "demand": demand,
            "utilization": utilization,
            "status": status,
            "flags": flag_labels(flags),
        },
        copy=False,  # one block per column: no copy of a million-row table into 2D blocks
    )
    for name, flag in flags.items():
        out[f"flag_{name}"] = flag
    return out
