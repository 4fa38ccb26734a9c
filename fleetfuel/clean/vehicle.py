"""Cleaning of ONE vehicle's samples: the steps of the stage, composed in order.

1. rows without time or vehicle, invalid positions (blanked when the row has a reported speed,
   else dropped ``position_invalid``), rows left with neither speed nor position;
2. stable time sort, duplicates (:mod:`fleetfuel.clean.order`);
3. stale (carried-forward) fixes, impossible speeds, speed spikes, position spikes and steps
   (:mod:`fleetfuel.clean.outliers`; a bad position on a row with a reported speed is blanked
   and the row kept, without a speed the row is dropped with the reason);
4. uniform grid with breaks (:mod:`fleetfuel.clean.resample`);
5. speed from positions where the log has none; reported vs derived speed check;
6. standstill and parked drift (:mod:`fleetfuel.clean.parked`);
7. distance, acceleration, smoothed elevation and grade per stretch (:mod:`fleetfuel.clean.elevation`);
8. file flags (:mod:`fleetfuel.clean.flags`) and a per-file summary for the row account.

The result depends only on this vehicle's rows (and their arrival order), never on which other
vehicles are cleaned alongside, so vehicles may be cleaned in any grouping or in parallel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean import flags as fl
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.elevation import grade_profile
from fleetfuel.clean.geodesy import invalid_position, step_distance_m
from fleetfuel.clean.motion import acceleration_m_s2, cumulative_distance_m, speed_from_positions
from fleetfuel.clean.order import (
    NS_PER_S,
    duplicate_reasons,
    logging_interval_s,
    positive_intervals_s,
    time_ns,
)
from fleetfuel.clean.outliers import impossible_speed, position_outliers, speed_spikes, stale_fixes
from fleetfuel.clean.parked import hold_positions, standstill
from fleetfuel.clean.resample import resample, segment_ids, time_base
from fleetfuel.errors import InternalError
from fleetfuel.ingest.base import empty_raw_frame

BoolArray = npt.NDArray[np.bool_]

DROPPED_COLUMNS = (schema.SOURCE_FILE, schema.SOURCE_ROW, "reason")
CLEAN_COLUMNS = (*schema.RAW_COLUMNS, *schema.CLEAN_EXTRA_COLUMNS)


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
        One row per input file the vehicle's rows came from (see :func:`_file_summary`).
    """

    samples: pd.DataFrame
    dropped: pd.DataFrame
    files: pd.DataFrame


def empty_clean_frame() -> pd.DataFrame:
    """A clean frame with no rows and the canonical dtypes."""
    out = empty_raw_frame()
    for name in schema.CLEAN_EXTRA_COLUMNS:
        kind = bool if name in (schema.IS_INTERPOLATED, schema.GAP_BREAK, schema.IS_PARKED) else "float64"
        out[name] = pd.Series([], dtype=kind)
    return out[list(CLEAN_COLUMNS)]


def _reject(reason: np.ndarray, mask: BoolArray, why: str) -> None:
    reason[mask & (reason == "")] = why


def _prepare(samples: pd.DataFrame) -> pd.DataFrame:
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
        return samples.reset_index(drop=True)
    order = np.argsort(key, kind="stable")
    return samples.iloc[order].reset_index(drop=True)


