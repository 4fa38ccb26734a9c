"""Read GPX 1.0 / 1.1 track logs into the raw canonical frame.

What is a row
-------------
Every ``<trkpt>`` is one input row, whatever track or segment holds it: ``rows_in`` is the number
of track points and ``source_row`` the 0-based index of the point in document order (across all
tracks and segments). Waypoints (``<wpt>``) and route points (``<rtept>``) are not samples of a
drive (a waypoint marks a place; a route is a plan), so they are never rows; their counts are
noted in ``flags``.

Kept and dropped
----------------
A point without ``<time>`` is dropped ``time_missing``; a time that is not a valid
``xsd:dateTime`` (see :data:`fleetfuel.ingest.gpx_stream.TIME_GRAMMAR`) ``time_unparseable``; a time
outside the plausible window of :class:`~fleetfuel.ingest.config.IngestConfig` ``time_implausible``;
a point whose ``lat``/``lon`` attribute is missing or not a finite number ``position_invalid``.
Times carry their offset (converted to UTC); a time without an offset is UTC, as the GPX schemas
require, so ``IngestConfig.timezone`` does not apply to GPX. A missing or non-numeric ``<ele>`` or
speed is kept as NaN. The header ``<time>`` (a file's creation time, sometimes bogus) is ignored.

Flags (file-level observations)
-------------------------------
``gpx_untimed_track_skipped:<track>`` a track whose points all lack times (all dropped);
``gpx_empty_track:<track>`` a track with no points; ``gpx_segment_starts:<rows>`` the
``source_row`` of the first point of each non-empty segment, when there are several (track and
segment boundaries: a receiver pause or a new recording; the clean stage's time-gap rule sees
the gaps, this flag shows where they came from); ``gpx_waypoints_not_rows:<n>``,
``gpx_route_points_not_rows:<n>``; ``gpx_elevation_unparseable:<n>``, ``gpx_speed_unparseable:<n>``.

Safety
------
Before any XML parser sees a file, :func:`fleetfuel.ingest.xmlsafe.scan_prolog` refuses
DOCTYPE/ENTITY declarations; parsers run with entity resolution and network access off.
A file that is not well-formed (for example truncated) is refused as a whole with one line:
points read before the damage are not kept.

Two readers
-----------
:func:`read_gpx_log` streams with ``lxml.etree.iterparse`` (bounded memory, vectorised
conversion); :func:`read_gpx_reference` builds the same frame from gpxpy's object model and is the
correctness reference in the tests. Known, deliberate differences: the fast path trims white space
around time text (``xsd:dateTime`` collapses white space; gpxpy then reports no time), keeps
fractional seconds to the nanosecond (gpxpy truncates to the microsecond), reads a direct
``<speed>`` child in GPX 1.1 files too, and drops (rather than refusing the whole file for) a point
without ``lat``/``lon``.

References
----------
.. [1] TopoGrafix, *GPX 1.1 Schema Documentation*, https://www.topografix.com/GPX/1/1/ and
   *GPX 1.0 Developer's Documentation*, https://www.topografix.com/gpx_manual.asp
.. [2] gpxpy (Apache-2.0), the GPX parser used as the reference, https://github.com/tkrajina/gpxpy
"""

from __future__ import annotations

import re
from datetime import UTC, datetime
from pathlib import Path
from typing import Final

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from fleetfuel import schema
from fleetfuel.errors import InputDataError
from fleetfuel.ingest.base import LogFile, conform
from fleetfuel.ingest.config import IngestConfig
from fleetfuel.ingest.gpx_stream import TrackPoints, stream_track_points
from fleetfuel.ingest.xmlsafe import Prolog, scan_prolog

GPX_PROFILE: Final = "gpx"
"""``LogFile.profile`` of files read by this module."""

MAX_LISTED_SEGMENT_STARTS: Final = 20
"""Segment starts written into the ``gpx_segment_starts`` flag before it is cut short with ``...``."""

_DECLARED_ENCODING: Final = re.compile(r"""^(\s*<\?xml[^>]*?encoding\s*=\s*)(["'])[^"']*\2""")

_KEEP, _TIME_MISSING, _TIME_UNPARSEABLE, _TIME_IMPLAUSIBLE, _POSITION_INVALID = range(5)
_REASON_NAMES: Final = (
    None,
    schema.DROP_TIME_MISSING,
    schema.DROP_TIME_UNPARSEABLE,
    schema.DROP_TIME_IMPLAUSIBLE,
    schema.DROP_POSITION_INVALID,
)


