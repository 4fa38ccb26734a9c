"""What every reader returns: one :class:`LogFile` per input file, or a :class:`FileFailure`."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

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
        if name in (schema.VEHICLE_ID, schema.SOURCE_FILE):
            columns[name] = pd.Series([], dtype="string")
        elif name == schema.TIME_UTC:
            columns[name] = pd.Series([], dtype="datetime64[ns, UTC]")
        elif name == schema.SOURCE_ROW:
            columns[name] = pd.Series([], dtype="int64")
        else:
            columns[name] = pd.Series([], dtype="float64")
    return pd.DataFrame(columns)


def conform(samples: pd.DataFrame) -> pd.DataFrame:
    """Return ``samples`` with every raw canonical column, in order and with canonical dtypes.

    Missing signal columns are added as NaN; extra columns are dropped.
    """
    out = {}
    template = empty_raw_frame()
    n = len(samples)
    for name in schema.RAW_COLUMNS:
        dtype = template[name].dtype
        if name in samples.columns:
            out[name] = samples[name].astype(dtype).to_numpy() if n else samples[name].astype(dtype)
        else:
            out[name] = pd.Series([pd.NA if dtype == "string" else float("nan")] * n, dtype=dtype)
    frame = pd.DataFrame(out)
    frame.index = pd.RangeIndex(n)
    return frame
