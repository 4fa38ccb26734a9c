"""Configuration of the ingest stage: :class:`IngestConfig`."""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Final
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from fleetfuel.errors import ConfigError

VEHICLE_ID_RULES: Final = ("stem", "folder", "fixed", "name_regex")
"""How a single-vehicle file (GPX, or a CSV whose profile names no vehicle source) gets its id."""

DEFAULT_EARLIEST_TIME_UTC: Final = "1990-01-01"
"""Samples before this are dropped as ``time_implausible`` (a logger clock at epoch 0, a corrupt date).
Satellite-positioning fleet telematics did not exist before; common practice, no source."""

DEFAULT_LATEST_TIME_UTC: Final = "2100-01-01"
"""Samples after this are dropped as ``time_implausible`` (corrupt year); common practice, no source."""

DEFAULT_MAX_FILE_BYTES: Final = 1 << 32
"""Largest (decompressed) file read into memory, 4 GiB: guards against zip and gzip bombs."""

DEFAULT_CSV_BLOCK_BYTES: Final = 1 << 20
"""pyarrow CSV block size, 1 MiB (pyarrow's default; measured faster than 4 or 16 MiB on a 2-core machine)."""

DEFAULT_PARQUET_BATCH_ROWS: Final = 1 << 20
"""Rows per Parquet record batch read at a time (only the needed columns are read)."""


@dataclass(frozen=True, slots=True, kw_only=True)
class IngestConfig:
    """Options of the ingest stage.

    Attributes
    ----------
    profile : str or None
        Forced ingest profile: a bundled profile NAME or the PATH of a profile TOML. None: detect
        the profile from each file's header.
    timezone : str
        IANA zone of naive (offset-free) local times when the profile does not fix one.
        Times carrying an offset (``+02:00``, ``+0200``, ``Z``) always use their offset.
    vehicle_id_rule : str
        Vehicle id of single-vehicle files whose profile names no vehicle source (and of GPX files):
        ``"stem"`` (file stem, default), ``"folder"`` (parent folder name), ``"fixed"``
        (``vehicle_id_value``) or ``"name_regex"`` (first group, or group ``id``, of the regex
        ``vehicle_id_value`` searched in the file name).
    vehicle_id_value : str
        The fixed id, or the regex, for the rules that need one.
    earliest_time_utc, latest_time_utc : str
        ISO dates bounding plausible sample times; rows outside are dropped ``time_implausible``.
        Elapsed-time files (cycles, time counted from 1970-01-01) are exempt.
    max_file_bytes : int
        Largest decompressed file (or zip member) read. [bytes]
    csv_block_bytes : int
        pyarrow CSV parser block size. [bytes]
    parquet_batch_rows : int
        Parquet rows per record batch.
    use_threads : bool
        Let pyarrow parse with several threads.
    """

    profile: str | None = None
    timezone: str = "UTC"
    vehicle_id_rule: str = "stem"
    vehicle_id_value: str = ""
    earliest_time_utc: str = DEFAULT_EARLIEST_TIME_UTC
    latest_time_utc: str = DEFAULT_LATEST_TIME_UTC
    max_file_bytes: int = DEFAULT_MAX_FILE_BYTES
    csv_block_bytes: int = DEFAULT_CSV_BLOCK_BYTES
    parquet_batch_rows: int = DEFAULT_PARQUET_BATCH_ROWS
    use_threads: bool = True

    def __post_init__(self) -> None:
        try:
            ZoneInfo(self.timezone)
        except (ZoneInfoNotFoundError, ValueError) as exc:
            raise ConfigError(f"ingest.timezone: unknown IANA time zone {self.timezone!r}") from exc
        if self.vehicle_id_rule not in VEHICLE_ID_RULES:
            raise ConfigError(
                f"ingest.vehicle_id_rule must be one of {VEHICLE_ID_RULES}, got {self.vehicle_id_rule!r}"
            )
        if self.vehicle_id_rule in ("fixed", "name_regex") and not self.vehicle_id_value:
            raise ConfigError(
                f"ingest.vehicle_id_rule {self.vehicle_id_rule!r} needs ingest.vehicle_id_value"
            )
        if self.vehicle_id_rule == "name_regex":
            try:
                re.compile(self.vehicle_id_value)
            except re.error as exc:
                raise ConfigError(
                    f"ingest.vehicle_id_value: bad regex {self.vehicle_id_value!r}: {exc}"
                ) from exc
        for key in ("max_file_bytes", "csv_block_bytes", "parquet_batch_rows"):
            if getattr(self, key) <= 0:
                raise ConfigError(f"ingest.{key} must be > 0, got {getattr(self, key)}")

    def vehicle_id_for(self, path: Path | str) -> str:
        """Vehicle id of a single-vehicle file at ``path`` by :attr:`vehicle_id_rule`.

        A zip member path ``archive.zip!trip.csv`` uses the member's own name.
        """
        return vehicle_id_from_path(path, self.vehicle_id_rule, self.vehicle_id_value)


def member_name(path: Path | str) -> str:
    """The file's own name: for ``archive.zip!dir/trip.csv`` that is ``trip.csv``."""
    text = str(path)
    return Path(text.rsplit("!", 1)[-1]).name


def _stem(name: str) -> str:
    for suffix in (".csv.gz", ".txt.gz", ".gz"):
        if name.lower().endswith(suffix):
            return name[: -len(suffix)]
    return Path(name).stem


def vehicle_id_from_path(path: Path | str, rule: str, value: str = "") -> str:
    """Vehicle id from a file path: ``stem``, ``folder``, ``fixed`` (``value``) or ``name_regex``.

    Raises
    ------
    ConfigError
        ``name_regex`` does not match the file name.
    """
    name = member_name(path)
    if rule == "fixed":
        return value
    if rule == "folder":
        inner = str(path).rsplit("!", 1)
        parent = (
            Path(inner[-1]).parent.name
            if len(inner) == 2 and "/" in inner[-1]
            else Path(inner[0]).parent.name
        )
        return parent or _stem(name)
    if rule == "name_regex":
        match = re.search(value, name)
        if match is None:
            raise ConfigError(f"{path}: vehicle id regex {value!r} does not match the file name {name!r}")
        groups = match.groupdict()
        return groups.get("id") or (match.group(1) if match.groups() else match.group(0))
    return _stem(name)
