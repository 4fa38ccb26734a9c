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
    order = np.argsort(times_ns, kind="stable")
    t = np.asarray(times_ns, dtype=np.int64)[order]
    v = np.asarray(speed_m_s, dtype=np.float64)[order]
    if t.size < 2:
        return np.zeros(0, dtype=np.int64)
    rest_ns = int(rest_s * NS_PER_S)
    gap = np.flatnonzero(np.diff(t) >= rest_ns) + 1  # first sample after a long gap
    cuts = [t[gap]]
    still = np.isfinite(v) & (v < stop_speed_m_s)
    after_gap = np.zeros(t.size, dtype=bool)
    after_gap[gap] = True
    begins = still & (np.r_[True, ~still[:-1]] | after_gap)  # a standstill run never spans a gap
    ends = still & (np.r_[~still[1:], True] | np.r_[after_gap[1:], False])
    first, last = np.flatnonzero(begins), np.flatnonzero(ends)
    long_run = (t[last] - t[first]) >= rest_ns
    middle = np.searchsorted(t, (t[first[long_run]] + t[last[long_run]]) // 2, side="left")
    cuts.append(t[middle])
    out = np.unique(np.concatenate(cuts))
    return out[out > t[0]]


def window_of(times_ns: IntArray, cuts: IntArray) -> IntArray:
    """Window number (0..len(cuts)) of each time (see :func:`window_cuts`)."""
    return np.searchsorted(cuts, times_ns, side="right").astype(np.int64)


def partition_key(vehicle_id: str | None, first_time: pd.Timestamp | None) -> str:
    """``<vehicle key>/<first sample time, UTC, to the second>`` (``.../none`` without times)."""
    stamp = "none" if first_time is None or pd.isna(first_time) else first_time.strftime("%Y%m%dT%H%M%SZ")
    return f"{vehicle_key(vehicle_id)}/{stamp}"
