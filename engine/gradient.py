"""Moment-gradient factors of segments from their sampled moment diagrams.

Every function here works on all segments (or segment × combination pairs) at once. A diagram is
given as flat arrays ``x`` (distance from the segment's start, mm, non-decreasing within a run),
``m`` (moment, N·mm; the sign only has to be consistent within a run) and ``offsets`` (run ``k``
is ``x[offsets[k]:offsets[k + 1]]``), so runs may have different numbers of stations. A node with
a concentrated moment appears as two stations at the same ``x``.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

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

    The run number and the inside mask of every station are made once and kept: every factor
    needs them, and each is a pass over millions of stations.

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

    @cached_property
    def run_of_station(self) -> np.ndarray:
        """Run number of every station."""
        # Native index type: a gather by it (``np.take``) needs no converted copy.
        return np.repeat(np.arange(len(self.length), dtype=np.intp), self.counts)

    def gather(self, per_run: np.ndarray, out: np.ndarray) -> np.ndarray:
        """``per_run[run_of_station]`` written into ``out`` (a scratch array over the stations)."""
        # mode="clip": run numbers are in range, and "raise" would buffer a copy of ``out``.
        return np.take(per_run, self.run_of_station, out=out, mode="clip")

    @cached_property
    def inside(self) -> np.ndarray:
        """Whether each station lies strictly inside its segment (beyond ``END_TOLERANCE_MM``)."""
        inside = self.x > END_TOLERANCE_MM
        inside &= self.x < self.spread(self.length) - END_TOLERANCE_MM
        return inside

    def count(self, mask: np.ndarray) -> np.ndarray:
        """Return, per run, how many of its stations ``mask`` marks."""
        if len(self.length) == 0:
            return np.zeros(0, dtype=np.int64)
        if self.longest < 256:
            # Summed as bytes where no run can hold more: no int64 copy of millions of flags.
            return np.add.reduceat(mask.view(np.uint8), self.starts, dtype=np.uint8).astype(
                np.int64
            )
        return np.add.reduceat(mask, self.starts, dtype=np.int64)

    @cached_property
    def longest(self) -> int:
        """The most stations of any run."""
        return int(self.counts.max()) if len(self.length) else 0

    def spread(self, per_run: np.ndarray) -> np.ndarray:
        """Repeat one value per run onto each of its stations (``per_run[run_of_station]``)."""
        return np.repeat(per_run, self.counts)


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
    distinct = distinct_inside_stations(runs)  # first: its scratch is gone before the next
    inside = runs.inside
    inside_abs = np.abs(runs.m)
    inside_abs[~inside] = -1.0
    inside_peak = np.maximum.reduceat(inside_abs, starts) if len(starts) else np.zeros(0)
    has_inside = inside_peak >= 0.0
    # x where an inside station carries the peak, inf elsewhere (one buffer, reused).
    at = runs.spread(inside_peak)
    is_peak = np.equal(inside_abs, at)
    is_peak &= inside
    at.fill(np.inf)
    np.copyto(at, runs.x, where=is_peak)
    inside_peak_at = np.minimum.reduceat(at, starts) if len(starts) else np.zeros(0)
    inside_peak_at = np.where(has_inside, inside_peak_at, np.nan)
    inside_peak = np.maximum(inside_peak, 0.0)

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
    new_x = np.r_[True, np.diff(runs.x) > STATION_MERGE_MM]
    new_x[runs.starts] = True
    new_x &= runs.inside
    return runs.count(new_x)


def moment_at(runs: Runs, fraction: float) -> np.ndarray:
    """Return |M| at ``fraction`` of each run's length, interpolated linearly between stations.

    Where the diagram jumps there (two stations at one x, within ``END_TOLERANCE_MM`` of the
    point, since positions carry float rounding), the larger of the two sides is taken: it makes
    every quarter-point factor smaller, i.e. conservative.
    """
    return moments_at(runs, (fraction,))[0]


def moments_at(runs: Runs, fractions: tuple[float, ...]) -> list[np.ndarray]:
    """Return :func:`moment_at` of each fraction, sharing the scratch arrays over the stations."""
    n = len(runs.length)
    if n == 0:
        return [np.zeros(0) for _ in fractions]
    lo_idx, hi_idx = runs.starts, runs.offsets[1:] - 1
    # The stations before each point first, in three scratch arrays over the stations; then the
    # interpolation, per run, once those are gone.
    at_station = np.empty(len(runs.x))
    limit = np.empty(len(runs.x))
    mask = np.empty(len(runs.x), dtype=bool)
    counted = [_stations_before(runs, f, at_station, limit, mask) for f in fractions]
    del at_station, limit, mask
    return [
        _moment_at(runs, fraction, lo_idx, hi_idx, upto, below)
        for fraction, (upto, below) in zip(fractions, counted, strict=True)
    ]


def _stations_before(
    runs: Runs, fraction: float, at_station: np.ndarray, limit: np.ndarray, mask: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Per run, the stations at or before ``fraction`` of its length, and those before it.

    Both within ``END_TOLERANCE_MM``. ``at_station``, ``limit`` and ``mask`` are scratch arrays
    over the stations.
    """
    runs.gather(runs.length * fraction, out=at_station)
    # x is sorted within each run, so counting the stations before the point finds it: the same
    # index a binary search would, in two linear passes.
    np.add(at_station, END_TOLERANCE_MM, out=limit)
    upto = runs.count(np.less_equal(runs.x, limit, out=mask))
    np.subtract(at_station, END_TOLERANCE_MM, out=limit)
    below = runs.count(np.less(runs.x, limit, out=mask))
    return upto, below


def _moment_at(
    runs: Runs,
    fraction: float,
    lo_idx: np.ndarray,
    hi_idx: np.ndarray,
    upto: np.ndarray,
    below: np.ndarray,
) -> np.ndarray:
    """One fraction of :func:`moments_at`, from the counts of :func:`_stations_before`."""
    at = runs.length * fraction

    def side(i_left: np.ndarray) -> np.ndarray:
        i0 = np.clip(i_left, lo_idx, hi_idx)
        i1 = np.clip(i0 + 1, lo_idx, hi_idx)
        x0, x1 = runs.x[i0], runs.x[i1]
        dx = x1 - x0
        with np.errstate(invalid="ignore", divide="ignore"):
            w = np.where(dx > 0.0, (at - x0) / dx, 0.0)
        w = np.clip(w, 0.0, 1.0)
        return np.abs(runs.m[i0] + w * (runs.m[i1] - runs.m[i0]))

    after = side(lo_idx + upto - 1)
    before = side(lo_idx + below - 1)
    return np.maximum(after, before)


def quarter_point_moments(runs: Runs) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return (Mmax, Ma, Mb, Mc): the largest |M| and |M| at the quarter, mid and 3/4 points."""
    m_max = np.maximum.reduceat(np.abs(runs.m), runs.starts) if len(runs.length) else np.zeros(0)
    m_a, m_b, m_c = moments_at(runs, (0.25, 0.5, 0.75))
    return m_max, m_a, m_b, m_c


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
