"""Benchmark: how the partitioned read-clean-segment pass scales with fleet size and workers.

Fleets come from the shared generator (``fleetfuel.synth.fleet``), written as one Parquet file
per vehicle and day. Every measurement runs in a fresh child process (``--child``), which runs
:func:`fleetfuel.engine.stream.prepare_fleet` and prints its figures as JSON: wall time, rows,
the driver's peak RSS and each worker's peak RSS (from the task log). Worker start-up (a fresh
process importing fleetfuel, a fixed cost a long run pays once) is timed apart
(:meth:`fleetfuel.engine.executors.Engine.warm_up`), so the rates are those of the work.

1. Rows per second at three fleet sizes (default 10, 30 and 100 vehicle-weeks of 5 working
   days), one worker process: the cost growth slope d log(time) / d log(rows) (target 0.9-1.1).
2. Two worker processes against one on the largest fleet, each worker single-threaded (BLAS,
   OpenMP and pyarrow pools pinned to one thread in both runs): speed-up (target >= 1.7x on 2 cores).
3. The same on a 2-worker Dask LocalCluster.
4. Peak RSS per worker for the largest size; the work folder's Parquet dataset size against the
   raw input size.

``--cap-mib CAP`` measures the memory cap instead: a fleet whose generated samples take
``--cap-factor`` (default 3) times CAP in memory, written week by week so the benchmark itself
stays small, run through the whole main job (:func:`fleetfuel.pipeline.forecast_paths`: read,
clean, routes, duty types and cycles, forecast) on a 2-worker Dask LocalCluster whose workers
are limited to CAP; prints the driver's and each worker's peak RSS against CAP, and the
workers' peak in each stage.

Usage: ``python benchmarks/bench_scale.py [--weeks 10 30 100] [--seed S]``
or ``python benchmarks/bench_scale.py --cap-mib 640 [--cap-factor 3]``
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

MIB = 1024.0 * 1024.0
DAYS_PER_WEEK = 5  # working days
ONE_THREAD = {name: "1" for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS")}


def child(paths: list[str], work: str, kind: str, workers: int, cap_bytes: int = 0, job: str = "prepare") -> None:
    """Run the partitioned pass (``job`` "prepare") or the main job ("forecast") once and print
    its figures (JSON) on stdout."""
    import dataclasses

    from fleetfuel import pipeline
    from fleetfuel.demo import demo_config
    from fleetfuel.engine.config import EngineConfig
    from fleetfuel.engine.executors import make_engine, peak_rss_bytes, pin_threads
    from fleetfuel.engine.stream import prepare_fleet

    pin_threads()
    # the demo's settings: the generated fleet's vehicle classes and current specs
    cfg = dataclasses.replace(demo_config(), engine=EngineConfig(kind=kind, workers=workers,
                                                                 memory_limit_bytes=cap_bytes))
    with make_engine(cfg.engine) as engine:
        start = time.perf_counter()
        reached = engine.warm_up()  # start-up is a fixed cost, paid once per run: timed apart
        warm = time.perf_counter() - start
        start = time.perf_counter()
        fleet = prepare_fleet(paths, cfg, work, engine)
        wall = time.perf_counter() - start
        job_s = 0.0
        if job == "forecast":
            start = time.perf_counter()
            pipeline.forecast_paths(paths, dataclasses.replace(cfg, engine=dataclasses.replace(cfg.engine, resume=True)),
                                    work_dir=work, engine=engine)  # resumes the pass above: its partitions are kept
            job_s = time.perf_counter() - start
    tasks = fleet.tasks()
    stage_peaks = (tasks.groupby("stage")["peak_rss_bytes"].max() / MIB).round(0).to_dict()
    peaks = tasks.groupby("worker")["peak_rss_bytes"].max() / MIB
    folder = Path(work)
    dataset = sum(p.stat().st_size for name in ("samples", "features", "trips") for p in (folder / name).rglob("*.parquet"))
    raw = sum(p.stat().st_size for p in (folder / "raw").rglob("*.parquet"))
    print(json.dumps({
        "wall_s": wall, "warm_up_s": warm, "workers_reached": reached, "rows_in": int(fleet.account["rows_in"].sum()), "partitions": len(fleet.partitions),
        "driver_peak_mib": peak_rss_bytes() / MIB,
        "worker_peak_mib": peaks.to_dict(), "dataset_bytes": dataset, "raw_copy_bytes": raw,
        "workers_used": int(tasks.loc[tasks["stage"] == "clean", "worker"].nunique()),
        "job_s": job_s, "stage_peak_mib": stage_peaks,
    }))


def measure(paths: list[Path], work: Path, kind: str, workers: int, cap_bytes: int = 0, job: str = "prepare") -> dict:
    env = {**os.environ, **ONE_THREAD, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    cmd = [sys.executable, str(Path(__file__).resolve()), "--child", kind, str(workers), str(cap_bytes), job,
           str(work), *map(str, paths)]
    out = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise SystemExit(f"child failed ({kind}, {workers}): {out.stderr.strip().splitlines()[-1:]}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def make_fleet(folder: Path, vehicle_weeks: int, seed: int) -> tuple[Path, int]:
    """Generated fleet of ``vehicle_weeks`` (vehicles x one working week); (folder, input bytes)."""
    from fleetfuel import synth

    samples = synth.fleet(n_vehicles=vehicle_weeks, n_days=DAYS_PER_WEEK, seed=seed,
                          with_truth=False).samples
    files = synth.write_daily_files(samples, folder)
    return folder, sum(p.stat().st_size for p in files)


def make_capped_fleet(folder: Path, target_bytes: float, seed: int, vehicles: int = 20) -> tuple[int, float, int]:
    """Weeks of ``vehicles`` generated one at a time until their samples took ``target_bytes`` in
    memory; (vehicle-weeks, samples' bytes in memory, input file bytes)."""
    import pandas as pd

    from fleetfuel import synth

    held, size, week, start = 0.0, 0, 0, pd.Timestamp("2025-03-10")
    while held < target_bytes:
        samples = synth.fleet(n_vehicles=vehicles, n_days=DAYS_PER_WEEK, seed=seed + week, with_truth=False,
                              start_date=(start + pd.Timedelta(weeks=week)).date().isoformat()).samples
        held += float(samples.memory_usage(deep=True).sum())
        size += sum(p.stat().st_size for p in synth.write_daily_files(samples, folder))
        week += 1
        del samples
    return week * vehicles, held, size


def cap_run(cap_mib: float, factor: float, seed: int) -> int:
    """The memory-cap measurement (see the module docstring)."""
    cap = int(cap_mib * MIB)
    with tempfile.TemporaryDirectory(prefix="fleetfuel-bench-cap-") as tmp:
        base = Path(tmp)
        weeks, held, size = make_capped_fleet(base / "fleet", factor * cap, seed)
        print(f"fleet: {weeks} vehicle-weeks, samples {held / MIB:,.0f} MiB in memory ({held / cap:.1f}x the "
              f"{cap_mib:.0f} MiB cap), input files {size / MIB:,.0f} MiB")
        got = measure([base / "fleet"], base / "work", "dask", 2, cap, job="forecast")
        peaks = sorted(got["worker_peak_mib"].values())
        worst = max([got["driver_peak_mib"], *peaks])
        verdict = "under" if worst < cap_mib else "OVER"
        print(f"{got['rows_in']:,} rows in {got['partitions']} partitions on 2 Dask workers: read, clean and "
              f"segment {got['wall_s']:.1f} s, then routes, cycles and forecast {got['job_s']:.1f} s")
        print("workers' peak RSS by the end of each stage [MiB]: " + ", ".join(f"{k} {v:.0f}" for k, v in got["stage_peak_mib"].items()))
        print(f"peak RSS: driver {got['driver_peak_mib']:.0f} MiB, workers [{', '.join(f'{v:.0f}' for v in peaks)}] MiB: "
              f"largest {worst:.0f} MiB, {worst / cap_mib:.2f}x the cap ({verdict} the cap)")
    return 0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--weeks", type=int, nargs=3, default=[10, 30, 100], help="fleet sizes in vehicle-weeks")
    parser.add_argument("--seed", type=int, default=20250310)
    parser.add_argument("--cap-mib", type=float, help="measure the memory cap instead (MiB per process)")
    parser.add_argument("--cap-factor", type=float, default=3.0, help="fleet's samples in memory / cap")
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        kind, workers, cap, job, work, *paths = args.child
        child(paths, work, kind, int(workers), int(cap), job)
        return 0
    print(f"machine: {os.cpu_count()} CPUs; python {sys.version.split()[0]}")
    if args.cap_mib:
        return cap_run(args.cap_mib, args.cap_factor, args.seed)
    with tempfile.TemporaryDirectory(prefix="fleetfuel-bench-scale-") as tmp:
        base = Path(tmp)
        runs = []
        for weeks in args.weeks:
            folder, size = make_fleet(base / f"fleet_{weeks}", weeks, args.seed)
            got = measure([folder], base / f"work_{weeks}_1", "processes", 1)
            runs.append((weeks, size, got))
            print(f"{weeks:4d} vehicle-weeks: {got['rows_in']:>9,} rows in {got['partitions']:4d} partitions, "
                  f"{got['wall_s']:6.1f} s, {got['rows_in'] / got['wall_s']:9,.0f} rows/s (1 worker; "
                  f"start-up {got['warm_up_s']:.1f} s apart)")
        rows = np.array([r[2]["rows_in"] for r in runs], dtype=float)
        wall = np.array([r[2]["wall_s"] for r in runs], dtype=float)
        slope = float(np.polyfit(np.log(rows), np.log(wall), 1)[0])
        verdict = "meets" if 0.9 <= slope <= 1.1 else "misses"
        print(f"cost growth slope d log(time)/d log(rows): {slope:.2f} ({verdict} the 0.9-1.1 target)")
        weeks, size, one = runs[-1]
        folder = base / f"fleet_{weeks}"
        two = measure([folder], base / f"work_{weeks}_2", "processes", 2)
        speedup = one["wall_s"] / two["wall_s"]
        verdict = "meets" if speedup >= 1.7 else "misses"
        print(f"2 worker processes vs 1 on {weeks} vehicle-weeks: {two['wall_s']:.1f} s vs {one['wall_s']:.1f} s, "
              f"speed-up {speedup:.2f}x ({verdict} the 1.7x target); workers used {two['workers_used']} "
              f"(start-up {two['warm_up_s']:.1f} s apart)")
        dask = measure([folder], base / f"work_{weeks}_dask", "dask", 2)
        print(f"2-worker Dask LocalCluster: {dask['wall_s']:.1f} s, speed-up {one['wall_s'] / dask['wall_s']:.2f}x "
              f"vs 1 process; workers used {dask['workers_used']} (start-up {dask['warm_up_s']:.1f} s apart)")
        for label, got in (("1 process", one), ("2 processes", two), ("dask 2", dask)):
            peaks = ", ".join(f"{v:.0f}" for v in sorted(got["worker_peak_mib"].values()))
            print(f"peak RSS ({label}): driver {got['driver_peak_mib']:.0f} MiB, workers [{peaks}] MiB")
        print(f"input {size / MIB:.1f} MiB; Parquet dataset (samples, features, trips) {one['dataset_bytes'] / MIB:.1f} MiB "
              f"({one['dataset_bytes'] / size:.2f}x the input); raw copy {one['raw_copy_bytes'] / MIB:.1f} MiB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
