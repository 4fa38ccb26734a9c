"""What every reader returns: one :class:`LogFile` per input file, or a :class:`FileFailure`."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa

from fleetfuel import schema


@dataclass(frozen=True, slots=True, kw_only=True)
class LogFile:
    """One input file read into the raw canonical frame.

    Attributes
    ----------
    path : Path
        The file as given (also in the frame's ``source_file`` column, as ``str(path)``).
    samples : DataFrame
        Raw canonical frame (:data:`fleetfuel.schema.RAW_COLUMNS`), one row per parsed input row,
        in file order, SI units, UTC times. Rows the reader rejected are not in it.
    rows_in : int
        Data rows (or GPX points) the file holds, header and comment lines excluded.
    dropped : DataFrame
        Rows the reader rejected: columns ``source_row`` (int64) and ``reason`` (a
        :data:`fleetfuel.schema.DROP_REASONS` value).
    profile : str
        Name of the ingest profile (or GPX/Parquet reader) used.
    flags : tuple of str
        File-level observations (e.g. ``"gpx_untimed_track_skipped"``), for the inspect table.
    """

    path: Path
    samples: pd.DataFrame
    rows_in: int
    dropped: pd.DataFrame
    profile: str
    flags: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class FileFailure:
    """A file that could not be used, with the one-line message shown to the user."""

    path: Path
    error: str


@dataclass(frozen=True, slots=True)
class LogBatch:
    """Everything read from a set of paths, good and bad, in a stable (sorted path) order."""

    files: tuple[LogFile, ...] = field(default_factory=tuple)
    failures: tuple[FileFailure, ...] = field(default_factory=tuple)


def empty_dropped() -> pd.DataFrame:
    """An empty ``dropped`` table with the right dtypes."""
    return pd.DataFrame({"source_row": pd.Series([], dtype="int64"), "reason": pd.Series([], dtype="string")})


def empty_raw_frame() -> pd.DataFrame:
    """An empty raw canonical frame with every column and dtype of :data:`schema.RAW_COLUMNS`."""
    columns: dict[str, pd.Series] = {}
    for name in schema.RAW_COLUMNS:
        if name in schema.STRING_COLUMNS:
            columns[name] = pd.Series([], dtype="string")
        elif name == schema.TIME_UTC:
            columns[name] = pd.Series([], dtype="datetime64[ns, UTC]")
        elif name == schema.SOURCE_ROW:
            columns[name] = pd.Series([], dtype="int64")
        else:
            columns[name] = pd.Series([], dtype="float64")
    return pd.DataFrame(columns)


def conform(columns: Mapping[str, Any], n: int | None = None) -> pd.DataFrame:
    """The raw canonical frame from a frame or a mapping of column arrays.

    Every :data:`schema.RAW_COLUMNS` column comes out in order with its canonical dtype; missing
    signal columns are NaN (strings NA). Extra columns are dropped, except a clean-frame column
    the file already carries (a cycle file's ``grade``), kept as float64 after them. Built from
    arrays without a round trip through Python objects (2 M timestamps stay milliseconds).

    Parameters
    ----------
    columns : DataFrame or Mapping
        Column name -> array-like of equal length.
    n : int, optional
        Row count; needed only when ``columns`` is empty.
    """
    if n is None:
        if isinstance(columns, pd.DataFrame):
            n = len(columns)
        else:
            n = len(next(iter(columns.values()))) if columns else 0
    template = empty_raw_frame()
    out: dict[str, Any] = {}
    for name in schema.RAW_COLUMNS:
        dtype = template[name].dtype
        if name in columns:
            out[name] = pd.Series(columns[name], copy=False).astype(dtype).array
        elif dtype == "string":
            out[name] = pd.arrays.ArrowStringArray(pa.chunked_array([pa.nulls(n, pa.string())]))
        elif name == schema.TIME_UTC:
            out[name] = pd.DatetimeIndex(np.full(n, np.datetime64("NaT", "ns")), tz="UTC").array
        elif name == schema.SOURCE_ROW:
            out[name] = np.full(n, -1, dtype=np.int64)
        else:
            out[name] = np.full(n, np.nan)
    for name in schema.CLEAN_EXTRA_COLUMNS:
        if name in columns:
            out[name] = np.asarray(columns[name], dtype=np.float64)
    return pd.DataFrame(out, index=pd.RangeIndex(n), copy=False)
