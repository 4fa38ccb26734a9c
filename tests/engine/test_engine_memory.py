"""Bounded memory: the driver holds facts, not samples, so its peak RSS does not grow with the fleet.

Loose check (the benchmark ``benchmarks/bench_scale.py --cap-mib`` measures the absolute cap): the
driver's and each worker's peak resident memory on a fleet ten times larger grows by far less
than the larger fleet's samples take in memory, in the partitioned pass and in the whole forecast
(routes, duty types and cycles, fuel check, route cells). Common practice, no source.
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
    driver, worker = _run(CHILD, folder, work)
    return driver, worker


FORECAST_CHILD = """
import dataclasses, json, sys
import pandas as pd
from fleetfuel import pipeline
from fleetfuel.demo import demo_config
from fleetfuel.engine.executors import ProcessEngine, peak_rss_bytes
cfg = demo_config()
cfg = dataclasses.replace(cfg, cycles=dataclasses.replace(cfg.cycles, pool_max_s=7200.0, silhouette_sample=400,
                                                          holdout_day="none"))
with ProcessEngine(1) as engine:
    result = pipeline.forecast_paths([sys.argv[1]], cfg, work_dir=sys.argv[2], engine=engine)
tasks = pd.read_json(sys.argv[2] + "/tasks.jsonl", lines=True)
print(json.dumps([peak_rss_bytes(), int(tasks["peak_rss_bytes"].max()), len(result.route_forecast)]))
"""


def _run(child: str, folder: Path, work: Path) -> list[int]:
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    out = subprocess.run([sys.executable, "-c", child, str(folder), str(work)], env=env, capture_output=True,
                         text=True, check=False)
    assert out.returncode == 0, out.stderr[-2000:]
    return [int(x) for x in json.loads(out.stdout.strip().splitlines()[-1])]


@pytest.mark.slow
def test_forecast_driver_memory_does_not_grow_with_the_fleet(tmp_path: Path) -> None:
    # the whole main job on four days and on twenty: the driver reads back only the cycle pool
    # (capped at 2 h per type here) and small per-trip and per-micro-trip tables. Its other
    # fleet-size bound, the silhouette's subsample (O(n^2) distances: 4000 micro-trips take ~60 MB
    # more than 500, measured), is set below both fleets' micro-trip counts (~2100 and ~10,000).
    # Four days, not one: reading Parquet files back grows the heap up to a plateau (allocator
    # pools, ~20 MB over the first few dozen partitions, measured), reached by both fleets
    # (measured: the driver's peak grows ~38 MB from 3 days to 12 and again from 4 days to 20, a
    # plateau, not a slope; the twenty days' samples take ~65 MB).
    _fleet(tmp_path / "small", vehicles=6, days=4)
    big_bytes = _fleet(tmp_path / "big", vehicles=6, days=20)
    small = _run(FORECAST_CHILD, tmp_path / "small", tmp_path / "work_small")
    big = _run(FORECAST_CHILD, tmp_path / "big", tmp_path / "work_big")
    assert small[2] > 0 and big[2] > 0  # route x spec cells forecast
    assert big[0] - small[0] < big_bytes, (big[0] - small[0], big_bytes)
    assert big[1] - small[1] < big_bytes, (big[1] - small[1], big_bytes)


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


RELEASE_CHILD = """
import json
from fleetfuel.engine.executors import release_free_memory

def rss():
    for line in open("/proc/self/status"):
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) * 1024

chunks = [bytearray(64 * 1024) for _ in range(4000)]  # 250 MiB of heap blocks (below the mmap threshold)
for k in range(len(chunks)):
    chunks[k][::4096] = b"x" * len(chunks[k][::4096])  # touch every page
kept = chunks[::20]  # every 20th stays: the heap cannot shrink from its top
del chunks
before = rss()
release_free_memory()
print(json.dumps([before, rss()]))
"""


@pytest.mark.skipif(not sys.platform.startswith("linux") or not os.confstr("CS_GNU_LIBC_VERSION"),
                    reason="malloc_trim is glibc's")
def test_release_free_memory_hands_fragmented_heap_back() -> None:
    # glibc's malloc_trim(0) returns whole free pages inside the heap (glibc manual, "Memory
    # Allocation Tunables"; malloc_trim(3)): freed blocks between live ones leave the resident set.
    out = subprocess.run([sys.executable, "-c", RELEASE_CHILD], capture_output=True, text=True, check=True,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    before, after = json.loads(out.stdout)
    assert before - after > 150 * 1024 * 1024  # of the 237 MiB freed
