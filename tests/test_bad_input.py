"""Bad input never raises from read_logs and never stops a batch: a corpus of broken and hostile files.

Each case is written in tmp_path. Outcome "fail": read_logs returns exactly one FileFailure whose
message is one line naming the file. Outcome "partial": the file is read, some rows are dropped,
and the row account holds (rows_in == kept + dropped).
"""

from __future__ import annotations

import gzip
import io
import os
import zipfile
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from fleetfuel import schema
from fleetfuel.errors import ProfileError
from fleetfuel.ingest import IngestConfig, read_logs

GOOD = "time,speed [km/h],lat,lon\n2024-05-02T08:00:00Z,36,50.1,8.6\n2024-05-02T08:00:01Z,40,50.2,8.7\n"
GPX_HEAD = '<?xml version="1.0"?>\n<gpx version="1.1" creator="t" xmlns="http://www.topografix.com/GPX/1/1">'
GPX_POINT = '<trkpt lat="50.0" lon="8.0"><time>2024-05-02T08:00:{s:02d}Z</time></trkpt>'


def _rng_bytes(n: int) -> bytes:
    return np.random.default_rng(7).integers(0, 256, size=n, dtype=np.uint8).tobytes()


def _parquet_bytes() -> bytes:
    sink = io.BytesIO()
    pq.write_table(
        pa.table({"time_utc": pa.array([0, 1], pa.timestamp("s", "UTC")), "speed_m_s": [1.0, 2.0]}), sink
    )
    return sink.getvalue()


def _zip(members: dict[str, str]) -> bytes:
    sink = io.BytesIO()
    with zipfile.ZipFile(sink, "w") as archive:
        for name, text in members.items():
            archive.writestr(name, text)
    return sink.getvalue()


BILLION_LAUGHS = (
    '<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
    + "".join(
        f'<!ENTITY lol{i} "{("&lol" + str(i - 1) + ";") * 10 if i > 1 else "&lol;" * 10}">'
        for i in range(1, 10)
    )
    + ']>\n<gpx version="1.1" creator="&lol9;"><trk><trkseg>'
    + GPX_POINT.format(s=0)
    + GPX_POINT.format(s=1)
    + "</trkseg></trk></gpx>"
)
EXTERNAL_ENTITY = (
    '<?xml version="1.0"?>\n<!DOCTYPE gpx [<!ENTITY xxe SYSTEM "file:///etc/passwd">]>\n'
    '<gpx version="1.1" creator="t"><trk><name>&xxe;</name><trkseg>'
    + GPX_POINT.format(s=0)
    + GPX_POINT.format(s=1)
    + "</trkseg></trk></gpx>"
)

# name -> (file name, content bytes, outcome)
CORPUS: dict[str, tuple[str, bytes, str]] = {
    "zero_bytes": ("zero.csv", b"", "fail"),
    "blank_lines_only": ("blank.csv", b"\n \n\t\n", "fail"),
    "binary_garbage": ("garbage.csv", b"\x00\x01" + _rng_bytes(4096), "fail"),
    "png_header": ("picture.csv", b"\x89PNG\r\n\x1a\n" + _rng_bytes(512), "fail"),
    "truncated_gzip": ("cut.csv.gz", gzip.compress(GOOD.encode() * 50)[:60], "fail"),
    "truncated_csv_mid_row": ("midrow.csv", (GOOD + "2024-05-02T08:00:02Z,4").encode(), "partial"),
    "header_only": ("header.csv", b"time,speed [km/h],lat,lon\n", "fail"),
    "unknown_headers": ("mystery.csv", b"alpha,beta,gamma\n1,2,3\n", "fail"),
    "no_speed_no_position": ("nosignal.csv", b"time,speed [km/h],lat,lon\n2024-05-02T08:00:00Z,,,\n", "fail"),
    "times_unparseable": ("badtimes.csv", b"time,speed [km/h]\nmonday,3\ntuesday,4\n", "fail"),
    "speeds_non_numeric": (
        "badspeed.csv",
        b"time,speed [km/h]\n2024-05-02T08:00:00Z,fast\n2024-05-02T08:00:01Z,slow\n",
        "fail",
    ),
    "utf16_garbage": ("u16.csv", b"\xff\xfe" + b"\x00\xd8" * 40, "fail"),
    "huge_single_line": ("oneline.csv", b"a" * (3 << 20), "fail"),
    "only_comment_lines": ("comments.csv", b"# exported\n# nothing else\n", "fail"),
    "json_file": ("trace.json", b'[{"time": "2024-05-02T08:00:00Z", "speed": 3}]', "fail"),
    "json_lines": ("trace.jsonl", b'{"name": "speed", "value": 3}\n{"name": "speed", "value": 4}\n', "fail"),
    "json_content_as_csv": ("trace.csv", b'{"name": "speed", "value": 3}\n', "fail"),
    "gpx_billion_laughs": ("laughs.gpx", BILLION_LAUGHS.encode(), "fail"),
    "gpx_external_entity": ("xxe.gpx", EXTERNAL_ENTITY.encode(), "fail"),
    "gpx_truncated": (
        "cut.gpx",
        (GPX_HEAD + "<trk><trkseg>" + GPX_POINT.format(s=0) + "<trkpt lat=").encode(),
        "fail",
    ),
    "gpx_without_points": ("empty.gpx", (GPX_HEAD + "<trk><trkseg></trkseg></trk></gpx>").encode(), "fail"),
    "xml_not_gpx": ("places.kml", b'<?xml version="1.0"?><kml><Document/></kml>', "fail"),
    "zip_without_csv": ("docs.zip", _zip({"readme.md": "hello", "img/a.png": "x"}), "fail"),
    "zip_corrupt": ("broken.zip", b"PK\x03\x04" + _rng_bytes(200), "fail"),
    "zip_with_bad_member": ("mixed.zip", _zip({"bad.csv": "alpha,beta\n1,2\n"}), "fail"),
    "not_parquet": ("table.parquet", GOOD.encode(), "fail"),
    "truncated_parquet": ("half.parquet", _parquet_bytes()[:40], "fail"),
    "unbalanced_quotes": (
        "quotes.csv",
        b'time,speed [km/h]\n"2024-05-02T08:00:00Z,36\n2024-05-02T08:00:01Z,40\n',
        "fail",
    ),
    "overflowing_numbers": (
        "huge.csv",
        b"time,speed [km/h],lat,lon\n2024-05-02T08:00:00Z,1e999,50,8\n",
        "partial",
    ),
}