def _screen_rows(
    w: pd.DataFrame, t_ns: np.ndarray, cfg: CleanConfig
) -> tuple[np.ndarray, BoolArray, BoolArray, BoolArray]:
    """Reasons of rejected rows, blanked-position mask, position-step mask, 'fast' mask (aircraft).

    ``t_ns`` is :func:`time_ns` of ``w`` (computed once by the caller)."""
    n = len(w)
    reason = np.full(n, "", dtype=object)
    _reject(reason, w[schema.TIME_UTC].isna().to_numpy(), schema.DROP_TIME_UNPARSEABLE)
    _reject(reason, w[schema.VEHICLE_ID].isna().to_numpy(), schema.DROP_VEHICLE_UNKNOWN)
    speed = w[schema.SPEED_M_S].to_numpy(dtype=np.float64)
    has_speed = np.isfinite(speed)
    lat = w[schema.LAT_DEG].to_numpy(dtype=np.float64).copy()
    lon = w[schema.LON_DEG].to_numpy(dtype=np.float64).copy()
    bad_fix = invalid_position(lat, lon) & (reason == "")
    _reject(reason, bad_fix & ~has_speed, schema.DROP_POSITION_INVALID)
    blanked = bad_fix & has_speed
    lat[bad_fix], lon[bad_fix] = np.nan, np.nan
    no_fix = ~(np.isfinite(lat) & np.isfinite(lon))
    _reject(reason, ~has_speed & no_fix, schema.DROP_NO_SIGNAL)
    alive = np.flatnonzero(reason == "")
    dups = duplicate_reasons(w if alive.size == n else w.iloc[alive]).to_numpy(dtype=object, na_value="")
    reason[alive] = dups
    alive = np.flatnonzero(reason == "")
    t_s = (t_ns[alive] - (t_ns[alive[0]] if alive.size else 0)) / NS_PER_S
    stale = np.zeros(n, dtype=bool)
    stale[alive[stale_fixes(t_s, lat[alive], lon[alive], cfg)]] = True
    _reject(reason, stale & ~has_speed, schema.DROP_POSITION_STALE)
    blanked |= stale & has_speed
    lat[stale], lon[stale] = np.nan, np.nan
    keep = reason[alive] == ""
    alive, t_s = alive[keep], t_s[keep]
    jump_speed = cfg.position_jump_factor * cfg.speed_ceiling_m_s
    back_m = step_distance_m(lat[alive], lon[alive])  # from the previous surviving row's fix [m]
    implied = back_m / np.maximum(np.r_[np.inf, np.diff(t_s)], cfg.step_s)
    rank = np.full(n, -1, dtype=np.int64)
    rank[alive] = np.arange(alive.size)
    fast = np.zeros(n, dtype=bool)
    with np.errstate(invalid="ignore"):
        fast[alive] = (speed[alive] > jump_speed) | (implied > jump_speed)
    _reject(reason, impossible_speed(speed, cfg), schema.DROP_SPEED_IMPOSSIBLE)
    keep = reason[alive] == ""
    alive, t_s = alive[keep], t_s[keep]
    _reject(reason, np.isin(np.arange(n), alive[speed_spikes(t_s, speed[alive], cfg)]), schema.DROP_ACCEL_IMPOSSIBLE)
    keep = reason[alive] == ""
    alive, t_s = alive[keep], t_s[keep]
    # distances already measured between rows still next to each other (lat, lon unchanged since)
    next_m = np.full(alive.size, np.nan)
    if alive.size > 1:
        follows = rank[alive[1:]] - rank[alive[:-1]] == 1
        next_m[:-1][follows] = back_m[rank[alive[1:]][follows]]
    pos = position_outliers(t_s, lat[alive], lon[alive], cfg, next_m=next_m)
    spiked = np.zeros(n, dtype=bool)
    spiked[alive[pos.spike]] = True
    _reject(reason, spiked & ~has_speed, schema.DROP_POSITION_JUMP)
    blanked |= spiked & has_speed & (reason == "")
    step = np.zeros(n, dtype=bool)
    step[alive[pos.step]] = True
    return reason, blanked, step, fast


def _kept_rows(w: pd.DataFrame, alive: BoolArray, blanked: BoolArray) -> pd.DataFrame:
    """The surviving rows of ``w`` (a new frame; ``w`` is not modified), blanked positions NaN."""
    kept = w if alive.all() else w.loc[alive].reset_index(drop=True)  # no copy of the whole frame if all kept
    gone = blanked[alive]
    if not gone.any():
        return kept
    lat = kept[schema.LAT_DEG].to_numpy(dtype=np.float64, copy=True)
    lon = kept[schema.LON_DEG].to_numpy(dtype=np.float64, copy=True)
    lat[gone], lon[gone] = np.nan, np.nan
    return kept.assign(**{schema.LAT_DEG: lat, schema.LON_DEG: lon})


def _file_codes(files: pd.Series) -> tuple[np.ndarray, pd.Index]:
    codes, uniques = pd.factorize(files, sort=False)
    return codes, pd.Index(uniques)


