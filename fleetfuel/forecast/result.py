"""The forecast's frozen result and the list of assumptions it was made under."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import pandas as pd

from fleetfuel.constants import FUELS
from fleetfuel.forecast.config import ForecastConfig

if TYPE_CHECKING:
    from fleetfuel.cycles import CycleSet


@dataclass(frozen=True, slots=True)
class ForecastResult:
    """Everything ``fleetfuel forecast`` reports (tables described in :mod:`fleetfuel.forecast`).

    Attributes
    ----------
    route_forecast : DataFrame
        One row per route x competing spec (:data:`fleetfuel.forecast.run.FORECAST_COLUMNS`).
    fleet_ranking : DataFrame
        (a) one spec per class (:data:`fleetfuel.forecast.ranking.RANKING_COLUMNS`).
    route_best : DataFrame
        (b) best feasible spec per route, class and fleet totals (:data:`~fleetfuel.forecast.ranking.BEST_COLUMNS`).
    savings : DataFrame
        (c) against the current spec per class (:data:`~fleetfuel.forecast.ranking.SAVINGS_COLUMNS`; may be empty).
    missions : DataFrame
        Mission mix per route (:data:`fleetfuel.forecast.mission.MISSION_COLUMNS`).
    duty_mix : DataFrame
        Route x duty type shares, long form (:func:`fleetfuel.forecast.mission.duty_mix_table`).
    operating_points : dict or None
        The winning combustion spec on its fuel map: ``spec``, ``vehicle_class``, arrays
        ``engine_speed_rpm`` [rpm] and ``torque_nm`` [N m] of its steps in gear under positive torque on the class's
        cycles, and the map ``map_speed_rpm`` (n,), ``map_torque_nm`` (m,), ``map_fuel_g_s`` (m, n)
        [g/s], NaN above the full-load curve. None when no combustion spec competes.
    assumptions : dict of str to str
        Label -> value and where it comes from (config, or the default and its source), in order.
    cycles : CycleSet or None
        The cycles stage's result (types, cycles, weights) for the report; None when the logs
        were too few to form duty types (every route simulated on its own logs).
    account : DataFrame or None
        The ingest data-quality account (one row per input file).
    routes : DataFrame
        The segment stage's route table.
    config : ForecastConfig
    currency : str
    failures : tuple of (str, str)
        Input files that could not be read: (path, one-line error); they are in ``account`` too.
    """

    route_forecast: pd.DataFrame
    fleet_ranking: pd.DataFrame
    route_best: pd.DataFrame
    savings: pd.DataFrame
    missions: pd.DataFrame
    duty_mix: pd.DataFrame
    operating_points: dict[str, object] | None
    assumptions: dict[str, str]
    cycles: CycleSet | None
    account: pd.DataFrame | None
    routes: pd.DataFrame
    config: ForecastConfig
    currency: str
    failures: tuple[tuple[str, str], ...] = ()


def _origin(cfg: ForecastConfig, name: str, source: str, key: str | None = None) -> str:
    """``"config"`` when the field (or its entry ``key``) differs from its default, else ``"default: <source>"``."""
    value = getattr(ForecastConfig(), name)
    given = getattr(cfg, name)
    if key is not None:
        value, given = value.get(key), given.get(key)
    return "config" if given != value else f"default: {source}"


def assumption_list(cfg: ForecastConfig, missions: pd.DataFrame, full: bool, catalogue: str) -> dict[str, str]:
    """Every assumption and default the forecast used, with its origin, in reading order."""
    cur = cfg.currency
    out: dict[str, str] = {"Currency": f"{cur}; prices are for a business buyer: duties in, VAT out"}
    src = "EU Weekly Oil Bulletin 2024 less VAT, from memory; illustrative"
    for fuel, price in cfg.fuel_price_per_l.items():
        out[f"Price of {fuel}"] = f"{price:g} {cur}/L ({_origin(cfg, 'fuel_price_per_l', src, fuel)})"
    for fuel, price in cfg.fuel_price_per_kg.items():
        out[f"Price of {fuel}"] = f"{price:g} {cur}/kg ({_origin(cfg, 'fuel_price_per_kg', 'common practice, no source', fuel)})"
    out["Price of electricity"] = (f"{cfg.electricity_price_per_kwh:g} {cur}/kWh from the grid ("
                                   f"{_origin(cfg, 'electricity_price_per_kwh', 'Eurostat nrg_pc_205, EU-27 2024-S1 band ID excl. VAT, from memory')})")
    for props in FUELS.values():
        factor = cfg.ttw_co2_kg_per_kg.get(props.name, props.co2_kg_per_kg)
        out[f"CO2 tank to wheel, {props.name}"] = (f"{factor:.3f} kg/kg "
                                                   f"({_origin(cfg, 'ttw_co2_kg_per_kg', props.source, props.name)})")
    for fuel, g in cfg.wtt_co2_g_per_mj.items():
        out[f"CO2 well to tank, {fuel}"] = f"{g:g} g/MJ ({_origin(cfg, 'wtt_co2_g_per_mj', 'JEC WTW v5 (2020), from memory', fuel)})"
    out["CO2 of grid electricity"] = (f"{cfg.grid_co2_kg_per_kwh:g} kg/kWh ("
                                      f"{_origin(cfg, 'grid_co2_kg_per_kwh', 'EEA, EU-27 generation 2023, from memory')})")
    out["CO2 per year column"] = "co2_kg_per_year is well to wheel (fuel production, combustion, grid generation)"
    days = int(missions["fleet_operating_days"].max()) if len(missions) else 0
    out["Operating days per year"] = (f"{cfg.operating_days_per_year:g} ("
                                      f"{_origin(cfg, 'operating_days_per_year', '5 days x 52 weeks less ~10 holidays, common practice')})")
    out["Observed fleet operating days"] = f"{days} (distinct UTC dates on which a shift starts)"
    out["Annual distance"] = ("planned value (config, then routes file) where given, else the route's km per fleet "
                              "operating day x operating days per year; sources per route in the mission table")
    counts = missions["payload_source"].value_counts().to_dict() if len(missions) else {}
    out["Payload"] = ("per route from config, then routes file, then the class's current spec's default payload, "
                      "else each spec's own default payload; routes: "
                      + ", ".join(f"{k} {v}" for k, v in sorted(counts.items())))
    out["Vehicle class of a route"] = ("route_class, else the class of its vehicles (vehicle_class, else id prefix "
                                       + ", ".join(f"{p}->{c}" for p, c in cfg.class_prefixes.items())
                                       + (f", else {cfg.default_class}" if cfg.default_class else "") + ")")
    out["Simulated on"] = ("every route on its own logs (asked for with --full, or too little driving to form duty types)" if full else
                           "the duty types' representative cycles, weighted by the route's distance shares; routes "
                           "with less driving than their cycles, on their own logs")
    out["Shift"] = ("an operating period (driving between rests of 4 h or more); electric specs start each shift at "
                    "their initial state of charge and do not charge during it")
    out["Electric range reserve"] = (f"{cfg.electric_reserve_share:.0%} of the usable battery ("
                                     f"{_origin(cfg, 'electric_reserve_share', 'common practice, no source')})")
    out["Largest trace shortfall"] = (f"{cfg.max_shortfall_share:.0%} of driving time ("
                                      f"{_origin(cfg, 'max_shortfall_share', 'common practice, no source')})")
    out["Sustained grade"] = (f"mean grade over {cfg.grade_window_m:g} m of road, uphill ("
                              f"{_origin(cfg, 'grade_window_m', 'our choice, no source')})")
    out["Startability and gradeability"] = "model envelope on dry asphalt at the route's payload (estimates)"
    out["Purchase cost per year"] = (f"purchase less residual value over the spec's life, discount rate {cfg.discount_rate:g} "
                                     f"({_origin(cfg, 'discount_rate', 'straight line')}), times the route's vehicles in service")
    out["Vehicles in service"] = "shifts on the route per fleet operating day (a vehicle shared between routes is split)"
    out["Spec catalogue"] = catalogue
    out["Caution"] = ("estimates, not guarantees: check payload and legal masses, gradeability, braking and range "
                      "reserves with the maker and local regulations, signed off by licensed practice")
    return out
