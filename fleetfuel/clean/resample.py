"""Resampling one vehicle's samples onto a uniform time grid, with breaks at long gaps.

The grid is aligned to the epoch (grid times are whole multiples of the step since
1970-01-01 UTC), so it does not depend on where a log starts or on how vehicles are grouped.

* Each input row goes to its nearest grid instant. Rows sharing an instant (a 10 Hz log on a
  1 s grid) are *merged*: numeric columns are averaged, the first row gives ``source_row``; all
  of them count as kept input rows.
* Instants with no row inside a short gap are *interpolated* linearly (``is_interpolated``,
  ``source_row == -1``, attributed to the file of the sample before them).
* A gap longer than ``max(gap_break_s, gap_break_intervals * interval)`` is a *break*: no grid
  points inside it, ``gap_break`` on the first sample after it. Nothing is interpolated across
  a break, and a column missing for longer than that inside a stretch stays missing.

Low-rate logs
-------------
A log whose logging interval (median time step) is at least ``low_rate_interval_s`` (event or
low-rate loggers sending every 10-60 s) is resampled at its own interval rounded to whole
steps, not at ``step_s``: linear interpolation at 1 s between fixes 30 s apart would invent a
smooth speed trace that was never observed. What such a log can say: distance, time, mean speed
between fixes, stops longer than a few intervals, elevation and grade over distance. What it
cannot say: accelerations, short stops, speed peaks between fixes; so ``accel_m_s2`` is NaN
for it (not observable) and the file is flagged ``low_rate``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.order import NS_PER_S, logging_interval_s, time_ns

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]


@dataclass(frozen=True, slots=True, kw_only=True)
class TimeBase:
    """The time base chosen for one vehicle.

    Attributes
    ----------
    interval_s : float
        Detected logging interval (median positive time step). [s]
    step_s : float
        Grid step of the clean frame. [s]
    gap_s : float
        Longer gaps are breaks. [s]
    low_rate : bool
        The log is low-rate (see module notes): step is the rounded interval, accelerations
        are not observable.
    """

    interval_s: float
    step_s: float
    gap_s: float
    low_rate: bool


def time_base(times_ns: npt.NDArray[np.int64], cfg: CleanConfig) -> TimeBase:
    """Detect the logging interval of sorted sample times and choose grid step and gap threshold."""
    interval = logging_interval_s(times_ns)
    if not np.isfinite(interval):
        interval = cfg.step_s
    low_rate = interval >= cfg.low_rate_interval_s
    step = max(1.0, float(np.round(interval / cfg.step_s))) * cfg.step_s if low_rate else cfg.step_s
    gap = max(cfg.gap_break_s, cfg.gap_break_intervals * interval, 2 * step)
    return TimeBase(interval_s=interval, step_s=step, gap_s=gap, low_rate=bool(low_rate))


def fill_within_segments(
    values: FloatArray, segment: IntArray, grid_k: IntArray, max_gap_steps: float
) -> FloatArray:
    """Linear interpolation of NaN runs that lie inside one segment and span at most
    ``max_gap_steps`` grid steps between their finite neighbours. Returns a new array."""
    out = np.array(values, dtype=np.float64, copy=True)
    n = out.size
    finite = np.isfinite(out)
    if finite.all() or not finite.any():
        return out
    idx = np.arange(n)
    prev = np.maximum.accumulate(np.where(finite, idx, -1))
    nxt = np.minimum.accumulate(np.where(finite, idx, n)[::-1])[::-1]
    hole = np.flatnonzero(~finite & (prev >= 0) & (nxt < n))
    p, q = prev[hole], nxt[hole]
    ok = (segment[p] == segment[hole]) & (segment[q] == segment[hole]) & ((grid_k[q] - grid_k[p]) <= max_gap_steps)
    hole, p, q = hole[ok], p[ok], q[ok]
    w = (grid_k[hole] - grid_k[p]) / (grid_k[q] - grid_k[p])
    out[hole] = out[p] + w * (out[q] - out[p])
    return out


def _forward_fill_from(bin_pos: IntArray, grid_size: int) -> IntArray:
    """For each grid point, the index (into ``bin_pos``) of the last filled bin at or before it."""
    marker = np.full(grid_size, -1, dtype=np.int64)
    marker[bin_pos] = np.arange(bin_pos.size)
    return np.maximum.accumulate(marker)


def resample(
    samples: pd.DataFrame, base: TimeBase, breaks_before: BoolArray | None = None
) -> pd.DataFrame:
    """One vehicle's kept rows on a uniform, epoch-aligned grid.

    Parameters
    ----------
    samples : DataFrame
        Raw canonical frame of ONE vehicle: sorted by time, distinct times, outliers removed.
    base : TimeBase
        From :func:`time_base`.
    breaks_before : ndarray of bool, optional
        Extra breaks (e.g. a lasting position jump) before these rows.

    Returns
    -------
    DataFrame
        The input's columns on the grid, plus ``is_interpolated`` and ``gap_break``.
    """
    n = len(samples)
    columns = list(samples.columns)
    if n == 0:
        out = samples.copy()
        out[schema.IS_INTERPOLATED] = pd.Series([], dtype=bool)
        out[schema.GAP_BREAK] = pd.Series([], dtype=bool)
        return out
    h = int(round(base.step_s * NS_PER_S))
    t = time_ns(samples)
    k = (t + h // 2) // h
    new_k = np.r_[True, np.diff(k) != 0]
    brk = np.r_[False, np.diff(t) > base.gap_s * NS_PER_S]
    if breaks_before is not None:
        brk |= np.asarray(breaks_before, dtype=bool)
    brk &= new_k  # a break inside one grid instant cannot be represented: merge instead
    brk[0] = False
    seg = np.cumsum(brk)
    first_row = np.flatnonzero(new_k)
    bin_of_row = np.cumsum(new_k) - 1
    bin_k, bin_seg = k[first_row], seg[first_row]
    seg_first_bin = np.flatnonzero(np.r_[True, np.diff(bin_seg) != 0])
    seg_last_bin = np.r_[seg_first_bin[1:] - 1, first_row.size - 1]
    kmin, kmax = bin_k[seg_first_bin], bin_k[seg_last_bin]
    seg_len = kmax - kmin + 1
    offset = np.r_[0, np.cumsum(seg_len)[:-1]]
    grid_size = int(seg_len.sum())
    grid_seg = np.repeat(np.arange(seg_len.size), seg_len)
    grid_k = kmin[grid_seg] + np.arange(grid_size) - offset[grid_seg]
    bin_pos = offset[bin_seg] + bin_k - kmin[bin_seg]
    owner = _forward_fill_from(bin_pos, grid_size)
    max_gap_steps = base.gap_s / base.step_s

    data: dict[str, object] = {}
    for name in columns:
        col = samples[name]
        if name == schema.TIME_UTC:
            data[name] = pd.to_datetime(grid_k * h, unit="ns", utc=True)
        elif name == schema.SOURCE_ROW:
            rows = np.full(grid_size, -1, dtype=np.int64)
            rows[bin_pos] = col.to_numpy(dtype=np.int64)[first_row]
            data[name] = rows
        elif pd.api.types.is_float_dtype(col.dtype):
            vals = col.to_numpy(dtype=np.float64)
            fin = np.isfinite(vals)
            cnt = np.bincount(bin_of_row[fin], minlength=first_row.size)
            tot = np.bincount(bin_of_row[fin], weights=vals[fin], minlength=first_row.size)
            grid = np.full(grid_size, np.nan)
            with np.errstate(invalid="ignore", divide="ignore"):
                grid[bin_pos] = np.where(cnt > 0, tot / np.maximum(cnt, 1), np.nan)
            data[name] = fill_within_segments(grid, grid_seg, grid_k, max_gap_steps)
        else:  # strings and anything else: the first row of the bin, carried into interpolated instants
            data[name] = col.array.take(first_row[owner])  # keeps the column's own dtype
    out = pd.DataFrame(data)
    for name in columns:
        if name != schema.TIME_UTC and out[name].dtype != samples[name].dtype:
            out[name] = out[name].astype(samples[name].dtype)
    interpolated = np.ones(grid_size, dtype=bool)
    interpolated[bin_pos] = False
    gap_break = np.zeros(grid_size, dtype=bool)
    gap_break[offset[1:]] = True
    out[schema.IS_INTERPOLATED] = interpolated
    out[schema.GAP_BREAK] = gap_break
    return out


def segment_ids(gap_break: npt.ArrayLike) -> IntArray:
    """Stretch number of each sample (0, 1, ...): increments at every ``gap_break``."""
    return np.cumsum(np.asarray(gap_break, dtype=np.int64))
