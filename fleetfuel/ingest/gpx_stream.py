"""Streaming GPX track-point collection (the fast path of :mod:`fleetfuel.ingest.gpx`).

One pass of ``lxml.etree.iterparse`` over the file yields ``end`` events for ``trkpt``,
``trkseg`` and ``trk`` (plus ``wpt`` and ``rtept``, only to count and free them). Each track point
contributes five strings (lat, lon, ele, time, speed) to plain lists, and the element, with every
finished sibling before it, is removed from the tree at once, so memory stays bounded by the
collected strings whatever the file size. Strings become arrays in one vectorised step each
(numpy float parsing; pandas' ISO 8601 parser on an Arrow string array for times): the only
per-point Python is the unavoidable loop over parser events.

Elements are matched by their LOCAL name in any namespace (GPX 1.0, GPX 1.1, or none), and speed
is taken from a direct ``<speed>`` child (GPX 1.0, in m/s) or else from the first element whose
local name is ``speed`` anywhere under the point's ``<extensions>`` (GPX 1.1 extension schemas,
whatever the namespace; taken as m/s, the unit of the common track-point extension schemas).

References
----------
.. [1] TopoGrafix, *GPX 1.1 Schema Documentation* (``wptType``, ``trksegType``; ``dateTime`` in UTC),
   https://www.topografix.com/GPX/1/1/ ; *GPX 1.0 Developer's Documentation* (``speed`` [m/s]).
.. [2] W3C, *XML Schema Part 2: Datatypes*, 2nd ed., 2004, section 3.2.7 ``dateTime``.
.. [3] lxml documentation, *Parsing XML and HTML with lxml*: "iterparse and iterwalk",
   modifying the tree while parsing to save memory.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from lxml import etree

from fleetfuel.errors import InputDataError
from fleetfuel.ingest.xmlsafe import safe_iterparse

_EVENT_TAGS: Final = ("{*}trkpt", "{*}trkseg", "{*}trk", "{*}wpt", "{*}rtept")
_NAN_TEXT: Final = "nan"

STREAM_CHUNK_POINTS: Final = 1 << 16
"""Track points held as Python strings (about 0.3 kB each) before they are converted to arrays
(about 50 B each): peak memory grows with the arrays, not with the text of the file."""

TIME_GRAMMAR: Final = (
    r"[0-9]{4}-[0-9]{1,2}-[0-9]{1,2}[T ][0-9]{1,2}:[0-9]{1,2}:[0-9]{1,2}(\.[0-9]{1,15})?"
    "(Z|[+\\-\u2212][0-9]{2}(:?[0-9]{2})?)?"  # not raw: the Unicode minus is a literal character (RE2)
)
"""Accepted time text (after trimming white space): ``xsd:dateTime`` as GPX writers emit it, with the
leniencies the gpxpy reference also accepts (space for ``T``, one-digit fields, ``+hhmm``/``+hh``
offsets, a Unicode minus). No offset means UTC, as the GPX schemas require [1]_."""


@dataclass(frozen=True, slots=True, kw_only=True)
class TrackPoints:
    """Every ``<trkpt>`` of one file, in document order, as arrays (one entry per point).

    Attributes
    ----------
    lat_deg, lon_deg : ndarray
        Position; NaN where the attribute is missing or not a number. [deg]
    elevation_m : ndarray
        ``<ele>``; NaN where absent or not a number. [m]
    speed_m_s : ndarray
        Speed over ground; NaN where absent or not a number. [m/s]
    time_utc : ndarray
        ``datetime64[ns]`` in UTC; NaT where missing or unparseable.
    time_missing : ndarray
        Bool: the point has no ``<time>`` (or an empty one).
    track : ndarray
        int64 index of the ``<trk>`` holding the point (0-based, document order, counting empty tracks).
    segment : ndarray
        int64 index of the ``<trkseg>`` holding the point (0-based over the whole file).
    n_tracks : int
        ``<trk>`` elements in the file, empty ones included.
    n_waypoints, n_route_points : int
        ``<wpt>`` and ``<rtept>`` elements (not samples: never rows).
    n_bad_elevation, n_bad_speed : int
        Points whose ``<ele>`` or speed text was present but not a number (kept as NaN).
    """

    lat_deg: npt.NDArray[np.float64]
    lon_deg: npt.NDArray[np.float64]
    elevation_m: npt.NDArray[np.float64]
    speed_m_s: npt.NDArray[np.float64]
    time_utc: npt.NDArray[np.datetime64]
    time_missing: npt.NDArray[np.bool_]
    track: npt.NDArray[np.int64]
    segment: npt.NDArray[np.int64]
    n_tracks: int
    n_waypoints: int = 0
    n_route_points: int = 0
    n_bad_elevation: int = 0
    n_bad_speed: int = 0

    def __len__(self) -> int:
        return len(self.lat_deg)


def parse_floats(texts: list[str]) -> tuple[npt.NDArray[np.float64], int]:
    """Parse decimal texts (``"nan"`` for absent) the way Python's ``float`` does, vectorised.

    Returns
    -------
    values : ndarray
        float64; NaN where absent or not a number.
    n_bad : int
        Texts that were present but not a number.
    """
    try:
        return np.array(texts, dtype=np.float64), 0
    except ValueError:
        pass
    # Error path only (a malformed file): find the offending texts one by one.
    values = np.empty(len(texts), dtype=np.float64)
    n_bad = 0
    for i, text in enumerate(texts):
        try:
            values[i] = float(text)
        except ValueError:
            values[i] = np.nan
            n_bad += 1
    return values, n_bad


def parse_gpx_times(texts: list[str | None]) -> tuple[npt.NDArray[np.datetime64], npt.NDArray[np.bool_]]:
    """Parse GPX time texts to UTC, vectorised.

    Parameters
    ----------
    texts : list of str or None
        ``<time>`` contents; None where the point has no ``<time>``.

    Returns
    -------
    time_utc : ndarray
        ``datetime64[ns]`` in UTC (offsets applied; no offset means UTC); NaT where missing,
        not matching :data:`TIME_GRAMMAR`, or not a calendar time (month 13, 30 February, leap second).
    missing : ndarray
        Bool: no time text, or only white space.
    """
    strings = pd.Series(texts, dtype="str").str.strip()
    missing = (strings.isna() | (strings == "")).to_numpy(dtype=bool)
    valid = strings.str.fullmatch(TIME_GRAMMAR).fillna(False).to_numpy(dtype=bool)
    if not valid.all():
        strings = strings.where(valid)
    if strings.str.contains("\u2212", regex=False).any():
        strings = strings.str.replace("\u2212", "-", regex=False)
    parsed = pd.to_datetime(strings, format="ISO8601", utc=True, errors="coerce")
    return parsed.dt.tz_convert(None).astype("datetime64[ns]").to_numpy(), missing


@dataclass(slots=True)
class _Converted:
    """Arrays of the chunks converted so far (private accumulator of :func:`_collect`)."""

    parts: list[tuple[npt.NDArray, ...]] = field(default_factory=list)
    n_points: int = 0
    n_bad_elevation: int = 0
    n_bad_speed: int = 0

    def add(self, lat: list[str], lon: list[str], ele: list[str], speed: list[str], time: list[str | None]) -> None:
        """Convert one chunk of texts to arrays and empty the lists in place."""
        elevation_m, bad_ele = parse_floats(ele)
        speed_m_s, bad_speed = parse_floats(speed)
        time_utc, time_missing = parse_gpx_times(time)
        self.parts.append((parse_floats(lat)[0], parse_floats(lon)[0], elevation_m, speed_m_s, time_utc, time_missing))
        self.n_points += len(lat)
        self.n_bad_elevation += bad_ele
        self.n_bad_speed += bad_speed
        for texts in (lat, lon, ele, speed, time):
            texts.clear()

    def column(self, i: int, dtype: str) -> npt.NDArray:
        return np.concatenate([part[i] for part in self.parts]) if self.parts else np.empty(0, dtype=dtype)


def _collect(path: Path, chunk_points: int) -> tuple[_Converted, dict[str, list[int]]]:
    """One iterparse pass, converting every ``chunk_points`` points to arrays.

    Returns the converted arrays and, for each of ``trkseg``, ``trk``, ``wpt`` and ``rtept``, the
    number of points read when each such element ended.
    """
    done = _Converted()
    lat: list[str] = []
    lon: list[str] = []
    ele: list[str] = []
    speed: list[str] = []
    time: list[str | None] = []
    ends: dict[str, list[int]] = {"trkseg": [], "trk": [], "wpt": [], "rtept": []}
    local_names: dict[str, str] = {}  # qualified tag -> local name, filled as tags are met
    lat_append, lon_append, ele_append, speed_append, time_append = (
        lat.append, lon.append, ele.append, speed.append, time.append
    )
    for _event, element in safe_iterparse(path, events=("end",), tag=_EVENT_TAGS):
        tag = element.tag
        local = local_names.get(tag) or local_names.setdefault(tag, tag[tag.rfind("}") + 1 :])
        if local != "trkpt":
            ends[local].append(done.n_points + len(lat))
        else:
            lat_append(element.get("lat", _NAN_TEXT))
            lon_append(element.get("lon", _NAN_TEXT))
            e = t = s = x = None
            for child in element:  # the first <ele>, <time>, <speed>, <extensions> child wins
                ctag = child.tag
                name = local_names.get(ctag) or local_names.setdefault(ctag, ctag[ctag.rfind("}") + 1 :])
                if name == "ele":
                    e = child.text if e is None else e
                elif name == "time":
                    t = child.text if t is None else t
                elif name == "speed":
                    s = child.text if s is None else s
                elif name == "extensions":
                    x = child if x is None else x
            if s is None and x is not None:
                node = next(x.iter("{*}speed"), None)
                s = None if node is None else node.text
            ele_append(_NAN_TEXT if e is None else e)
            speed_append(_NAN_TEXT if s is None else s)
            time_append(t)
            if len(lat) >= chunk_points:
                done.add(lat, lon, ele, speed, time)
        # Free the finished element and every finished sibling before it (bounded memory).
        # (These elements are never the root, which the pre-scan found to be <gpx>.)
        element.clear(keep_tail=False)
        parent = element.getparent()
        while element.getprevious() is not None:
            del parent[0]
    if lat:
        done.add(lat, lon, ele, speed, time)
    return done, ends


def stream_track_points(path: Path, chunk_points: int = STREAM_CHUNK_POINTS) -> TrackPoints:
    """Collect every ``<trkpt>`` of ``path`` with one streaming pass.

    Call :func:`fleetfuel.ingest.xmlsafe.scan_prolog` first (the pre-scan refuses DOCTYPEs).

    Parameters
    ----------
    path : Path
        GPX file.
    chunk_points : int
        Points held as text before conversion to arrays (memory versus per-chunk overhead).

    Raises
    ------
    InputDataError
        The file is not well-formed XML (truncated, bad markup, undeclared entity), one line
        naming the file and the parser's line number.
    """
    try:
        done, ends = _collect(path, chunk_points)
    except etree.XMLSyntaxError as exc:
        message = " ".join(str(exc.msg or exc).split())
        raise InputDataError(f"{path}: not well-formed XML (line {exc.lineno}): {message}") from None
    except OSError as exc:
        raise InputDataError(f"{path}: cannot read: {exc.strerror or exc}") from None
    index = np.arange(done.n_points)
    return TrackPoints(
        lat_deg=done.column(0, "float64"),
        lon_deg=done.column(1, "float64"),
        elevation_m=done.column(2, "float64"),
        speed_m_s=done.column(3, "float64"),
        time_utc=done.column(4, "datetime64[ns]"),
        time_missing=done.column(5, "bool"),
        track=np.searchsorted(np.asarray(ends["trk"], dtype=np.int64), index, side="right").astype(np.int64),
        segment=np.searchsorted(np.asarray(ends["trkseg"], dtype=np.int64), index, side="right").astype(np.int64),
        n_tracks=len(ends["trk"]),
        n_waypoints=len(ends["wpt"]),
        n_route_points=len(ends["rtept"]),
        n_bad_elevation=done.n_bad_elevation,
        n_bad_speed=done.n_bad_speed,
    )
