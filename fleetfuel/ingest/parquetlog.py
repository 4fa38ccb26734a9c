"""Read one Parquet export (large fleets) into the raw canonical frame: :func:`read_parquet_log`.

Only the needed columns are read, one record batch at a time (pyarrow's Parquet reader works
row group by row group). Columns already named as in :mod:`fleetfuel.schema` are taken
directly (``time_utc`` a timestamp or ISO text); other layouts go through an ingest profile.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from fleetfuel import schema
from fleetfuel.errors import InputDataError
from fleetfuel.ingest.base import LogFile
from fleetfuel.ingest.config import IngestConfig, member_name
from fleetfuel.ingest.convert import build_log
from fleetfuel.ingest.detect import resolve
from fleetfuel.ingest.profiles import Profile, VehicleRule, detect_profile, load_profile

CANONICAL_PROFILE = "canonical_csv"
"""Bundled profile whose column names are the canonical ones (used for canonical Parquet)."""


def _open(path: Path) -> pq.ParquetFile:
    try:
        return pq.ParquetFile(path)
    except FileNotFoundError as exc:
        raise InputDataError(f"{path}: file not found") from exc
    except PermissionError as exc:
        raise InputDataError(f"{path}: permission denied") from exc
    except (pa.ArrowException, OSError, ValueError) as exc:
        first = (str(exc).splitlines() or [type(exc).__name__])[0]
        raise InputDataError(f"{path}: not a readable Parquet file ({first})") from exc


def _canonical(names: list[str]) -> Profile | None:
    """The canonical profile when the columns already carry canonical names (vehicle id optional)."""
    lower = {n.lower() for n in names}
    has_signal = schema.SPEED_M_S in lower or {schema.LAT_DEG, schema.LON_DEG} <= lower
    if schema.TIME_UTC not in lower or not has_signal:
        return None
    profile = load_profile(CANONICAL_PROFILE)
    if schema.VEHICLE_ID not in lower:
        profile = dataclasses.replace(profile, vehicle=VehicleRule(source="config"))
    return profile


def read_parquet_log(path: Path | str, cfg: IngestConfig | None = None) -> LogFile:
    """Read one Parquet file.

    Parameters
    ----------
    path : Path or str
        The file.
    cfg : IngestConfig, optional
        A forced profile applies to Parquet too (its delimiter and encoding are ignored).

    Returns
    -------
    LogFile
        Raw canonical samples (SI, UTC) and the row account.

    Raises
    ------
    InputDataError
        Not Parquet, no matching columns, or no usable row.
    """
    cfg = cfg or IngestConfig()
    path = Path(path)
    handle = _open(path)
    names = list(handle.schema_arrow.names)
    if cfg.profile:
        profile: Profile | None = load_profile(cfg.profile)
    else:
        profile = _canonical(names) or detect_profile(names, file_name=member_name(path))
    if profile is None:
        shown = ", ".join(repr(n) for n in names[:15])
        raise InputDataError(
            f"{path}: no ingest profile matches the Parquet columns [{shown}]; "
            "name them as in fleetfuel/schema.py or give --profile NAME or PATH"
        )
    resolved = resolve(profile, names)
    if resolved is None:
        raise InputDataError(f"{path}: profile {profile.name} does not fit the Parquet columns {names[:15]}")
    if handle.metadata.num_rows == 0:
        raise InputDataError(f"{path}: Parquet file holds no rows")
    try:
        batches = list(
            handle.iter_batches(
                batch_size=cfg.parquet_batch_rows, columns=resolved.needed(), use_threads=cfg.use_threads
            )
        )
        table = pa.Table.from_batches(batches) if batches else None
    except (pa.ArrowException, OSError, ValueError) as exc:
        first = (str(exc).splitlines() or [type(exc).__name__])[0]
        raise InputDataError(f"{path}: cannot read Parquet data ({first})") from exc
    if table is None or table.num_rows == 0:
        raise InputDataError(f"{path}: Parquet file holds no rows")
    return build_log(table, path=path, profile=profile, resolved=resolved, cfg=cfg, decimal=profile.decimal)
