"""Benchmark: ingest of a large 1 Hz CSV against pyarrow's raw ``pyarrow.csv.read_csv``.

Target (issue): ingest + clean of a >= 2 M-row 1 Hz CSV at >= 0.3x the rows/s of a raw
``pyarrow.csv.read_csv`` of the same file, measured in the same run. The clean stage is timed
too when ``fleetfuel.clean.clean_batch`` exists (HOOK below).

The CSV is generated here with numpy (seeded), in a temporary folder: 20 vehicles x 100 000 s at
1 Hz, canonical column names (profile ``canonical_csv``), ISO 8601 UTC times.

Usage: ``python benchmarks/bench_ingest_csv.py [--rows N] [--repeat K]``
"""

from __future__ import annotations

import argparse
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.csv as pv

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from fleetfuel.ingest import IngestConfig, read_csv_log  # noqa: E402
from fleetfuel.ingest.base import LogBatch  # noqa: E402

VEHICLES = 20
SEED = 20240301


def write_csv(path: Path, rows: int) -> None:
    """A seeded multi-vehicle 1 Hz log with speed, position, elevation and a fuel counter."""
    rng = np.random.default_rng(SEED)
    per = rows // VEHICLES
    t0 = np.datetime64("2024-03-01T06:00:00", "s")
    seconds = np.tile(np.arange(per), VEHICLES)
    vehicle = np.repeat(np.arange(VEHICLES), per)
    speed = np.clip(np.cumsum(rng.normal(0.0, 0.3, size=per * VEHICLES)) % 30.0, 0.0, None)
    lat = 48.0 + vehicle * 0.01 + np.cumsum(speed) * 1e-6
    lon = 11.0 + np.cumsum(speed) * 1.5e-6
    table = pa.table(
        {
            "vehicle_id": pa.array([f"truck_{v:02d}" for v in range(VEHICLES)]).take(pa.array(vehicle)),
            "time_utc": pa.array(t0 + seconds.astype("timedelta64[s]")).cast(pa.timestamp("s", "UTC")),
            "speed_m_s": np.round(speed, 2),
            "lat_deg": np.round(lat, 6),
            "lon_deg": np.round(lon, 6),
            "elevation_m": np.round(500 + 20 * np.sin(seconds / 600.0), 1),
            "fuel_used_l": np.round(np.cumsum(speed) * 3e-4, 3),
        }
    )
    pv.write_csv(table, path)


def peak_rss_mib() -> float:
    """Peak resident set size of this process (Linux reports KiB). [MiB]"""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def best_of(repeat: int, func) -> tuple[float, object]:
    best, result = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        result = func()
        best = min(best, time.perf_counter() - start)
    return best, result


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=2_000_000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--no-clean", action="store_true", help="time ingest only (peak RSS of ingest alone)")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "fleet_1hz.csv"
        write_csv(path, args.rows)
        size_mib = path.stat().st_size / 2**20
        raw_s, raw = best_of(args.repeat, lambda: pv.read_csv(path))
        rows = raw.num_rows
        del raw
        cfg = IngestConfig()
        ingest_s, log = best_of(args.repeat, lambda: read_csv_log(path, cfg))
        assert log.rows_in == rows == len(log.samples) + len(log.dropped)
        print(f"file: {rows} rows, {size_mib:.1f} MiB")
        print(f"pyarrow.csv.read_csv : {rows / raw_s:12,.0f} rows/s ({raw_s:.3f} s)")
        print(f"fleetfuel ingest     : {rows / ingest_s:12,.0f} rows/s ({ingest_s:.3f} s)")
        print(f"ratio ingest / raw   : {raw_s / ingest_s:.2f}  (target >= 0.3 for ingest + clean)")
        # HOOK: clean stage (fleetfuel.clean.clean_batch, written separately). Timed when present.
        try:
            if args.no_clean:
                raise ImportError("skipped by --no-clean")
            from fleetfuel.clean import CleanConfig, clean_batch  # type: ignore[attr-defined]
        except ImportError as exc:
            print(f"clean stage          : not timed ({exc}); ingest only")
        else:
            batch = LogBatch(files=(log,))
            try:
                clean_s, _ = best_of(args.repeat, lambda: clean_batch(batch, CleanConfig()))
            except Exception as exc:  # the clean stage is written separately; report, do not hide ingest
                print(f"clean stage          : failed ({type(exc).__name__}: {exc}); ingest only")
            else:
                total = ingest_s + clean_s
                print(f"fleetfuel clean      : {rows / clean_s:12,.0f} rows/s ({clean_s:.3f} s)")
                print(f"ratio (ingest+clean) / raw: {raw_s / total:.2f}  (target >= 0.3)")
        print(f"peak RSS             : {peak_rss_mib():.0f} MiB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
