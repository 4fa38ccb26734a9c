"""Time order and duplicates of one vehicle's samples.

Rows arrive in batch order (files in the batch's sorted-path order, rows in file order).
:func:`sort_samples` orders them by time with a *stable* sort, so rows at the same instant keep
that arrival order; :func:`duplicate_reasons` then keeps the first row of each instant:

* ``duplicate_row``: same time and the same values as an earlier row (an exact repeat, e.g. a
  file exported twice, or overlapping exports of the same logger);
* ``duplicate_time``: same time, different values (two loggers, or a re-sent corrected sample;
  the first one wins).

A duplicate spanning two files is therefore charged to the later file in batch order.
"""

from __future__ import annotations

from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema

NS_PER_S: Final = 1_000_000_000
"""Nanoseconds per second (SI prefix nano, exact)."""

BoolArray = npt.NDArray[np.bool_]

IDENTITY_COLUMNS = (schema.SOURCE_FILE, schema.SOURCE_ROW)
"""Columns that say where a row came from, not what it says: ignored when comparing rows."""


def time_ns(samples: pd.DataFrame) -> npt.NDArray[np.int64]:
    """Sample times as int64 nanoseconds since 1970-01-01 UTC (any datetime resolution in)."""
    times = samples[schema.TIME_UTC]
    if len(times) == 0:
        return np.empty(0, dtype=np.int64)
    if times.dt.tz is None:
        times = times.dt.tz_localize("UTC")
    naive = times.dt.tz_convert("UTC").dt.tz_localize(None)
    return naive.to_numpy(dtype="datetime64[ns]").view(np.int64).copy()


def sort_samples(samples: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``samples`` in time order; rows at the same instant keep their arrival order.

    Parameters
    ----------
    samples : DataFrame
        Raw canonical frame of one vehicle (any row order).

    Returns
    -------
    DataFrame
        The same rows, stably sorted by ``time_utc``, index reset.
    """
    order = np.argsort(time_ns(samples), kind="stable")
    return samples.iloc[order].reset_index(drop=True)


def value_columns(samples: pd.DataFrame) -> list[str]:
    """Columns compared for exact duplicates: everything but the row's provenance."""
    return [c for c in samples.columns if c not in IDENTITY_COLUMNS]


def duplicate_masks(
    samples: pd.DataFrame, rows: npt.NDArray[np.int64] | None = None, times: npt.NDArray[np.int64] | None = None
) -> tuple[BoolArray, BoolArray]:
    """Rows repeating an earlier instant: (exact repeat of an earlier row, same time other values).

    Parameters
    ----------
    samples : DataFrame
        One vehicle's samples sorted with :func:`sort_samples`.
    rows : ndarray of int64, optional
        Only these rows (positions, ascending) take part (default: all).
    times : ndarray of int64, optional
        :func:`time_ns` of those rows when the caller has it. [ns]

    Returns
    -------
    (exact, same_time_other) : tuple of ndarray of bool
        Over the rows taking part: ``duplicate_row`` and ``duplicate_time`` rows (the first row
        of each instant is in neither).
    """
    rows = np.arange(len(samples)) if rows is None else np.asarray(rows, dtype=np.int64)
    n = rows.size
    if times is None:
        times = time_ns(samples)[rows]
    t = np.asarray(times, dtype=np.int64)
    if n == 0:
        return np.zeros(0, dtype=bool), np.zeros(0, dtype=bool)
    if n < 2 or bool((t[1:] >= t[:-1]).all()):  # sorted: rows of one instant are neighbours
        same_prev = np.r_[False, t[1:] == t[:-1]]
        same_time = same_prev
        shared = same_prev | np.r_[same_prev[1:], False]
    else:
        times_s = pd.Series(t)
        same_time = times_s.duplicated(keep="first").to_numpy()
        shared = times_s.duplicated(keep=False).to_numpy()
    exact = np.zeros(n, dtype=bool)
    if shared.any():  # only rows sharing an instant can repeat a row
        keyed = samples.iloc[rows[shared]][value_columns(samples)].reset_index(drop=True)
        keyed[schema.TIME_UTC] = t[shared]
        # pandas' duplicated() treats NaN == NaN, which is what an exact repeat means here.
        exact[shared] = keyed.duplicated(keep="first").to_numpy()
    return exact, same_time & ~exact


def duplicate_reasons(samples: pd.DataFrame) -> pd.Series:
    """Drop reason of each row that repeats an earlier instant, ``<NA>`` for rows to keep.

    Parameters
    ----------
    samples : DataFrame
        One vehicle's samples sorted with :func:`sort_samples`.

    Returns
    -------
    Series of string
        ``duplicate_row`` (same time, same values as an earlier row), ``duplicate_time`` (same
        time, other values; the first row of the instant is kept) or ``<NA>``. Same index.
    """
    reason = pd.Series(pd.NA, index=samples.index, dtype="string")
    if samples.empty:
        return reason
    exact, other = duplicate_masks(samples)
    reason[exact] = schema.DROP_DUPLICATE_ROW
    reason[other] = schema.DROP_DUPLICATE_TIME
    return reason


def positive_intervals_s(time_ns_sorted: npt.NDArray[np.int64]) -> npt.NDArray[np.float64]:
    """Time steps between consecutive distinct instants of a sorted time array. [s]"""
    steps = np.diff(np.asarray(time_ns_sorted, dtype=np.int64)).astype(np.float64) / NS_PER_S
    return steps[steps > 0]


def logging_interval_s(time_ns_sorted: npt.NDArray[np.int64]) -> float:
    """The logging interval: median of the positive time steps (NaN for fewer than two instants). [s]"""
    steps = positive_intervals_s(time_ns_sorted)
    return float(np.median(steps)) if steps.size else float("nan")
