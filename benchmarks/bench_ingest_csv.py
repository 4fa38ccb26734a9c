"""Benchmark: ingest + clean of a large 1 Hz CSV against pyarrow's raw ``pyarrow.csv.read_csv``.

Target (issue): ingest + clean of a generated >= 2 M-row 1 Hz CSV at >= 0.3x the rows/s of a
raw ``pyarrow.csv.read_csv`` of the same file (timestamps parsed by pyarrow), measured in the
same run; peak memory printed.

The CSV comes from the one synthetic generator, :mod:`fleetfuel.synth`: ``synth.fleet`` at 1 Hz
(seeded), with the typical export defects of ``synth.add_defects`` (altitude noise, spikes, gaps,
duplicates, parked drift; ``--no-defects`` for clean traces), cut to ``--rows`` rows and written
in the layout of the bundled ``canonical_csv`` profile (canonical column names, SI units, UTC
times) with ``pyarrow.csv``, numbers rounded as ``synth``'s exports round them. The file is
written by a child process, so the peak resident set size (RSS) printed here is that of reading
and cleaning alone.

Per-step figures: ``--profile N`` runs the clean stage once more under :mod:`cProfile` and prints
the ``N`` fleetfuel functions with the most cumulative time (profiler overhead included, so read
them as shares, not as rates). ``--csv PATH`` times an existing file instead of writing one
(it must be in the ``canonical_csv`` layout, e.g. kept from an earlier ``--keep PATH``).

Usage: ``python benchmarks/bench_ingest_csv.py [--rows N] [--repeat K] [--no-clean] [--no-defects]
[--profile N] [--csv PATH | --keep PATH]``
"""

from __future__ import annotations

import argparse
import cProfile
import math
import pstats
import resource
import shutil
import subprocess
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

SEED = 20240301
DAYS = 5  # one working week per vehicle
ROWS_PER_VEHICLE_WEEK = 60_000  # fewest rows a roster vehicle logs in a week at 1 Hz (measured, rounded down)
NS_PER_S = 1_000_000_000


def write_csv(path: Path, rows: int, defects: bool) -> int:
    """Write a seeded synthetic fleet of at least ``rows`` 1 Hz rows (cut to ``rows``); return the row count."""
    import pandas as pd

    from fleetfuel import schema, synth
    from fleetfuel.synth.export import DEFAULT_DECIMALS

    vehicles = max(1, math.ceil(rows / ROWS_PER_VEHICLE_WEEK))
    frame = synth.fleet(vehicles, DAYS, rate_hz=1.0, seed=SEED, with_truth=False).samples
    if defects:
        frame, _ = synth.add_defects(frame, synth.DefectSpec.typical(), seed=SEED)
    frame = frame.iloc[:rows]
    times = pd.DatetimeIndex(frame[schema.TIME_UTC]).tz_convert("UTC").as_unit("ns")
    unit = "s" if not (times.asi8 % NS_PER_S).any() else "ms"
    arrays: dict[str, pa.Array] = {
        schema.VEHICLE_ID: pa.array(frame[schema.VEHICLE_ID].astype(str).to_numpy(), pa.string()),
        schema.TIME_UTC: pa.array(times.as_unit(unit), pa.timestamp(unit, "UTC")),
    }
    for name in schema.RAW_COLUMNS:  # numeric columns the generator filled, in canonical order
        if name in DEFAULT_DECIMALS and name in frame.columns and frame[name].notna().any():
            values = np.round(frame[name].to_numpy(dtype=np.float64), DEFAULT_DECIMALS.get(name, 3))
            arrays[name] = pa.array(values, pa.float64(), mask=np.isnan(values))
    pv.write_csv(pa.table(arrays), path)
    return len(frame)


def peak_rss_mib() -> float:
    """Peak resident set size of this process (Linux reports KiB). [MiB]"""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def best_of(repeat: int, func) -> tuple[float, object]:
    """Best wall time of ``repeat`` calls and the last result (the previous one is dropped before
    each call, so the peak RSS is that of one run, not of two results alive at once)."""
    best, result = float("inf"), None
    for _ in range(repeat):
        result = None
        start = time.perf_counter()
        result = func()
        best = min(best, time.perf_counter() - start)
    return best, result


