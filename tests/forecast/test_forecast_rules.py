"""Forecast rules on small hand-made tables: mission mix (annual km, payload and their sources),
when a route is simulated on its own logs, the feasibility checks, gaseous fuels by the kg."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

from fleetfuel.forecast import ForecastConfig, annual_figures, mission_table
from fleetfuel.forecast.energy import RouteEnergy
from fleetfuel.forecast.feasibility import check_cell
from fleetfuel.forecast.run import _use_logs
from fleetfuel.resources import data_dir
from fleetfuel.simulate import load_spec
from fleetfuel.simulate.envelope import Envelope

NAN = float("nan")


def _microtrip(route: str, period: str, day: int, km: float, hours: float, kind: str = "T1") -> dict[str, object]:
    start = pd.Timestamp("2025-03-10 07:00", tz="UTC") + pd.Timedelta(days=day)
    return {"route": route, "period_id": period, "type": kind, "distance_m": km * 1000.0, "duration_s": hours * 3600.0,
            "start_utc": start}


def _mission_inputs() -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Three routes over two fleet operating days (known truth by construction).

    A: vans, two shifts (60 km on day 0 in two micro-trips, 40 km on day 1); B: vans, one shift of
    50 km, payload and planned km from the routes file; C: rigid trucks, one shift of 200 km.
    """
    routes = pd.DataFrame({
        "route": ["A", "B", "C"], "vehicle_ids": ["VAN-01", "VAN-02", "RIG-01"], "vehicles": [1, 1, 1],
        "trips": [3, 1, 1], "distance_km": [100.0, 50.0, 200.0], "duration_h": [3.0, 1.0, 3.0],
        "payload_kg": [NAN, 300.0, NAN], "planned_annual_km": [NAN, 9000.0, NAN],
    })
    microtrips = pd.DataFrame([
        _microtrip("A", "P1", 0, 40.0, 1.0), _microtrip("A", "P1", 0, 20.0, 0.5, "T2"), _microtrip("A", "P2", 1, 40.0, 1.5),
        _microtrip("B", "P3", 0, 50.0, 1.0), _microtrip("C", "P4", 1, 200.0, 3.0),
    ])
    weights = pd.DataFrame({"level": ["route", "route"], "key": ["A", "A"], "type": ["T1", "T2"],
                            "distance_share": [0.8, 0.2], "time_share": [0.8, 0.2]})
    return routes, microtrips, weights


def test_mission_mix_annual_km_and_payload_rules() -> None:
    routes, microtrips, weights = _mission_inputs()
    cfg = ForecastConfig(planned_annual_km={"C": 12_000.0}, payload_kg={"A": 500.0}, operating_days_per_year=200.0)
    before = routes.copy()
    m = mission_table(routes, microtrips, pd.Series(dtype=float), weights, pd.Series({"T1": "urban", "T2": "stop-go"}), cfg,
                      {"van": 700.0}).set_index("route")
    pd.testing.assert_frame_equal(routes, before)  # input untouched
    assert (m["fleet_operating_days"] == 2).all()  # two distinct dates on which a shift starts
    # A: observed 100 km over 2 fleet days = 50 km/day x 200 d = 10 000 km; payload from the config
    assert m.loc["A", "km_per_operating_day"] == 50.0
    assert m.loc["A", "annual_km"] == 10_000.0 and m.loc["A", "annual_km_source"] == "observed"
    assert m.loc["A", "payload_kg"] == 500.0 and m.loc["A", "payload_source"] == "config"
    # B: the routes file's planned km and payload; C: the config's planned km, no payload anywhere
    assert m.loc["B", "annual_km"] == 9000.0 and m.loc["B", "annual_km_source"] == "routes file"
    assert m.loc["B", "payload_kg"] == 300.0 and m.loc["B", "payload_source"] == "routes file"
    assert m.loc["C", "annual_km"] == 12_000.0 and m.loc["C", "annual_km_source"] == "config"
    assert np.isnan(m.loc["C", "payload_kg"]) and m.loc["C", "payload_source"] == "spec default"
    # shifts: A has two, on two days; its longest is P1 with 60 km in 1.5 h
    assert m.loc["A", "operating_periods"] == 2 and m.loc["A", "operating_days"] == 2 and m.loc["A", "trips"] == 3
    assert m.loc["A", "longest_shift_km"] == 60.0 and m.loc["A", "longest_shift_h"] == 1.5
    assert m.loc["A", "longest_shift_period"] == "P1"
    assert m.loc["A", "vehicles_in_service"] == 1.0 and m.loc["B", "vehicles_in_service"] == 0.5  # shifts per day
    assert m.loc["A", "duty_mix"] == "T1 urban 80 %, T2 stop-go 20 %"
    assert m.loc["A", "vehicle_class"] == "van" and m.loc["C", "vehicle_class"] == "rigid_truck"
    # the current spec's payload applies to its class only when nothing closer is given
    m2 = mission_table(routes, microtrips, pd.Series(dtype=float), weights, pd.Series(dtype=str), ForecastConfig(),
                       {"van": 700.0}).set_index("route")
    assert m2.loc["A", "payload_kg"] == 700.0 and m2.loc["A", "payload_source"] == "current spec default"