def _checked_prolog(path: Path) -> Prolog:
    prolog = scan_prolog(path)
    if prolog.root_local_name != "gpx":
        raise InputDataError(f"{path}: not a GPX file: root element is <{prolog.root_name}>, expected <gpx>")
    return prolog


def _reasons(points: TrackPoints, cfg: IngestConfig) -> np.ndarray:
    """One reason code per point (0 keeps it); the first failing check wins."""
    # Plausible window [earliest, latest), as for every reader (see IngestConfig).
    earliest = pd.Timestamp(cfg.earliest_time_utc, tz="UTC").tz_localize(None).to_datetime64()
    latest = pd.Timestamp(cfg.latest_time_utc, tz="UTC").tz_localize(None).to_datetime64()
    unparsed = np.isnat(points.time_utc)
    outside = ~unparsed & ((points.time_utc < earliest) | (points.time_utc >= latest))
    no_position = ~(np.isfinite(points.lat_deg) & np.isfinite(points.lon_deg))
    return np.select(
        [points.time_missing, unparsed, outside, no_position],
        [_TIME_MISSING, _TIME_UNPARSEABLE, _TIME_IMPLAUSIBLE, _POSITION_INVALID],
        default=_KEEP,
    ).astype(np.int8)


def _track_flags(points: TrackPoints) -> list[str]:
    n_tracks = max(points.n_tracks, int(points.track.max()) + 1 if len(points) else 0)
    per_track = np.bincount(points.track, minlength=n_tracks)
    timed = np.bincount(points.track, weights=~points.time_missing, minlength=n_tracks)
    flags = [f"gpx_empty_track:{i}" for i in np.flatnonzero(per_track == 0)]
    flags += [f"gpx_untimed_track_skipped:{i}" for i in np.flatnonzero((per_track > 0) & (timed == 0))]
    starts = np.flatnonzero(np.diff(points.segment, prepend=-1) != 0)
    if len(starts) > 1:
        listed = ",".join(str(row) for row in starts[:MAX_LISTED_SEGMENT_STARTS])
        flags.append(f"gpx_segment_starts:{listed}{',...' if len(starts) > MAX_LISTED_SEGMENT_STARTS else ''}")
    return flags


def _count_flags(points: TrackPoints) -> list[str]:
    counts = (
        ("gpx_waypoints_not_rows", points.n_waypoints),
        ("gpx_route_points_not_rows", points.n_route_points),
        ("gpx_elevation_unparseable", points.n_bad_elevation),
        ("gpx_speed_unparseable", points.n_bad_speed),
    )
    return [f"{name}:{count}" for name, count in counts if count]


def _repeated_string(value: str, n: int) -> pd.api.extensions.ExtensionArray:
    """``n`` copies of ``value`` as a pandas ``string`` array, built in Arrow (no Python list)."""
    return pd.arrays.ArrowStringArray(pa.chunked_array([pc.fill_null(pa.nulls(n, pa.string()), value)]))


def assemble_log(path: Path, cfg: IngestConfig, points: TrackPoints) -> LogFile:
    """Turn the track points of one file into a :class:`LogFile` (shared by both readers).

    Parameters
    ----------
    path : Path
        The file as given (``source_file`` is ``str(path)``).
    cfg : IngestConfig
        Vehicle id rule and plausible time window.
    points : TrackPoints
        Every track point of the file, in document order.

    Raises
    ------
    InputDataError
        The file holds no ``<trkpt>`` at all.
    """
    n = len(points)
    if n == 0:
        raise InputDataError(
            f"{path}: no track points (<trkpt>); found {points.n_tracks} tracks, {points.n_waypoints} waypoints, "
            f"{points.n_route_points} route points; only track points are samples"
        )
    reason = _reasons(points, cfg)
    keep = reason == _KEEP
    rows = np.flatnonzero(keep)
    samples = conform(
        {
            schema.VEHICLE_ID: _repeated_string(cfg.vehicle_id_for(path), len(rows)),
            schema.TIME_UTC: pd.DatetimeIndex(points.time_utc[rows]).tz_localize("UTC"),
            schema.SPEED_M_S: points.speed_m_s[rows],
            schema.LAT_DEG: points.lat_deg[rows],
            schema.LON_DEG: points.lon_deg[rows],
            schema.ELEVATION_M: points.elevation_m[rows],
            schema.SOURCE_FILE: _repeated_string(str(path), len(rows)),
            schema.SOURCE_ROW: rows.astype(np.int64),
        },
        len(rows),
    )
    dropped_rows = np.flatnonzero(~keep)
    names = np.array(_REASON_NAMES, dtype=object)[reason[dropped_rows]]
    dropped = pd.DataFrame(
        {"source_row": dropped_rows.astype(np.int64), "reason": pd.array(names, dtype="string")}
    )
    return LogFile(
        path=path,
        samples=samples,
        rows_in=n,
        dropped=dropped,
        profile=GPX_PROFILE,
        flags=tuple(_track_flags(points) + _count_flags(points)),
    )


