"""Row screening of ONE vehicle's sorted samples: which input rows go, and why (steps 1-3 of
:mod:`fleetfuel.clean.vehicle`).

Reasons are kept as small integer codes into :data:`SCREEN_REASONS` while the steps run (a
comparison of 10^6 codes is one vector operation; of 10^6 strings, a Python call each), and
become the schema's strings only for the rows dropped. The first reason that applies to a row
is its reason: later steps only look at rows still alive.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.geodesy import invalid_position, step_distance_m
from fleetfuel.clean.order import NS_PER_S, duplicate_masks
from fleetfuel.clean.outliers import impossible_speed, position_outliers, speed_spikes, stale_fixes

BoolArray = npt.NDArray[np.bool_]
CodeArray = npt.NDArray[np.int8]

SCREEN_REASONS: Final = (
    schema.DROP_TIME_UNPARSEABLE,
    schema.DROP_VEHICLE_UNKNOWN,
    schema.DROP_POSITION_INVALID,
    schema.DROP_NO_SIGNAL,
    schema.DROP_DUPLICATE_ROW,
    schema.DROP_DUPLICATE_TIME,
    schema.DROP_POSITION_STALE,
    schema.DROP_SPEED_IMPOSSIBLE,
    schema.DROP_ACCEL_IMPOSSIBLE,
    schema.DROP_POSITION_JUMP,
)
"""Drop reasons of the screening, by code (``reason[code]``)."""

KEPT: Final = -1
"""Code of a row that no step rejected."""

_CODE: Final = {name: np.int8(i) for i, name in enumerate(SCREEN_REASONS)}


@dataclass(frozen=True, slots=True)
class Screened:
    """What :func:`screen_rows` returns, arrays over the sorted input rows.

    Attributes
    ----------
    code : ndarray of int8
        :data:`KEPT` or the index of the row's drop reason in :data:`SCREEN_REASONS`.
    blanked : ndarray of bool
        Kept rows whose position was invalid or an outlier (their speed keeps them): set NaN.
    step : ndarray of bool
        Rows that start a lasting position jump (the track is broken before them).
    fast : ndarray of bool
        Rows whose reported or position-implied speed was beyond road reach (aircraft share).
    """

    code: CodeArray
    blanked: BoolArray
    step: BoolArray
    fast: BoolArray

    @property
    def alive(self) -> BoolArray:
        """Rows kept."""
        return self.code == KEPT

    def reasons(self, rows: npt.ArrayLike) -> npt.NDArray[np.object_]:
        """Reason strings of the given (dropped) rows."""
        return np.asarray(SCREEN_REASONS, dtype=object)[self.code[np.asarray(rows)]]


def _reject(code: CodeArray, mask: BoolArray, why: str) -> None:
    code[mask & (code == KEPT)] = _CODE[why]


def _float_column(w: pd.DataFrame, name: str) -> npt.NDArray[np.float64]:
    return w[name].to_numpy(dtype=np.float64)


def screen_rows(w: pd.DataFrame, t_ns: npt.NDArray[np.int64], cfg: CleanConfig) -> Screened:
    """Reasons of rejected rows, blanked positions, position steps and 'fast' rows of one vehicle.

    Parameters
    ----------
    w : DataFrame
        Raw canonical frame of one vehicle, stably sorted by time (missing times last).
    t_ns : ndarray of int64
        :func:`fleetfuel.clean.order.time_ns` of ``w``. [ns]
    cfg : CleanConfig
        Thresholds.
    """
    n = len(w)
    code = np.full(n, KEPT, dtype=np.int8)
    _reject(code, w[schema.TIME_UTC].isna().to_numpy(), schema.DROP_TIME_UNPARSEABLE)
    _reject(code, w[schema.VEHICLE_ID].isna().to_numpy(dtype=bool), schema.DROP_VEHICLE_UNKNOWN)
    speed = _float_column(w, schema.SPEED_M_S)
    has_speed = np.isfinite(speed)
    lat = _float_column(w, schema.LAT_DEG).copy()
    lon = _float_column(w, schema.LON_DEG).copy()
    bad_fix = invalid_position(lat, lon) & (code == KEPT)
    _reject(code, bad_fix & ~has_speed, schema.DROP_POSITION_INVALID)
    blanked = bad_fix & has_speed
    lat[bad_fix], lon[bad_fix] = np.nan, np.nan
    no_fix = ~(np.isfinite(lat) & np.isfinite(lon))
    _reject(code, ~has_speed & no_fix, schema.DROP_NO_SIGNAL)
    alive = np.flatnonzero(code == KEPT)
    exact, same_time = duplicate_masks(w, alive, t_ns[alive])
    code[alive[exact]] = _CODE[schema.DROP_DUPLICATE_ROW]
    code[alive[same_time]] = _CODE[schema.DROP_DUPLICATE_TIME]
    alive = np.flatnonzero(code == KEPT)
    t_s = (t_ns[alive] - (t_ns[alive[0]] if alive.size else 0)) / NS_PER_S
    stale = np.zeros(n, dtype=bool)
    stale[alive[stale_fixes(t_s, lat[alive], lon[alive], cfg)]] = True
    _reject(code, stale & ~has_speed, schema.DROP_POSITION_STALE)
    blanked |= stale & has_speed
    lat[stale], lon[stale] = np.nan, np.nan
    keep = code[alive] == KEPT
    alive, t_s = alive[keep], t_s[keep]
    jump_speed = cfg.position_jump_factor * cfg.speed_ceiling_m_s
    back_m = step_distance_m(lat[alive], lon[alive])  # from the previous surviving row's fix [m]
    implied = back_m / np.maximum(np.r_[np.inf, np.diff(t_s)], cfg.step_s)
    rank = np.full(n, -1, dtype=np.int64)
    rank[alive] = np.arange(alive.size)
    fast = np.zeros(n, dtype=bool)
    with np.errstate(invalid="ignore"):
        fast[alive] = (speed[alive] > jump_speed) | (implied > jump_speed)
    _reject(code, impossible_speed(speed, cfg), schema.DROP_SPEED_IMPOSSIBLE)
    keep = code[alive] == KEPT
    alive, t_s = alive[keep], t_s[keep]
    spikes = np.zeros(n, dtype=bool)
    spikes[alive[speed_spikes(t_s, speed[alive], cfg)]] = True
    _reject(code, spikes, schema.DROP_ACCEL_IMPOSSIBLE)
    keep = code[alive] == KEPT
    alive, t_s = alive[keep], t_s[keep]
    # distances already measured between rows still next to each other (lat, lon unchanged since)
    next_m = np.full(alive.size, np.nan)
    if alive.size > 1:
        follows = rank[alive[1:]] - rank[alive[:-1]] == 1
        next_m[:-1][follows] = back_m[rank[alive[1:]][follows]]
    pos = position_outliers(t_s, lat[alive], lon[alive], cfg, next_m=next_m)
    spiked = np.zeros(n, dtype=bool)
    spiked[alive[pos.spike]] = True
    _reject(code, spiked & ~has_speed, schema.DROP_POSITION_JUMP)
    blanked |= spiked & has_speed & (code == KEPT)
    step = np.zeros(n, dtype=bool)
    step[alive[pos.step]] = True
    return Screened(code=code, blanked=blanked, step=step, fast=fast)
