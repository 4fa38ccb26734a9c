"""Benchmark: wall time and peak memory of the main job, against ingest-and-clean of the same logs.

1. ``fleetfuel demo`` (forecast of the bundled sample fleet). Target (issue 5): <= 30 s wall on a
   2-core machine.
2. ``fleetfuel forecast`` over a generated fleet (``fleetfuel.synth``, default 20 vehicles over
   22 working days, about one month), written once as one canonical-column Parquet file.

Each job runs as its own child process (``python -m fleetfuel ...``); wall time by
``time.perf_counter`` around it, peak resident memory of that child from ``os.wait4``. The
baseline, measured in the same run on the same inputs, is ``fleetfuel inspect`` (read and clean
only): the ratio says what the later stages (segment, cycles, simulate, forecast, report) add.

Usage: ``python benchmarks/bench_forecast.py [--vehicles N] [--days N] [--seed S] [--skip-synth]``
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

TARGET_DEMO_S = 30.0  # issue 5
KIB_PER_MIB = 1024.0  # ru_maxrss is in KiB on Linux


def run_child(args: list[str], cwd: Path) -> tuple[float, float, int, str]:
    """Run ``python -m fleetfuel ARGS``; (wall [s], NaN, exit code, last stderr line): no memory figure."""
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    start = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-m", "fleetfuel", *args], cwd=cwd, env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    _, stderr = proc.communicate()
    wall = time.perf_counter() - start
    last = (stderr.strip().splitlines() or [""])[-1]
    return wall, float("nan"), proc.returncode, last


def run_measured(args: list[str], cwd: Path) -> tuple[float, float, int, str]:
    """As :func:`run_child`, with the child's own peak RSS from ``os.wait4``."""
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    with tempfile.TemporaryFile("w+") as err:
        start = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-m", "fleetfuel", *args], cwd=cwd, env=env,
                                stdout=subprocess.DEVNULL, stderr=err, text=True)
        _, status, usage = os.wait4(proc.pid, 0)
        wall = time.perf_counter() - start
        proc.returncode = os.waitstatus_to_exitcode(status)
        err.seek(0)
        last = (err.read().strip().splitlines() or [""])[-1]
    return wall, usage.ru_maxrss / KIB_PER_MIB, proc.returncode, last


def has_verb(verb: str, cwd: Path) -> bool:
    """Whether this checkout's CLI offers ``verb``."""
    wall, _, code, _ = run_child([verb, "--help"], cwd)
    return code == 0


def line(label: str, figures: tuple[float, float, int, str], base: tuple[float, float, int, str] | None) -> str:
    wall, rss, code, last = figures
    text = f"{label:<34} wall {wall:7.1f} s  peak RSS {rss:7.0f} MiB  exit {code}"
    if base is not None and base[0] > 0:
        text += f"  ratio to inspect: time {wall / base[0]:5.1f}x, memory {rss / base[1]:4.1f}x"
    if code != 0 and last:
        text += f"\n    stderr: {last}"
    return text


def synth_fleet(folder: Path, vehicles: int, days: int, seed: int) -> tuple[Path, int]:
    """Write a generated fleet as one canonical Parquet file; (path, rows)."""
    from fleetfuel import synth

    generated = synth.fleet(n_vehicles=vehicles, n_days=days, seed=seed, with_truth=False)
    path = synth.write_parquet(generated.samples, None, folder / "synth_fleet.parquet")
    return path, len(generated.samples)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--vehicles", type=int, default=20)
    parser.add_argument("--days", type=int, default=22, help="working days (22: about one month)")
    parser.add_argument("--seed", type=int, default=20250310)
    parser.add_argument("--skip-synth", action="store_true")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="fleetfuel-bench-") as tmp:
        work = Path(tmp)
        print(f"machine: {os.cpu_count()} CPUs; python {sys.version.split()[0]}")
        sample = ROOT / "sample_logs"
        base = run_measured(["inspect", str(sample)], work)
        print(line("inspect sample fleet (baseline)", base, None))
        demo = run_measured(["demo", "--out", str(work / "demo")], work)
        print(line("demo (sample fleet)", demo, base))
        verdict = "meets" if demo[2] == 0 and demo[0] <= TARGET_DEMO_S else "misses"
        print(f"    target <= {TARGET_DEMO_S:g} s: {verdict}")
        if args.skip_synth:
            return 0
        if not has_verb("forecast", work):
            print("forecast verb not available in this checkout: synthetic-fleet run skipped")
            return 0
        start = time.perf_counter()
        path, rows = synth_fleet(work, args.vehicles, args.days, args.seed)
        print(f"generated {args.vehicles} vehicles x {args.days} days: {rows} rows in "
              f"{time.perf_counter() - start:.1f} s")
        base = run_measured(["inspect", str(path)], work)
        print(line("inspect synthetic fleet (baseline)", base, None))
        fc = run_measured(["forecast", str(path), "--out", str(work / "synth_out"), "--quiet"], work)
        print(line("forecast synthetic fleet", fc, base))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
