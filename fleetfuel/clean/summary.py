"""What :func:`fleetfuel.clean.vehicle.clean_vehicle` reports besides the clean frame: the rows it
dropped and one summary row per source file (counts, interval, distance, climb, flags).

Files are handled as integer codes (first-appearance order) over the vehicle's rows and grid
samples, never as object arrays of 10^6 strings.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean import flags as fl
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.order import logging_interval_s, positive_intervals_s
from fleetfuel.clean.screen import Screened

BoolArray = npt.NDArray[np.bool_]
IntArray = npt.NDArray[np.int64]


@dataclass(frozen=True, slots=True, kw_only=True)
class GridFacts:
    """The per-sample arrays of one vehicle's grid that the file summary reads.

    ``rows`` is the sorted input row each sample's text columns (``source_file``) come from;
    the rest are the clean frame's columns or intermediate signals of the same length.
    """

    rows: IntArray
    time_ns: IntArray
    interpolated: BoolArray
    gap_break: BoolArray
    reported: npt.NDArray[np.float64]
    derived: npt.NDArray[np.float64]
    unit_fixed: BoolArray
    speed: npt.NDArray[np.float64]
    parked: BoolArray
    segment: IntArray
    raw_elev: npt.NDArray[np.float64]
    climb: npt.NDArray[np.float64]
    clipped: BoolArray
    distance: npt.NDArray[np.float64]

    @classmethod
    def empty(cls) -> GridFacts:
        f, b, i = np.empty(0), np.empty(0, dtype=bool), np.empty(0, dtype=np.int64)
        return cls(rows=i, time_ns=i, interpolated=b, gap_break=b, reported=f, derived=f, unit_fixed=b, speed=f, parked=b,
                   segment=i, raw_elev=f, climb=f, clipped=b, distance=f)


def take_text(column: pd.Series, rows: npt.ArrayLike) -> pd.api.extensions.ExtensionArray:
    """Rows of a text column, in the canonical ``string`` dtype (Arrow-backed columns stay Arrow)."""
    array = column.array.take(np.asarray(rows, dtype=np.int64))
    if array.dtype != pd.StringDtype():
        array = pd.array(array, dtype="string")
    return array


def dropped_table(w: pd.DataFrame, screened: Screened) -> pd.DataFrame:
    """The rows the screening dropped: ``source_file``, ``source_row``, ``reason``."""
    gone = np.flatnonzero(~screened.alive)
    return pd.DataFrame(
        {
            schema.SOURCE_FILE: take_text(w[schema.SOURCE_FILE], gone),
            schema.SOURCE_ROW: w[schema.SOURCE_ROW].to_numpy(dtype=np.int64)[gone],
            "reason": pd.array(screened.reasons(gone).astype(str), dtype="string"),
        }
    )


def _file_codes(files: pd.Series) -> tuple[IntArray, list[str]]:
    """Code of each row's file (first-appearance order, missing as ``""``) and the file names."""
    text = files if files.dtype == pd.StringDtype() else files.astype("string")
    if not len(text):
        return np.zeros(0, dtype=np.int64), []
    if not text.hasnans and bool((text == text.iloc[0]).all()):  # one file (the common case): no hashing
        return np.zeros(len(text), dtype=np.int64), [str(text.iloc[0])]
    codes, names = pd.factorize(text.fillna("") if text.hasnans else text, sort=False)
    return np.asarray(codes, dtype=np.int64), [str(v) for v in names]


def _flags_of_file(
    g: GridFacts, sel: BoolArray, step: float, interval: float, fast_share: float, cfg: CleanConfig
) -> list[str]:
    """Flags of one file's samples ``sel`` of the vehicle's grid (see :mod:`fleetfuel.clean.flags`)."""
    out: list[str] = []
    if np.isfinite(interval) and interval >= cfg.low_rate_interval_s:
        out.append(fl.FLAG_LOW_RATE)
    real = sel & ~g.interpolated
    verdict, _ = fl.speed_verdict(g.reported[real], g.derived[real], cfg)
    if verdict:
        out.append(verdict)
    if (real & g.unit_fixed).any():
        out.append(fl.FLAG_SPEED_UNIT_CORRECTED)
    if (real & ~np.isfinite(g.reported) & np.isfinite(g.derived)).any():
        out.append(fl.FLAG_SPEED_FROM_POSITIONS)
    every = bool(sel.all())
    speed = g.speed if every else g.speed[sel]
    elev = g.raw_elev if every else g.raw_elev[sel]
    if fl.is_walking(speed, g.parked if every else g.parked[sel], step, cfg):
        out.append(fl.FLAG_WALKING)
    if fl.is_aircraft(elev, speed, g.segment if every else g.segment[sel], step, fast_share, cfg):
        out.append(fl.FLAG_AIRCRAFT)
    if not np.isfinite(elev).any():
        out.append(fl.FLAG_NO_ELEVATION)
    return out


def file_summary(
    w: pd.DataFrame, t_ns: IntArray, screened: Screened, g: GridFacts, h: float, cfg: CleanConfig
) -> pd.DataFrame:
    """One row per source file of this vehicle: counts, interval, distances, flags."""
    row_codes, names = _file_codes(w[schema.SOURCE_FILE])
    grid_codes = row_codes[g.rows]
    alive = screened.alive
    t_rows = t_ns[alive]
    alive_codes = row_codes[alive]
    dist_inc = np.r_[0.0, np.diff(g.distance)] if g.distance.size else g.distance
    vehicle = (
        w[schema.VEHICLE_ID].iloc[int(g.rows[0])] if g.rows.size
        else w[schema.VEHICLE_ID].dropna().iloc[:1].squeeze()
    )
    single = len(names) == 1
    rows = []
    for code, name in enumerate(names):  # loop over files (few), not samples
        sel = np.ones(grid_codes.size, dtype=bool) if single else grid_codes == code
        mine = alive_codes == code
        in_file = row_codes == code
        interval = logging_interval_s(t_rows if single else t_rows[mine])
        flags = _flags_of_file(g, sel, h, interval, float(screened.fast[in_file].mean()), cfg)
        if screened.step[in_file & alive].any():
            flags.append(fl.FLAG_POSITION_STEP)
        times = g.time_ns[sel]
        rows.append(
            {
                schema.SOURCE_FILE: name,
                schema.VEHICLE_ID: vehicle,
                "rows_kept": int(mine.sum()),
                "rows_interpolated": int((sel & g.interpolated).sum()),
                "gaps": int((sel & g.gap_break).sum()),
                "logging_interval_s": interval,
                "intervals": int(positive_intervals_s(t_rows[mine]).size),
                "driving_time_s": float((sel & ~g.parked & np.isfinite(g.speed)).sum() * h),
                "distance_m": float(dist_inc[sel].sum()),
                "climb_m": float(g.climb[sel].sum()),
                "time_start": pd.Timestamp(int(times.min()), tz="UTC") if times.size else pd.NaT,
                "time_end": pd.Timestamp(int(times.max()), tz="UTC") if times.size else pd.NaT,
                "positions_blanked": int(screened.blanked[in_file].sum()),
                "grade_clipped": int(g.clipped[sel].sum()),
                "flags": tuple(flags),
            }
        )
    return pd.DataFrame(rows)
