"""Configuration of the forecast stage: prices, CO2 factors, operating days, payloads, class mapping.

Loaded from the ``[forecast]`` table of the run TOML (``--config``) through
:func:`fleetfuel.config.from_mapping` (unknown keys rejected). Every default below is documented
with its source, or marked as an illustrative default the user should set; the report lists every
value used (:func:`assumptions`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Final

from fleetfuel.constants import FUELS
from fleetfuel.errors import ConfigError

METHODS: Final = ("cycles", "full")
"""How a route is simulated: its weighted representative cycles, or its full logs."""

# Illustrative retail prices (EUR, excluding VAT), common practice, no source: set your own.
DEFAULT_FUEL_PRICES: Final = {"diesel": 1.60, "petrol": 1.75, "cng": 1.40}  # per L (liquid) or per kg (gas)
DEFAULT_ELECTRICITY_PRICE_PER_KWH: Final = 0.25  # depot tariff, common practice, no source

# Well-to-tank uplift on the tank-to-wheel CO2 of each fuel, as a share of it: JEC Well-to-Wheels
# report v5 (2020), WTT about 16 g CO2eq/MJ for fossil diesel and petrol against TTW about 73-74
# g/MJ, and about 13 g/MJ for CNG (EU mix) against 56 g/MJ (from memory).
DEFAULT_WTW_UPLIFT: Final = {"diesel": 0.22, "petrol": 0.22, "cng": 0.23}
WTW_UPLIFT_SOURCE: Final = "JEC Well-to-Wheels report v5 (2020), WTT/TTW ratio (from memory)"
# EEA indicator "Greenhouse gas emission intensity of electricity generation", EU-27 2022:
# about 250 g CO2/kWh generated (from memory).
DEFAULT_GRID_KG_CO2_PER_KWH: Final = 0.25
GRID_SOURCE: Final = "EEA GHG emission intensity of electricity generation, EU-27 2022 (from memory)"

# Vehicle-id prefix -> catalogue vehicle class; fits the invented sample fleet's ids.
DEFAULT_CLASS_BY_PREFIX: Final = {
    "VAN": "van", "CAR": "car", "RIG": "rigid_truck", "TRK": "tractor_trailer", "BUS": "city_bus",
}


@dataclass(frozen=True, slots=True, kw_only=True)
class ForecastConfig:
    """Settings of the per-route forecast and ranking.

    Attributes
    ----------
    fuel_prices : dict of str to float
        Price per litre (liquid fuels) or per kg (gaseous) for each fuel key of
        :data:`fleetfuel.constants.FUELS`. [currency/L or currency/kg] (illustrative defaults)
    electricity_price_per_kwh : float
        Price of grid electricity at the charger. [currency/kWh] (illustrative default)
    currency : str
        Label of the currency of prices and costs.
    grid_kg_co2_per_kwh : float
        Grid CO2 intensity for well-to-wheel of electric specs. [kg/kWh] (EEA EU-27 2022, from memory)
    wtw_uplift : dict of str to float
        Well-to-tank share added to each fuel's tank-to-wheel CO2. [1] (JEC WTW v5, from memory)
    operating_days_per_year : float
        Days a year the fleet operates; 250 = five days a week less public holidays and
        maintenance days, common practice, no source. [d]
    payload_by_route : dict of str to float
        Payload per route (overrides a routes file; else the spec default). [kg]
    electric_reserve_share : float
        Share of usable battery kept in reserve at the end of a shift, common practice, no source. [1]
    current_spec : dict of str to str
        The fleet's current spec per vehicle class (spec name or catalogue file stem).
    class_by_prefix : dict of str to str
        Vehicle-id prefix (case-insensitive, longest match wins) -> vehicle class.
    class_by_route : dict of str to str
        Route -> vehicle class; overrides the vehicles' classes.
    default_vehicle_class : str
        Class of routes whose vehicles match no prefix ("": such routes are left out).
    method : str
        ``cycles`` (weighted representative cycles) or ``full`` (every trip of the route's logs).
    full_below_samples : int
        A route with at most this many samples is simulated on its full logs (the cycles give
        no speed-up there and the full logs are exact).
    grade_window_m : float
        Distance over which a grade counts as sustained: 500 m, about the length of a steep
        motorway or trunk-road ramp, common practice, no source. [m]
    max_shortfall_share : float
        Largest share of driving time a spec may fall short of the trace and still serve the
        route, common practice, no source. [1]
    """

    fuel_prices: dict[str, float] = field(default_factory=lambda: dict(DEFAULT_FUEL_PRICES))
    electricity_price_per_kwh: float = DEFAULT_ELECTRICITY_PRICE_PER_KWH
    currency: str = "EUR"
    grid_kg_co2_per_kwh: float = DEFAULT_GRID_KG_CO2_PER_KWH
    wtw_uplift: dict[str, float] = field(default_factory=lambda: dict(DEFAULT_WTW_UPLIFT))
    operating_days_per_year: float = 250.0
    payload_by_route: dict[str, float] = field(default_factory=dict)
    electric_reserve_share: float = 0.2
    current_spec: dict[str, str] = field(default_factory=dict)
    class_by_prefix: dict[str, str] = field(default_factory=lambda: dict(DEFAULT_CLASS_BY_PREFIX))
    class_by_route: dict[str, str] = field(default_factory=dict)
    default_vehicle_class: str = ""
    method: str = "cycles"
    full_below_samples: int = 5000
    grade_window_m: float = 500.0
    max_shortfall_share: float = 0.02

    def __post_init__(self) -> None:
        for name in ("fuel_prices", "wtw_uplift", "payload_by_route", "current_spec", "class_by_prefix",
                     "class_by_route"):
            if not isinstance(getattr(self, name), Mapping):
                raise ConfigError(f"forecast.{name} must be a table, found {type(getattr(self, name)).__name__}")
        for name in ("fuel_prices", "wtw_uplift"):
            unknown = sorted(set(getattr(self, name)) - set(FUELS))
            if unknown:
                raise ConfigError(f"forecast.{name}: unknown fuel {unknown[0]!r}; known: {', '.join(FUELS)}")
            bad = {k: v for k, v in getattr(self, name).items() if not isinstance(v, int | float) or v < 0}
            if bad:
                raise ConfigError(f"forecast.{name}: expected numbers >= 0, found {bad}")
        missing = sorted(set(FUELS) - set(self.fuel_prices))
        if missing:
            object.__setattr__(self, "fuel_prices", {**DEFAULT_FUEL_PRICES, **self.fuel_prices})
        object.__setattr__(self, "wtw_uplift", {**DEFAULT_WTW_UPLIFT, **self.wtw_uplift})
        bad_payload = {k: v for k, v in self.payload_by_route.items() if not isinstance(v, int | float) or v < 0}
        if bad_payload:
            raise ConfigError(f"forecast.payload_by_route: expected kg >= 0, found {bad_payload}")
        if self.method not in METHODS:
            raise ConfigError(f"forecast.method: unknown method {self.method!r}; choose from {METHODS}")
        if not 0 <= self.electric_reserve_share < 1:
            raise ConfigError(f"forecast.electric_reserve_share must be in [0, 1), found {self.electric_reserve_share}")
        if not 0 <= self.max_shortfall_share <= 1:
            raise ConfigError(f"forecast.max_shortfall_share must be in [0, 1], found {self.max_shortfall_share}")
        for name in ("operating_days_per_year", "grade_window_m"):
            if not getattr(self, name) > 0:
                raise ConfigError(f"forecast.{name} must be > 0, found {getattr(self, name)}")
        if self.electricity_price_per_kwh < 0 or self.grid_kg_co2_per_kwh < 0:
            raise ConfigError("forecast.electricity_price_per_kwh and grid_kg_co2_per_kwh must be >= 0")

    def class_of_vehicle(self, vehicle_id: str) -> str:
        """Vehicle class of ``vehicle_id`` by the longest matching prefix ("" when none matches)."""
        vid = str(vehicle_id).upper()
        hits = [p for p in self.class_by_prefix if vid.startswith(p.upper())]
        if not hits:
            return self.default_vehicle_class
        return self.class_by_prefix[max(hits, key=len)]


def assumptions(cfg: ForecastConfig) -> dict[str, object]:
    """Every setting the forecast used, label -> value, in report order."""
    out: dict[str, object] = {"currency": cfg.currency}
    for fuel, price in sorted(cfg.fuel_prices.items()):
        unit = "L" if FUELS[fuel].liquid else "kg"
        out[f"price of {fuel} [{cfg.currency}/{unit}]"] = price
    out[f"price of electricity [{cfg.currency}/kWh]"] = cfg.electricity_price_per_kwh
    for fuel, props in FUELS.items():
        out[f"CO2 tank-to-wheel of {fuel} [kg/kg]"] = round(props.co2_kg_per_kg, 4)
        out[f"CO2 source of {fuel}"] = props.source
        out[f"well-to-tank uplift of {fuel} [share of TTW]"] = cfg.wtw_uplift[fuel]
    out["well-to-tank uplift source"] = WTW_UPLIFT_SOURCE
    out["grid CO2 intensity [kg/kWh]"] = cfg.grid_kg_co2_per_kwh
    out["grid CO2 intensity source"] = GRID_SOURCE
    out["operating days per year [d]"] = cfg.operating_days_per_year
    out["operating day"] = "a calendar date (UTC) on which the fleet drove; km per operating day = route km / such dates"
    out["electric reserve [share of usable battery]"] = cfg.electric_reserve_share
    out["sustained-grade window [m]"] = cfg.grade_window_m
    out["largest trace shortfall share [1]"] = cfg.max_shortfall_share
    out["simulation method"] = cfg.method
    out["full logs used for routes of at most [samples]"] = cfg.full_below_samples
    out["payload per route [kg]"] = dict(cfg.payload_by_route) or "routes file, else each spec's default payload"
    out["current spec per class"] = dict(cfg.current_spec) or "not given"
    out["vehicle class by id prefix"] = dict(cfg.class_by_prefix)
    out["vehicle class by route"] = dict(cfg.class_by_route) or "none"
    out["total cost of ownership"] = (
        "per year: vehicles x purchase x (1 - residual share) / life years + maintenance per km x km + energy"
    )
    return out
