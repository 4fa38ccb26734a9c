"""Benchmark: streaming GPX reader (``read_gpx_log``) against ``gpxpy.parse`` of the same file.

Target (issue): the fast path reads track points at >= 3x the points/s of gpxpy, measured in the
same run, and its memory stays bounded on very large files (e.g. 200 MB): the peak resident set
size (RSS) of each reader is measured in its own child process (``ru_maxrss``), next to a child
that only imports the libraries (the baseline).

The GPX file is generated here, in a temporary folder, with seeded numpy: one vehicle driving a
random-walk route at 1 Hz (speed 0..30 m/s), split into hourly segments, with elevation, UTC times
and speed (GPX 1.1: in a namespaced ``<extensions>`` element; GPX 1.0: ``<speed>``). With
extensions a point takes about 190 bytes, so 1 M points make a file of about 180 MiB.

Usage::

    python benchmarks/bench_ingest_gpx.py [--points N | --megabytes MB] [--version 1.1|1.0]
                                          [--repeat K] [--skip-gpxpy]
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

SEED = 20240301
SEGMENT_POINTS = 3600  # one segment per hour of 1 Hz logging
WRITE_CHUNK = 50_000
HEADER_11 = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<gpx version="1.1" creator="fleetfuel benchmark" xmlns="http://www.topografix.com/GPX/1/1" '
    'xmlns:tpx="http://example.org/xmlschemas/trackpoint/v2">\n'
)
HEADER_10 = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<gpx version="1.0" creator="fleetfuel benchmark" xmlns="http://www.topografix.com/GPX/1/0">\n'
)


def _point_lines(start: int, stop: int, rng: np.random.Generator, state: dict, version: str) -> list[str]:
    n = stop - start
    speed = np.clip(state["speed"] + np.cumsum(rng.normal(0.0, 0.4, n)), 0.0, 30.0)
    heading = state["heading"] + np.cumsum(rng.normal(0.0, 0.02, n))
    metres_per_deg = 111_320.0  # mean length of a degree of latitude, rounded; generator only
    lat = state["lat"] + np.cumsum(speed * np.cos(heading)) / metres_per_deg
    lon = state["lon"] + np.cumsum(speed * np.sin(heading)) / (metres_per_deg * np.cos(np.radians(lat)))
    ele = 300.0 + 40.0 * np.sin(np.arange(start, stop) / 900.0)
    times = (np.datetime64("2024-03-01T06:00:00", "s") + np.arange(start, stop).astype("timedelta64[s]")).astype(str)
    state.update(speed=speed[-1], heading=heading[-1], lat=lat[-1], lon=lon[-1])
    if version == "1.1":
        template = (
            '<trkpt lat="{:.7f}" lon="{:.7f}"><ele>{:.2f}</ele><time>{}Z</time>'
            "<extensions><tpx:TrackPointExtension><tpx:speed>{:.2f}</tpx:speed></tpx:TrackPointExtension>"
            "</extensions></trkpt>\n"
        )
    else:
        template = '<trkpt lat="{:.7f}" lon="{:.7f}"><ele>{:.2f}</ele><time>{}Z</time><speed>{:.2f}</speed></trkpt>\n'
    lines = [template.format(*row) for row in zip(lat, lon, ele, times, speed, strict=True)]
    for i in range(start, stop):  # segment breaks
        if i % SEGMENT_POINTS == 0 and i:
            lines[i - start] = "</trkseg><trkseg>\n" + lines[i - start]
    return lines


def write_gpx(path: Path, points: int, version: str) -> None:
    """Write a seeded ``points``-point GPX ``version`` track to ``path``."""
    rng = np.random.default_rng(SEED)
    state = {"speed": 10.0, "heading": 0.3, "lat": 48.1, "lon": 11.5}
    with open(path, "w", encoding="utf-8") as handle:
        handle.write(HEADER_11 if version == "1.1" else HEADER_10)
        handle.write("<trk><name>benchmark drive</name><trkseg>\n")
        for start in range(0, points, WRITE_CHUNK):
            handle.writelines(_point_lines(start, min(points, start + WRITE_CHUNK), rng, state, version))
        handle.write("</trkseg></trk>\n</gpx>\n")


def points_for_megabytes(megabytes: float, version: str) -> int:
    """Points that make a file of about ``megabytes`` MiB (from the size of a sample chunk)."""
    sample = "".join(_point_lines(1, 1001, np.random.default_rng(SEED), {"speed": 10.0, "heading": 0.3,
                                                                          "lat": 48.1, "lon": 11.5}, version))
    return int(megabytes * 2**20 / (len(sample.encode()) / 1000))


# --- child processes: one reader each, reporting time and peak RSS -----------------------------


def _child(kind: str, path: Path) -> None:
    import gpxpy

    from fleetfuel.ingest.config import IngestConfig
    from fleetfuel.ingest.gpx import read_gpx_log

    points = 0
    start = time.perf_counter()
    if kind == "fast":
        points = read_gpx_log(path, IngestConfig()).rows_in
    elif kind == "gpxpy":
        with open(path, encoding="utf-8") as handle:
            document = gpxpy.parse(handle)
        points = sum(len(segment.points) for track in document.tracks for segment in track.segments)
    seconds = time.perf_counter() - start
    peak_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # Linux: KiB
    print(json.dumps({"seconds": seconds, "points": points, "peak_rss_mib": peak_kib / 1024.0}))


def run_child(kind: str, path: Path) -> dict:
    env = dict(os.environ, PYTHONHASHSEED="0")
    done = subprocess.run(
        [sys.executable, __file__, "--child", kind, str(path)], check=True, capture_output=True, text=True, env=env
    )
    return json.loads(done.stdout.strip().splitlines()[-1])


def best(kind: str, path: Path, repeat: int) -> dict:
    runs = [run_child(kind, path) for _ in range(repeat)]
    return {
        "seconds": min(r["seconds"] for r in runs),
        "points": runs[0]["points"],
        "peak_rss_mib": max(r["peak_rss_mib"] for r in runs),
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=1_000_000)
    parser.add_argument("--megabytes", type=float, default=None, help="file size instead of --points [MiB]")
    parser.add_argument("--version", choices=("1.1", "1.0"), default="1.1")
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--skip-gpxpy", action="store_true", help="only the fast path (memory check)")
    parser.add_argument("--child", nargs=2, metavar=("KIND", "PATH"), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        _child(args.child[0], Path(args.child[1]))
        return 0
    points = points_for_megabytes(args.megabytes, args.version) if args.megabytes else args.points
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "benchmark_drive.gpx"
        start = time.perf_counter()
        write_gpx(path, points, args.version)
        size_mib = path.stat().st_size / 2**20
        print(f"file: {points:,} points, {size_mib:.1f} MiB, GPX {args.version} "
              f"(written in {time.perf_counter() - start:.1f} s)")
        base = run_child("baseline", path)
        print(f"baseline child (imports only):  peak RSS {base['peak_rss_mib']:8.1f} MiB")
        fast = best("fast", path, args.repeat)
        assert fast["points"] == points, fast
        print(f"fast path read_gpx_log:  {fast['seconds']:7.2f} s  {points / fast['seconds']:10,.0f} points/s  "
              f"peak RSS {fast['peak_rss_mib']:8.1f} MiB (+{fast['peak_rss_mib'] - base['peak_rss_mib']:.1f} "
              f"over baseline; file {size_mib:.1f} MiB)")
        if not args.skip_gpxpy:
            ref = best("gpxpy", path, args.repeat)
            assert ref["points"] == points, ref
            print(f"gpxpy.parse:             {ref['seconds']:7.2f} s  {points / ref['seconds']:10,.0f} points/s  "
                  f"peak RSS {ref['peak_rss_mib']:8.1f} MiB")
            print(f"ratio fast / gpxpy (points/s): {ref['seconds'] / fast['seconds']:.1f}x   (target >= 3x)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