def _grade_columns(
    grid: pd.DataFrame, distance: np.ndarray, seg: np.ndarray, cfg: CleanConfig
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Raw and smoothed elevation, grade, clipped mask and climb increments, stretch by stretch."""
    raw = grid[schema.ELEVATION_M].to_numpy(dtype=np.float64)
    elev, grade = np.full(raw.size, np.nan), np.full(raw.size, np.nan)
    clipped = np.zeros(raw.size, dtype=bool)
    bounds = np.flatnonzero(np.r_[True, seg[1:] != seg[:-1], True])
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):  # loop over stretches, not samples
        if np.isfinite(raw[a:b]).sum() >= 2:
            prof = grade_profile(distance[a:b], raw[a:b], cfg)
            elev[a:b], grade[a:b], clipped[a:b] = prof.elevation_m, prof.grade, prof.clipped
    if schema.GRADE in grid.columns:  # a cycle file's own grade, where no elevation gives one
        given = grid[schema.GRADE].to_numpy(dtype=np.float64)
        grade = np.where(np.isfinite(grade), grade, given)
    rise = np.r_[0.0, np.diff(elev)]
    rise[np.r_[True, seg[1:] != seg[:-1]]] = 0.0
    climb = np.clip(np.nan_to_num(rise, nan=0.0), 0, None)
    return raw, elev, grade, clipped, climb


def _flags_of_file(
    g: pd.DataFrame,
    m: dict[str, np.ndarray],
    sel: np.ndarray,
    step: float,
    interval: float,
    fast_share: float,
    cfg: CleanConfig,
) -> list[str]:
    """Flags of one file's samples ``sel`` of the vehicle's grid ``g`` (see :mod:`fleetfuel.clean.flags`)."""
    out: list[str] = []
    if np.isfinite(interval) and interval >= cfg.low_rate_interval_s:
        out.append(fl.FLAG_LOW_RATE)
    real = sel & ~g[schema.IS_INTERPOLATED].to_numpy()
    verdict, _ = fl.speed_verdict(m["reported"][real], m["derived"][real], cfg)
    if verdict:
        out.append(verdict)
    if (real & ~np.isfinite(m["reported"]) & np.isfinite(m["derived"])).any():
        out.append(fl.FLAG_SPEED_FROM_POSITIONS)
    if fl.is_walking(m["speed"][sel], m["parked"][sel], step, cfg):
        out.append(fl.FLAG_WALKING)
    if fl.is_aircraft(m["raw_elev"][sel], m["speed"][sel], m["seg"][sel], step, fast_share, cfg):
        out.append(fl.FLAG_AIRCRAFT)
    if not np.isfinite(m["raw_elev"][sel]).any():
        out.append(fl.FLAG_NO_ELEVATION)
    return out


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
    w = _prepare(samples)
    n = len(w)
    t_ns = time_ns(w)
    reason, blanked, step_mask, fast = _screen_rows(w, t_ns, cfg)
    alive = reason == ""
    kept = _kept_rows(w, alive, blanked)
    if kept.empty:
        out = empty_clean_frame()
        grid_like = {k: np.empty(0) for k in ("reported", "derived", "speed", "raw_elev", "climb", "distance")}
        per_sample = {**grid_like, "parked": np.empty(0, dtype=bool), "seg": np.empty(0, dtype=np.int64),
                      "clipped": np.empty(0, dtype=bool)}
        dropped = _dropped_table(w, alive, reason)
        files = _file_summary(w, t_ns, alive, blanked, step_mask, fast, out, per_sample, cfg.step_s, cfg)
        return VehicleClean(samples=out, dropped=dropped, files=files)
    base = time_base(t_ns[alive], cfg)
    breaks = step_mask[alive] & ~np.isfinite(kept[schema.SPEED_M_S].to_numpy(dtype=np.float64))
    grid = resample(kept, base, breaks_before=breaks)
    h = base.step_s
    seg = segment_ids(grid[schema.GAP_BREAK].to_numpy())
    lat0 = grid[schema.LAT_DEG].to_numpy(dtype=np.float64)
    lon0 = grid[schema.LON_DEG].to_numpy(dtype=np.float64)
    reported = grid[schema.SPEED_M_S].to_numpy(dtype=np.float64)
    derived = speed_from_positions(lat0, lon0, seg, h)
    with np.errstate(invalid="ignore"):  # a position jump left in (a lasting step): not a speed
        derived[derived > cfg.speed_ceiling_m_s] = np.nan
    speed = np.where(np.isfinite(reported), reported, derived)
    parked = standstill(speed, lat0, lon0, seg, h, cfg) & np.isfinite(speed)
    speed = np.where(parked, 0.0, speed)
    lat, lon = hold_positions(lat0, lon0, parked, seg)
    distance = cumulative_distance_m(speed, seg, h)
    accel = np.full(speed.size, np.nan) if base.low_rate else acceleration_m_s2(speed, seg, h)
    raw_elev, elev, grade, clipped, climb = _grade_columns(grid, distance, seg, cfg)

    computed = {
        schema.SPEED_M_S: speed, schema.LAT_DEG: lat, schema.LON_DEG: lon, schema.ELEVATION_M: elev,
        schema.IS_PARKED: parked, schema.DISTANCE_M: distance, schema.ACCEL_M_S2: accel,
        schema.ELEVATION_RAW_M: raw_elev, schema.GRADE: grade,
    }
    out = pd.DataFrame({name: computed[name] if name in computed else grid[name] for name in CLEAN_COLUMNS})
    for name in schema.STRING_COLUMNS:
        if out[name].dtype != pd.StringDtype():  # already the canonical string dtype: no conversion
            out[name] = out[name].astype("string")

    dropped = _dropped_table(w, alive, reason)
    if len(kept) + len(dropped) != n:
        raise InternalError(f"clean_vehicle: {n} rows in, {len(kept)} kept + {len(dropped)} dropped")
    per_sample = {
        "reported": reported, "derived": derived, "speed": speed, "parked": parked, "seg": seg,
        "raw_elev": raw_elev, "climb": climb, "clipped": clipped, "distance": distance,
    }
    files = _file_summary(w, t_ns, alive, blanked, step_mask, fast, out, per_sample, h, cfg)
    return VehicleClean(samples=out, dropped=dropped, files=files)


def _dropped_table(w: pd.DataFrame, alive: BoolArray, reason: np.ndarray) -> pd.DataFrame:
    return pd.DataFrame(
        {
            schema.SOURCE_FILE: pd.Series(w[schema.SOURCE_FILE].to_numpy()[~alive], dtype="string"),
            schema.SOURCE_ROW: w[schema.SOURCE_ROW].to_numpy(dtype=np.int64)[~alive],
            "reason": pd.Series(reason[~alive].astype(str), dtype="string"),
        }
    )


def _file_summary(
    w: pd.DataFrame,
    t_ns: np.ndarray,
    alive: BoolArray,
    blanked: BoolArray,
    step_mask: BoolArray,
    fast: BoolArray,
    out: pd.DataFrame,
    m: dict[str, np.ndarray],
    h: float,
    cfg: CleanConfig,
) -> pd.DataFrame:
    """One row per source file of this vehicle: counts, interval, distances, flags."""
    # files as codes (first-appearance order), not as object arrays of 10^6 strings
    row_codes, names = pd.factorize(w[schema.SOURCE_FILE].astype("string").fillna(""), sort=False)
    grid_codes = pd.Index(names).get_indexer(out[schema.SOURCE_FILE].astype("string").fillna(""))
    t_rows = t_ns[alive]
    alive_codes = row_codes[alive]
    dist_inc = np.r_[0.0, np.diff(m["distance"])] if m["distance"].size else m["distance"]
    interp = out[schema.IS_INTERPOLATED].to_numpy()
    vehicle = out[schema.VEHICLE_ID].iloc[0] if len(out) else w[schema.VEHICLE_ID].dropna().iloc[:1].squeeze()
    rows = []
    for code, name in enumerate(names):  # loop over files (few), not samples
        name = str(name)
        sel = grid_codes == code
        mine = alive_codes == code
        in_file = row_codes == code
        interval = logging_interval_s(t_rows[mine])
        flags = _flags_of_file(out, m, sel, h, interval, float(fast[in_file].mean()), cfg)
        if step_mask[in_file & alive].any():
            flags.append(fl.FLAG_POSITION_STEP)
        times = out.loc[sel, schema.TIME_UTC]
        rows.append(
            {
                schema.SOURCE_FILE: name,
                schema.VEHICLE_ID: vehicle,
                "rows_kept": int(mine.sum()),
                "rows_interpolated": int((sel & interp).sum()),
                "gaps": int((sel & out[schema.GAP_BREAK].to_numpy()).sum()),
                "logging_interval_s": interval,
                "intervals": int(positive_intervals_s(t_rows[mine]).size),
                "driving_time_s": float((sel & ~m["parked"] & np.isfinite(m["speed"])).sum() * h),
                "distance_m": float(dist_inc[sel].sum()),
                "climb_m": float(m["climb"][sel].sum()),
                "time_start": times.min() if len(times) else pd.NaT,
                "time_end": times.max() if len(times) else pd.NaT,
                "positions_blanked": int(blanked[in_file].sum()),
                "grade_clipped": int(m["clipped"][sel].sum()),
                "flags": tuple(flags),
            }
        )
    return pd.DataFrame(rows)
