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


@dataclass(frozen=True, slots=True, kw_only=True)
class GridPlan:
    """Where one vehicle's kept rows go on the grid: index arrays, built once, applied per column.

    Attributes
    ----------
    grid_k : ndarray of int64
        Grid instant of each sample (time = ``grid_k * step``).
    segment : ndarray of int64
        Stretch number of each sample (0, 1, ...; increments at every ``gap_break``).
    bin_pos : ndarray of int64
        Grid position of each occupied instant (bin).
    first_row : ndarray of int64
        Input row of each bin's first row.
    bin_of_row : ndarray of int64
        Bin of each input row.
    owner_row : ndarray of int64
        Input row whose text columns each sample carries (its bin's first row; for an
        interpolated sample, that of the bin before it).
    gap_break, interpolated : ndarray of bool
        The flags of the clean frame.
    step_ns : int
        Grid step. [ns]
    max_gap_steps : float
        Longest hole filled by interpolation. [steps]
    """

    grid_k: IntArray
    segment: IntArray
    bin_pos: IntArray
    first_row: IntArray
    bin_of_row: IntArray
    owner_row: IntArray
    gap_break: BoolArray
    interpolated: BoolArray
    step_ns: int
    max_gap_steps: float

    @property
    def size(self) -> int:
        """Samples on the grid."""
        return int(self.grid_k.size)

    @property
    def merged(self) -> bool:
        """Some instant holds more than one input row."""
        return bool(self.first_row.size != self.bin_of_row.size)

    def floats(self, values: npt.ArrayLike) -> FloatArray:
        """A numeric column on the grid: mean per instant, short holes interpolated in a stretch."""
        vals = np.asarray(values, dtype=np.float64)
        fin = np.isfinite(vals)
        grid = np.full(self.size, np.nan)
        if not fin.any():  # an absent signal stays absent: nothing to average or interpolate
            return grid
        if not self.merged:  # one row per instant: its mean is the value itself
            grid[self.bin_pos] = np.where(fin, vals, np.nan)
        else:
            cnt = np.bincount(self.bin_of_row[fin], minlength=self.first_row.size)
            tot = np.bincount(self.bin_of_row[fin], weights=vals[fin], minlength=self.first_row.size)
            with np.errstate(invalid="ignore", divide="ignore"):
                grid[self.bin_pos] = np.where(cnt > 0, tot / np.maximum(cnt, 1), np.nan)
        return fill_within_segments(grid, self.segment, self.grid_k, self.max_gap_steps)

    def source_rows(self, rows: npt.ArrayLike) -> IntArray:
        """``source_row`` on the grid: the first row of each instant, -1 where interpolated."""
        out = np.full(self.size, -1, dtype=np.int64)
        out[self.bin_pos] = np.asarray(rows, dtype=np.int64)[self.first_row]
        return out

    def times_ns(self) -> IntArray:
        """Grid times. [ns since 1970-01-01 UTC]"""
        return self.grid_k * self.step_ns


def grid_plan(
    t_ns: npt.NDArray[np.int64], base: TimeBase, breaks_before: BoolArray | None = None
) -> GridPlan:
    """The grid of sorted, distinct-time rows ``t_ns`` (see module notes); at least one row.

    Parameters
    ----------
    t_ns : ndarray of int64
        Times of the kept rows, sorted. [ns]
    base : TimeBase
        From :func:`time_base`.
    breaks_before : ndarray of bool, optional
        Extra breaks (e.g. a lasting position jump) before these rows.
    """
    h = int(round(base.step_s * NS_PER_S))
    t = np.asarray(t_ns, dtype=np.int64)
    k = (t + h // 2) // h
    new_k = np.r_[True, np.diff(k) != 0]
    brk = np.r_[False, np.diff(t) > base.gap_s * NS_PER_S]
    if breaks_before is not None:
        brk |= np.asarray(breaks_before, dtype=bool)
    brk &= new_k  # a break inside one grid instant cannot be represented: merge instead
    brk[0] = False
    first_row = np.flatnonzero(new_k)
    bin_of_row = np.cumsum(new_k) - 1
    bin_k, bin_seg = k[first_row], np.cumsum(brk)[first_row]
    seg_first_bin = np.flatnonzero(np.r_[True, np.diff(bin_seg) != 0])
    seg_last_bin = np.r_[seg_first_bin[1:] - 1, first_row.size - 1]
    kmin, kmax = bin_k[seg_first_bin], bin_k[seg_last_bin]
    seg_len = kmax - kmin + 1
    offset = np.r_[0, np.cumsum(seg_len)[:-1]]
    grid_size = int(seg_len.sum())
    grid_seg = np.repeat(np.arange(seg_len.size), seg_len)
    grid_k = kmin[grid_seg] + np.arange(grid_size) - offset[grid_seg]
    bin_pos = offset[bin_seg] + bin_k - kmin[bin_seg]
    interpolated = np.ones(grid_size, dtype=bool)
    interpolated[bin_pos] = False
    gap_break = np.zeros(grid_size, dtype=bool)
    gap_break[offset[1:]] = True
    return GridPlan(
        grid_k=grid_k, segment=grid_seg, bin_pos=bin_pos, first_row=first_row, bin_of_row=bin_of_row,
        owner_row=first_row[_forward_fill_from(bin_pos, grid_size)], gap_break=gap_break,
        interpolated=interpolated, step_ns=h, max_gap_steps=base.gap_s / base.step_s,
    )


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
    columns = list(samples.columns)
    if len(samples) == 0:
        out = samples.copy()
        out[schema.IS_INTERPOLATED] = pd.Series([], dtype=bool)
        out[schema.GAP_BREAK] = pd.Series([], dtype=bool)
        return out
    plan = grid_plan(time_ns(samples), base, breaks_before)
    data: dict[str, object] = {}
    for name in columns:
        col = samples[name]
        if name == schema.TIME_UTC:
            data[name] = pd.to_datetime(plan.times_ns(), unit="ns", utc=True)
        elif name == schema.SOURCE_ROW:
            data[name] = plan.source_rows(col.to_numpy(dtype=np.int64))
        elif pd.api.types.is_float_dtype(col.dtype):
            data[name] = plan.floats(col.to_numpy(dtype=np.float64))
        else:  # strings and anything else: the first row of the bin, carried into interpolated instants
            data[name] = col.array.take(plan.owner_row)  # keeps the column's own dtype
    out = pd.DataFrame(data)
    for name in columns:
        if name != schema.TIME_UTC and out[name].dtype != samples[name].dtype:
            out[name] = out[name].astype(samples[name].dtype)
    out[schema.IS_INTERPOLATED] = plan.interpolated
    out[schema.GAP_BREAK] = plan.gap_break
    return out


def segment_ids(gap_break: npt.ArrayLike) -> IntArray:
    """Stretch number of each sample (0, 1, ...): increments at every ``gap_break``."""
    return np.cumsum(np.asarray(gap_break, dtype=np.int64))
