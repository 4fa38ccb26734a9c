"""Cleaning of ONE vehicle's samples: the steps of the stage, composed in order.

1. rows without time or vehicle, invalid positions (blanked when the row has a reported speed,
   else dropped ``position_invalid``), rows left with neither speed nor position;
2. stable time sort, duplicates (:mod:`fleetfuel.clean.order`);
3. stale (carried-forward) fixes, impossible speeds, speed spikes, position spikes and steps
   (:mod:`fleetfuel.clean.outliers`; a bad position on a row with a reported speed is blanked
   and the row kept, without a speed the row is dropped with the reason);
4. uniform grid with breaks (:mod:`fleetfuel.clean.resample`);
5. speed from positions where the log has none; blocks of speeds in the wrong unit undone
   (:mod:`fleetfuel.clean.mixup`); reported vs derived speed check;
6. standstill and parked drift (:mod:`fleetfuel.clean.parked`);
7. distance, acceleration, smoothed elevation and grade per stretch (:mod:`fleetfuel.clean.elevation`);
8. file flags (:mod:`fleetfuel.clean.flags`) and a per-file summary for the row account.

Inside, the steps work on numpy arrays taken from the frame once (text columns stay Arrow
arrays, gathered by row index at the end); signals a log does not carry (all NaN) are not
resampled or filtered, and the clean frame is built once.

The result depends only on this vehicle's rows (and their arrival order), never on which other
vehicles are cleaned alongside, so vehicles may be cleaned in any grouping or in parallel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.elevation import grade_profile
from fleetfuel.clean.mixup import unit_block_divisors
from fleetfuel.clean.motion import acceleration_m_s2, cumulative_distance_m, grid_speed_from_positions
from fleetfuel.clean.order import time_ns
from fleetfuel.clean.parked import hold_positions, standstill
from fleetfuel.clean.resample import GridPlan, grid_plan, time_base
from fleetfuel.clean.screen import Screened, screen_rows
from fleetfuel.clean.summary import GridFacts, dropped_table, file_summary, take_text
from fleetfuel.errors import InternalError
from fleetfuel.ingest.base import empty_raw_frame

BoolArray = npt.NDArray[np.bool_]
FloatArray = npt.NDArray[np.float64]

DROPPED_COLUMNS = (schema.SOURCE_FILE, schema.SOURCE_ROW, "reason")
CLEAN_COLUMNS = (*schema.RAW_COLUMNS, *schema.CLEAN_EXTRA_COLUMNS)
_FLAG_COLUMNS = (schema.IS_INTERPOLATED, schema.GAP_BREAK, schema.IS_PARKED)


@dataclass(frozen=True, slots=True)
class VehicleClean:
    """What :func:`clean_vehicle` returns.

    Attributes
    ----------
    samples : DataFrame
        Clean frame of the vehicle (:data:`CLEAN_COLUMNS`), in time order.
    dropped : DataFrame
        Input rows removed: ``source_file``, ``source_row``, ``reason``.
    files : DataFrame
        One row per input file the vehicle's rows came from (see
        :func:`fleetfuel.clean.summary.file_summary`).
    """

    samples: pd.DataFrame
    dropped: pd.DataFrame
    files: pd.DataFrame


def empty_clean_frame() -> pd.DataFrame:
    """A clean frame with no rows and the canonical dtypes."""
    out = empty_raw_frame()
    for name in schema.CLEAN_EXTRA_COLUMNS:
        kind = bool if name in _FLAG_COLUMNS else "float64"
        out[name] = pd.Series([], dtype=kind)
    return out[list(CLEAN_COLUMNS)]


def _prepare(samples: pd.DataFrame) -> tuple[pd.DataFrame, npt.NDArray[np.int64]]:
    """The rows stably sorted by time (missing times last), and their times. [ns]"""
    missing = [c for c in schema.RAW_COLUMNS if c not in samples.columns]
    if missing:
        raise ValueError(f"clean_vehicle: samples lack raw canonical columns {missing}")
    ids = samples[schema.VEHICLE_ID].dropna().unique()
    if len(ids) > 1:
        raise ValueError(f"clean_vehicle: expected one vehicle, found {len(ids)} ({list(ids[:3])} ...)")
    times = time_ns(samples)
    nat = samples[schema.TIME_UTC].isna().to_numpy()
    key = np.where(nat, np.iinfo(np.int64).max, times)
    if key.size < 2 or bool((key[1:] >= key[:-1]).all()):  # already in order: the stable sort is the identity
        return samples.reset_index(drop=True), times
    order = np.argsort(key, kind="stable")
    return samples.iloc[order].reset_index(drop=True), times[order]


def _signal_columns(w: pd.DataFrame) -> list[str]:
    """Numeric columns resampled onto the grid: the raw signals, and a cycle file's own grade."""
    names = [c for c in schema.RAW_COLUMNS if c not in (*schema.STRING_COLUMNS, schema.TIME_UTC, schema.SOURCE_ROW)]
    return names + ([schema.GRADE] if schema.GRADE in w.columns else [])


