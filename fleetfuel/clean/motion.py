"""Speed from positions, distance and acceleration on a uniform grid, stretch by stretch.

All functions take the grid step and the stretch number of each sample (from
:func:`fleetfuel.clean.resample.segment_ids`); nothing is differenced or integrated across a
break.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from fleetfuel.clean.geodesy import karney_distance_m, karney_step_distance_m, step_distance_m

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
    Distances: Karney (2013) for every step (:func:`fleetfuel.clean.geodesy.karney_step_distance_m`),
    so derived speeds carry the reference algorithm's values to the last digits.
    """
    return speed_from_steps(karney_step_distance_m(lat_deg, lon_deg), segment, step_s)


def speed_from_steps(step_m: npt.ArrayLike, segment: npt.ArrayLike, step_s: float) -> FloatArray:
    """:func:`speed_from_positions` from the step lengths ``step_m[k] = d(k-1, k)`` (``step_m[0]``
    unused) when the caller has measured them. [m in, m/s out]"""
    seg = np.asarray(segment)
    back = np.array(step_m, dtype=np.float64, copy=True)
    if back.size == 0:
        return back
    back[~_same_as_previous(seg)] = np.nan
    ahead = np.r_[back[1:], np.nan]
    both = np.isfinite(back) & np.isfinite(ahead)
    total = np.where(both, back + ahead, np.where(np.isfinite(back), back, ahead))
    steps = np.where(both, 2.0, 1.0)
    return total / (steps * step_s)


def grid_speed_from_positions(
    lat_deg: npt.ArrayLike, lon_deg: npt.ArrayLike, exact: npt.ArrayLike, segment: npt.ArrayLike, step_s: float
) -> FloatArray:
    """:func:`speed_from_positions` of a clean grid, Karney-exact only where it becomes the speed.

    Samples marked ``exact`` (no reported speed: the derived one is used) get the value of
    :func:`speed_from_positions`, digit for digit; elsewhere the derived speed is only compared
    with the reported one (the 15 % reconciliation of :mod:`fleetfuel.clean.flags`), and the
    steps are measured by the short-line kernel of :func:`fleetfuel.clean.geodesy.step_distance_m`,
    which agrees with Karney's algorithm to about 1e-9 relative at ten times its speed. [m/s]
    """
    lat = np.ascontiguousarray(lat_deg, dtype=np.float64)
    lon = np.ascontiguousarray(lon_deg, dtype=np.float64)
    back = step_distance_m(lat, lon)
    need = np.asarray(exact, dtype=bool)
    rows = np.flatnonzero(need | np.r_[False, need[:-1]]) if need.size else np.zeros(0, dtype=np.int64)
    rows = rows[rows > 0]  # step k ends at sample k: the steps on both sides of each exact sample
    if rows.size:
        back[rows] = karney_distance_m(lat[rows - 1], lon[rows - 1], lat[rows], lon[rows])
    return speed_from_steps(back, segment, step_s)


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
