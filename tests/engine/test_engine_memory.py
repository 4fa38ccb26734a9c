"""Bounded memory: the driver holds facts, not samples, so its peak RSS does not grow with the fleet.

Loose check (the benchmark ``benchmarks/bench_scale.py --cap-mib`` measures the absolute cap): the
driver's and each worker's peak resident memory on a fleet twelve times larger grows by far less
than the larger fleet's samples take in memory. Common practice, no source.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from fleetfuel import synth

ROOT = Path(__file__).resolve().parents[2]


def _fleet(folder: Path, vehicles: int, days: int) -> int:
    samples = synth.fleet(n_vehicles=vehicles, n_days=days, seed=9, with_truth=False).samples
    synth.write_daily_files(samples, folder)
    return int(samples.memory_usage(deep=True).sum())


CHILD = """
import json, sys
from fleetfuel.config import RunConfig
from fleetfuel.engine.executors import ProcessEngine, peak_rss_bytes
from fleetfuel.engine.stream import prepare_fleet
with ProcessEngine(1) as engine:
    fleet = prepare_fleet([sys.argv[1]], RunConfig(), sys.argv[2], engine)
tasks = fleet.tasks()
print(json.dumps([peak_rss_bytes(), int(tasks["peak_rss_bytes"].max())]))
"""


def _prepare(folder: Path, work: Path) -> tuple[int, int]:
    """(driver peak RSS, worker peak RSS) [bytes] of the partitioned pass with one worker process."""
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    out = subprocess.run([sys.executable, "-c", CHILD, str(folder), str(work)], env=env, capture_output=True,
                         text=True, check=False)
    assert out.returncode == 0, out.stderr[-2000:]
    driver, worker = json.loads(out.stdout.strip().splitlines()[-1])
    return int(driver), int(worker)


@pytest.mark.slow
def test_peak_memory_does_not_grow_with_the_fleet(tmp_path: Path) -> None:
    # same vehicles, one day against ten: partitions (operating periods) alike, ten times the rows
    _fleet(tmp_path / "small", vehicles=6, days=1)
    big_bytes = _fleet(tmp_path / "big", vehicles=6, days=10)
    small = _prepare(tmp_path / "small", tmp_path / "work_small")
    big = _prepare(tmp_path / "big", tmp_path / "work_big")
    driver_growth, worker_growth = big[0] - small[0], big[1] - small[1]
    # holding the big fleet's clean samples (wider than the raw frame) would add several times
    # big_bytes; growth below big_bytes allows for the largest of ten days' operating periods being
    # larger than one day's and for a heap that does not shrink back (measured: 11 MB of 34 MB)
    assert driver_growth < big_bytes, (driver_growth, big_bytes)
    assert worker_growth < big_bytes, (worker_growth, big_bytes)
