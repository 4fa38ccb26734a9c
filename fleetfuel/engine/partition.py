"""The partition unit of every engine: one vehicle's operating period.

An operating period (:mod:`fleetfuel.segment.labels`) is a vehicle's driving between rests of
at least ``segment.period_rest_s``. Before cleaning, a vehicle's raw sample times are cut where
such a rest shows:

* a gap between consecutive sample times of at least the rest (the logger was off), cut at the
  gap;
* a stretch of reported standstill (speed below ``segment.stop_speed_m_s``) lasting at least the
  rest (a logger that records while parked), cut at its middle sample.

Each window is cleaned and segmented on its own, in every engine, the local one included: the
cleaning's gap and smoothing logic, the trips and micro-trips never straddle a window edge, so
results cannot depend on the engine or the worker count. A window holds one operating period,
or several when a parked vehicle kept moving a little (GPS drift) through a long rest; rows
without a time ride in the vehicle's first window (the cleaning drops them with their reason).
"""

from __future__ import annotations

import hashlib
import re
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel.clean.order import NS_PER_S

IntArray = npt.NDArray[np.int64]
FloatArray = npt.NDArray[np.float64]

UNKNOWN_VEHICLE_KEY: Final = "_no_vehicle"
_SAFE = re.compile(r"[^A-Za-z0-9_.-]+")


def vehicle_key(vehicle_id: str | None) -> str:
    """A file-name-safe, collision-free folder name for a vehicle id (``_no_vehicle`` for none)."""
    if vehicle_id is None:
        return UNKNOWN_VEHICLE_KEY
    digest = hashlib.sha1(vehicle_id.encode("utf-8")).hexdigest()[:8]
    return f"{_SAFE.sub('_', vehicle_id)[:40]}-{digest}"


def window_cuts(times_ns: IntArray, speed_m_s: FloatArray, rest_s: float, stop_speed_m_s: float) -> IntArray:
    """Cut times [ns since the epoch] that split one vehicle's samples into windows.

    Parameters
    ----------
    times_ns : ndarray of int64
        Sample times (any order, duplicates allowed; no missing values).
    speed_m_s : ndarray
        Reported speed of each sample (NaN where the log has none). [m/s]
    rest_s : float
        Shortest rest that ends an operating period. [s]
    stop_speed_m_s : float
        Speed below which the vehicle is at rest. [m/s]

    Returns
    -------
    ndarray of int64
        Sorted cut times: window ``k`` holds the samples with ``cuts[k-1] <= t < cuts[k]`` (the
        first window is open below, the last open above).
    """
    finder = CutFinder(rest_s, stop_speed_m_s)
    finder.feed(times_ns, speed_m_s)
    return finder.cuts()


class CutFinder:
    """:func:`window_cuts` fed in time-ordered chunks, holding only the standstill run still open.

    Feed chunks whose time ranges follow one another (every time of a chunk at or after every
    time of the chunks before, ties within one chunk, in the order :func:`window_cuts` would
    sort them); :meth:`cuts` then equals :func:`window_cuts` of all chunks at once. Between
    chunks the finder keeps the last sample, or the samples of the standstill run that reaches
    the end of the data so far (its middle is only known when it ends), so its memory is one
    chunk plus the longest rest logged at standstill.
    """

    def __init__(self, rest_s: float, stop_speed_m_s: float) -> None:
        self.rest_ns = int(rest_s * NS_PER_S)
        self.stop_speed_m_s = stop_speed_m_s
        self._found: list[IntArray] = []
        self._carry_t = np.zeros(0, dtype=np.int64)
        self._carry_still = False  # the carried samples are an open standstill run
        self._first: int | None = None
        self._count = 0

    def feed(self, times_ns: IntArray, speed_m_s: FloatArray) -> None:
        """Add one chunk (any order within it; see the class docstring)."""
        order = np.argsort(times_ns, kind="stable")
        t_new = np.asarray(times_ns, dtype=np.int64)[order]
        if t_new.size == 0:
            return
        v_new = np.asarray(speed_m_s, dtype=np.float64)[order]
        self._first = int(t_new[0]) if self._first is None else self._first
        self._count += t_new.size
        carried = self._carry_t.size
        t = np.r_[self._carry_t, t_new]
        still = np.r_[np.full(carried, self._carry_still), np.isfinite(v_new) & (v_new < self.stop_speed_m_s)]
        gap = np.flatnonzero(np.diff(t) >= self.rest_ns) + 1  # first sample after a long gap
        self._found.append(t[gap])
        after_gap = np.zeros(t.size, dtype=bool)
        after_gap[gap] = True
        begins = still & (np.r_[True, ~still[:-1]] | after_gap)  # a standstill run never spans a gap
        ends = still & (np.r_[~still[1:], True] | np.r_[after_gap[1:], False])
        first, last = np.flatnonzero(begins), np.flatnonzero(ends)
        closed = last < t.size - 1  # a run reaching the end of the data may go on in the next chunk
        self._found.append(self._middles(t, first[closed], last[closed]))
        if still[-1]:
            self._carry_t, self._carry_still = t[first[-1]:], True
        else:
            self._carry_t, self._carry_still = t[-1:], False

    def _middles(self, t: IntArray, first: IntArray, last: IntArray) -> IntArray:
        long_run = (t[last] - t[first]) >= self.rest_ns
        return t[np.searchsorted(t, (t[first[long_run]] + t[last[long_run]]) // 2, side="left")]

    def cuts(self) -> IntArray:
        """The cut times of everything fed (see :func:`window_cuts`)."""
        if self._count < 2 or self._first is None:
            return np.zeros(0, dtype=np.int64)
        found = list(self._found)
        if self._carry_still:  # the run open at the end of the data ends there
            t = self._carry_t
            found.append(self._middles(t, np.zeros(1, dtype=np.int64), np.array([t.size - 1])))
        out = np.unique(np.concatenate(found)) if found else np.zeros(0, dtype=np.int64)
        return out[out > self._first]


def window_of(times_ns: IntArray, cuts: IntArray) -> IntArray:
    """Window number (0..len(cuts)) of each time (see :func:`window_cuts`)."""
    return np.searchsorted(cuts, times_ns, side="right").astype(np.int64)


def partition_key(vehicle_id: str | None, first_time: pd.Timestamp | None) -> str:
    """``<vehicle key>/<first sample time, UTC, to the second>`` (``.../none`` without times)."""
    stamp = "none" if first_time is None or pd.isna(first_time) else first_time.strftime("%Y%m%dT%H%M%SZ")
    return f"{vehicle_key(vehicle_id)}/{stamp}"
