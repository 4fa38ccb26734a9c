"""The forecast job end to end: the bundled sample fleet through the real pipeline, the CLI verb,
and real car logs (../shared/real_logs; skipped when absent)."""

from __future__ import annotations

import dataclasses
import shutil
import stat
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fleetfuel import pipeline
from fleetfuel.cli import main
from fleetfuel.config import RunConfig
from fleetfuel.demo import demo_config
from fleetfuel.errors import FleetFuelError
from fleetfuel.forecast import (
    BEST_COLUMNS,
    FORECAST_COLUMNS,
    MISSION_COLUMNS,
    RANKING_COLUMNS,
    forecast_fleet,
)
from fleetfuel.resources import data_dir
from fleetfuel.simulate import load_catalogue, load_spec

REPO = Path(__file__).resolve().parents[2]
SHARED = REPO.parent / "shared"
pytestmark = pytest.mark.slow


def _sample_logs() -> Path:
    try:
        folder = data_dir("sample_logs")
    except FleetFuelError:
        pytest.skip("sample_logs/ not found")
    if not (folder / "TRUTH.tab").is_file():
        pytest.skip("sample fleet not built (no TRUTH.tab)")
    return folder


@pytest.fixture(scope="module")
def inputs() -> pipeline.ForecastInputs:
    return pipeline.forecast_inputs([_sample_logs()])


@pytest.fixture(scope="module")
def result(inputs: pipeline.ForecastInputs):  # type: ignore[no-untyped-def]
    return pipeline.run_forecast(inputs, demo_config())


@pytest.fixture(scope="module")
def truth() -> pd.DataFrame:
    return pd.read_csv(_sample_logs() / "TRUTH.tab", sep="\t")


def _routes_of(result, prefix: str) -> list[str]:  # type: ignore[no-untyped-def]
    m = result.missions
    return m.loc[m["vehicle_ids"].str.split().map(lambda ids: all(v.startswith(prefix) for v in ids)), "route"].tolist()


def test_every_table_present(result) -> None:  # type: ignore[no-untyped-def]
    assert list(result.route_forecast.columns) == list(FORECAST_COLUMNS)
    assert list(result.fleet_ranking.columns) == list(RANKING_COLUMNS)
    assert list(result.route_best.columns) == list(BEST_COLUMNS)
    assert list(result.missions.columns) == list(MISSION_COLUMNS)
    assert set(result.route_best["level"]) == {"route", "class", "fleet"}
    assert set(result.savings["vehicle_class"]) == {"van", "rigid_truck", "tractor_trailer", "city_bus", "car"}
    assert not result.duty_mix.empty and result.cycles is not None and result.account is not None
    assert "Operating days per year" in result.assumptions
    assert result.operating_points is not None and result.operating_points["engine_speed_rpm"].size > 0
    # one row per route x competing spec: every route meets every spec of its class
    classes = {spec.source_path.stem: spec.vehicle_class for spec in load_catalogue()}
    per_class = pd.Series(classes).value_counts()
    counts = result.route_forecast.groupby("route").size()
    expected = result.missions.set_index("route")["vehicle_class"].map(per_class)
    pd.testing.assert_series_equal(counts.sort_index(), expected.sort_index(), check_names=False)


def test_route_classes_come_from_the_vehicles(result) -> None:  # type: ignore[no-untyped-def]
    # The sample fleet's ids name their class (sample_logs/README.md): a van route never meets a tractor.
    classes = {spec.source_path.stem: spec.vehicle_class for spec in load_catalogue()}
    rf = result.route_forecast
    assert (rf["spec"].map(classes) == rf["vehicle_class"]).all()
    for prefix, cls in (("VAN", "van"), ("TRK", "tractor_trailer"), ("BUS", "city_bus"), ("RIG", "rigid_truck")):
        routes = _routes_of(result, prefix)
        assert routes
        assert set(rf.loc[rf["route"].isin(routes), "vehicle_class"]) == {cls}
    van_routes = _routes_of(result, "VAN")
    assert not rf.loc[rf["route"].isin(van_routes), "spec"].str.startswith("tractor").any()


