"""Standstill and parked GNSS drift.

A stationary receiver's fixes wander by metres (multipath, changing satellite geometry), and a
receiver's own (Doppler) speed shows small non-zero values; so a truck standing in a yard seems
to creep, its speed never quite reaches zero and distance grows. A grid sample is at
*standstill* when

* its speed (reported, or derived from positions) is below ``standstill_speed_m_s``; or
* it lies in a *drift run*: a run of speeds below ``creep_speed_m_s`` (averaged over
  ``creep_window_s``, as speeds worked out from wandering fixes jitter) lasting at least
  ``parked_window_s``, over which the vehicle made good (straight-line distance between the
  run's first and last fixes) less than ``drift_progress_share`` of the distance its speeds
  claim, while 95 % of its fixes stay within ``drift_radius_m`` of their median. Creeping in a
  queue makes good what it claims; drift around a parked spot does not, nor does it wander off
  (a slow loop of hundreds of metres is movement). A slow manoeuvre that ends where it began,
  within a yard, counts as standstill too.

At standstill the speed is set to 0 and the position is held at the first fix of the standstill
run, so that neither distance nor position-derived speed accumulates drift.

References
----------
Kaplan, E. D. and Hegarty, C. J. (2017). Understanding GPS/GNSS: Principles and Applications,
3rd ed., ch. 11 (position error of a static receiver; from memory).
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
import numpy.typing as npt
from numba import njit

from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.geodesy import geodesic_distance_m

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]

SPREAD_QUANTILE: Final = 0.95
"""A drift run's fixes must stay near its median fix at this quantile (one glitch may not count)."""


IntArray = npt.NDArray[np.int64]


def _runs(mask: BoolArray, segment: npt.NDArray[np.int64]) -> npt.NDArray[np.int64]:
    """Run number (1, 2, ...) of each True sample, runs never crossing a break; 0 elsewhere."""
    prev = np.r_[False, mask[:-1] & (segment[1:] == segment[:-1])]
    return np.where(mask, np.cumsum(mask & ~prev), 0)


# Per-run statistics, compiled: one pass over each run instead of a grouped frame. They follow
# the grouped-frame conventions exactly: NaN skipped, first/last/median per coordinate on its own,
# the median of an even count the mean of the middle two, quantiles by linear interpolation
# between order statistics, sums compensated (Kahan 1965).


