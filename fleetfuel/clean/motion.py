"""Speed from positions, distance and acceleration on a uniform grid, stretch by stretch.

All functions take the grid step and the stretch number of each sample (from
:func:`fleetfuel.clean.resample.segment_ids`); nothing is differenced or integrated across a
break.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from fleetfuel.clean.geodesy import step_distance_m

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]


def _same_as_previous(segment: IntArray) -> npt.NDArray[np.bool_]:
    seg = np.asarray(segment)
    return np.r_[False, seg[1:] == seg[:-1]] if seg.size else np.zeros(0, dtype=bool)


def speed_from_positions(
    lat_deg: npt.ArrayLike, lon_deg: npt.ArrayLike, segment: npt.ArrayLike, step_s: float
) -> FloatArray:
    """Speed over ground from consecutive fixes: path length over the two neighbouring steps.

    ``v[k] = (d(k-1, k) + d(k, k+1)) / (2 h)`` inside a stretch (a central difference, which halves
    the effect of independent position noise), one-sided at a stretch's ends, NaN for a lone fix.

    Parameters
    ----------
    lat_deg, lon_deg : array_like
        Fixes on the grid (NaN where absent). [deg]
    segment : array_like of int
        Stretch number of each sample.
    step_s : float
        Grid step. [s]

    Returns
    -------
    ndarray
        Speed. [m/s]

    References
    ----------
    Distances: Karney (2013), see :mod:`fleetfuel.clean.geodesy`.
    """
    seg = np.asarray(segment)
    back = step_distance_m(lat_deg, lon_deg)
    if back.size == 0:
        return back
    back[~_same_as_previous(seg)] = np.nan
    ahead = np.r_[back[1:], np.nan]
    both = np.isfinite(back) & np.isfinite(ahead)
    total = np.where(both, back + ahead, np.where(np.isfinite(back), back, ahead))
    steps = np.where(both, 2.0, 1.0)
    return total / (steps * step_s)


def cumulative_distance_m(speed_m_s: npt.ArrayLike, segment: npt.ArrayLike, step_s: float) -> FloatArray:
    """Distance along the log by the trapezoidal rule on speed; no increment across a break. [m]

    NaN speeds contribute nothing.
    """
    v = np.nan_to_num(np.asarray(speed_m_s, dtype=np.float64), nan=0.0)
    if v.size == 0:
        return v
    inc = np.r_[0.0, (v[1:] + v[:-1]) * (step_s / 2)]
    inc[~_same_as_previous(np.asarray(segment))] = 0.0
    return np.cumsum(inc)


def acceleration_m_s2(speed_m_s: npt.ArrayLike, segment: npt.ArrayLike, step_s: float) -> FloatArray:
    """Longitudinal acceleration: central difference inside a stretch, one-sided at its ends,
    NaN for a lone sample. [m/s^2]"""
    v = np.asarray(speed_m_s, dtype=np.float64)
    if v.size == 0:
        return v.copy()
    same_prev = _same_as_previous(np.asarray(segment))
    same_next = np.r_[same_prev[1:], False]
    back = np.r_[np.nan, np.diff(v)]
    ahead = np.r_[np.diff(v), np.nan]
    back[~same_prev] = np.nan
    ahead[~same_next] = np.nan
    both = same_prev & same_next
    one_sided = np.asarray(np.where(same_prev, back, ahead), dtype=np.float64)
    out = np.where(both, (back + ahead) / (2 * step_s), one_sided / step_s)
    out[~same_prev & ~same_next] = np.nan
    return out