def test_consistency_invariants(result) -> None:  # type: ignore[no-untyped-def]
    rf = result.route_forecast
    liquid = rf["fuel_l_per_100km"].notna()
    # L/100 km x km = litres; kWh/100 km x km = kWh
    np.testing.assert_allclose(rf.loc[liquid, "fuel_l_per_100km"] * rf.loc[liquid, "annual_km"] / 100,
                               rf.loc[liquid, "fuel_l_per_year"], rtol=1e-12)
    np.testing.assert_allclose(rf["kwh_per_100km"] * rf["annual_km"] / 100, rf["kwh_per_year"], rtol=1e-12)
    # every figure present on feasible cells; infeasible cells keep their row with a reason
    assert rf.loc[rf["feasible"], ["energy_cost_per_year", "tco_per_year", "co2_kg_per_year"]].notna().all().all()
    assert (rf.loc[~rf["feasible"], "infeasible_reason"].str.len() > 0).all()
    # ranking sums are the sums of the spec's feasible route rows
    for row in result.fleet_ranking.itertuples(index=False):
        own = rf.loc[(rf["spec"] == row.spec) & rf["feasible"]]
        assert row.routes_served == len(own)
        if len(own):
            assert row.fuel_l_per_year == pytest.approx(own["fuel_l_per_year"].sum(), rel=1e-12)
            assert row.kwh_per_year == pytest.approx(own["kwh_per_year"].sum(), rel=1e-12)
            assert row.tco_per_year == pytest.approx(own["tco_per_year"].sum(), rel=1e-12)
    # class and fleet totals of the best-per-route assignment are sums of its route rows
    best = result.route_best
    routes = best.loc[best["level"] == "route"]
    for cls, total in best.loc[best["level"] == "class"].set_index("vehicle_class").iterrows():
        mine = routes.loc[routes["vehicle_class"] == cls]
        for col in ("annual_km", "fuel_l_per_year", "kwh_per_year", "co2_kg_per_year", "energy_cost_per_year", "tco_per_year"):
            assert total[col] == pytest.approx(mine[col].sum(), rel=1e-12)
    fleet = best.loc[best["level"] == "fleet"].iloc[0]
    assert fleet["tco_per_year"] == pytest.approx(routes["tco_per_year"].sum(), rel=1e-12)
    assert fleet["annual_km"] == pytest.approx(best.loc[best["level"] == "class", "annual_km"].sum(), rel=1e-12)
    # a spec that cannot serve every route of its class ranks after every spec that can
    for _, ranking in result.fleet_ranking.groupby("vehicle_class"):
        ordered = ranking.sort_values("rank")["serves_all"].to_numpy()
        assert not np.any(~ordered[:-1] & ordered[1:])


def test_mission_mix_against_generator_truth(result, truth: pd.DataFrame) -> None:  # type: ignore[no-untyped-def]
    # Known truth by construction (fleetfuel.synth, sample_logs/TRUTH.tab): vehicle-days and km per class.
    m = result.missions
    days = int(m["fleet_operating_days"].iloc[0])
    assert days == truth["date"].nunique()  # 5 working days
    class_of = {"van": "van", "rigid_7t5": "rigid_truck", "rigid_18t": "rigid_truck", "tractor_40t": "tractor_trailer",
                "bus_12m": "city_bus", "car": "car"}
    truth = truth.assign(cls=truth["vehicle_class"].map(class_of))
    for cls, rows in truth.groupby("cls"):
        mine = m.loc[m["vehicle_class"] == cls]
        # vehicles in service add up to the class's vehicle-days per observed day
        assert mine["vehicles_in_service"].sum() == pytest.approx(len(rows) / days, rel=1e-12)
        # observed route distance a little below the truth's, by the distance driven during the gaps
        # injected by the generator (DEFECTS.tab "gap": 191 of the 198 km missing fleet-wide; the car's
        # one 13-minute gap is its 7 %): no distance is counted across a break in the logs
        # (fleetfuel.clean), and trips and micro-trips lose none of the rest; never more than 8 %
        assert mine["distance_km"].sum() == pytest.approx(rows["distance_km"].sum(), rel=0.08)
    np.testing.assert_allclose(m["annual_km"], m["distance_km"] / days * 250.0, rtol=1e-12)  # default 250 d/a
    assert (m["payload_source"] == "current spec default").all()  # the demo names every class's current spec