@njit(cache=True)
def _run_ends(lat: FloatArray, lon: FloatArray, bounds: IntArray) -> FloatArray:  # pragma: no cover - compiled
    """Per run ``bounds[r]:bounds[r + 1]``: first and last finite latitude and longitude, their medians."""
    out = np.full((6, bounds.size - 1), np.nan)
    for r in range(bounds.size - 1):
        for c, values in enumerate((lat, lon)):
            part = values[bounds[r] : bounds[r + 1]]
            finite = np.sort(part[np.isfinite(part)])
            n = finite.size
            if n == 0:
                continue
            for j in range(part.size):
                if np.isfinite(part[j]):
                    out[c, r] = part[j]
                    break
            for j in range(part.size - 1, -1, -1):
                if np.isfinite(part[j]):
                    out[2 + c, r] = part[j]
                    break
            out[4 + c, r] = finite[n // 2] if n % 2 else (finite[n // 2 - 1] + finite[n // 2]) / 2
    return out


@njit(cache=True)
def _run_quantiles(values: FloatArray, bounds: IntArray, q: float) -> FloatArray:  # pragma: no cover - compiled
    """Per run: the ``q`` quantile of the finite values (linear between order statistics), NaN if none."""
    out = np.full(bounds.size - 1, np.nan)
    for r in range(bounds.size - 1):
        part = values[bounds[r] : bounds[r + 1]]
        finite = np.sort(part[np.isfinite(part)])
        n = finite.size
        if n == 0:
            continue
        pos = q * (n - 1)
        k = int(math.floor(pos))
        frac = pos - k
        out[r] = finite[k] if k + 1 >= n else finite[k] + frac * (finite[k + 1] - finite[k])
    return out


@njit(cache=True)
def _run_sums(values: FloatArray, bounds: IntArray) -> FloatArray:  # pragma: no cover - compiled
    """Per run: compensated sum of the finite values (Kahan 1965)."""
    out = np.zeros(bounds.size - 1)
    for r in range(bounds.size - 1):
        total = 0.0
        carry = 0.0
        for j in range(bounds[r], bounds[r + 1]):
            v = values[j]
            if np.isfinite(v):
                y = v - carry
                t = total + y
                carry = t - total - y
                total = t
        out[r] = total
    return out


def window_mean(values: npt.ArrayLike, segment: npt.ArrayLike, half: int) -> FloatArray:
    """Centred running mean over ``2 * half + 1`` samples, cut at the stretch's ends (NaN as 0)."""
    v = np.nan_to_num(np.asarray(values, dtype=np.float64), nan=0.0)
    seg = np.asarray(segment, dtype=np.int64)
    n = v.size
    if n == 0:
        return v
    idx = np.arange(n)
    first = np.maximum.accumulate(np.where(np.r_[True, seg[1:] != seg[:-1]], idx, 0))
    last = np.minimum.accumulate(np.where(np.r_[seg[1:] != seg[:-1], True], idx, n - 1)[::-1])[::-1]
    lo = np.maximum(idx - half, first)
    hi = np.minimum(idx + half, last)
    cs = np.r_[0.0, np.cumsum(v)]
    return (cs[hi + 1] - cs[lo]) / (hi - lo + 1)


def drift_runs(
    speed_m_s: npt.ArrayLike,
    lat_deg: npt.ArrayLike,
    lon_deg: npt.ArrayLike,
    segment: npt.ArrayLike,
    step_s: float,
    cfg: CleanConfig,
) -> BoolArray:
    """True for samples inside a drift run (see module notes).

    Parameters
    ----------
    speed_m_s : array_like
        Speed on a uniform grid (reported or derived). [m/s]
    lat_deg, lon_deg : array_like
        Fixes (NaN where absent; a run needs a fix near each end). [deg]
    segment : array_like of int
        Stretch number of each sample (runs never span a break).
    step_s : float
        Grid step. [s]
    cfg : CleanConfig
        ``creep_speed_m_s``, ``creep_window_s``, ``parked_window_s``, ``drift_progress_share``,
        ``drift_radius_m``.
    """
    speed = np.asarray(speed_m_s, dtype=np.float64)
    n = speed.size
    if n == 0:
        return np.zeros(0, dtype=bool)
    seg = np.asarray(segment, dtype=np.int64)
    mean_speed = window_mean(speed, seg, max(1, int(round(cfg.creep_window_s / (2 * step_s)))))
    slow = (mean_speed < cfg.creep_speed_m_s) & np.isfinite(speed)
    run = _runs(slow, seg)
    if not run.any():
        return np.zeros(n, dtype=bool)
    members = np.flatnonzero(run > 0)  # runs are consecutive blocks of these, numbered 1, 2, ...
    lat = np.asarray(lat_deg, dtype=np.float64)[members]
    lon = np.asarray(lon_deg, dtype=np.float64)[members]
    label = run[members]
    bounds = np.flatnonzero(np.r_[True, label[1:] != label[:-1], True])
    ends = _run_ends(lat, lon, bounds)  # rows: first lat, first lon, last lat, last lon, median lat, median lon
    size = np.diff(bounds)
    centre = np.repeat(np.arange(size.size), size)
    off = geodesic_distance_m(lat, lon, ends[4][centre], ends[5][centre])
    spread = _run_quantiles(off, bounds, SPREAD_QUANTILE)
    claimed = _run_sums(speed[members] * step_s, bounds)
    made_good = geodesic_distance_m(ends[0], ends[1], ends[2], ends[3])
    with np.errstate(invalid="ignore"):
        parked = (
            (size * step_s >= cfg.parked_window_s)
            & (made_good < cfg.drift_progress_share * claimed)
            & (spread <= cfg.drift_radius_m)
        )
    is_parked_run = np.zeros(int(run.max()) + 1, dtype=bool)
    is_parked_run[label[bounds[:-1]]] = parked
    return is_parked_run[run] & (run > 0)


def standstill(
    speed_m_s: npt.ArrayLike,
    lat_deg: npt.ArrayLike,
    lon_deg: npt.ArrayLike,
    segment: npt.ArrayLike,
    step_s: float,
    cfg: CleanConfig,
) -> BoolArray:
    """Standstill of each grid sample: slow, or inside a drift run (see module notes).

    Parameters
    ----------
    speed_m_s : array_like
        Speed, reported or derived from positions (NaN: unknown, never standstill). [m/s]
    lat_deg, lon_deg : array_like
        Fixes. [deg]
    segment : array_like of int
        Stretch number of each sample.
    step_s : float
        Grid step. [s]
    cfg : CleanConfig
        ``standstill_speed_m_s`` and the drift-run settings.
    """
    speed = np.asarray(speed_m_s, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        slow = speed < cfg.standstill_speed_m_s
    return slow | drift_runs(speed, lat_deg, lon_deg, segment, step_s, cfg)


def hold_positions(
    lat_deg: npt.ArrayLike, lon_deg: npt.ArrayLike, parked: npt.ArrayLike, segment: npt.ArrayLike
) -> tuple[FloatArray, FloatArray]:
    """New latitude and longitude arrays with each standstill run held at its first fix. [deg]"""
    lat = np.array(lat_deg, dtype=np.float64, copy=True)
    lon = np.array(lon_deg, dtype=np.float64, copy=True)
    still = np.asarray(parked, dtype=bool)
    if not still.any():
        return lat, lon
    run = _runs(still, np.asarray(segment, dtype=np.int64))
    _hold(lat, lon, run)
    return lat, lon


@njit(cache=True)
def _hold(lat: FloatArray, lon: FloatArray, run: IntArray) -> None:  # pragma: no cover - compiled
    """In place: every sample of a run (``run > 0``, consecutive) takes the run's first finite
    latitude and first finite longitude, where the run has both."""
    n = run.size
    i = 0
    while i < n:
        if run[i] == 0:
            i += 1
            continue
        j = i
        first_lat = np.nan
        first_lon = np.nan
        while j < n and run[j] == run[i]:
            if first_lat != first_lat and lat[j] == lat[j]:
                first_lat = lat[j]
            if first_lon != first_lon and lon[j] == lon[j]:
                first_lon = lon[j]
            j += 1
        if first_lat == first_lat and first_lon == first_lon:
            lat[i:j] = first_lat
            lon[i:j] = first_lon
        i = j