def read_gpx_log(path: Path, cfg: IngestConfig) -> LogFile:
    """Read a GPX 1.0 or 1.1 file (all tracks and segments) with the streaming fast path.

    Parameters
    ----------
    path : Path
        GPX file.
    cfg : IngestConfig
        Ingest options: the vehicle id rule (default: the file stem) and the plausible time window.

    Returns
    -------
    LogFile
        Raw canonical frame (lat/lon [deg], elevation [m], speed [m/s] where the file has it,
        UTC times), ``rows_in`` = number of ``<trkpt>``, dropped points with their reasons, flags.

    Raises
    ------
    InputDataError
        One line naming the file: a DOCTYPE/ENTITY declaration, not XML, not GPX, not
        well-formed (e.g. truncated), or no track points.
    """
    path = Path(path)
    _checked_prolog(path)
    return assemble_log(path, cfg, stream_track_points(path))


def read_gpx_reference(path: Path, cfg: IngestConfig | None = None) -> LogFile:
    """Read a GPX file with gpxpy into the same :class:`LogFile` (correctness reference for tests).

    The same pre-scan runs first, so gpxpy never sees a DOCTYPE. Slow and memory-hungry (a full
    object model); gpxpy reports a missing and an unparseable time alike, both as ``time_missing``.

    Raises
    ------
    InputDataError
        As :func:`read_gpx_log`, and for anything gpxpy itself refuses.
    """
    path = Path(path)
    prolog = _checked_prolog(path)
    return assemble_log(path, cfg or IngestConfig(), _gpxpy_track_points(path, prolog))


def _extension_speed_text(extensions: list) -> str | None:
    for root in extensions:
        for node in root.iter():
            if isinstance(node.tag, str) and node.tag.rpartition("}")[2] == "speed":
                return node.text
    return None


def _float_array(values: list) -> np.ndarray:
    return np.array([np.nan if v is None else float(v) for v in values], dtype=np.float64)


def _utc(moment: datetime | None) -> datetime | None:
    if moment is None:
        return None
    return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)


def _gpxpy_track_points(path: Path, prolog: Prolog) -> TrackPoints:
    """Track points as gpxpy sees them (per-point Python: reference only, not a hot path)."""
    import gpxpy
    import gpxpy.gpx

    try:
        text = path.read_bytes()[3 if prolog.has_bom and prolog.encoding == "utf-8" else 0 :]
        decoded = text.decode("utf-8" if prolog.encoding in ("utf-8", "latin-1") else prolog.encoding)
        decoded = _DECLARED_ENCODING.sub(r"\1\2UTF-8\2", decoded.lstrip("\ufeff"), count=1)
        document = gpxpy.parse(decoded)
    except (OSError, UnicodeDecodeError, gpxpy.gpx.GPXException) as exc:
        raise InputDataError(f"{path}: gpxpy refused the file: {' '.join(str(exc).split())}") from None
    segments = [(t, segment) for t, track in enumerate(document.tracks) for segment in track.segments]
    rows = [(t, s, p) for s, (t, segment) in enumerate(segments) for p in segment.points]
    times = [_utc(p.time) for _, _, p in rows]
    speeds = [p.speed if p.speed is not None else _extension_speed_text(p.extensions) for _, _, p in rows]
    try:
        speed_m_s = _float_array(speeds)
    except ValueError as exc:
        raise InputDataError(f"{path}: extension speed is not a number: {exc}") from None
    return TrackPoints(
        lat_deg=_float_array([p.latitude for _, _, p in rows]),
        lon_deg=_float_array([p.longitude for _, _, p in rows]),
        elevation_m=_float_array([p.elevation for _, _, p in rows]),
        speed_m_s=speed_m_s,
        time_utc=pd.to_datetime(pd.Series(times, dtype=object), utc=True).dt.tz_convert(None)
        .astype("datetime64[ns]").to_numpy(),
        time_missing=np.array([m is None for m in times], dtype=bool),
        track=np.array([t for t, _, _ in rows], dtype=np.int64),
        segment=np.array([s for _, s, _ in rows], dtype=np.int64),
        n_tracks=len(document.tracks),
        n_waypoints=len(document.waypoints),
        n_route_points=sum(len(route.points) for route in document.routes),
    )