def print_profile(func, top: int) -> None:
    """Run ``func`` once under cProfile; print the ``top`` fleetfuel functions by cumulative time."""
    profiler = cProfile.Profile()
    profiler.runcall(func)
    stats = pstats.Stats(profiler)
    total = max(stats.total_tt, 1e-12)
    rows = [
        (cum, calls, f"{Path(file).parent.name}/{Path(file).name}:{name}")
        for (file, _, name), (_, calls, _, cum, _) in stats.stats.items()
        if "fleetfuel" in file and Path(file).parent.name != "benchmarks"
    ]
    print(f"clean stage under cProfile ({total:.2f} s with profiler overhead), top {top} by cumulative time:")
    for cum, calls, where in sorted(rows, reverse=True)[:top]:
        print(f"  {cum:8.3f} s {100 * cum / total:5.1f} %  {calls:6d} calls  {where}")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=2_000_000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--no-clean", action="store_true", help="time ingest only (peak RSS of ingest alone)")
    parser.add_argument("--no-defects", action="store_true", help="synthetic traces without export defects")
    parser.add_argument("--profile", type=int, default=0, metavar="N",
                        help="print the N fleetfuel functions with most cumulative time in one clean run")
    source = parser.add_mutually_exclusive_group()
    source.add_argument("--csv", metavar="PATH", help="time this existing canonical_csv file (no generation)")
    source.add_argument("--keep", metavar="PATH", help="copy the generated file here for later --csv runs")
    parser.add_argument("--write", metavar="PATH", help=argparse.SUPPRESS)  # child: write the file, exit
    args = parser.parse_args(argv)
    if args.write:
        print(write_csv(Path(args.write), args.rows, not args.no_defects))
        return 0
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(args.csv) if args.csv else Path(tmp) / "fleet_1hz.csv"
        start = time.perf_counter()
        if not args.csv:
            child = [sys.executable, __file__, "--write", str(path), "--rows", str(args.rows)]
            subprocess.run(child + (["--no-defects"] if args.no_defects else []), check=True, capture_output=True)
            if args.keep:
                shutil.copyfile(path, args.keep)
        written_s = time.perf_counter() - start
        size_mib = path.stat().st_size / 2**20
        raw_s, raw = best_of(args.repeat, lambda: pv.read_csv(path))
        rows = raw.num_rows
        time_type = raw.schema.field("time_utc").type
        del raw
        cfg = IngestConfig()
        ingest_s, log = best_of(args.repeat, lambda: read_csv_log(path, cfg))
        assert log.rows_in == rows == len(log.samples) + len(log.dropped)
        origin = (f"given file {path.name}" if args.csv else
                  f"synth fleet at 1 Hz{'' if args.no_defects else ' with typical defects'} (written in {written_s:.1f} s")
        print(f"file: {rows:,} rows, {size_mib:.1f} MiB, {origin}; pyarrow reads time_utc as {time_type}"
              f"{'' if args.csv else ')'}")
        print(f"pyarrow.csv.read_csv       : {rows / raw_s:12,.0f} rows/s ({raw_s:.3f} s)")
        print(f"fleetfuel ingest           : {rows / ingest_s:12,.0f} rows/s ({ingest_s:.3f} s)"
              f"   ratio to raw {raw_s / ingest_s:.2f}")
        print(f"peak RSS after ingest      : {peak_rss_mib():.0f} MiB")
        if args.no_clean:
            print("clean stage                : not timed (--no-clean)")
            return 0
        from fleetfuel.clean import CleanConfig, clean_batch

        batch = LogBatch(files=(log,))
        clean_s, result = best_of(args.repeat, lambda: clean_batch(batch, CleanConfig()))
        kept = int(result.account["rows_kept"].sum())
        vehicles = len(result.account["vehicle_ids"].iloc[0])
        del result
        total = ingest_s + clean_s
        print(f"fleetfuel clean            : {rows / clean_s:12,.0f} rows/s ({clean_s:.3f} s; {kept:,} rows kept, "
              f"{vehicles} vehicles)   ratio to raw {raw_s / clean_s:.2f}")
        print(f"fleetfuel ingest + clean   : {rows / total:12,.0f} rows/s ({total:.3f} s)"
              f"   ratio to raw {raw_s / total:.2f}  (target >= 0.3)")
        print(f"peak RSS (read, ingest, clean): {peak_rss_mib():.0f} MiB")
        if args.profile:
            print_profile(lambda: clean_batch(batch, CleanConfig()), args.profile)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
