"""Benchmark: streaming GPX reader (``read_gpx_log``) against ``gpxpy.parse`` of the same file.

Target (issue): the fast path reads track points at >= 3x the points/s of gpxpy, measured in the
same run, and its memory stays bounded on very large files (e.g. 200 MB): the peak resident set
size (RSS) of each reader is measured in its own child process (``ru_maxrss``), next to a child
that only imports the libraries (the baseline).

The GPX file is generated here, in a temporary folder, from the one synthetic generator,
:mod:`fleetfuel.synth`: the first vehicle of ``synth.fleet`` (seeded) logging at 1 Hz over as many
working days as the point count needs, written by ``synth.write_gpx`` (GPX 1.1: one track, a
segment per stretch without a long gap, ``<ele>``, UTC times, speed in a namespaced
``<extensions>`` element); ``--megabytes`` sizes the file from a small sample written the same way.

Usage::

    python benchmarks/bench_ingest_gpx.py [--points N | --megabytes MB] [--repeat K] [--skip-gpxpy]
"""

from __future__ import annotations

import argparse
import json
import math
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

SEED = 20240301
ROWS_PER_DAY = 10_000  # fewest 1 Hz rows a roster vehicle logs on a working day (measured, rounded down)
SAMPLE_POINTS = 2_000  # points of the sample file that sizes --megabytes


def _track(points: int):
    """The first ``points`` 1 Hz samples of the synthetic fleet's first vehicle, over as many days as needed."""
    from fleetfuel import synth

    days = max(1, math.ceil(points / ROWS_PER_DAY))
    frame = synth.fleet(1, days, rate_hz=1.0, seed=SEED, with_truth=False).samples
    if len(frame) < points:
        raise SystemExit(f"synth gave {len(frame)} points for {days} days, fewer than {points}")
    return frame.iloc[:points].reset_index(drop=True)


def write_gpx(path: Path, points: int) -> None:
    """Write ``points`` synthetic track points (positions, times, elevation, speed) as GPX 1.1 with ``synth``."""
    from fleetfuel import synth

    synth.write_gpx(_track(points), path, name="benchmark drive")


def points_for_megabytes(megabytes: float) -> int:
    """Points that make a file of about ``megabytes`` MiB (from the size of a sample file)."""
    with tempfile.TemporaryDirectory() as tmp:
        sample = Path(tmp) / "sample.gpx"
        write_gpx(sample, SAMPLE_POINTS)
        return int(megabytes * 2**20 / (sample.stat().st_size / SAMPLE_POINTS))


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
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--skip-gpxpy", action="store_true", help="only the fast path (memory check)")
    parser.add_argument("--child", nargs=2, metavar=("KIND", "PATH"), help=argparse.SUPPRESS)
    parser.add_argument("--write", metavar="PATH", help=argparse.SUPPRESS)  # child: write the file, exit
    args = parser.parse_args(argv)
    if args.write:  # in its own process: Linux keeps a peak RSS across fork and exec, so the
        # readers' children must not descend from a process that held the generated fleet
        write_gpx(Path(args.write), args.points)
        return 0
    if args.child and args.child[0] == "size":  # child: points for a file size, without the sample in the parent
        print(points_for_megabytes(float(args.child[1])))
        return 0
    if args.child:
        _child(args.child[0], Path(args.child[1]))
        return 0
    points = args.points
    if args.megabytes:
        sizing = [sys.executable, __file__, "--child", "size", str(args.megabytes)]
        points = int(subprocess.run(sizing, check=True, capture_output=True, text=True).stdout.split()[-1])
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "benchmark_drive.gpx"
        start = time.perf_counter()
        subprocess.run([sys.executable, __file__, "--write", str(path), "--points", str(points)], check=True,
                       capture_output=True)
        size_mib = path.stat().st_size / 2**20
        print(f"file: {points:,} points, {size_mib:.1f} MiB, GPX 1.1 from fleetfuel.synth "
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