def _kept_signals(w: pd.DataFrame, kept: npt.NDArray[np.int64], screened: Screened) -> dict[str, FloatArray | None]:
    """Each float signal over the kept rows (blanked positions NaN); None for one the log lacks.

    A signal column that is not of a float dtype in this frame is left out (it is carried like
    text, see :func:`_carried`)."""
    every = kept.size == len(w)
    gone = screened.blanked[kept]
    out: dict[str, FloatArray | None] = {}
    for name in _signal_columns(w):
        col = w[name]
        if not pd.api.types.is_float_dtype(col.dtype):
            continue
        values = col.to_numpy(dtype=np.float64)
        if not np.isfinite(values).any():
            out[name] = None
            continue
        blank = name in (schema.LAT_DEG, schema.LON_DEG) and gone.any()
        if not every:
            values = values[kept]  # a new array
        elif blank:
            values = values.copy()  # never write into the caller's frame
        if blank:
            values[gone] = np.nan
        out[name] = values
    return out


def _carried(w: pd.DataFrame, name: str, rows: npt.NDArray[np.int64]) -> FloatArray:
    """A non-float signal column on the grid: each instant's first row, carried into interpolated ones."""
    return pd.Series(w[name].array.take(rows)).to_numpy(dtype=np.float64, na_value=np.nan)


def _grade_columns(
    raw: FloatArray, given: FloatArray | None, distance: FloatArray, seg: npt.NDArray[np.int64], cfg: CleanConfig
) -> tuple[FloatArray, FloatArray, BoolArray, FloatArray]:
    """Smoothed elevation, grade, clipped mask and climb increments, stretch by stretch."""
    elev, grade = np.full(raw.size, np.nan), np.full(raw.size, np.nan)
    clipped = np.zeros(raw.size, dtype=bool)
    bounds = np.flatnonzero(np.r_[True, seg[1:] != seg[:-1], True])
    finite = np.r_[0, np.cumsum(np.isfinite(raw))]
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):  # loop over stretches, not samples
        if finite[b] - finite[a] >= 2:
            prof = grade_profile(distance[a:b], raw[a:b], cfg)
            elev[a:b], grade[a:b], clipped[a:b] = prof.elevation_m, prof.grade, prof.clipped
    if given is not None:  # a cycle file's own grade, where no elevation gives one
        grade = np.where(np.isfinite(grade), grade, given)
    rise = np.r_[0.0, np.diff(elev)]
    rise[np.r_[True, seg[1:] != seg[:-1]]] = 0.0
    climb = np.clip(np.nan_to_num(rise, nan=0.0), 0, None)
    return elev, grade, clipped, climb


def _frame(
    w: pd.DataFrame, kept: npt.NDArray[np.int64], plan: GridPlan, rows: npt.NDArray[np.int64],
    columns: dict[str, object],
) -> pd.DataFrame:
    """The clean frame: computed and resampled columns, text columns gathered from the input rows."""
    data: dict[str, object] = {}
    for name in CLEAN_COLUMNS:
        if name in columns:
            data[name] = columns[name]
        elif name == schema.TIME_UTC:
            data[name] = pd.DatetimeIndex(plan.times_ns().view("datetime64[ns]")).tz_localize("UTC").array
        elif name == schema.SOURCE_ROW:
            data[name] = plan.source_rows(w[schema.SOURCE_ROW].to_numpy(dtype=np.int64)[kept])
        elif name == schema.IS_INTERPOLATED:
            data[name] = plan.interpolated
        elif name == schema.GAP_BREAK:
            data[name] = plan.gap_break
        elif name in schema.STRING_COLUMNS:
            data[name] = take_text(w[name], rows)
        elif pd.api.types.is_float_dtype(w[name].dtype):  # a signal the log lacks
            data[name] = np.full(plan.size, np.nan)
        else:  # not numeric in this frame: the first row of each instant, as resampling carries text
            data[name] = w[name].array.take(rows)
    return pd.DataFrame(data, copy=False)


