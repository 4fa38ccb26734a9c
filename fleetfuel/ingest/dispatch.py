"""Pick the reader for each path and read a whole set of logs without stopping at a bad one.

Dispatch is by content first (magic bytes: zip, gzip, Parquet, XML/GPX, JSON), then by suffix.
A zip archive is opened into its CSV members; each member is its own file of the batch and
of the row account, named ``archive.zip!member.csv``.
"""

from __future__ import annotations

import glob
import zlib
from collections.abc import Iterable
from pathlib import Path
from typing import Final

import pyarrow as pa

from fleetfuel.errors import FleetFuelError, InputDataError
from fleetfuel.ingest import sniff
from fleetfuel.ingest.base import FileFailure, LogBatch, LogFile
from fleetfuel.ingest.config import IngestConfig
from fleetfuel.ingest.csvlog import read_csv_log
from fleetfuel.ingest.parquetlog import read_parquet_log
from fleetfuel.ingest.profiles import load_profile

LOG_SUFFIXES: Final = (
    ".csv",
    ".tsv",
    ".txt",
    ".gz",
    ".zip",
    ".gpx",
    ".parquet",
    ".pq",
    ".json",
    ".jsonl",
    ".ndjson",
    ".geojson",
)
"""Files picked up when a folder is given (any file named explicitly is tried)."""

JSON_SUFFIXES: Final = (".json", ".jsonl", ".ndjson", ".geojson")
PARQUET_SUFFIXES: Final = (".parquet", ".pq")
_HEAD_BYTES: Final = 1024


def _is_glob(text: str) -> bool:
    return any(ch in text for ch in "*?[")


def expand_paths(paths: Iterable[Path | str]) -> list[Path]:
    """Files named by ``paths``: folders searched recursively (log suffixes only, hidden files
    skipped), glob patterns expanded, duplicates removed, sorted. A path that does not exist is
    kept, so that reading it records a failure."""
    found: set[Path] = set()
    for item in paths:
        text = str(item)
        path = Path(text)
        if path.is_dir():
            for sub in path.rglob("*"):
                rel = sub.relative_to(path).parts
                if (
                    sub.is_file()
                    and not any(p.startswith(".") for p in rel)
                    and sub.name.lower().endswith(LOG_SUFFIXES)
                ):
                    found.add(sub)
        elif not path.exists() and _is_glob(text):
            found.update(Path(p) for p in glob.glob(text, recursive=True) if Path(p).is_file())
        else:
            found.add(path)
    return sorted(found, key=str)


def _head(path: Path) -> bytes:
    try:
        with path.open("rb") as handle:
            return handle.read(_HEAD_BYTES)
    except OSError as exc:
        raise sniff.read_error(path, exc) from exc


def sniff_format(path: Path) -> str:
    """``csv``, ``zip``, ``parquet``, ``gpx`` or ``json`` for a file (content first, then suffix)."""
    if sniff.split_member(path)[1] is not None:
        return "csv"
    head = _head(path)
    name = path.name.lower()
    if head.startswith(b"PK\x03\x04") or head.startswith(b"PK\x05\x06"):
        return "zip"
    if head.startswith(b"PAR1"):
        return "parquet"
    if name.endswith(PARQUET_SUFFIXES):
        raise InputDataError(f"{path}: not a Parquet file (the PAR1 magic bytes are missing)")
    if name.endswith(".zip"):
        raise InputDataError(f"{path}: not a zip archive (the PK magic bytes are missing)")
    text = head.lstrip(b"\xef\xbb\xbf \t\r\n")
    if name.endswith(".gpx") or b"<gpx" in head.lower():
        return "gpx"
    if name.endswith(JSON_SUFFIXES) or text[:1] in (b"{", b"["):
        return "json"
    if text[:1] == b"<":
        raise InputDataError(f"{path}: XML or HTML file that is not GPX; read formats: CSV, Parquet, GPX")
    return "csv"


