"""Engines: the same partitions and byte-identical tables in-process, in processes and on Dask.

The reference is the in-process engine; the checks are equalities between engines, plus the
partition rule (a vehicle's windows are cut at rests of ``segment.period_rest_s``; common
practice, no source) and the row account's identity (rows in = kept + dropped).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from fleet_files import write_tiny_fleet

from fleetfuel import pipeline, schema, segment
from fleetfuel.config import RunConfig
from fleetfuel.engine.config import EngineConfig
from fleetfuel.engine.executors import Engine, make_engine
from fleetfuel.engine.partition import CutFinder, window_cuts, window_of
from fleetfuel.engine.stream import prepare_fleet
from fleetfuel.engine.tasks import PlanJob, plan_vehicle
from fleetfuel.errors import ConfigError

HOUR_NS = 3_600 * 10**9


@pytest.fixture(scope="module")
def fleet_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return write_tiny_fleet(tmp_path_factory.mktemp("tiny_fleet"))


def _tables(fleet_dir: Path, work: Path, cfg: RunConfig, engine: Engine | None = None) -> dict[str, pd.DataFrame]:
    own = engine is None
    engine = engine or make_engine(cfg.engine)
    try:
        prepared = prepare_fleet([fleet_dir], cfg, work, engine)
    finally:
        if own:
            engine.close()
    return {"account": prepared.account, "samples": prepared.samples(), "features": prepared.features,
            "trips": prepared.trips, "tasks": prepared.tasks(), "resumed": pd.DataFrame({"n": [prepared.resumed]})}


@pytest.fixture(scope="module")
def local(fleet_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[str, pd.DataFrame]:
    return _tables(fleet_dir, tmp_path_factory.mktemp("work_local"), RunConfig())


def _same(a: dict[str, pd.DataFrame], b: dict[str, pd.DataFrame]) -> None:
    for name in ("account", "samples", "features", "trips"):
        pd.testing.assert_frame_equal(a[name], b[name], check_exact=True, obj=name)


def test_window_cuts_at_long_gaps_and_long_standstills() -> None:
    t = np.r_[np.arange(0, 3600, 1), np.arange(6 * 3600, 7 * 3600, 1)].astype(np.int64) * 10**9
    v = np.full(t.size, 10.0)
    v[(t >= 6.2 * HOUR_NS) & (t < 6.2 * HOUR_NS + 0.5 * HOUR_NS)] = 0.0  # 30 min parked: not a rest
    cuts = window_cuts(t, v, rest_s=4 * 3600, stop_speed_m_s=0.3)
    assert cuts.tolist() == [6 * HOUR_NS]  # the 5 h gap
    still = np.r_[np.arange(0, 3600), np.arange(3600, 3600 * 6), np.arange(3600 * 6, 3600 * 7)].astype(np.int64) * 10**9
    v = np.where((still >= HOUR_NS) & (still < 6 * HOUR_NS), 0.0, 10.0)
    cuts = window_cuts(still, v, rest_s=4 * 3600, stop_speed_m_s=0.3)
    assert cuts.tolist() == [int(3.5 * HOUR_NS)]  # the middle of the 5 h standstill
    # a standstill before a long gap and one after it are two runs, not one across the gap
    t = np.r_[np.arange(0, 600), np.arange(9 * 3600, 9 * 3600 + 600)].astype(np.int64) * 10**9
    v = np.where((t > 500 * 10**9) & (t < 9 * HOUR_NS + 100 * 10**9), 0.0, 5.0)
    assert window_cuts(t, v, rest_s=4 * 3600, stop_speed_m_s=0.3).tolist() == [9 * HOUR_NS]
    assert np.bincount(window_of(still, cuts)).tolist() == [int((still < cuts[0]).sum()), int((still >= cuts[0]).sum())]


def _random_log(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Shuffled sample times [ns] with repeats, gaps of 1 s to 8 h and long standstills (some NaN speeds)."""
    steps = rng.choice([0, 1, 1, 1, 5, 600, 3 * 3600, 5 * 3600, 8 * 3600], size=int(rng.integers(1, 400)))
    t = np.cumsum(steps).astype(np.int64) * 10**9
    runs = rng.integers(1, 120, size=t.size)  # run lengths in samples, moving and still in turn
    state = np.repeat(np.arange(runs.size) % 2 == 0, runs)[: t.size]
    v = np.where(state, 0.0, rng.uniform(0.5, 25.0, t.size))
    v[rng.random(t.size) < 0.05] = np.nan
    order = rng.permutation(t.size)
    return t[order], v[order]


