"""Moment-gradient factors of segments from their sampled moment diagrams.

Every function here works on all segments (or segment × combination pairs) at once. A diagram is
given as flat arrays ``x`` (distance from the segment's start, mm, non-decreasing within a run),
``m`` (moment, N·mm; the sign only has to be consistent within a run) and ``offsets`` (run ``k``
is ``x[offsets[k]:offsets[k + 1]]``), so runs may have different numbers of stations. A node with
a concentrated moment appears as two stations at the same ``x``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from flangewise.readers.model import STATION_MERGE_MM

#: Upper limit of ω2 (SANS 10162-1:2011, cl. 13.6(a); CSA S16-14, cl. 13.6(a)).
OMEGA2_CAP = 2.5

#: A moment inside a segment "exceeds" the larger end moment when it is larger by more than this
#: fraction of it. Exported moments carry 3 to 5 significant figures; a straight diagram rounded
#: that way can show an inside value above its end by about 1e-4 of it, and a bulge smaller than
#: 0.1 % changes Mcr by less than the rounding of the input. Larger bulges reject the formula.
INSIDE_TOLERANCE = 1.0e-3

#: Stations closer to a segment end than this [mm] count as the end itself.
END_TOLERANCE_MM = 1.0e-3

#: The fewest distinct inside stations with which the tool can see the shape of the diagram
#: between the ends (common practice: with fewer, a midspan peak could go unseen).
MIN_INSIDE_STATIONS = 3


@dataclass(frozen=True)
class Runs:
    """Ragged diagrams as flat arrays (see the module docstring).

    Attributes:
        x: distance from the run's segment start [mm].
        m: moment [N·mm].
        offsets: run starts, with the total length appended.
        length: segment length per run [mm].
    """

    x: np.ndarray
    m: np.ndarray
    offsets: np.ndarray
    length: np.ndarray

    @property
    def starts(self) -> np.ndarray:
        """Index of each run's first station."""
        return self.offsets[:-1]

    @property
    def counts(self) -> np.ndarray:
        """Number of stations per run."""
        return np.diff(self.offsets)

    @property
    def run_of_station(self) -> np.ndarray:
        """Run number of every station."""
        return np.repeat(np.arange(len(self.length)), self.counts)


@dataclass(frozen=True)
class EndMomentResult:
    """ω2 from the end moments, per run, with the reasons it may not apply.

    Attributes:
        m_start, m_end: end moments [N·mm], signs as given.
        kappa: smaller / larger end moment, negative in single curvature, positive in double.
        omega2_formula: 1.75 + 1.05κ + 0.3κ², capped at 2.5, before any rejection.
        omega2: the factor to use: the formula where it applies, 1.0 where it does not.
        inside_peak: largest |M| strictly inside the segment [N·mm] (0 with no inside station).
        inside_peak_at: its distance from the segment start [mm] (NaN with no inside station).
        peak_inside: the inside moment exceeds the larger end moment: formula rejected.
        zero_ends: both end moments are zero: the formula has no ratio.
        few_stations: fewer than ``MIN_INSIDE_STATIONS`` distinct inside stations: the tool
            cannot show that no inside moment exceeds the ends.
        capped: the formula reached 2.5.
    """

    m_start: np.ndarray
    m_end: np.ndarray
    kappa: np.ndarray
    omega2_formula: np.ndarray
    omega2: np.ndarray
    inside_peak: np.ndarray
    inside_peak_at: np.ndarray
    peak_inside: np.ndarray
    zero_ends: np.ndarray
    few_stations: np.ndarray
    capped: np.ndarray


def omega2_from_kappa(kappa: np.ndarray) -> np.ndarray:
    """Return ω2 = 1.75 + 1.05κ + 0.3κ², limited to 2.5.

    SANS 10162-1:2011, cl. 13.6(a).

    Args:
        kappa: ratio of the smaller to the larger end moment [-], negative in single curvature,
            positive in double curvature, in [-1, 1].
    """
    kappa = np.asarray(kappa, dtype=np.float64)
    return np.minimum(1.75 + 1.05 * kappa + 0.3 * kappa**2, OMEGA2_CAP)


