"""Benchmark: memory of planning one vehicle's partitions, streamed against whole-history.

One generated vehicle (``fleetfuel.synth.fleet``, 1 Hz) over ``--days`` working days, written
as one Parquet file per day and read into the work folder's raw rows by the read task. Then,
each in a fresh child process, the vehicle's windows are planned twice:

- ``stream``: :func:`fleetfuel.engine.tasks.plan_vehicle` (one row group at a time);
- ``whole``: the baseline, the vehicle's whole history of times and speeds read at once and cut
  by :func:`fleetfuel.engine.partition.window_cuts` (what the planner did before it streamed).

Prints, per method, the wall time and the peak RSS above the child's size after its imports,
the ratio of the two, and checks that both give the same cuts.

Usage: ``python benchmarks/bench_plan.py [--days 60] [--seed S]``
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

MIB = 1024.0 * 1024.0


def _rss_now() -> int:
    with open("/proc/self/status", encoding="ascii") as status:
        for line in status:
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) * 1024
    return 0


def child(method: str, raw: list[str], vehicle: str) -> None:
    """Plan ``vehicle`` from ``raw`` with ``method``; print JSON (seconds, MiB above start, cuts)."""
    import numpy as np
    import pyarrow.compute as pc
    import pyarrow.parquet as pq

    from fleetfuel import schema
    from fleetfuel.engine.executors import peak_rss_bytes
    from fleetfuel.engine.partition import window_cuts
    from fleetfuel.engine.tasks import PlanJob, plan_vehicle
    from fleetfuel.segment.config import SegmentConfig

    seg = SegmentConfig()
    start_rss = _rss_now()
    t0 = time.perf_counter()
    if method == "stream":
        windows = plan_vehicle(PlanJob(vehicle, tuple(raw), seg.period_rest_s, seg.stop_speed_m_s))
        cuts = [w.lo_ns for w in windows[1:]]
    else:
        cols = [schema.TIME_UTC, schema.SPEED_M_S]
        table = pq.read_table(raw, columns=cols, filters=pc.field(schema.VEHICLE_ID) == vehicle)
        table = table.filter(pc.is_valid(table.column(schema.TIME_UTC)))
        t_ns = np.asarray(table.column(schema.TIME_UTC).cast("int64").to_numpy(zero_copy_only=False), dtype=np.int64)
        speed = np.asarray(table.column(schema.SPEED_M_S).to_numpy(zero_copy_only=False), dtype=np.float64)
        cuts = window_cuts(t_ns, speed, seg.period_rest_s, seg.stop_speed_m_s).tolist()
    seconds = time.perf_counter() - t0
    print(json.dumps({"seconds": seconds, "mib": (peak_rss_bytes() - start_rss) / MIB, "cuts": cuts}))


def _run_child(method: str, raw: list[str], vehicle: str) -> dict:
    args = [sys.executable, __file__, "--child", method, vehicle, *raw]
    out = subprocess.run(args, capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--days", type=int, default=60)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        child(args.child[0], args.child[2:], args.child[1])
        return 0

    from fleetfuel import synth
    from fleetfuel.config import RunConfig
    from fleetfuel.engine.config import EngineConfig
    from fleetfuel.engine.executors import make_engine
    from fleetfuel.engine.stream import _read_round
    from fleetfuel.engine.workdir import WorkFolder

    with tempfile.TemporaryDirectory(prefix="fleetfuel-bench-plan-") as tmp:
        folder, work = Path(tmp) / "logs", WorkFolder(Path(tmp) / "work")
        samples = synth.fleet(n_vehicles=1, n_days=args.days, seed=args.seed, rate_hz=1.0, with_truth=False).samples
        vehicle, rows = str(samples["vehicle_id"].iloc[0]), len(samples)
        files = synth.write_daily_files(samples, folder)
        del samples
        work.root.mkdir(parents=True)
        with make_engine(EngineConfig()) as engine:
            _read_round(files, RunConfig(), work, engine, keep=False)
        raw = sorted(str(p) for p in (work.root / "raw").glob("*.parquet") if not p.name.endswith(".dropped.parquet"))
        stream, whole = _run_child("stream", raw, vehicle), _run_child("whole", raw, vehicle)
    same = stream["cuts"] == whole["cuts"]
    print(f"one vehicle, {args.days} working days at 1 Hz: {rows:,} rows in {len(raw)} raw files; "
          f"{len(stream['cuts']) + 1} windows (same cuts: {same})")
    for name, r in (("whole history (baseline)", whole), ("streamed row groups", stream)):
        print(f"  {name:<26} {r['seconds']:6.2f} s  peak RSS +{r['mib']:7.1f} MiB")
    print(f"  streamed / baseline: time {stream['seconds'] / whole['seconds']:.2f}x, "
          f"peak memory {stream['mib'] / max(whole['mib'], 1e-9):.2f}x")
    return 0 if same else 1


if __name__ == "__main__":
    raise SystemExit(main())