def test_electric_tractor_cannot_do_the_longest_trunk_shift(inputs, result) -> None:  # type: ignore[no-untyped-def]
    # Hand lower bound of the battery energy of the longest 1 Hz trunk shift (a depot-to-depot loop,
    # so net climb and kinetic energy are zero): rolling resistance c_r m g D plus drag
    # 1/2 rho CdA sum(v^3 dt), over the constant drive efficiencies of the spec (driveline 0.95,
    # motor 0.92, discharge 0.96), plus the auxiliary load over the driving time. Braking and
    # regeneration only add to it. Air density 1.20 kg/m^3: ISA (ISO 2533) at 165 m, the highest
    # point of the motorway, is 1.2055, so this understates the drag.
    spec = load_spec(data_dir("models") / "tractor_40t_electric.toml")
    trunk = max(_routes_of(result, "TRK"), key=lambda r: float(result.missions.set_index("route").loc[r, "distance_km"]))
    s = inputs.samples
    rows = s.loc[(s["route"] == trunk).fillna(False) & s["trip_id"].notna() & (s["vehicle_id"] == "TRK-01")]
    bounds = []
    for _, shift in rows.groupby("period_id"):
        distance = cubed = hours = 0.0
        for _, trip in shift.groupby("trip_id"):
            t = (trip["time_utc"] - trip["time_utc"].iloc[0]).dt.total_seconds().to_numpy()
            v = trip["speed_m_s"].to_numpy()
            distance += np.trapezoid(v, t)
            cubed += np.trapezoid(v**3, t)
            hours += (t[-1] - t[0]) / 3600
        mass = spec.body.curb_mass_kg + spec.body.payload_kg  # 18 000 + 19 300 kg
        wheel_j = 0.0062 * mass * 9.80665 * distance + 0.5 * 1.20 * 0.58 * 10.0 * cubed  # c_r, Cd, A from the spec
        bounds.append(wheel_j / 3.6e6 / (0.95 * 0.92 * 0.96) + 4.0 * hours)  # + 4 kW auxiliaries
    usable_after_reserve = 540.0 * (1 - 0.2)  # 540 kWh usable, 20 % reserve = 432 kWh
    assert max(bounds) > usable_after_reserve  # ~480 kWh: certain by the hand bound
    cell = result.route_forecast.set_index(["route", "spec"]).loc[(trunk, "tractor_40t_electric")]
    assert not cell["feasible"]
    assert "worst shift needs" in cell["infeasible_reason"]
    assert cell["worst_shift_kwh"] >= max(bounds) * 0.95  # the model's estimate is no less than the bound (5 % slack)
    ranking = result.fleet_ranking.set_index("spec")
    assert not ranking.loc["tractor_40t_electric", "serves_all"]
    assert ranking.loc["tractor_40t_electric", "rank"] == ranking["rank"][ranking["vehicle_class"] == "tractor_trailer"].max()


def test_payload_beyond_legal_gross_mass_is_infeasible(inputs) -> None:  # type: ignore[no-untyped-def]
    # 9 000 kg on the regional routes: max payload = legal gross - curb (models/*.toml):
    # 7.5 t: 7490 - 4500 = 2990 kg; 18 t electric: 18000 - 9800 = 8200 kg (both too small);
    # 18 t diesel 170 kW: 18000 - 8300 = 9700 kg and 235 kW: 18000 - 8500 = 9500 kg (both fit).
    base = pipeline.run_forecast(inputs, RunConfig())
    regional = [r for r in _routes_of(base, "RIG")]
    cfg = dataclasses.replace(RunConfig().forecast, payload_kg=dict.fromkeys(regional, 9000.0))
    routes, microtrips = inputs.routes.copy(), inputs.cycles.microtrips.copy()
    columns, digest = list(inputs.samples.columns), pd.util.hash_pandas_object(inputs.samples[["route", "speed_m_s", "grade"]]).sum()
    out = forecast_fleet(inputs.samples, inputs.routes, inputs.cycles, load_catalogue(), cfg)
    # the stage never modifies its inputs
    pd.testing.assert_frame_equal(inputs.routes, routes)
    pd.testing.assert_frame_equal(inputs.cycles.microtrips, microtrips)
    assert list(inputs.samples.columns) == columns
    assert pd.util.hash_pandas_object(inputs.samples[["route", "speed_m_s", "grade"]]).sum() == digest
    rf = out.route_forecast.loc[out.route_forecast["route"].isin(regional)].set_index(["route", "spec"])
    for route in regional:
        assert "above the legal maximum of 2990 kg" in rf.loc[(route, "rigid_7t5_diesel"), "infeasible_reason"]
        assert "above the legal maximum of 8200 kg" in rf.loc[(route, "rigid_18t_electric"), "infeasible_reason"]
        for ok in ("rigid_18t_diesel_170kw", "rigid_18t_diesel_235kw"):
            assert "payload" not in rf.loc[(route, ok), "infeasible_reason"]
            assert rf.loc[(route, ok), "payload_kg"] == 9000.0
    assert (out.missions.set_index("route").loc[regional, "payload_source"] == "config").all()


