"""The main job gives byte-identical tables whatever the engine (in-process or a 2-worker Dask cluster).

Reference: the in-process run; the tables compared are the ones other tools read
(route_forecast.csv and .parquet, fleet_ranking.csv). Common practice, no source.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pandas as pd
import pytest
from fleet_files import write_tiny_fleet

from fleetfuel import pipeline
from fleetfuel.demo import demo_config
from fleetfuel.engine.config import EngineConfig
from fleetfuel.report.outputs import write_outputs

TABLES = ("route_forecast.csv", "fleet_ranking.csv")


def _forecast(fleet: Path, out: Path, engine: EngineConfig) -> Path:
    cfg = dataclasses.replace(demo_config(), engine=engine)
    work = out / ".work"
    result = pipeline.forecast_paths([fleet], cfg, work_dir=work)
    write_outputs(result, out, work)
    return out


@pytest.mark.slow
def test_forecast_tables_identical_in_process_and_on_dask(tmp_path: Path) -> None:
    pytest.importorskip("distributed")
    fleet = write_tiny_fleet(tmp_path / "fleet", vehicles=4, days=2)
    local = _forecast(fleet, tmp_path / "local", EngineConfig())
    dask = _forecast(fleet, tmp_path / "dask", EngineConfig(kind="dask", workers=2))
    for name in TABLES:
        assert (local / name).read_bytes() == (dask / name).read_bytes(), name
    a = pd.read_parquet(local / "route_forecast.parquet")
    b = pd.read_parquet(dask / "route_forecast.parquet")
    pd.testing.assert_frame_equal(a, b, check_exact=True)
    assert len(a) > 0 and a["fuel_l_per_100km"].notna().any()
    tasks = pd.read_json(dask / ".work" / "tasks.jsonl", lines=True)
    assert tasks.loc[tasks["stage"] == "clean", "worker"].nunique() == 2


@pytest.mark.slow
def test_full_forecast_reads_routes_from_the_work_folder_with_identical_numbers(tmp_path: Path) -> None:
    # --full simulates every route on its own logs: route tasks read them from the work folder
    # (two worker processes here) and must give exactly what the in-memory frame gives
    # (FrameLogs, the library's default); common practice, no source
    fleet = write_tiny_fleet(tmp_path / "fleet", vehicles=4, days=2)
    cfg = dataclasses.replace(demo_config(), engine=EngineConfig(kind="processes", workers=2))
    work = tmp_path / "work"
    tasks_view = pipeline.forecast_paths([fleet], cfg, full=True, work_dir=work)
    inputs = pipeline.forecast_inputs([fleet], demo_config())
    in_memory = pipeline.run_forecast(inputs, demo_config(), full=True)
    pd.testing.assert_frame_equal(tasks_view.route_forecast, in_memory.route_forecast, check_exact=True)
    assert (tasks_view.route_forecast["simulated_on"] == in_memory.route_forecast["simulated_on"]).all()
    assert tasks_view.route_forecast["fuel_l_per_100km"].notna().any()
    tasks = pd.read_json(work / "tasks.jsonl", lines=True)
    # one task per partition holding the routes' trips (never a whole route in one task)
    with_trips = {key for key in set(tasks.loc[tasks["stage"] == "clean", "key"])
                  if (work / "trips" / f"{key}.parquet").is_file()}
    assert set(tasks.loc[tasks["stage"] == "route energy", "key"]) == with_trips
    assert set(tasks.loc[tasks["stage"] == "route grade", "key"]) == with_trips