def _write(tmp_path: Path, name: str, data: bytes) -> Path:
    path = tmp_path / name
    path.write_bytes(data)
    return path


def test_corpus_is_large_enough() -> None:
    assert len(CORPUS) >= 20


@pytest.mark.parametrize("case", sorted(CORPUS))
def test_bad_input_never_raises(tmp_path: Path, case: str) -> None:
    name, data, outcome = CORPUS[case]
    path = _write(tmp_path, name, data)
    batch = read_logs([path])
    if outcome == "fail":
        assert not batch.files, f"{case}: expected a failure, got a file"
        assert len(batch.failures) == 1
        message = batch.failures[0].error
        assert "\n" not in message and name in message
        assert "Traceback" not in message
    else:
        assert len(batch.files) == 1 and not batch.failures
        log = batch.files[0]
        assert log.rows_in == len(log.samples) + len(log.dropped)
        assert set(log.dropped["reason"]) <= set(schema.DROP_REASONS)


def test_unknown_headers_message_lists_them_and_suggests_profile(tmp_path: Path) -> None:
    path = _write(tmp_path, "mystery.csv", b"alpha,beta,gamma\n1,2,3\n")
    message = read_logs([path]).failures[0].error
    assert "'alpha', 'beta', 'gamma'" in message and "--profile" in message


def test_all_bad_cases_in_one_folder_do_not_stop_the_batch(tmp_path: Path) -> None:
    for name, data, _ in CORPUS.values():
        target = tmp_path / name
        if not target.exists():
            target.write_bytes(data)
    good = _write(tmp_path, "zz_good.csv", GOOD.encode())
    batch = read_logs([tmp_path])
    assert str(good) in [str(f.path) for f in batch.files]
    names = [str(f.path) for f in batch.failures]
    assert names == sorted(names) and len(names) >= 20


def test_folder_with_one_bad_and_one_good_file(tmp_path: Path) -> None:
    _write(tmp_path, "a_bad.csv", b"\x00\x00\x00")
    _write(tmp_path, "b_good.csv", GOOD.encode())
    batch = read_logs([tmp_path])
    assert [f.path.name for f in batch.files] == ["b_good.csv"]
    assert [f.path.name for f in batch.failures] == ["a_bad.csv"]


def test_nonexistent_path(tmp_path: Path) -> None:
    path = tmp_path / "missing.csv"
    batch = read_logs([path])
    assert batch.failures[0].error == f"{path}: file not found"


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0, reason="root reads any file")
def test_permission_denied(tmp_path: Path) -> None:
    path = _write(tmp_path, "locked.csv", GOOD.encode())
    path.chmod(0)
    try:
        message = read_logs([path]).failures[0].error
    finally:
        path.chmod(0o644)
    assert "locked.csv" in message and "permission denied" in message


def test_bad_forced_profile_is_one_error_not_a_failure_per_file(tmp_path: Path) -> None:
    _write(tmp_path, "a.csv", GOOD.encode())
    with pytest.raises(ProfileError, match="unknown ingest profile 'no_such_layout'"):
        read_logs([tmp_path], IngestConfig(profile="no_such_layout"))


def test_zip_with_one_good_and_one_bad_member(tmp_path: Path) -> None:
    path = _write(tmp_path, "export.zip", _zip({"good.csv": GOOD, "bad.csv": "alpha,beta\n1,2\n"}))
    batch = read_logs([path])
    assert [str(f.path) for f in batch.files] == [f"{path}!good.csv"]
    assert [str(f.path) for f in batch.failures] == [f"{path}!bad.csv"]
    assert "bad.csv" in batch.failures[0].error
