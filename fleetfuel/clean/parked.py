"""Standstill and parked GNSS drift.

A stationary receiver's fixes wander by metres (multipath, changing satellite geometry), so
speeds worked out from positions never quite reach zero and distance creeps up while a truck
stands in a yard. A sample is at *standstill* when

* its speed was reported by the vehicle (CAN, OBD, the receiver's own Doppler speed) and is
  below ``standstill_speed_m_s``; or
* it has no reported speed and either its position-derived speed is below that, or it lies in a
  window of ``parked_window_s`` (at least three samples) whose fixes all stay within
  ``parked_radius_m`` (east and north extent), i.e. the drift of a parked receiver.

At standstill the speed is set to 0 and the position is held at the first fix of the standstill
run, so that neither distance nor position-derived speed accumulates drift.

References
----------
Kaplan, E. D. and Hegarty, C. J. (2017). Understanding GPS/GNSS: Principles and Applications,
3rd ed., ch. 11 (multipath and position error while static), from memory.
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.geodesy import local_plane_m

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]

MIN_WINDOW_SAMPLES: Final = 3
"""Fewest samples in the drift window: two fixes alone always agree with some radius."""


def _rolling_extent(values: FloatArray, window: int) -> FloatArray:
    roll = pd.Series(values).rolling(window, min_periods=window)
    return (roll.max() - roll.min()).to_numpy()


def drift_windows(
    lat_deg: npt.ArrayLike, lon_deg: npt.ArrayLike, segment: npt.ArrayLike, step_s: float, cfg: CleanConfig
) -> BoolArray:
    """True for samples inside a window of fixes that stay within ``cfg.parked_radius_m``.

    Parameters
    ----------
    lat_deg, lon_deg : array_like
        Fixes on a uniform grid (NaN where absent; a window with a missing fix never counts). [deg]
    segment : array_like of int
        Stretch number of each sample (windows never span a break).
    step_s : float
        Grid step. [s]
    cfg : CleanConfig
        ``parked_window_s``, ``parked_radius_m``.
    """
    lat = np.asarray(lat_deg, dtype=np.float64)
    n = lat.size
    window = max(MIN_WINDOW_SAMPLES, math.ceil(cfg.parked_window_s / step_s))
    if n < window:
        return np.zeros(n, dtype=bool)
    east, north = local_plane_m(lat, lon_deg)
    seg = np.asarray(segment, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        ending_here = (
            (_rolling_extent(east, window) <= cfg.parked_radius_m)
            & (_rolling_extent(north, window) <= cfg.parked_radius_m)
            & (_rolling_extent(seg, window) == 0)
        )
    # a sample is inside an accepted window if one ends within the next window - 1 samples
    covered = pd.Series(ending_here[::-1].astype(np.float64)).rolling(window, min_periods=1).max()
    return covered.to_numpy()[::-1] > 0


def standstill(
    speed_m_s: npt.ArrayLike,
    speed_reported: npt.ArrayLike,
    lat_deg: npt.ArrayLike,
    lon_deg: npt.ArrayLike,
    segment: npt.ArrayLike,
    step_s: float,
    cfg: CleanConfig,
) -> BoolArray:
    """Standstill of each grid sample (see module notes).

    Parameters
    ----------
    speed_m_s : array_like
        Speed, reported or derived from positions. [m/s]
    speed_reported : array_like of bool
        True where the speed came from the log, False where it was derived from positions.
    lat_deg, lon_deg : array_like
        Fixes. [deg]
    segment : array_like of int
        Stretch number of each sample.
    step_s : float
        Grid step. [s]
    cfg : CleanConfig
        ``standstill_speed_m_s``, ``parked_window_s``, ``parked_radius_m``.
    """
    speed = np.asarray(speed_m_s, dtype=np.float64)
    reported = np.asarray(speed_reported, dtype=bool)
    with np.errstate(invalid="ignore"):
        slow = speed < cfg.standstill_speed_m_s
    drift = drift_windows(lat_deg, lon_deg, segment, step_s, cfg)
    return np.where(reported, slow, slow | drift)


def hold_positions(
    lat_deg: npt.ArrayLike, lon_deg: npt.ArrayLike, parked: npt.ArrayLike, segment: npt.ArrayLike
) -> tuple[FloatArray, FloatArray]:
    """New latitude and longitude arrays with each standstill run held at its first fix. [deg]"""
    lat = np.array(lat_deg, dtype=np.float64, copy=True)
    lon = np.array(lon_deg, dtype=np.float64, copy=True)
    still = np.asarray(parked, dtype=bool)
    if not still.any():
        return lat, lon
    seg = np.asarray(segment)
    start = still & ~np.r_[False, still[:-1] & (seg[1:] == seg[:-1])]
    run = np.cumsum(start)
    frame = pd.DataFrame({"run": run[still], "lat": lat[still], "lon": lon[still]})
    firsts = frame.groupby("run", sort=False)[["lat", "lon"]].transform("first")
    held_lat = firsts["lat"].to_numpy()
    held_lon = firsts["lon"].to_numpy()
    have = np.isfinite(held_lat) & np.isfinite(held_lon)
    idx = np.flatnonzero(still)
    lat[idx[have]] = held_lat[have]
    lon[idx[have]] = held_lon[have]
    return lat, lon