def kappa_from_ends(m_start: np.ndarray, m_end: np.ndarray) -> np.ndarray:
    """Return κ = smaller end moment / larger end moment, signed for curvature.

    SANS 10162-1:2011, cl. 13.6(a).

    Ends of the same sign bend the segment in single curvature (κ < 0); ends of opposite sign in
    double curvature (κ > 0). Both ends zero gives NaN.

    Args:
        m_start: moment at the segment's start [N·mm].
        m_end: moment at the segment's end [N·mm].
    """
    a, b = np.abs(m_start), np.abs(m_end)
    large = np.where(a >= b, m_start, m_end)
    small = np.where(a >= b, m_end, m_start)
    with np.errstate(invalid="ignore", divide="ignore"):
        # + 0.0 turns -0.0 (one end zero) into 0.0.
        return np.where(large != 0.0, -small / large + 0.0, np.nan)


def end_moment_omega2(runs: Runs) -> EndMomentResult:
    """Apply the end-moment rule of the standard to every run.

    SANS 10162-1:2011, cl. 13.6(a).

    ω2 from κ where the segment carries end moments only, i.e. where no moment inside it exceeds
    the larger end moment (within ``INSIDE_TOLERANCE``); 1.0 where one does, where both ends are
    zero, and where the run has too few inside stations to show it.
    """
    starts = runs.starts
    last = runs.offsets[1:] - 1
    m_start, m_end = runs.m[starts], runs.m[last]
    run = runs.run_of_station
    inside = (runs.x > END_TOLERANCE_MM) & (runs.x < runs.length[run] - END_TOLERANCE_MM)
    abs_m = np.abs(runs.m)
    inside_abs = np.where(inside, abs_m, -1.0)
    inside_peak = np.maximum.reduceat(inside_abs, starts) if len(starts) else np.zeros(0)
    has_inside = inside_peak >= 0.0
    at = np.where(inside & (inside_abs == inside_peak[run]), runs.x, np.inf)
    inside_peak_at = np.minimum.reduceat(at, starts) if len(starts) else np.zeros(0)
    inside_peak_at = np.where(has_inside, inside_peak_at, np.nan)
    inside_peak = np.maximum(inside_peak, 0.0)

    distinct = distinct_inside_stations(runs)

    large = np.maximum(np.abs(m_start), np.abs(m_end))
    zero_ends = large <= 0.0
    peak_inside = inside_peak > large * (1.0 + INSIDE_TOLERANCE)
    few = distinct < MIN_INSIDE_STATIONS
    kappa = kappa_from_ends(m_start, m_end)
    formula = omega2_from_kappa(np.nan_to_num(kappa, nan=-1.0))
    applies = ~peak_inside & ~zero_ends & ~few
    return EndMomentResult(
        m_start=m_start,
        m_end=m_end,
        kappa=kappa,
        omega2_formula=formula,
        omega2=np.where(applies, formula, 1.0),
        inside_peak=inside_peak,
        inside_peak_at=inside_peak_at,
        peak_inside=peak_inside & ~zero_ends,
        zero_ends=zero_ends,
        few_stations=few,
        capped=applies & (1.75 + 1.05 * kappa + 0.3 * kappa**2 >= OMEGA2_CAP),
    )


def distinct_inside_stations(runs: Runs) -> np.ndarray:
    """Return, per run, how many distinct x strictly inside the segment carry a station.

    An inside station counts when its x lies more than ``STATION_MERGE_MM`` beyond the previous
    station's: the same place exported twice, or seen through rounding, is one station.
    """
    run = runs.run_of_station
    inside = (runs.x > END_TOLERANCE_MM) & (runs.x < runs.length[run] - END_TOLERANCE_MM)
    new_x = np.r_[True, np.diff(runs.x) > STATION_MERGE_MM]
    new_x[runs.starts] = True
    return np.bincount(run, weights=inside & new_x, minlength=len(runs.length)).astype(np.int64)