def _read_gpx(path: Path, cfg: IngestConfig) -> LogFile:
    try:
        from fleetfuel.ingest.gpx import read_gpx_log
    except ImportError as exc:
        raise InputDataError(f"{path}: the GPX reader is not available ({exc})") from exc
    return read_gpx_log(path, cfg)


def read_log(path: Path | str, cfg: IngestConfig | None = None) -> LogFile:
    """Read one file with the reader its content calls for.

    A zip archive must hold exactly one CSV here (``read_logs`` takes any number); a member can
    be named directly as ``archive.zip!member.csv``.

    Raises
    ------
    InputDataError
        The file cannot be used; JSON and JSON-lines are refused (not a format fleetfuel reads).
    """
    cfg = cfg or IngestConfig()
    path = Path(path)
    kind = sniff_format(path)
    if kind == "zip":
        members = sniff.zip_members(path)
        if len(members) != 1:
            raise InputDataError(
                f"{path}: zip archive holds {len(members)} CSV files; read it with read_logs"
            )
        return read_csv_log(Path(f"{path}{sniff.ZIP_SEPARATOR}{members[0]}"), cfg)
    if kind == "parquet":
        return read_parquet_log(path, cfg)
    if kind == "gpx":
        return _read_gpx(path, cfg)
    if kind == "json":
        raise InputDataError(
            f"{path}: JSON / JSON-lines is not a format fleetfuel reads; export the log as CSV, Parquet or GPX"
        )
    return read_csv_log(path, cfg)


def _one_line(path: Path, exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    if not isinstance(exc, FleetFuelError):
        text = f"{path}: cannot read ({type(exc).__name__}: {text})"
    return text if str(path) in text else f"{path}: {text}"


_DATA_ERRORS: Final = (
    FleetFuelError,
    OSError,
    ValueError,
    EOFError,
    zlib.error,
    pa.ArrowException,
    UnicodeError,
)
"""Exceptions a hostile or broken file can provoke: recorded as a failure, never raised."""


def read_path(path: Path, cfg: IngestConfig) -> tuple[list[LogFile], list[FileFailure]]:
    """Read one named file (every CSV member of a zip archive); never raises for a bad file.

    The unit of work of :func:`read_logs` and of the engine's read tasks.
    """
    try:
        if sniff_format(path) == "zip":
            files: list[LogFile] = []
            failures: list[FileFailure] = []
            for member in sniff.zip_members(path):
                member_path = Path(f"{path}{sniff.ZIP_SEPARATOR}{member}")
                try:
                    files.append(read_csv_log(member_path, cfg))
                except _DATA_ERRORS as exc:
                    failures.append(FileFailure(member_path, _one_line(member_path, exc)))
            return files, failures
        return [read_log(path, cfg)], []
    except _DATA_ERRORS as exc:
        return [], [FileFailure(path, _one_line(path, exc))]


def read_logs(paths: Iterable[Path | str], cfg: IngestConfig | None = None) -> LogBatch:
    """Read every file named by ``paths`` (see :func:`expand_paths`); never raises for a bad file.

    Raises
    ------
    ProfileError
        Only for a forced profile (``cfg.profile``) that is unknown or malformed.

    Returns
    -------
    LogBatch
        ``files`` and ``failures`` (one-line messages naming the file), each in sorted path order.
    """
    cfg = cfg or IngestConfig()
    if cfg.profile:
        load_profile(cfg.profile)  # a bad forced profile is the user's one error, not every file's
    files: list[LogFile] = []
    failures: list[FileFailure] = []
    for path in expand_paths(paths):
        got, failed = read_path(path, cfg)
        files.extend(got)
        failures.extend(failed)
    return LogBatch(
        files=tuple(sorted(files, key=lambda f: str(f.path))),
        failures=tuple(sorted(failures, key=lambda f: str(f.path))),
    )