def _whole_history_cuts(times_ns: np.ndarray, speed_m_s: np.ndarray, rest_s: float, stop_speed_m_s: float) -> np.ndarray:
    """The partition rule on the whole history at once, written out independently of CutFinder:
    cut at the first sample after a gap of at least the rest, and at the middle sample of a
    standstill run (never spanning such a gap) lasting at least the rest."""
    order = np.argsort(times_ns, kind="stable")
    t, v = times_ns[order], speed_m_s[order]
    if t.size < 2:
        return np.zeros(0, dtype=np.int64)
    rest_ns = int(rest_s * 10**9)
    gap = np.flatnonzero(np.diff(t) >= rest_ns) + 1
    still = np.isfinite(v) & (v < stop_speed_m_s)
    after_gap = np.zeros(t.size, dtype=bool)
    after_gap[gap] = True
    first = np.flatnonzero(still & (np.r_[True, ~still[:-1]] | after_gap))
    last = np.flatnonzero(still & (np.r_[~still[1:], True] | np.r_[after_gap[1:], False]))
    long_run = (t[last] - t[first]) >= rest_ns
    middle = np.searchsorted(t, (t[first[long_run]] + t[last[long_run]]) // 2, side="left")
    out = np.unique(np.r_[t[gap], t[middle]])
    return out[out > t[0]]


@pytest.mark.parametrize("seed", range(60))
def test_cut_finder_fed_in_chunks_equals_the_whole_history_rule(seed: int) -> None:
    # The streaming planner (one row group at a time) must cut exactly where the whole-history
    # rule cuts; rest 4 h, stop speed 0.3 m/s as the segment defaults (common practice, no source).
    rng = np.random.default_rng(seed)
    t, v = _random_log(rng)
    want = _whole_history_cuts(t, v, rest_s=4 * 3600, stop_speed_m_s=0.3)
    np.testing.assert_array_equal(window_cuts(t, v, rest_s=4 * 3600, stop_speed_m_s=0.3), want)
    order = np.argsort(t, kind="stable")
    ts = t[order]
    changes = np.flatnonzero(np.diff(ts) > 0) + 1  # chunk edges never split equal times
    edges = np.sort(rng.choice(changes, size=min(changes.size, int(rng.integers(0, 12))), replace=False))
    finder = CutFinder(rest_s=4 * 3600, stop_speed_m_s=0.3)
    for a, b in zip(np.r_[0, edges], np.r_[edges, ts.size], strict=True):
        chunk = np.sort(order[a:b])  # the chunk's rows in log order (which orders equal times)
        finder.feed(t[chunk], v[chunk])
    np.testing.assert_array_equal(finder.cuts(), want)


def test_local_engine_accounts_for_every_row(local: dict[str, pd.DataFrame]) -> None:
    account = local["account"]
    dropped = account["dropped"].map(lambda d: sum(d.values()))
    assert (account["rows_in"] == account["rows_kept"] + dropped).all()
    assert int(account["dropped"].map(lambda d: d.get("duplicate_row", 0)).sum()) >= 20  # the repeated rows


def test_partitions_are_operating_periods(local: dict[str, pd.DataFrame]) -> None:
    samples = local["samples"]
    # every period lies in one partition, and the segmentation of all samples at once gives the
    # same period, trip and micro-trip ids as the partition-by-partition run
    again = segment.split_microtrips(samples.drop(columns=["period_id", "trip_id", "microtrip_id"]))
    for name in ("period_id", "trip_id", "microtrip_id"):
        assert again[name].reset_index(drop=True).equals(samples[name].reset_index(drop=True)), name
    tasks = local["tasks"]
    assert (tasks["stage"] == "clean").sum() >= samples["period_id"].nunique()


def test_processes_give_identical_tables(fleet_dir: Path, tmp_path: Path, local: dict[str, pd.DataFrame]) -> None:
    cfg = dataclasses.replace(RunConfig(), engine=EngineConfig(kind="processes", workers=2))
    _same(local, _tables(fleet_dir, tmp_path, cfg))


def test_dask_local_cluster_gives_identical_tables_and_uses_both_workers(
    fleet_dir: Path, tmp_path: Path, local: dict[str, pd.DataFrame]
) -> None:
    pytest.importorskip("distributed")
    cfg = dataclasses.replace(RunConfig(), engine=EngineConfig(kind="dask", workers=2))
    got = _tables(fleet_dir, tmp_path, cfg)
    _same(local, got)
    workers = set(got["tasks"].loc[got["tasks"]["stage"] == "clean", "worker"])
    assert len(workers) == 2 and all(w.startswith("tcp://127.0.0.1:") for w in workers)


def test_resume_skips_finished_partitions(fleet_dir: Path, tmp_path: Path, local: dict[str, pd.DataFrame],
                                          monkeypatch: pytest.MonkeyPatch) -> None:
    from fleetfuel.engine import stream, tasks

    calls = {"n": 0}
    real = tasks.clean_partition

    def dies_after_two(job: tasks.CleanJob) -> dict[str, object]:
        if calls["n"] == 2:
            raise KeyboardInterrupt  # the run is interrupted after two finished partitions
        calls["n"] += 1
        return real(job)

    monkeypatch.setattr(stream, "clean_partition", dies_after_two)
    with pytest.raises(KeyboardInterrupt):
        _tables(fleet_dir, tmp_path, RunConfig())
    monkeypatch.setattr(stream, "clean_partition", real)
    cfg = dataclasses.replace(RunConfig(), engine=EngineConfig(resume=True))
    again = _tables(fleet_dir, tmp_path, cfg)
    assert int(again["resumed"]["n"].iloc[0]) == 2
    _same(local, again)
    ran = again["tasks"]
    total = int((local["tasks"]["stage"] == "clean").sum())
    assert int((ran["stage"] == "clean").sum()) == total  # two before the interruption, the rest after
    assert ran["key"].loc[ran["stage"] == "clean"].is_unique  # none ran twice


def test_changed_settings_do_not_resume(fleet_dir: Path, tmp_path: Path) -> None:
    _tables(fleet_dir, tmp_path, RunConfig())
    cfg = RunConfig()
    cfg = dataclasses.replace(cfg, clean=dataclasses.replace(cfg.clean, gap_break_s=cfg.clean.gap_break_s + 1),
                              engine=EngineConfig(resume=True))
    assert int(_tables(fleet_dir, tmp_path, cfg)["resumed"]["n"].iloc[0]) == 0


def test_inspect_paths_through_any_engine_matches(fleet_dir: Path, local: dict[str, pd.DataFrame]) -> None:
    got = pipeline.inspect_paths([fleet_dir])
    pd.testing.assert_frame_equal(got.account, local["account"])
    assert len(got.samples) == len(local["samples"])


def test_engine_config_refuses_nonsense() -> None:
    with pytest.raises(ConfigError, match="engine.kind"):
        EngineConfig(kind="cluster")
    with pytest.raises(ConfigError, match="engine.workers"):
        EngineConfig(workers=0)
    with pytest.raises(ConfigError, match="engine.scheduler"):
        EngineConfig(kind="local", scheduler="tcp://127.0.0.1:8786")


@pytest.mark.slow
def test_dask_job_survives_a_worker_killed_after_the_first_partition(
    fleet_dir: Path, tmp_path: Path, local: dict[str, pd.DataFrame]
) -> None:
    pytest.importorskip("distributed")
    import os
    import signal
    import threading
    import time

    cfg = dataclasses.replace(RunConfig(), engine=EngineConfig(kind="dask", workers=2))
    engine = make_engine(cfg.engine)
    try:
        pids = engine.client.run(os.getpid)  # worker address -> process id
        outcome: dict[str, object] = {}

        def job() -> None:
            try:
                outcome["tables"] = _tables(fleet_dir, tmp_path, cfg, engine)
            except BaseException as exc:  # reported by the assertion below
                outcome["error"] = exc

        runner = threading.Thread(target=job, daemon=True)
        runner.start()
        deadline = time.monotonic() + 120
        while runner.is_alive() and time.monotonic() < deadline and not any((tmp_path / "done").rglob("*.json")):
            time.sleep(0.02)
        assert any((tmp_path / "done").rglob("*.json")), "no partition finished within 120 s"
        assert runner.is_alive(), "the job finished before a worker could be killed"
        os.kill(pids[sorted(pids)[0]], signal.SIGKILL)  # the nanny restarts it; lost tasks run again
        runner.join(timeout=240)
        assert not runner.is_alive(), "the job did not finish within 240 s after the kill"
        assert "error" not in outcome, outcome.get("error")
        _same(local, outcome["tables"])  # type: ignore[arg-type]
        # the restarted worker has the engine's memory settings too: never paused (a paused
        # worker holding no data would wait forever), never spilling
        settings = engine.client.run(lambda dask_worker: (dask_worker.memory_manager.memory_pause_fraction,
                                                          dask_worker.memory_manager.memory_spill_fraction))
        assert set(settings.values()) == {(False, False)}
    finally:
        engine.close()


def test_warm_up_reaches_every_worker() -> None:
    # the benchmarks start workers before timing: every worker answers, and nothing is logged
    with make_engine(EngineConfig()) as local:
        assert local.warm_up() == 1 and local.records == []
    with make_engine(EngineConfig(kind="processes", workers=2)) as pool:
        assert pool.warm_up() == 2 and pool.records == []


def test_plan_streams_row_groups_to_the_whole_history_windows(tmp_path: Path) -> None:
    # plan_vehicle reads one row group at a time; its windows must be those of window_cuts over
    # the vehicle's whole history: files in batch order, one overlapping another in time,
    # another vehicle interleaved, rows without a time (they ride in the first window).
    rng = np.random.default_rng(3)
    t, v = _random_log(rng)
    t = t + 1_700_000_000 * 10**9
    times = pd.Series(pd.to_datetime(t, utc=True))
    times[rng.random(t.size) < 0.03] = pd.NaT
    frame = pd.DataFrame({schema.TIME_UTC: times, schema.SPEED_M_S: v,
                          schema.VEHICLE_ID: np.where(rng.random(t.size) < 0.8, "VAN-7", "VAN-8")})
    frame[schema.VEHICLE_ID] = frame[schema.VEHICLE_ID].astype("string")
    paths = []
    for n, part in enumerate(np.array_split(np.arange(len(frame)), 3)):
        path = tmp_path / f"{n}.parquet"
        pq.write_table(pa.Table.from_pandas(frame.iloc[part], preserve_index=False), path, row_group_size=17)
        paths.append(str(path))
    got = plan_vehicle(PlanJob("VAN-7", tuple(paths), 4 * 3600, 0.3))
    mine = frame.loc[frame[schema.VEHICLE_ID] == "VAN-7"]
    timed = mine.dropna(subset=[schema.TIME_UTC])
    t_ns = timed[schema.TIME_UTC].astype("int64").to_numpy()
    cuts = _whole_history_cuts(t_ns, timed[schema.SPEED_M_S].to_numpy(), 4 * 3600, 0.3)
    number = window_of(t_ns, cuts)
    assert cuts.size > 3  # the log has rests to cut at
    assert [w.lo_ns for w in got] == [None, *cuts.tolist()]
    assert [w.hi_ns for w in got] == [*cuts.tolist(), None]
    rows = np.bincount(number, minlength=cuts.size + 1)
    rows[0] += len(mine) - len(timed)
    assert [w.rows for w in got] == rows.tolist()
    assert sum(w.rows for w in got) == len(mine)  # every row of the vehicle in one window
    firsts = pd.Series(t_ns).groupby(number).min()
    assert [w.key.split("/")[1] for w in got] == [
        pd.Timestamp(int(firsts[k]), tz="UTC").strftime("%Y%m%dT%H%M%SZ") if k in firsts.index else "none"
        for k in range(cuts.size + 1)
    ]