def moment_at(runs: Runs, fraction: float) -> np.ndarray:
    """Return |M| at ``fraction`` of each run's length, interpolated linearly between stations.

    Where the diagram jumps there (two stations at one x, within ``END_TOLERANCE_MM`` of the
    point, since positions carry float rounding), the larger of the two sides is taken: it makes
    every quarter-point factor smaller, i.e. conservative.
    """
    n = len(runs.length)
    if n == 0:
        return np.zeros(0)
    run = runs.run_of_station
    at = runs.length * fraction
    at_station = at[run]
    lo_idx, hi_idx = runs.starts, runs.offsets[1:] - 1

    def side(i_left: np.ndarray) -> np.ndarray:
        i0 = np.clip(i_left, lo_idx, hi_idx)
        i1 = np.clip(i0 + 1, lo_idx, hi_idx)
        x0, x1 = runs.x[i0], runs.x[i1]
        dx = x1 - x0
        with np.errstate(invalid="ignore", divide="ignore"):
            w = np.where(dx > 0.0, (at - x0) / dx, 0.0)
        w = np.clip(w, 0.0, 1.0)
        return np.abs(runs.m[i0] + w * (runs.m[i1] - runs.m[i0]))

    # x is sorted within each run, so counting the stations before the point finds it: the same
    # index a binary search would, in two linear passes.
    upto = np.bincount(run, weights=runs.x <= at_station + END_TOLERANCE_MM, minlength=n)
    below = np.bincount(run, weights=runs.x < at_station - END_TOLERANCE_MM, minlength=n)
    after = side(lo_idx + upto.astype(np.int64) - 1)
    before = side(lo_idx + below.astype(np.int64) - 1)
    return np.maximum(after, before)


def quarter_point_moments(runs: Runs) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return (Mmax, Ma, Mb, Mc): the largest |M| and |M| at the quarter, mid and 3/4 points."""
    m_max = np.maximum.reduceat(np.abs(runs.m), runs.starts) if len(runs.length) else np.zeros(0)
    return m_max, moment_at(runs, 0.25), moment_at(runs, 0.5), moment_at(runs, 0.75)


def omega2_quarter_point(
    m_max: np.ndarray, m_a: np.ndarray, m_b: np.ndarray, m_c: np.ndarray
) -> np.ndarray:
    """Return ω2 = 4·Mmax / √(Mmax² + 4·Ma² + 7·Mb² + 4·Mc²), limited to 2.5.

    CSA S16-14, cl. 13.6(a)(ii).

    Args:
        m_max: largest absolute moment in the unbraced length [N·mm].
        m_a: absolute moment at the quarter point [N·mm].
        m_b: absolute moment at the midpoint [N·mm].
        m_c: absolute moment at the three-quarter point [N·mm].
    """
    root = np.sqrt(m_max**2 + 4.0 * m_a**2 + 7.0 * m_b**2 + 4.0 * m_c**2)
    with np.errstate(invalid="ignore", divide="ignore"):
        value = np.where(root > 0.0, 4.0 * m_max / root, 1.0)
    return np.minimum(value, OMEGA2_CAP)


def cb_aisc(m_max: np.ndarray, m_a: np.ndarray, m_b: np.ndarray, m_c: np.ndarray) -> np.ndarray:
    """Return Cb = 12.5·Mmax / (2.5·Mmax + 3·MA + 4·MB + 3·MC).

    AISC 360-16, Eq. F1-1.

    Args:
        m_max: largest absolute moment in the unbraced segment [N·mm].
        m_a: absolute moment at the quarter point [N·mm].
        m_b: absolute moment at the centreline [N·mm].
        m_c: absolute moment at the three-quarter point [N·mm].
    """
    den = 2.5 * m_max + 3.0 * m_a + 4.0 * m_b + 3.0 * m_c
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0.0, 12.5 * m_max / den, 1.0)
