r"""The one labelling pass: operating periods, trips and micro-trips of every row, vectorised.

Definitions (all per vehicle, on samples sorted by time):

moving
    speed at or above ``cfg.stop_speed_m_s`` and not ``is_parked``; every other sample (NaN speed
    included) is stopped.
trip break
    between two consecutive moving samples when any of: another vehicle; a hard gap in between
    (a ``gap_break`` marker of the clean stage, or a time step of at least ``cfg.trip_break_s``);
    the time from the one to the other is at least ``cfg.trip_break_s`` (long standstill);
    engine off (``engine_speed_rpm < cfg.key_off_engine_speed_rpm``, where logged) for at least
    ``cfg.key_off_min_s`` of the standstill (key-off).
trip
    from its *departure* row (the stopped sample just before its first moving sample, when
    contiguous: no hard gap between them) to its *arrival* row (the stopped sample just after its
    last moving sample, when contiguous). The standstill between trips belongs to no trip.
operating period
    consecutive trips of one vehicle with no rest of ``cfg.period_rest_s`` or more between them
    (rest: time from the last moving sample of one trip to the first of the next, standstill and
    log absence alike). It spans its first trip's first row to its last trip's last row: a night
    shift stays whole; the long rests belong to no period.
micro-trip
    stop to stop inside a trip: the idle that precedes a drive plus the drive, ending at the
    arrival row (first stopped sample) of that drive. The trip's first micro-trip carries only
    its departure row as idle.

Identifiers are deterministic and do not depend on which periods are processed together:
``period_id = f"{vehicle_id}/P{t0:%Y%m%dT%H%M%SZ}"`` with ``t0`` the UTC time of the period's first
moving sample; ``trip_id = f"{period_id}/T{k:04d}"`` and ``microtrip_id = f"{period_id}/M{k:04d}"``
numbered from 1 within the period. Within a vehicle, sorting the ids sorts them by time.
Run on the rows of one period alone, the labelling returns the same ids for those rows.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.segment._frame import (
    BoolArray,
    FloatArray,
    IntArray,
    bool_column,
    float_column,
    group_starts,
    id_column,
    numbered,
    seconds,
)
from fleetfuel.segment.config import SegmentConfig

PERIOD_TIME_FORMAT = "%Y%m%dT%H%M%SZ"


@dataclass(frozen=True, slots=True)
class RowLabels:
    """Per-row codes (-1: outside) and per-group ids of one labelling pass.

    Attributes
    ----------
    period_code, trip_code, microtrip_code : ndarray of int64, one per row
        0-based index into ``period_ids`` / ``trip_ids`` / ``microtrip_ids``; -1 outside.
    period_ids, trip_ids, microtrip_ids : list of str
        The identifiers, in time order within each vehicle.
    moving : ndarray of bool, one per row
        The moving test of the module docstring.
    """

    period_code: IntArray
    trip_code: IntArray
    microtrip_code: IntArray
    period_ids: list[str]
    trip_ids: list[str]
    microtrip_ids: list[str]
    moving: BoolArray

    def column(self, name: str, index: pd.Index) -> pd.Series:
        """The string id column ``name`` (one of :data:`fleetfuel.schema.SEGMENT_ID_COLUMNS`)."""
        codes, ids = {
            schema.PERIOD_ID: (self.period_code, self.period_ids),
            schema.TRIP_ID: (self.trip_code, self.trip_ids),
            schema.MICROTRIP_ID: (self.microtrip_code, self.microtrip_ids),
        }[name]
        return id_column(ids, codes, index)


def _spans_to_codes(start: IntArray, end: IntArray, n: int) -> IntArray:
    """Row codes of non-overlapping, ordered, inclusive row spans ``[start[k], end[k]]`` (-1 outside)."""
    delta = np.zeros(n + 1, dtype=np.int64)
    np.add.at(delta, start, 1)
    np.add.at(delta, end + 1, -1)
    inside = np.cumsum(delta[:n]) > 0
    marker = np.zeros(n, dtype=np.int64)
    marker[start] = 1
    return np.where(inside, np.cumsum(marker) - 1, -1)


def _engine_off_time(
    samples: pd.DataFrame, t: FloatArray, last_row: BoolArray, moving: BoolArray, cfg: SegmentConfig
) -> FloatArray | None:
    """Cumulative engine-off standstill time up to and including each row (forward steps). [s]"""
    rpm = float_column(samples, schema.ENGINE_SPEED_RPM)
    if rpm is None or not np.isfinite(rpm).any():
        return None
    off = np.isfinite(rpm) & (rpm < cfg.key_off_engine_speed_rpm) & ~moving
    step_next = np.zeros_like(t)
    step_next[:-1] = np.diff(t)
    step_next[last_row] = 0.0
    return np.cumsum(np.where(off, step_next, 0.0))


def label_rows(samples: pd.DataFrame, cfg: SegmentConfig) -> RowLabels:
    """Label every row of a sorted clean frame with its period, trip and micro-trip.

    Parameters
    ----------
    samples : DataFrame
        Clean frame sorted by ``vehicle_id``, ``time_utc`` (see :func:`fleetfuel.segment._frame.ordered`).
    cfg : SegmentConfig
        Thresholds.

    Returns
    -------
    RowLabels
    """
    n = len(samples)
    veh_codes, _ = pd.factorize(samples[schema.VEHICLE_ID], use_na_sentinel=False)
    veh_codes = veh_codes.astype(np.int64)
    t = seconds(samples[schema.TIME_UTC])
    speed = float_column(samples, schema.SPEED_M_S)
    assert speed is not None
    moving = (np.nan_to_num(speed, nan=-np.inf) >= cfg.stop_speed_m_s) & ~bool_column(
        samples, schema.IS_PARKED
    )
    empty = np.full(n, -1, dtype=np.int64)
    moving_rows = np.flatnonzero(moving)
    if moving_rows.size == 0:
        return RowLabels(empty, empty, empty, [], [], [], moving)

    new_vehicle = group_starts(veh_codes)
    last_row = np.r_[new_vehicle[1:], True]
    step_prev = np.full(n, np.inf)
    step_prev[1:] = np.diff(t)
    hard_gap = new_vehicle | bool_column(samples, schema.GAP_BREAK) | (step_prev >= cfg.trip_break_s)

    prev, nxt = moving_rows[:-1], moving_rows[1:]
    rest_s = t[nxt] - t[prev]
    gap_count = np.cumsum(hard_gap)
    trip_cut = (gap_count[nxt] - gap_count[prev] > 0) | (rest_s >= cfg.trip_break_s)
    engine_off = _engine_off_time(samples, t, last_row, moving, cfg)
    if engine_off is not None:
        trip_cut |= engine_off[nxt - 1] - engine_off[prev] >= cfg.key_off_min_s
    period_cut = (veh_codes[nxt] != veh_codes[prev]) | (rest_s >= cfg.period_rest_s)

    first_moving = np.r_[moving_rows[0], nxt[trip_cut]]
    last_moving = np.r_[prev[trip_cut], moving_rows[-1]]
    departs = ~hard_gap[first_moving]  # row before is stopped, same vehicle, no gap between
    arrival = last_moving + 1
    arrives = np.zeros(arrival.size, dtype=bool)
    inside = arrival < n
    arrives[inside] = ~hard_gap[arrival[inside]]
    departs[1:] &= ~(arrives[:-1] & (arrival[:-1] == first_moving[1:] - 1))  # a row is in one trip only
    trip_start = np.where(departs, first_moving - 1, first_moving)
    trip_end = np.where(arrives, arrival, last_moving)

    # Periods: groups of trips.
    new_period = np.r_[True, period_cut[trip_cut]]
    period_of_trip = np.cumsum(new_period) - 1
    first_trip = np.flatnonzero(new_period)
    last_trip = np.r_[first_trip[1:] - 1, trip_start.size - 1]
    period_start_time = samples[schema.TIME_UTC].iloc[first_moving[first_trip]]
    stamps = pd.DatetimeIndex(period_start_time)
    stamps = (
        stamps.tz_localize("UTC") if stamps.tz is None else stamps.tz_convert("UTC")
    )  # naive: read as UTC
    period_stamp = stamps.strftime(PERIOD_TIME_FORMAT)
    vehicles = samples[schema.VEHICLE_ID].iloc[first_moving[first_trip]].astype(str).to_numpy()
    period_ids = [f"{v}/P{s}" for v, s in zip(vehicles, period_stamp, strict=True)]
    period_code = _spans_to_codes(trip_start[first_trip], trip_end[last_trip], n)

    trip_code = _spans_to_codes(trip_start, trip_end, n)
    trip_number = np.arange(trip_start.size) - first_trip[period_of_trip] + 1
    trip_ids = numbered(np.asarray(period_ids, dtype=object)[period_of_trip], "T", trip_number)

    # Micro-trips: a new one starts at each trip start and just after each arrival inside a trip.
    in_trip = trip_code >= 0
    same_trip_prev = np.zeros(n, dtype=bool)
    same_trip_prev[1:] = in_trip[1:] & (trip_code[1:] == trip_code[:-1])
    inner_arrival = np.zeros(n, dtype=bool)
    inner_arrival[1:] = same_trip_prev[1:] & ~moving[1:] & moving[:-1]
    starts = np.zeros(n, dtype=bool)
    starts[trip_start] = True
    starts[1:] |= same_trip_prev[1:] & inner_arrival[:-1]
    microtrip_code = np.where(in_trip, np.cumsum(starts) - 1, -1)
    mt_first_row = np.flatnonzero(starts)
    mt_period = period_code[mt_first_row]
    first_mt_of_period = np.searchsorted(mt_period, np.arange(len(period_ids)))
    mt_number = np.arange(mt_first_row.size) - first_mt_of_period[mt_period] + 1
    microtrip_ids = numbered(np.asarray(period_ids, dtype=object)[mt_period], "M", mt_number)

    return RowLabels(period_code, trip_code, microtrip_code, period_ids, trip_ids, microtrip_ids, moving)