def clean_vehicle(samples: pd.DataFrame, cfg: CleanConfig) -> VehicleClean:
    """Clean ONE vehicle's raw samples (rows in arrival order: batch order, then file order).

    Parameters
    ----------
    samples : DataFrame
        Raw canonical frame (:data:`fleetfuel.schema.RAW_COLUMNS`) of a single vehicle,
        possibly from several files. Not modified.
    cfg : CleanConfig
        Thresholds of the stage.

    Returns
    -------
    VehicleClean
        Clean frame, dropped rows (with reasons) and a per-file summary.
    """
    w, t_ns = _prepare(samples)
    n = len(w)
    screened = screen_rows(w, t_ns, cfg)
    kept = np.flatnonzero(screened.alive)
    dropped = dropped_table(w, screened)
    if kept.size == 0:
        files = file_summary(w, t_ns, screened, GridFacts.empty(), cfg.step_s, cfg)
        return VehicleClean(samples=empty_clean_frame(), dropped=dropped, files=files)
    base = time_base(t_ns[kept], cfg)
    signals = _kept_signals(w, kept, screened)
    speed_in = w[schema.SPEED_M_S].to_numpy(dtype=np.float64)[kept]
    breaks = screened.step[kept] & ~np.isfinite(speed_in)
    plan = grid_plan(t_ns[kept], base, breaks_before=breaks)
    rows = kept[plan.owner_row]  # the input row whose text columns each sample carries
    grid = {name: (np.full(plan.size, np.nan) if v is None else plan.floats(v)) for name, v in signals.items()}
    for name in (schema.SPEED_M_S, schema.LAT_DEG, schema.LON_DEG, schema.ELEVATION_M):
        if name not in grid:
            grid[name] = _carried(w, name, rows)
    h = base.step_s
    seg = plan.segment
    lat0, lon0 = grid[schema.LAT_DEG], grid[schema.LON_DEG]
    reported = grid[schema.SPEED_M_S]
    no_fix = schema.LAT_DEG in signals and signals[schema.LAT_DEG] is None  # a log without positions
    derived = np.full(plan.size, np.nan) if no_fix else grid_speed_from_positions(
        lat0, lon0, ~np.isfinite(reported), seg, h
    )
    with np.errstate(invalid="ignore"):  # a position jump left in (a lasting step): not a speed
        derived[derived > cfg.speed_ceiling_m_s] = np.nan
    divisor = unit_block_divisors(reported, derived, cfg)
    unit_fixed = divisor != 1.0
    if unit_fixed.any():
        reported = reported / divisor
    speed = np.where(np.isfinite(reported), reported, derived)
    parked = standstill(speed, lat0, lon0, seg, h, cfg) & np.isfinite(speed)
    speed = np.where(parked, 0.0, speed)
    lat, lon = hold_positions(lat0, lon0, parked, seg)
    distance = cumulative_distance_m(speed, seg, h)
    accel = np.full(speed.size, np.nan) if base.low_rate else acceleration_m_s2(speed, seg, h)
    raw_elev = grid[schema.ELEVATION_M]
    given = grid.get(schema.GRADE) if signals.get(schema.GRADE) is not None else None
    elev, grade, clipped, climb = _grade_columns(raw_elev, given, distance, seg, cfg)
    computed = {
        **{name: grid[name] for name in signals if name in schema.RAW_COLUMNS},
        schema.SPEED_M_S: speed, schema.LAT_DEG: lat, schema.LON_DEG: lon, schema.ELEVATION_M: elev,
        schema.IS_PARKED: parked, schema.DISTANCE_M: distance, schema.ACCEL_M_S2: accel,
        schema.ELEVATION_RAW_M: raw_elev, schema.GRADE: grade,
    }
    out = _frame(w, kept, plan, rows, computed)
    if kept.size + len(dropped) != n:
        raise InternalError(f"clean_vehicle: {n} rows in, {kept.size} kept + {len(dropped)} dropped")
    facts = GridFacts(
        rows=rows, time_ns=plan.times_ns(), interpolated=plan.interpolated, gap_break=plan.gap_break,
        reported=reported, derived=derived, unit_fixed=unit_fixed, speed=speed, parked=parked, segment=seg, raw_elev=raw_elev,
        climb=climb, clipped=clipped, distance=distance,
    )
    files = file_summary(w, t_ns, screened, facts, h, cfg)
    return VehicleClean(samples=out, dropped=dropped, files=files)
