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
