"""Small helpers shared by the segment modules: input checks, time in seconds, id columns."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa

from fleetfuel import schema
from fleetfuel.errors import InputDataError

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]

REQUIRED_COLUMNS = (schema.VEHICLE_ID, schema.TIME_UTC, schema.SPEED_M_S)


def ordered(samples: pd.DataFrame, what: str = "samples") -> pd.DataFrame:
    """A copy of ``samples`` sorted by vehicle and time (stable), after checking its columns.

    The clean frame is already sorted; the sort only runs when it is not. The index labels are
    kept, so results can be joined back to the input.

    Raises
    ------
    InputDataError
        A required column (vehicle_id, time_utc, speed_m_s) is missing.
    """
    missing = [c for c in REQUIRED_COLUMNS if c not in samples.columns]
    if missing:
        raise InputDataError(
            f"{what}: missing column(s) {', '.join(missing)}; expected the clean frame "
            f"(found columns {list(samples.columns)})"
        )
    if is_ordered(samples):
        return samples.copy()
    return samples.sort_values([schema.VEHICLE_ID, schema.TIME_UTC], kind="stable")


def is_ordered(samples: pd.DataFrame) -> bool:
    """True when ``samples`` is sorted by vehicle, then time (ties allowed).

    One vehicle (a partition, the common case) needs only the time check: no string comparisons
    beyond one equality test per row.
    """
    n = len(samples)
    if n < 2:
        return True
    vehicles = samples[schema.VEHICLE_ID]
    times = samples[schema.TIME_UTC]
    if times.hasnans:
        return False
    t = pd.DatetimeIndex(times).asi8
    if not vehicles.hasnans and bool((vehicles == vehicles.iloc[0]).all()):
        return bool((np.diff(t) >= 0).all())
    keys = pd.MultiIndex.from_arrays([vehicles, times])
    return bool(keys.is_monotonic_increasing)


def seconds(times: pd.Series) -> FloatArray:
    """Times as float seconds since 1970-01-01 (UTC for aware times). [s]"""
    series = pd.Series(times)
    tz = getattr(series.dtype, "tz", None)
    epoch = pd.Timestamp(0, tz="UTC") if tz is not None else pd.Timestamp(0)
    return ((series - epoch) / pd.Timedelta(seconds=1)).to_numpy(dtype=np.float64)


def bool_column(samples: pd.DataFrame, name: str) -> BoolArray:
    """Column ``name`` as a bool array (missing column or missing values: False)."""
    if name not in samples.columns:
        return np.zeros(len(samples), dtype=bool)
    return samples[name].fillna(False).to_numpy(dtype=bool)


def float_column(samples: pd.DataFrame, name: str) -> FloatArray | None:
    """Column ``name`` as a float array (NaN for missing values), or None when absent."""
    if name not in samples.columns:
        return None
    return pd.to_numeric(samples[name], errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan)


def numbered(
    prefixes: Sequence[str] | np.ndarray, letter: str, numbers: IntArray, width: int = 4
) -> list[str]:
    """``f"{prefix}/{letter}{number:0{width}d}"`` element-wise (one string per group, not per row)."""
    return [f"{p}/{letter}{n:0{width}d}" for p, n in zip(prefixes, numbers.tolist(), strict=True)]


def id_column(ids: Sequence[str], codes: IntArray, index: pd.Index) -> pd.Series:
    """Per-row string column: ``ids[code]``, <NA> where ``code < 0`` (one string per group, taken in C)."""
    picked = pa.array(list(ids), type=pa.string()).take(pa.array(codes, mask=codes < 0))
    return pd.Series(pd.array(picked, dtype="string"), index=index)


def group_starts(codes: IntArray) -> BoolArray:
    """True where a row starts a new run of equal codes (codes are contiguous per group)."""
    first = np.ones(codes.size, dtype=bool)
    first[1:] = codes[1:] != codes[:-1]
    return first


def group_ends(codes: IntArray) -> BoolArray:
    """True where a row ends a run of equal codes."""
    last = np.ones(codes.size, dtype=bool)
    last[:-1] = codes[1:] != codes[:-1]
    return last
