"""Physically impossible samples: speeds beyond a ceiling, speed spikes, position jumps.

Spikes are found the same way for speed and for positions, vectorised over the whole log:

1. a *jump* is a step between consecutive samples that no road vehicle can make (speed: a
   gain faster than ``accel_limit_m_s2`` or a loss faster than ``brake_limit_m_s2``, with the
   time step floored at ``step_s`` so that
   high-rate loggers that refresh a value in one row are judged per second; position: an implied
   speed above ``position_jump_factor * speed_ceiling_m_s`` plus ``position_noise_m``);
2. two jumps no more than ``spike_max_s`` apart (with at most two further jumps between them)
   enclose a *spike run* when the samples just outside the run agree with each other (and, for
   speed, two consecutive jumps go opposite ways): the run alone is removed, never its neighbours;
3. a run at the very start or end of the log, cut off by one jump, is removed when it is shorter
   than ``spike_max_s`` and the rest of the log is longer;
4. a jump left over is a one-sample spike when the sample just after it (or just before it)
   strays from the line between its own neighbours by a jump while those neighbours agree (the
   way back is no jump: a long time step, or a drop that hard braking alone could make);
5. any other jump is a *step* (the signal moves and stays): it is not removed, because neither
   side can be shown wrong; for positions it is reported so the caller can break the track there.
   Fixes further apart in time than ``gap_break_s`` are never judged against each other.

Three passes are made, so that a spike hidden behind another is found once the first is gone.

References
----------
Hampel, F. R. (1974). The influence curve and its role in robust estimation. JASA 69, 383-393
(the idea of judging a sample against its neighbours rather than the whole record).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.geodesy import geodesic_distance_m

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]
IntArray = npt.NDArray[np.int64]

SPIKE_PASSES: Final = 3
"""Passes of the spike search (a spike masked by another shows up on the next pass)."""

SPIKE_MAX_INNER_JUMPS: Final = 2
"""A spike run may contain this many further jumps (two bad fixes in a row, each off its own way)."""

# consistent(a, b) -> bool array: do samples a and b (index arrays) agree with each other?
Consistent = Callable[[IntArray, IntArray], BoolArray]
# odd(a, k, b) -> bool array: does sample k stray from the line between a and b by a jump?
Odd = Callable[[IntArray, IntArray, IntArray], BoolArray]


@dataclass(frozen=True, slots=True)
class PositionOutliers:
    """Result of :func:`position_outliers` (boolean arrays over the input rows).

    Attributes
    ----------
    spike : ndarray of bool
        Fixes inside a spike run (remove them).
    step : ndarray of bool
        First fix after a jump that stays (break the track before it).
    """

    spike: BoolArray
    step: BoolArray


def impossible_speed(speed_m_s: npt.ArrayLike, cfg: CleanConfig) -> BoolArray:
    """True where a reported speed is negative or above ``cfg.speed_ceiling_m_s``. [m/s in]"""
    speed = np.asarray(speed_m_s, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        return (speed < 0) | (speed > cfg.speed_ceiling_m_s) | np.isinf(speed)


def _enclosed_runs(
    t_s: FloatArray, arrivals: IntArray, consistent: Consistent, opposite: BoolArray | None, max_s: float
) -> tuple[IntArray, IntArray]:
    """Runs ``start .. stop-1`` between jumps (up to :data:`SPIKE_MAX_INNER_JUMPS` apart) that
    last at most ``max_s`` and whose outside neighbours agree; smallest runs first."""
    starts, stops = [], []
    taken = np.zeros(t_s.size + 1, dtype=bool)
    for k in range(1, SPIKE_MAX_INNER_JUMPS + 2):  # a handful of run widths, each vectorised
        if arrivals.size <= k:
            break
        start, stop = arrivals[:-k], arrivals[k:]
        ok = (t_s[stop - 1] - t_s[start]) <= max_s
        if opposite is not None and k == 1:
            ok &= opposite[start] != opposite[stop]
        ok &= ~taken[start] & ~taken[stop - 1]
        ok[ok] &= consistent(start[ok] - 1, stop[ok])
        marks = np.zeros(t_s.size + 2, dtype=np.int64)
        np.add.at(marks, start[ok], 1)
        np.add.at(marks, stop[ok], -1)
        taken |= np.cumsum(marks[:-1]) > 0
        starts.append(start[ok])
        stops.append(stop[ok])
    return np.concatenate(starts) if starts else arrivals[:0], np.concatenate(stops) if stops else arrivals[:0]


def _runs_between_jumps(
    t_s: FloatArray, jump: BoolArray, consistent: Consistent, odd: Odd, opposite: BoolArray | None, max_s: float
) -> tuple[BoolArray, BoolArray]:
    """One pass over compressed (all-valid) samples: (in a spike run, arrival of a step)."""
    n = len(t_s)
    spike = np.zeros(n, dtype=bool)
    arrivals = np.flatnonzero(jump)
    if arrivals.size == 0:
        return spike, np.zeros(n, dtype=bool)
    start, stop = _enclosed_runs(t_s, arrivals, consistent, opposite, max_s)
    first_run_end = arrivals[0]  # samples 0 .. arrivals[0]-1 before the first jump
    last_run_start = arrivals[-1]
    explained = np.zeros(n, dtype=bool)
    explained[start] = True
    explained[stop] = True
    lead = (not explained[first_run_end]) and (t_s[first_run_end - 1] - t_s[0] <= max_s) and (
        first_run_end < n - first_run_end
    )
    trail = (not explained[last_run_start]) and (t_s[n - 1] - t_s[last_run_start] <= max_s) and (
        n - last_run_start < last_run_start
    )
    marks = np.zeros(n + 1, dtype=np.int64)
    np.add.at(marks, start, 1)
    np.add.at(marks, stop, -1)
    if lead:
        marks[0] += 1
        marks[first_run_end] -= 1
    if trail:
        marks[last_run_start] += 1
        marks[n] -= 1
    spike = np.cumsum(marks[:n]) > 0
    used = np.zeros(n, dtype=bool)
    used[start] = True
    used[stop] = True
    if lead:
        used[first_run_end] = True
    if trail:
        used[last_run_start] = True
    step = jump & ~used & ~spike
    # a lone jump: the sample after it (or before it) strays from the line between its two
    # neighbours, which agree with each other. A one-sample spike whose other side is no jump
    # (a long time step, or a change that braking alone could make).
    arrive = np.flatnonzero(step)
    a = arrive[(arrive + 1 < n)]
    a = a[consistent(a - 1, a + 1) & odd(a - 1, a, a + 1)] if a.size else a
    b = np.setdiff1d(arrive[arrive >= 2], a)
    b = b[consistent(b - 2, b) & odd(b - 2, b - 1, b)] if b.size else b
    spike[a] = True
    spike[b - 1] = True
    step[a] = False
    step[b] = False
    return spike, step


def _search(
    t_s: FloatArray,
    jump_of: Callable[[IntArray], tuple[BoolArray, BoolArray | None]],
    consistent_of: Callable[[IntArray], Consistent],
    odd_of: Callable[[IntArray], Odd],
    max_s: float,
) -> tuple[BoolArray, BoolArray]:
    """Repeat the run search over the samples not yet removed. Returns (spike, step) masks."""
    n = len(t_s)
    spike = np.zeros(n, dtype=bool)
    step = np.zeros(n, dtype=bool)
    for _ in range(SPIKE_PASSES):
        alive = np.flatnonzero(~spike)
        if alive.size < 3:
            break
        jump, opposite = jump_of(alive)
        found, steps = _runs_between_jumps(
            t_s[alive], jump, consistent_of(alive), odd_of(alive), opposite, max_s
        )
        step = np.zeros(n, dtype=bool)
        step[alive[steps]] = True
        if not found.any():
            break
        spike[alive[found]] = True
    return spike, step & ~spike


def speed_spikes(time_s: npt.ArrayLike, speed_m_s: npt.ArrayLike, cfg: CleanConfig) -> BoolArray:
    """True for samples inside a speed spike (removed as ``accel_impossible``).

    Parameters
    ----------
    time_s : array_like
        Sample times, sorted, distinct. [s]
    speed_m_s : array_like
        Reported speed (NaN where absent; NaN rows are skipped). [m/s]
    cfg : CleanConfig
        ``accel_limit_m_s2``, ``brake_limit_m_s2``, ``step_s``, ``spike_max_s``.

    Returns
    -------
    ndarray of bool
        Same length as the input.
    """
    t_all = np.asarray(time_s, dtype=np.float64)
    v_all = np.asarray(speed_m_s, dtype=np.float64)
    out = np.zeros(t_all.shape, dtype=bool)
    have = np.flatnonzero(np.isfinite(v_all))
    if have.size < 3:
        return out
    t, v = t_all[have], v_all[have]

    def within(dv: FloatArray, dt: FloatArray) -> BoolArray:
        """Can a road vehicle change speed by ``dv`` in ``dt`` (floored at one step)?"""
        span = np.maximum(np.abs(dt), cfg.step_s)
        return (dv <= cfg.accel_limit_m_s2 * span) & (dv >= -cfg.brake_limit_m_s2 * span)

    def jump_of(alive: IntArray) -> tuple[BoolArray, BoolArray | None]:
        dv = np.r_[0.0, np.diff(v[alive])]
        dt = np.r_[0.0, np.diff(t[alive])]
        return ~within(dv, dt), dv > 0

    def consistent_of(alive: IntArray) -> Consistent:
        return lambda a, b: within(v[alive[b]] - v[alive[a]], t[alive[b]] - t[alive[a]])

    def odd_of(alive: IntArray) -> Odd:
        def odd(a: IntArray, k: IntArray, b: IntArray) -> BoolArray:
            a, k, b = alive[a], alive[k], alive[b]
            line = v[a] + (v[b] - v[a]) * (t[k] - t[a]) / (t[b] - t[a])
            nearest_s = np.minimum(t[k] - t[a], t[b] - t[k])
            return ~within(v[k] - line, nearest_s)

        return odd

    spike, _ = _search(t, jump_of, consistent_of, odd_of, cfg.spike_max_s)
    out[have[spike]] = True
    return out


def stale_fixes(
    time_s: npt.ArrayLike, lat_deg: npt.ArrayLike, lon_deg: npt.ArrayLike, cfg: CleanConfig
) -> BoolArray:
    """Repeated fixes that a receiver (or a merged export) carried forward while the vehicle moved.

    A run of exact repeats of a fix is *stale* when the next different fix shows the vehicle
    moved faster than ``standstill_speed_m_s`` on average since the fix first appeared: the
    repeats carry no position, and a naive speed between the last repeat and the next fix would
    look like a jump (the receiver holding its last fix for 34 s, then moving 470 m in "1 s").
    Repeats at a standstill (receivers hold the fix when stopped) are kept.

    Parameters
    ----------
    time_s : array_like
        Sample times, sorted, distinct. [s]
    lat_deg, lon_deg : array_like
        Fixes (NaN where absent; skipped). [deg]
    cfg : CleanConfig
        ``standstill_speed_m_s``.

    Returns
    -------
    ndarray of bool
        True for the repeats to blank (never the first appearance of a fix).
    """
    t_all = np.asarray(time_s, dtype=np.float64)
    lat_all = np.asarray(lat_deg, dtype=np.float64)
    lon_all = np.asarray(lon_deg, dtype=np.float64)
    out = np.zeros(t_all.shape, dtype=bool)
    have = np.flatnonzero(np.isfinite(lat_all) & np.isfinite(lon_all))
    if have.size < 3:
        return out
    t, lat, lon = t_all[have], lat_all[have], lon_all[have]
    repeat = np.r_[False, (lat[1:] == lat[:-1]) & (lon[1:] == lon[:-1])]
    idx = np.arange(t.size)
    first = np.maximum.accumulate(np.where(repeat, 0, idx))  # first appearance of each fix
    nxt = np.minimum.accumulate(np.where(repeat, t.size, idx)[::-1])[::-1]  # next fix at/after
    nxt_after = np.r_[nxt[1:], t.size]  # next different fix strictly after each sample
    cand = np.flatnonzero(repeat & (nxt_after < t.size))
    a, c = first[cand], nxt_after[cand]
    speed = geodesic_distance_m(lat[a], lon[a], lat[c], lon[c]) / (t[c] - t[a])
    out[have[cand[speed > cfg.standstill_speed_m_s]]] = True
    return out


def position_outliers(
    time_s: npt.ArrayLike,
    lat_deg: npt.ArrayLike,
    lon_deg: npt.ArrayLike,
    cfg: CleanConfig,
    *,
    next_m: npt.ArrayLike | None = None,
) -> PositionOutliers:
    """Fixes inside position spikes, and fixes that start a lasting position jump.

    Parameters
    ----------
    time_s : array_like
        Sample times, sorted, distinct. [s]
    lat_deg, lon_deg : array_like
        Valid WGS-84 fixes (NaN where absent; those rows are skipped). [deg]
    cfg : CleanConfig
        ``speed_ceiling_m_s``, ``position_jump_factor``, ``position_noise_m``, ``spike_max_s``.
    next_m : array_like, optional
        Geodesic distance from each row's fix to the next row's, where the caller already has it
        (NaN: not known; computed here). Saves a pass over the track; the result is the same. [m]

    Returns
    -------
    PositionOutliers
        ``spike``: remove; ``step``: the track jumps before this fix and stays there.
    """
    t_all = np.asarray(time_s, dtype=np.float64)
    lat_all = np.asarray(lat_deg, dtype=np.float64)
    lon_all = np.asarray(lon_deg, dtype=np.float64)
    spike_out = np.zeros(t_all.shape, dtype=bool)
    step_out = np.zeros(t_all.shape, dtype=bool)
    have = np.flatnonzero(np.isfinite(lat_all) & np.isfinite(lon_all))
    if have.size < 2:
        return PositionOutliers(spike_out, step_out)
    t, lat, lon = t_all[have], lat_all[have], lon_all[have]
    jump_speed = cfg.position_jump_factor * cfg.speed_ceiling_m_s
    # Distances between consecutive fixes, once: every pass judges mostly the same neighbours.
    step_m = np.full(have.size - 1, np.nan)
    if next_m is not None:
        known = np.asarray(next_m, dtype=np.float64)
        adjacent_rows = np.flatnonzero(np.diff(have) == 1)  # consecutive fixes on consecutive rows
        step_m[adjacent_rows] = known[have[adjacent_rows]]
    todo = np.flatnonzero(~np.isfinite(step_m))
    if todo.size:
        step_m[todo] = geodesic_distance_m(lat[todo], lon[todo], lat[todo + 1], lon[todo + 1])

    def distance(a: IntArray, b: IntArray) -> FloatArray:
        out = np.empty(a.size)
        adjacent = (b - a) == 1
        out[adjacent] = step_m[a[adjacent]]
        other = ~adjacent
        if other.any():
            out[other] = geodesic_distance_m(lat[a[other]], lon[a[other]], lat[b[other]], lon[b[other]])
        return out

    def agree(a: IntArray, b: IntArray) -> BoolArray:
        dist = distance(a, b)
        dt = np.abs(t[b] - t[a])
        return (dist <= jump_speed * dt + cfg.position_noise_m) | (dt > cfg.gap_break_s)

    def jump_of(alive: IntArray) -> tuple[BoolArray, BoolArray | None]:
        prev = np.r_[alive[0], alive[:-1]]
        return ~agree(prev, alive), None

    def consistent_of(alive: IntArray) -> Consistent:
        return lambda a, b: agree(alive[a], alive[b])

    def odd_of(alive: IntArray) -> Odd:
        def odd(a: IntArray, k: IntArray, b: IntArray) -> BoolArray:
            a, k, b = alive[a], alive[k], alive[b]
            frac = (t[k] - t[a]) / (t[b] - t[a])
            lat_line = lat[a] + (lat[b] - lat[a]) * frac
            lon_line = lon[a] + (lon[b] - lon[a]) * frac
            nearest_s = np.minimum(t[k] - t[a], t[b] - t[k])
            stray = geodesic_distance_m(lat[k], lon[k], lat_line, lon_line)
            return stray > jump_speed * nearest_s + cfg.position_noise_m

        return odd

    if have.size < 3:
        jump, _ = jump_of(np.arange(have.size))
        step_out[have[jump]] = True
        return PositionOutliers(spike_out, step_out)
    spike, step = _search(t, jump_of, consistent_of, odd_of, cfg.spike_max_s)
    spike_out[have[spike]] = True
    step_out[have[step]] = True
    return PositionOutliers(spike_out, step_out)
