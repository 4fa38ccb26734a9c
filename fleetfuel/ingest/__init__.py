"""ingest stage: read CSV, Parquet and GPX telematics logs into the raw canonical frame.

``read_logs(paths, cfg)`` is the entry point: it dispatches each file to its reader by content and
suffix, keeps going past bad files (recording a one-line failure), and returns a
:class:`~fleetfuel.ingest.base.LogBatch`. Export layouts are described by ingest profiles (TOML,
top-level ``ingest/`` folder; format in ``ingest/README.md``).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from fleetfuel.ingest.base import FileFailure, LogBatch, LogFile
from fleetfuel.ingest.config import IngestConfig
from fleetfuel.ingest.csvlog import read_csv_log
from fleetfuel.ingest.dispatch import expand_paths, read_log, read_logs
from fleetfuel.ingest.parquetlog import read_parquet_log
from fleetfuel.ingest.profiles import Profile, bundled_profiles, detect_profile, load_profile

if TYPE_CHECKING:
    from fleetfuel.ingest.gpx import read_gpx_log

__all__ = [
    "FileFailure",
    "IngestConfig",
    "LogBatch",
    "LogFile",
    "Profile",
    "bundled_profiles",
    "detect_profile",
    "expand_paths",
    "load_profile",
    "read_csv_log",
    "read_gpx_log",
    "read_log",
    "read_logs",
    "read_parquet_log",
]


def __getattr__(name: str) -> Any:
    """``read_gpx_log`` is imported on first use (its module is written separately)."""
    if name == "read_gpx_log":
        from fleetfuel.ingest.gpx import read_gpx_log

        return read_gpx_log
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
