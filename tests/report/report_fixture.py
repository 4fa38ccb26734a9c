"""A small hand-made forecast result with the contract's columns (fleetfuel/forecast contract, issue 5).

Synthetic, known truth: litres per year are built as L/100 km x km / 100 so tables stay consistent.
Route and spec names hold formula-looking and HTML-looking text on purpose.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import SimpleNamespace
from typing import Any

import numpy as np
import pandas as pd

EVIL_ROUTE = "=HYPERLINK(\"x\",\"y\")"
HTML_ROUTE = "<script>alert(1)</script> depot"
PLAIN_ROUTE = "north loop"


@dataclass(frozen=True, slots=True, kw_only=True)
class FakeForecast:
    route_forecast: pd.DataFrame
    fleet_ranking: pd.DataFrame
    route_best: pd.DataFrame
    savings: pd.DataFrame
    missions: pd.DataFrame
    assumptions: dict[str, Any]
    duty_mix: pd.DataFrame
    cycles_result: Any = None
    account: pd.DataFrame | None = None
    operating_points: dict[str, Any] | None = None
    currency: str = "EUR"
    extra: dict[str, Any] = field(default_factory=dict)


def _route_forecast() -> pd.DataFrame:
    rows = [
        # route, class, spec, km/year, L/100 km, kWh/year, energy cost, tco, feasible, reason
        (PLAIN_ROUTE, "van", "van_diesel", 30000.0, 8.5, 0.0, 4335.0, 9000.0, True, None),
        (PLAIN_ROUTE, "van", "-van electric", 30000.0, np.nan, 6600.0, 1650.0, 8000.0, True, None),
        (EVIL_ROUTE, "van", "van_diesel", 60000.0, 7.9, 0.0, 8058.0, 14000.0, True, None),
        (EVIL_ROUTE, "van", "-van electric", 60000.0, np.nan, 13800.0, 3450.0, 12500.0, False,
         "@worst shift needs 95 kWh, usable 60 kWh with reserve"),
        (HTML_ROUTE, "truck", "truck_diesel", 90000.0, 31.0, 0.0, 47430.0, 80000.0, True, None),
        (HTML_ROUTE, "truck", "truck_gas", 90000.0, np.nan, 0.0, 40000.0, 83000.0, True, None),
    ]
    frame = pd.DataFrame(
        rows,
        columns=["route", "vehicle_class", "spec", "annual_km", "fuel_l_per_100km", "kwh_per_year",
                 "energy_cost_per_year", "tco_per_year", "feasible", "infeasible_reason"],
    )
    frame["fuel_l_per_year"] = frame["fuel_l_per_100km"] * frame["annual_km"] / 100.0
    frame["kwh_per_100km"] = frame["kwh_per_year"] / frame["annual_km"] * 100.0
    # tank-to-wheel diesel 2.64 kg/L is a common practice figure (from memory); electric 0 at the wheel
    frame["co2_kg_per_year"] = frame["fuel_l_per_year"].fillna(0.0) * 2.64
    frame["co2_wtw_kg_per_year"] = frame["co2_kg_per_year"] * 1.2
    frame["route"] = frame["route"].astype("string")
    frame["infeasible_reason"] = frame["infeasible_reason"].astype("string")
    return frame.iloc[::-1].reset_index(drop=True)  # unsorted on purpose


def _fleet_ranking() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "vehicle_class": ["van", "truck", "van", "truck"],
            "rank": [2, 1, 1, 2],
            "spec": ["-van electric", "truck_diesel", "van_diesel", "truck_gas"],
            "ranked_by": ["tco_per_year"] * 4,
            "tco_per_year": [20500.0, 80000.0, 23000.0, 83000.0],
            "energy_cost_per_year": [5100.0, 47430.0, 12393.0, 40000.0],
            "fuel_l_per_year": [0.0, 27900.0, 7290.0, 0.0],
            "kwh_per_year": [20400.0, 0.0, 0.0, 0.0],
            "co2_kg_per_year": [0.0, 73656.0, 19245.6, 60000.0],
            "routes_not_served": [[EVIL_ROUTE], [], [], []],
        }
    )


def _cycle(seconds: int, top_m_s: float) -> pd.DataFrame:
    time_s = np.arange(seconds, dtype=float)
    speed = top_m_s * np.sin(np.pi * time_s / (seconds - 1)) ** 2
    return pd.DataFrame({"time_s": time_s, "speed_m_s": speed, "grade": 0.0})


def _account() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "path": ["logs/a.csv", "logs/b.gpx"],
            "vehicle_ids": [["V1"], ["V2"]],
            "rows_in": [100, 50],
            "rows_kept": [98, 0],
            "rows_interpolated": [3, 0],
            "dropped": [{"duplicate_row": 2}, {"time_missing": 50}],
            "error": [None, "<b>no times</b>"],
            "distance_km": [12.5, np.nan],
            "flags": [[], ["no_time"]],
        }
    )


def _operating_points() -> dict[str, Any]:
    speed = np.linspace(800.0, 2200.0, 15)
    torque = np.linspace(0.0, 2000.0, 11)
    grid_speed, grid_torque = np.meshgrid(speed, torque)
    fuel = 1e-3 * grid_speed * (1.0 + grid_torque / 400.0)
    rng = np.random.default_rng(5)
    return {
        "spec": "truck_diesel",
        "engine_speed_rpm": rng.uniform(900.0, 1800.0, 200),
        "torque_nm": rng.uniform(100.0, 1800.0, 200),
        "map_speed_rpm": speed,
        "map_torque_nm": torque,
        "map_fuel_g_s": fuel,
    }


def make_result() -> FakeForecast:
    """The fixture result (a fresh copy each call)."""
    duty_mix = pd.DataFrame(
        {
            "route": [PLAIN_ROUTE, PLAIN_ROUTE, EVIL_ROUTE, HTML_ROUTE],
            "type": ["A", "B", "B", "B"],
            "distance_share": [0.7, 0.3, 1.0, 1.0],
        }
    )
    cycles = SimpleNamespace(
        cycles=SimpleNamespace(
            cycles={"A": _cycle(120, 12.0), "B": _cycle(300, 25.0)},
            types=pd.DataFrame({"type": ["A", "B"], "label": ["urban", "motorway"]}),
        )
    )
    return FakeForecast(
        route_forecast=_route_forecast(),
        fleet_ranking=_fleet_ranking(),
        route_best=pd.DataFrame({"route": [PLAIN_ROUTE], "spec": ["-van electric"], "tco_per_year": [8000.0]}),
        savings=pd.DataFrame({"vehicle_class": ["van"], "current_spec": ["van_diesel"], "saving_per_year": [2500.0]}),
        missions=pd.DataFrame({"route": [PLAIN_ROUTE], "km_per_day": [120.0], "payload_kg": [600.0]}),
        assumptions={
            "diesel price [EUR/L]": 1.70,
            "operating days per year": 250,
            "currency": "EUR",
            "+grid intensity [kg/kWh]": 0.35,
        },
        duty_mix=duty_mix,
        cycles_result=cycles,
        account=_account(),
        operating_points=_operating_points(),
    )

