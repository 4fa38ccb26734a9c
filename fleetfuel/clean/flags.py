"""File-level observations of the clean stage: the ``flags`` column of the row account.

Flags warn; they never drop rows. Each is decided on one vehicle's samples of one file.

* ``low_rate``: logging interval of at least ``low_rate_interval_s`` (accelerations not observable).
* ``speed_unit_suspect``: reported speed over position-derived speed sits near a unit factor
  (km/h vs m/s 3.6, mph vs km/h 1.609, ...): the profile probably names the wrong unit.
* ``speed_unit_corrected``: a block of the file's speeds was a strong unit factor off and was
  divided by it (see :mod:`fleetfuel.clean.mixup`).
* ``speed_position_mismatch``: the two disagree by more than ``reconcile_tolerance`` otherwise.
* ``speed_from_positions``: some speeds were derived from positions (the log lacks them).
* ``position_step``: the track jumps and stays (see :mod:`fleetfuel.clean.outliers`).
* ``not_road_vehicle_walking``: walking pace throughout.
* ``not_road_vehicle_aircraft``: flight speeds, altitudes or climb rates.
* ``no_elevation``: no usable elevation, so no grade (``grade`` NaN).
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy import ndimage

from fleetfuel.clean.config import CleanConfig
from fleetfuel.units import INTERNATIONAL_MILE_M, NAUTICAL_MILE_M, SECONDS_PER_HOUR

FLAG_LOW_RATE: Final = "low_rate"
FLAG_SPEED_UNIT_SUSPECT: Final = "speed_unit_suspect"
FLAG_SPEED_UNIT_CORRECTED: Final = "speed_unit_corrected"
FLAG_SPEED_POSITION_MISMATCH: Final = "speed_position_mismatch"
FLAG_SPEED_FROM_POSITIONS: Final = "speed_from_positions"
FLAG_POSITION_STEP: Final = "position_step"
FLAG_WALKING: Final = "not_road_vehicle_walking"
FLAG_AIRCRAFT: Final = "not_road_vehicle_aircraft"
FLAG_NO_ELEVATION: Final = "no_elevation"
CLEAN_FLAGS: Final = (
    FLAG_LOW_RATE,
    FLAG_SPEED_UNIT_SUSPECT,
    FLAG_SPEED_UNIT_CORRECTED,
    FLAG_SPEED_POSITION_MISMATCH,
    FLAG_SPEED_FROM_POSITIONS,
    FLAG_POSITION_STEP,
    FLAG_WALKING,
    FLAG_AIRCRAFT,
    FLAG_NO_ELEVATION,
)
"""Every flag the clean stage may raise."""

_KMH: Final = 1000.0 / SECONDS_PER_HOUR
_MPH: Final = INTERNATIONAL_MILE_M / SECONDS_PER_HOUR
_KNOT: Final = NAUTICAL_MILE_M / SECONDS_PER_HOUR
_UNITS_M_S: Final = (1.0, _KMH, _MPH, _KNOT)
UNIT_MIXUP_RATIOS: Final = tuple(
    sorted({a / b for a in _UNITS_M_S for b in _UNITS_M_S if a != b})
)
"""Ratio reported/true speed when a speed in one of m/s, km/h, mph, kn is read as another
(3.6, 1.609, 2.237, 1.852, 1.944, 1.151 and their inverses; factors from NIST SP 811)."""

PERCENTILE_WALKING: Final = 95.0
"""Percentile of moving speed compared with the walking ceiling (robust to GNSS speed spikes)."""


def speed_verdict(
    reported_m_s: npt.ArrayLike, derived_m_s: npt.ArrayLike, cfg: CleanConfig
) -> tuple[str | None, float]:
    """Compare reported speed with position-derived speed on the same samples.

    Parameters
    ----------
    reported_m_s, derived_m_s : array_like
        Speeds of the same samples (NaN where absent). [m/s]
    cfg : CleanConfig
        ``reconcile_min_speed_m_s``, ``reconcile_min_samples``, ``reconcile_tolerance``,
        ``unit_ratio_tolerance``.

    Returns
    -------
    (flag or None, ratio)
        ``speed_unit_suspect``, ``speed_position_mismatch`` or None, and the median ratio
        reported/derived (NaN when too few moving samples carry both).
    """
    rep = np.asarray(reported_m_s, dtype=np.float64)
    der = np.asarray(derived_m_s, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        use = np.isfinite(rep) & np.isfinite(der) & (der >= cfg.reconcile_min_speed_m_s) & (rep > 0)
    if use.sum() < cfg.reconcile_min_samples:
        return None, float("nan")
    ratio = float(np.median(rep[use] / der[use]))
    if abs(ratio - 1) <= cfg.reconcile_tolerance:
        return None, ratio
    near_unit = any(abs(ratio / f - 1) <= cfg.unit_ratio_tolerance for f in UNIT_MIXUP_RATIOS)
    return (FLAG_SPEED_UNIT_SUSPECT if near_unit else FLAG_SPEED_POSITION_MISMATCH), ratio


def is_walking(speed_m_s: npt.ArrayLike, parked: npt.ArrayLike, step_s: float, cfg: CleanConfig) -> bool:
    """Walking pace throughout: enough moving time, and moving speed at its 95th percentile
    below ``cfg.walking_speed_max_m_s``. [m/s, s in]"""
    speed = np.asarray(speed_m_s, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        moving = ~np.asarray(parked, dtype=bool) & (speed >= cfg.standstill_speed_m_s)
    if moving.sum() * step_s < cfg.walking_min_moving_s:
        return False
    return bool(np.percentile(speed[moving], PERCENTILE_WALKING) <= cfg.walking_speed_max_m_s)


def longest_run(mask: npt.ArrayLike) -> int:
    """Length of the longest run of True. [samples]"""
    m = np.asarray(mask, dtype=bool)
    if not m.any():
        return 0
    edges = np.diff(np.r_[0, m.view(np.int8), 0])
    return int((np.flatnonzero(edges < 0) - np.flatnonzero(edges > 0)).max())


def climbing_flight(
    elevation_m: npt.ArrayLike, speed_m_s: npt.ArrayLike, segment: npt.ArrayLike, step_s: float, cfg: CleanConfig
) -> bool:
    """A sustained climb faster than road grades allow at flight speed (see :class:`CleanConfig`).

    The elevation is first passed through a running median over ``aircraft_rate_window_s`` (so a
    receiver's altitude dropout does not count), then its rate is taken over the same window.
    """
    z = np.asarray(elevation_m, dtype=np.float64)
    speed = np.asarray(speed_m_s, dtype=np.float64)
    seg = np.asarray(segment)
    half = max(1, math.ceil(cfg.aircraft_rate_window_s / (2 * step_s)))
    if z.size < 2 * half + 1 or not np.isfinite(z).any():
        return False
    with np.errstate(invalid="ignore"):
        flight_speed = speed >= cfg.aircraft_min_speed_m_s
    if longest_run(flight_speed) * step_s < cfg.aircraft_min_duration_s:
        return False  # the climb must hold at flight speed throughout: no run is long enough
    filled = pd.Series(z).interpolate(limit_area="inside").to_numpy()
    smooth = ndimage.median_filter(np.nan_to_num(filled, nan=0.0), size=2 * half + 1, mode="nearest")
    smooth[~np.isfinite(filled)] = np.nan
    rate = np.full(z.size, np.nan)
    rate[half:-half] = (smooth[2 * half :] - smooth[: -2 * half]) / (2 * half * step_s)
    same = np.zeros(z.size, dtype=bool)
    same[half:-half] = seg[2 * half :] == seg[: -2 * half]
    with np.errstate(invalid="ignore"):
        climbing = same & (rate >= cfg.aircraft_climb_rate_m_s) & flight_speed
    return longest_run(climbing) * step_s >= cfg.aircraft_min_duration_s


def is_aircraft(
    elevation_m: npt.ArrayLike,
    speed_m_s: npt.ArrayLike,
    segment: npt.ArrayLike,
    step_s: float,
    fast_share: float,
    cfg: CleanConfig,
) -> bool:
    """Not a road vehicle but an aircraft: a share ``fast_share`` (measured before speed outliers
    were removed) of speeds beyond road reach, elevations above ``max_road_elevation_m`` on the
    same share of samples, or a sustained flight climb (:func:`climbing_flight`)."""
    if fast_share >= cfg.aircraft_fast_share:
        return True
    z = np.asarray(elevation_m, dtype=np.float64)
    finite = np.isfinite(z)
    if finite.any() and np.mean(z[finite] > cfg.max_road_elevation_m) >= cfg.aircraft_fast_share:
        return True
    return climbing_flight(z, speed_m_s, segment, step_s, cfg)