def test_small_routes_and_uncovered_routes_are_simulated_on_their_logs() -> None:
    cycles = {"T1": pd.DataFrame({"time_s": np.arange(0.0, 601.0)})}  # a 600 s representative cycle
    mix = pd.DataFrame({"distance_share": [1.0], "time_share": [1.0]}, index=pd.Index(["T1"], name="type"))
    assert _use_logs(False, mix, cycles, driving_h=0.1)  # 360 s of driving, shorter than its cycle
    assert not _use_logs(False, mix, cycles, driving_h=1.0)  # 3600 s: the cycles stand for it
    assert _use_logs(True, mix, cycles, driving_h=1.0)  # --full
    other = pd.DataFrame({"distance_share": [1.0], "time_share": [1.0]}, index=pd.Index(["T9"], name="type"))
    assert _use_logs(False, other, cycles, driving_h=1.0)  # no cycle of its type


def _energy(shortfall: float, worst_kwh: float) -> RouteEnergy:
    return RouteEnergy(fuel_kg_per_km=0.0, fuel_l_per_km=0.0, grid_kwh_per_km=0.3, shortfall_share=shortfall,
                       worst_shift_kwh=worst_kwh, worst_shift_period="P7", simulated_on="cycles", coverage_share=1.0,
                       simulated_km=100.0)


def _envelope(startability_pct: float, gradeability_pct: dict[float, float | None]) -> Envelope:
    return Envelope(spec_name="x", payload_kg=0.0, test_mass_kg=3000.0, top_speed_kmh=120.0, top_speed_limit="power",
                    gradeability_pct=gradeability_pct, startability_pct=startability_pct, startability_wet_pct=5.0,
                    startability_limit="adhesion", accel_s={}, ballpark_top_speed_kmh=120.0)


def test_feasibility_checks_by_hand() -> None:
    spec = load_spec(data_dir("models") / "van_electric.toml")
    cfg = ForecastConfig(electric_reserve_share=0.2, max_shortfall_share=0.02)
    usable = spec.battery.usable_kwh
    envelope = _envelope(10.0, {10.0: 8.0, 40.0: 3.0, 80.0: None})  # starts on 10 %, holds 8 % at 10 km/h
    assert check_cell(spec, _energy(0.01, 0.5 * usable), envelope, 0.05, cfg) == []
    assert check_cell(spec, _energy(0.01, 0.5 * usable), envelope, NAN, cfg) == []  # grade unknown: not checked
    # 9 %: it can start (10 %) but not hold it (8 %)
    (reason,) = check_cell(spec, _energy(0.01, 0.5 * usable), envelope, 0.09, cfg)
    assert reason == "cannot hold the steepest sustained grade of 9.0 % (gradeability 8.0 %)"
    # every check failing at once: shortfall 5 % > 2 %; 12 % above startability and gradeability;
    # worst shift 90 % of the usable battery > 80 % left after the 20 % reserve
    reasons = check_cell(spec, _energy(0.05, 0.9 * usable), envelope, 0.12, cfg)
    assert len(reasons) == 4
    assert reasons[0] == "cannot follow the route's driving for 5.0 % of the time (limit 2 %)"
    assert reasons[1] == "cannot start on the steepest sustained grade of 12.0 % (startability 10.0 %)"
    assert reasons[2].startswith("cannot hold the steepest sustained grade of 12.0 %")
    assert reasons[3].startswith(f"worst shift needs {0.9 * usable:.0f} kWh, more than the {0.8 * usable:.0f} kWh")
    assert "(P7)" in reasons[3]
    # exactly at the limit is still feasible (the limits are inclusive)
    assert check_cell(spec, _energy(0.02, 0.8 * usable), envelope, 0.08, cfg) == []
    # a combustion spec has no range check
    diesel = load_spec(data_dir("models") / "van_diesel.toml")
    assert check_cell(diesel, _energy(0.0, NAN), envelope, 0.05, cfg) == []


def test_gaseous_fuel_is_counted_and_priced_by_the_kg() -> None:
    # A CNG variant of the bundled diesel van: 8 kg/100 km over 10 000 km.
    base = load_spec(data_dir("models") / "van_diesel.toml")
    spec = dataclasses.replace(base, engine=dataclasses.replace(base.engine, fuel="cng"))
    cfg = ForecastConfig(fuel_price_per_kg={"cng": 1.30}, wtt_co2_g_per_mj={"cng": 13.0})
    energy = RouteEnergy(fuel_kg_per_km=0.08, fuel_l_per_km=NAN, grid_kwh_per_km=0.0, shortfall_share=0.0,
                         worst_shift_kwh=NAN, worst_shift_period="", simulated_on="cycles", coverage_share=1.0,
                         simulated_km=100.0)
    out = annual_figures(spec, energy, annual_km=10_000.0, vehicles_in_service=1.0, cfg=cfg)
    assert np.isnan(out["fuel_l_per_100km"]) and np.isnan(out["fuel_l_per_year"])  # no litres of a gas
    assert out["fuel_kg_per_100km"] == pytest.approx(8.0)
    assert out["fuel_kg_per_year"] == pytest.approx(800.0)
    assert out["energy_cost_per_year"] == pytest.approx(800.0 * 1.30)  # priced per kg
    # tank to wheel 2.54 kg CO2/kg (JEC WTW v5 CNG EU mix, from memory), below pure methane's
    # stoichiometric 44.009 / 16.043 = 2.743 kg/kg (IUPAC standard atomic weights)
    assert out["co2_ttw_kg_per_year"] == pytest.approx(800.0 * 2.54, rel=1e-12)
    assert out["co2_ttw_kg_per_year"] < 800.0 * 44.009 / 16.043
    # well to tank: 800 kg x 45.1 MJ/kg x 13 g/MJ = 469.04 kg
    assert out["co2_wtw_kg_per_year"] - out["co2_ttw_kg_per_year"] == pytest.approx(800 * 45.1 * 13 / 1000, rel=1e-9)
