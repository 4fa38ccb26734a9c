"""Forecast building blocks against hand calculations: cost of ownership, CO2, sustained grade,
vehicle classes, ranking rule, best-per-route totals."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from fleetfuel.errors import ConfigError
from fleetfuel.forecast import (
    ForecastConfig,
    annual_figures,
    annualised_capital,
    fleet_ranking,
    route_best,
    savings,
)
from fleetfuel.forecast.energy import RouteEnergy
from fleetfuel.forecast.grade import sustained_grades
from fleetfuel.forecast.mission import route_classes
from fleetfuel.forecast.ranking import QUANTITIES
from fleetfuel.resources import data_dir
from fleetfuel.simulate import load_spec
from fleetfuel.simulate.spec import Cost


def _energy(fuel_l_per_km: float, fuel_kg_per_km: float, grid_kwh_per_km: float = 0.0) -> RouteEnergy:
    return RouteEnergy(fuel_kg_per_km=fuel_kg_per_km, fuel_l_per_km=fuel_l_per_km, grid_kwh_per_km=grid_kwh_per_km,
                       shortfall_share=0.0, worst_shift_kwh=float("nan"), worst_shift_period="",
                       simulated_on="cycles", coverage_share=1.0, simulated_km=100.0)


def test_capital_recovery_factor_matches_interest_tables() -> None:
    # Standard compound-interest tables (any engineering-economics text, e.g. Newnan, Engineering
    # Economic Analysis, Appendix C): A/P at i = 10 %, n = 5 is 0.26380.
    cost = Cost(purchase_price=1000.0, residual_share=0.0, life_years=5.0, maintenance_per_km=0.0)
    assert annualised_capital(cost, 0.10) == pytest.approx(263.80, abs=0.005)
    # Straight line at r = 0: (1000 - 200) / 4 = 200 per year
    assert annualised_capital(Cost(purchase_price=1000.0, residual_share=0.2, life_years=4.0, maintenance_per_km=0.0)) == 200.0


def test_tco_and_co2_of_one_cell_by_hand() -> None:
    # The bundled van_diesel spec: purchase 38 000, residual share 0.3, life 6 a, maintenance 0.05/km.
    spec = load_spec(data_dir("models") / "van_diesel.toml")
    cfg = ForecastConfig(fuel_price_per_l={"diesel": 1.50})
    # 10 L/100 km (0.10 L/km; 0.0832 kg/km at 0.832 kg/L) over 20 000 km by 1.5 vehicles in service
    out = annual_figures(spec, _energy(0.10, 0.0832), annual_km=20_000.0, vehicles_in_service=1.5, cfg=cfg)
    assert out["fuel_l_per_100km"] == pytest.approx(10.0)
    assert out["fuel_l_per_year"] == pytest.approx(2000.0)  # 10 L/100 km x 20 000 km
    assert out["energy_cost_per_year"] == pytest.approx(3000.0)  # 2000 L x 1.50
    # capital: 1.5 x (38 000 - 0.3 x 38 000) / 6 = 1.5 x 4433.33 = 6650; maintenance 0.05 x 20 000 = 1000
    assert out["capital_per_year"] == pytest.approx(6650.0)
    assert out["maintenance_per_year"] == pytest.approx(1000.0)
    assert out["tco_per_year"] == pytest.approx(6650.0 + 1000.0 + 3000.0)
    # CO2 tank to wheel: EPA-420-F-18-008, 10.180 kg per US gallon (3.785411784 L, NIST SP 811)
    # -> 2000 L x 2.68929 kg/L = 5378.6 kg
    assert out["co2_ttw_kg_per_year"] == pytest.approx(2000 * 10.180 / 3.785411784, rel=1e-9)
    # well to tank: 1664 kg x 43.1 MJ/kg (JEC WTW v5, from memory) x 17 g/MJ = 1219.2 kg
    assert out["co2_wtw_kg_per_year"] == pytest.approx(5378.58 + 1664 * 43.1 * 17 / 1000, rel=1e-4)
    assert out["co2_kg_per_year"] == out["co2_wtw_kg_per_year"]


def test_electric_cell_grid_energy_cost_and_co2_by_hand() -> None:
    spec = load_spec(data_dir("models") / "van_electric.toml")
    cfg = ForecastConfig(electricity_price_per_kwh=0.20, grid_co2_kg_per_kwh=0.25)
    out = annual_figures(spec, _energy(0.0, 0.0, grid_kwh_per_km=0.30), annual_km=10_000.0, vehicles_in_service=1.0, cfg=cfg)
    assert out["kwh_per_year"] == pytest.approx(3000.0)  # 30 kWh/100 km x 10 000 km
    assert out["energy_cost_per_year"] == pytest.approx(600.0)  # 3000 kWh x 0.20
    assert out["co2_ttw_kg_per_year"] == 0.0
    assert out["co2_wtw_kg_per_year"] == pytest.approx(750.0)  # 3000 kWh x 0.25 kg/kWh
    assert out["fuel_l_per_year"] == 0.0


def test_currency_mismatch_is_refused() -> None:
    spec = load_spec(data_dir("models") / "van_diesel.toml")  # [cost] currency EUR (default)
    with pytest.raises(ConfigError, match="converts no currencies"):
        annual_figures(spec, _energy(0.1, 0.0832), 1000.0, 1.0, ForecastConfig(currency="GBP"))


def _ramp_samples() -> pd.DataFrame:
    """Trip T1: 500 m flat, 1000 m at 6 % up, 500 m flat; trip T2 (same route): the reverse, all downhill."""
    s = np.arange(0.0, 2001.0, 10.0)
    z = np.clip(s - 500.0, 0.0, 1000.0) * 0.06
    trip = pd.DataFrame({"route": "R", "trip_id": "T1", "distance_m": s, "elevation_m": z})
    back = pd.DataFrame({"route": "R", "trip_id": "T2", "distance_m": s + 5000.0, "elevation_m": z[::-1]})
    flat = pd.DataFrame({"route": "F", "trip_id": "T3", "distance_m": s, "elevation_m": np.full(s.size, 30.0)})
    return pd.concat([trip, back, flat], ignore_index=True)


def test_sustained_grade_by_hand() -> None:
    samples = _ramp_samples()
    before = samples.copy()
    # a 500 m window fits inside the 1000 m ramp: rise 30 m over 500 m = 6 %
    assert sustained_grades(samples, 500.0)["R"] == pytest.approx(0.06, abs=1e-12)
    # a 1500 m window holds the whole 60 m climb: 4 %
    assert sustained_grades(samples, 1500.0)["R"] == pytest.approx(0.04, abs=1e-12)
    assert sustained_grades(samples, 500.0)["F"] == pytest.approx(0.0, abs=1e-12)
    # window longer than every trip: no sustained grade
    assert np.isnan(sustained_grades(samples, 2500.0)["R"])
    pd.testing.assert_frame_equal(samples, before)  # input untouched


def test_route_classes_rules() -> None:
    routes = pd.DataFrame({"route": ["A", "B", "C", "D"],
                           "vehicle_ids": ["VAN-01 VAN-02", "TRK-01", "van-9 X7", "RIG-01 RIG-02 BUS-01"]})
    cfg = ForecastConfig(vehicle_class={"X7": "van"}, route_class={"B": "rigid_truck"})
    table = route_classes(routes, cfg).set_index("route")
    assert table.loc["A", "vehicle_class"] == "van"
    assert table.loc["B", "vehicle_class"] == "rigid_truck"  # the route mapping wins over the id prefix
    assert table.loc["C", "vehicle_class"] == "van"  # prefix is case-insensitive; X7 mapped by id
    assert table.loc["D", "vehicle_class"] == "rigid_truck"  # most vehicles
    assert "mixed" in table.loc["D", "class_source"]
    with pytest.raises(ConfigError, match="no vehicle class for vehicle"):
        route_classes(pd.DataFrame({"route": ["E"], "vehicle_ids": ["phone-7"]}), ForecastConfig())
    assert route_classes(pd.DataFrame({"route": ["E"], "vehicle_ids": ["phone-7"]}),
                         ForecastConfig(default_class="car"))["vehicle_class"].tolist() == ["car"]


def _cells(rows: list[tuple[str, str, float, bool]], has_cost: bool = True) -> pd.DataFrame:
    """A hand-built route x spec table: (route, spec, cost per year, feasible); class van."""
    frame = pd.DataFrame(rows, columns=["route", "spec", "tco_per_year", "feasible"])
    frame["vehicle_class"] = "van"
    frame["spec_name"] = frame["spec"]
    frame["powertrain"] = "combustion"
    frame["has_cost"] = has_cost
    for q in QUANTITIES:
        frame[q] = frame["tco_per_year"] / 2  # any numbers; energy cost is half the TCO here
    frame["annual_km"] = 1000.0
    return frame


HAND_TABLE = [
    ("A", "X", 100.0, True), ("B", "X", 100.0, True), ("C", "X", 100.0, True),
    ("A", "Y", 50.0, True), ("B", "Y", 50.0, True), ("C", "Y", 40.0, False),  # Y cannot serve C
    ("A", "Z", 110.0, True), ("B", "Z", 110.0, True), ("C", "Z", 110.0, True),
]


def test_spec_serving_fewer_routes_ranks_last_despite_lower_sum() -> None:
    ranking = fleet_ranking(_cells(HAND_TABLE)).set_index("spec")
    # Y sums to 100 over the routes it serves, less than X (300) and Z (330), but cannot serve C
    assert ranking.loc["Y", "tco_per_year"] == 100.0
    assert ranking.loc["X", "rank"] == 1 and ranking.loc["Z", "rank"] == 2 and ranking.loc["Y", "rank"] == 3
    assert ranking.loc["Y", "routes_not_served"] == "C"
    assert ranking.loc["X", "routes_not_served"] == ""
    assert set(ranking["ranked_by"]) == {"tco_per_year"}


def test_ranked_by_energy_cost_when_a_spec_lacks_costs() -> None:
    cells = _cells(HAND_TABLE)
    cells.loc[cells["spec"] == "Z", "has_cost"] = False
    assert set(fleet_ranking(cells)["ranked_by"]) == {"energy_cost_per_year"}


def test_best_per_route_and_totals_are_sums_of_route_rows() -> None:
    cells = _cells(HAND_TABLE)
    missions = pd.DataFrame({"route": ["A", "B", "C", "Q"], "vehicle_class": ["van", "van", "van", "car"]})
    best = route_best(cells, missions)
    rows = best.loc[best["level"] == "route"].set_index("route")
    assert rows.loc["A", "spec"] == "Y" and rows.loc["B", "spec"] == "Y"
    assert rows.loc["C", "spec"] == "X"  # Y is cheaper on C but cannot serve it
    assert rows.loc["Q", "spec"] == "" and "no car spec" in rows.loc["Q", "note"]
    van = best.loc[(best["level"] == "class") & (best["vehicle_class"] == "van")].iloc[0]
    assert van["tco_per_year"] == 50 + 50 + 100 == rows.loc[["A", "B", "C"], "tco_per_year"].sum()
    fleet = best.loc[best["level"] == "fleet"].iloc[0]
    assert fleet["tco_per_year"] == van["tco_per_year"] and fleet["routes"] == 3
    assert "1 route(s) without a feasible spec" in fleet["note"]
    saved = savings(fleet_ranking(cells), best, {"van": "Z"}).iloc[0]
    assert saved["best_spec"] == "X" and saved["saving_per_year"] == 330.0 - 300.0
    assert saved["assignment_saving_per_year"] == 330.0 - 200.0