def test_full_logs_agree_with_the_cycles(inputs, result) -> None:  # type: ignore[no-untyped-def]
    # Hand-off check of the cycles stage: the weighted representative cycles predict each route's
    # consumption within 10 % of simulating its own logs (our goal; issue 4 asks 5 % for the reference spec).
    full = pipeline.run_forecast(inputs, demo_config(), full=True)
    simulated = full.route_forecast["payload_kg"] <= full.route_forecast["max_payload_kg"]  # others not simulated
    assert set(full.route_forecast.loc[simulated, "simulated_on"]) == {"logs"}
    a = result.route_forecast.set_index(["route", "spec"])
    b = full.route_forecast.set_index(["route", "spec"])
    fuel = a["fuel_kg_per_100km"] > 0
    np.testing.assert_allclose(a.loc[fuel, "fuel_kg_per_100km"], b.loc[fuel[fuel].index, "fuel_kg_per_100km"], rtol=0.10)
    grid = a["kwh_per_100km"] > 0
    np.testing.assert_allclose(a.loc[grid, "kwh_per_100km"], b.loc[grid[grid].index, "kwh_per_100km"], rtol=0.10)


def test_cli_forecast_writes_outputs_and_never_beside_read_only_inputs(tmp_path: Path) -> None:
    logs = tmp_path / "logs"
    shutil.copytree(_sample_logs() / "phone_gpx", logs)  # the pool car's three days (our own demo data)
    before = sorted(p.relative_to(logs) for p in logs.rglob("*"))
    for p in [logs, *logs.rglob("*")]:
        p.chmod(p.stat().st_mode & ~(stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH))
    config = tmp_path / "run.toml"
    config.write_text('[forecast]\ncurrency = "EUR"\n[forecast.current_spec]\ncar = "car_petrol"\n', encoding="utf-8")
    out = tmp_path / "out"
    try:
        assert main(["forecast", str(logs), "--out", str(out), "--config", str(config), "--quiet"]) == 0
        assert main(["forecast", str(logs), "--out", str(tmp_path / "full"), "--full", "--quiet",
                     "--work", str(tmp_path / "work")]) == 0
    finally:
        for p in [logs, *logs.rglob("*")]:
            p.chmod(p.stat().st_mode | stat.S_IWUSR)
    for name in ("route_forecast.csv", "route_forecast.parquet", "fleet_ranking.csv", "route_forecast.xlsx", "report.html"):
        assert (out / name).is_file(), name
    assert sorted(p.relative_to(logs) for p in logs.rglob("*")) == before
    assert (out / ".work" / "missions.parquet").is_file()  # default work folder: hidden, inside --out
    assert (tmp_path / "work" / "missions.parquet").is_file() and not (tmp_path / "full" / ".work").exists()  # --work
    assert pd.read_csv(tmp_path / "full" / "route_forecast.csv")["simulated_on"].eq("logs").all()  # --full
    table = pd.read_csv(out / "route_forecast.csv")
    assert set(table["vehicle_class"]) == {"car"}
    assert main(["forecast", str(logs), "--out", str(tmp_path / "bad"), "--config", str(tmp_path / "missing.toml")]) == 2


CAR_LOGS = ("ndsbr", "kit_obd2")


@pytest.mark.real_logs
@pytest.mark.parametrize("folder", CAR_LOGS)
def test_real_car_logs_give_car_consumption(folder: str) -> None:
    path = SHARED / "real_logs" / folder
    if not path.is_dir():
        pytest.skip(f"{path} absent")
    # ndsbr: naturalistic 1 Hz car logs (Curitiba); kit_obd2: the KIT automotive OBD-II dataset.
    # Their vehicle ids are file names, so the class comes from the config.
    cfg = RunConfig()
    cfg = dataclasses.replace(cfg, forecast=dataclasses.replace(cfg.forecast, default_class="car", class_prefixes={}))
    out = pipeline.forecast_paths([path], cfg)
    rf = out.route_forecast
    assert set(rf["spec"]) == {"car_petrol", "car_electric"}
    petrol = rf.loc[rf["spec"] == "car_petrol", "fuel_l_per_100km"]
    assert petrol.notna().all()
    assert petrol.between(4.0, 10.0).all()  # the usual car band, common practice, no source
