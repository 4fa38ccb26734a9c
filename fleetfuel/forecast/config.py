"""Configuration of the forecast stage: :class:`ForecastConfig`.

Loaded from the ``[forecast]`` table of a run TOML (:mod:`fleetfuel.config`): keys equal to the
field names, unknown keys rejected. Mapping fields are TOML sub-tables, e.g.::

    [forecast]
    currency = "EUR"
    electricity_price_per_kwh = 0.22
    operating_days_per_year = 240

    [forecast.fuel_price_per_l]
    diesel = 1.38

    [forecast.payload_kg]          # route -> payload [kg]
    R03 = 6000

    [forecast.current_spec]        # vehicle class -> spec id (file stem of the catalogue)
    van = "van_diesel"

Every default is documented beside it with its source; the defaults used in a run are listed in
:attr:`fleetfuel.forecast.ForecastResult.assumptions`. Money is in ``currency`` (no conversion);
prices are for a business buyer: duties included, VAT excluded (it is reclaimed). Sources marked
"from memory" were not re-read while writing; check them before citing.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, fields
from typing import Final

from fleetfuel.constants import FUELS
from fleetfuel.errors import ConfigError
from fleetfuel.simulate.spec_parts import VEHICLE_CLASSES

# --- documented defaults ------------------------------------------------------------------------
# Business prices, duties in, VAT out: EU Weekly Oil Bulletin 2024 averages of about 1.65 EUR/L
# diesel and 1.75 EUR/L petrol at the pump, less ~20 % VAT (from memory); illustrative, set your own.
DEFAULT_FUEL_PRICE_PER_L: Final = {"diesel": 1.38, "petrol": 1.46}
# CNG at the pump, about 1.3-1.6 EUR/kg in 2024 less VAT (common practice, no source).
DEFAULT_FUEL_PRICE_PER_KG: Final = {"cng": 1.25}
# Eurostat, "Electricity prices for non-household consumers" (nrg_pc_205), EU-27 2024-S1, band
# ID, excluding VAT and recoverable taxes: about 0.19 EUR/kWh (from memory); depot charging.
DEFAULT_ELECTRICITY_PRICE_PER_KWH: Final = 0.19
# Tank-to-wheel CO2 per kg of fuel burnt: each fuel's factor in fleetfuel.constants.FUELS, with its
# source there (EPA-420-F-18-008 for diesel and petrol; JEC WTW v5 (2020) for CNG, from memory).
DEFAULT_TTW_CO2_KG_PER_KG: Final = {name: props.co2_kg_per_kg for name, props in FUELS.items()}
# Well-to-tank CO2-equivalent per MJ of fuel (LHV): JEC Well-to-Wheels report v5 (2020), EU
# pathways for market diesel, petrol and CNG (EU mix), orders of magnitude (from memory).
DEFAULT_WTT_CO2_G_PER_MJ: Final = {"diesel": 17.0, "petrol": 16.0, "cng": 13.0}
# EEA indicator "Greenhouse gas emission intensity of electricity generation in Europe", EU-27
# 2023: about 244 g CO2/kWh (from memory). Generation, not consumption: grid losses not added.
DEFAULT_GRID_CO2_KG_PER_KWH: Final = 0.244
# Five working days a week, 52 weeks, less about 10 public holidays (common practice, no source).
DEFAULT_OPERATING_DAYS_PER_YEAR: Final = 250.0
# Keep a fifth of the usable battery in hand for weather, ageing and detours (common practice,
# no source).
DEFAULT_ELECTRIC_RESERVE_SHARE: Final = 0.2
# A spec that cannot follow the trace for more than 2 % of the driving time does not serve the
# route (common practice, no source).
DEFAULT_MAX_SHORTFALL_SHARE: Final = 0.02
# "Sustained" grade: mean grade over 500 m of road, longer than the run-up a loaded truck can
# carry over a crest on momentum (our choice, no source).
DEFAULT_GRADE_WINDOW_M: Final = 500.0
# Vehicle-id prefixes of the bundled sample fleet (and a common naming habit): VAN-01, RIG-02 ...
DEFAULT_CLASS_PREFIXES: Final = {
    "VAN": "van",
    "RIG": "rigid_truck",
    "TRK": "tractor_trailer",
    "BUS": "city_bus",
    "CAR": "car",
}
MAX_DAYS_PER_YEAR: Final = 366

_MERGED_DEFAULTS: Final = {
    "fuel_price_per_l": DEFAULT_FUEL_PRICE_PER_L,
    "fuel_price_per_kg": DEFAULT_FUEL_PRICE_PER_KG,
    "wtt_co2_g_per_mj": DEFAULT_WTT_CO2_G_PER_MJ,
    "ttw_co2_kg_per_kg": DEFAULT_TTW_CO2_KG_PER_KG,
}
"""Tables whose given entries override the defaults fuel by fuel (the others keep their default)."""
_NUMBER_MAPS: Final = ("fuel_price_per_l", "fuel_price_per_kg", "wtt_co2_g_per_mj", "ttw_co2_kg_per_kg", "payload_kg",
                       "planned_annual_km")
_CLASS_MAPS: Final = ("vehicle_class", "route_class", "class_prefixes")
_SHARES: Final = ("electric_reserve_share", "max_shortfall_share")


@dataclass(frozen=True, slots=True, kw_only=True)
class ForecastConfig:
    """Options of the forecast stage (each default's source in the module constants above).

    Attributes
    ----------
    currency : str
        Label of every money figure (no conversion is made).
    fuel_price_per_l : mapping of str to float
        Liquid fuel -> price. [currency/L] Given entries override the defaults fuel by fuel (so do
        ``fuel_price_per_kg``, ``wtt_co2_g_per_mj`` and ``ttw_co2_kg_per_kg``); the other tables
        replace theirs.
    fuel_price_per_kg : mapping of str to float
        Gaseous fuel -> price. [currency/kg]
    electricity_price_per_kwh : float
        Grid electricity at the depot charger. [currency/kWh]
    wtt_co2_g_per_mj : mapping of str to float
        Fuel -> well-to-tank CO2-equivalent per MJ (LHV). [g/MJ]
    ttw_co2_kg_per_kg : mapping of str to float
        Fuel -> tank-to-wheel CO2 per kg burnt (default: :data:`fleetfuel.constants.FUELS`). [kg/kg]
    grid_co2_kg_per_kwh : float
        CO2 per kWh taken from the grid (well-to-wheel of electric specs). [kg/kWh]
    operating_days_per_year : float
        Days a year the fleet operates: annual km = observed km per operating day x this. [d]
    electric_reserve_share : float
        Share of the usable battery kept in reserve; the worst shift must fit in the rest. [1]
    max_shortfall_share : float
        Largest share of driving time a spec may fall short of the trace and still serve it. [1]
    grade_window_m : float
        Road length over which a grade counts as sustained. [m]
    discount_rate : float
        Yearly rate for annualising the purchase (capital recovery factor); 0 is straight-line. [1/a]
    payload_kg : mapping of str to float
        Route -> payload [kg] (overrides a routes file's payload; default: each spec's own).
    planned_annual_km : mapping of str to float
        Route -> planned distance per year [km] (overrides a routes file's; default: observed).
    current_spec : mapping of str to str
        Vehicle class -> spec id (catalogue file stem) the fleet runs today; gives the savings.
    vehicle_class, route_class : mapping of str to str
        Vehicle id -> class, route -> class (:data:`fleetfuel.simulate.spec.VEHICLE_CLASSES`).
    class_prefixes : mapping of str to str
        Vehicle-id prefix (case-insensitive, longest wins) -> class.
    default_class : str or None
        Class of vehicles no rule above names (None: such a route is an error).
    catalogue : str or None
        Folder of candidate spec TOML files (default: the bundled ``models/``).
    """

    currency: str = "EUR"
    fuel_price_per_l: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_FUEL_PRICE_PER_L))
    fuel_price_per_kg: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_FUEL_PRICE_PER_KG))
    electricity_price_per_kwh: float = DEFAULT_ELECTRICITY_PRICE_PER_KWH
    wtt_co2_g_per_mj: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_WTT_CO2_G_PER_MJ))
    ttw_co2_kg_per_kg: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_TTW_CO2_KG_PER_KG))
    grid_co2_kg_per_kwh: float = DEFAULT_GRID_CO2_KG_PER_KWH
    operating_days_per_year: float = DEFAULT_OPERATING_DAYS_PER_YEAR
    electric_reserve_share: float = DEFAULT_ELECTRIC_RESERVE_SHARE
    max_shortfall_share: float = DEFAULT_MAX_SHORTFALL_SHARE
    grade_window_m: float = DEFAULT_GRADE_WINDOW_M
    discount_rate: float = 0.0
    payload_kg: Mapping[str, float] = field(default_factory=dict)
    planned_annual_km: Mapping[str, float] = field(default_factory=dict)
    current_spec: Mapping[str, str] = field(default_factory=dict)
    vehicle_class: Mapping[str, str] = field(default_factory=dict)
    route_class: Mapping[str, str] = field(default_factory=dict)
    class_prefixes: Mapping[str, str] = field(default_factory=lambda: dict(DEFAULT_CLASS_PREFIXES))
    default_class: str | None = None
    catalogue: str | None = None

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, Mapping):
                base = _MERGED_DEFAULTS.get(f.name, {})
                object.__setattr__(self, f.name, {**base, **value})  # a private copy: the caller's dict may change
            elif f.name in (*_NUMBER_MAPS, *_CLASS_MAPS, "current_spec"):
                raise ConfigError(f"forecast.{f.name}: expected a table (key = value), found {value!r}")
        _check(self)

    def fuel_price(self, fuel: str, liquid: bool) -> float:
        """Price of ``fuel`` per litre (liquid) or per kg (gaseous). [currency/L or currency/kg]"""
        table, key = (self.fuel_price_per_l, "fuel_price_per_l") if liquid else (self.fuel_price_per_kg, "fuel_price_per_kg")
        if fuel not in table:
            raise ConfigError(f"forecast.{key}: no price for fuel {fuel!r}; give one, e.g. {fuel} = 1.5")
        return float(table[fuel])


def _number(where: str, value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigError(f"forecast.{where}: expected a number, found {value!r}")
    return float(value)


def _check(cfg: ForecastConfig) -> None:
    """Types and ranges of every field (ConfigError naming the key otherwise)."""
    _check_scalars(cfg)
    _check_tables(cfg)
    _check_classes(cfg)


def _check_scalars(cfg: ForecastConfig) -> None:
    if not isinstance(cfg.currency, str) or not cfg.currency:
        raise ConfigError(f"forecast.currency: expected a non-empty string, found {cfg.currency!r}")
    for name in ("electricity_price_per_kwh", "grid_co2_kg_per_kwh", "discount_rate"):
        if _number(name, getattr(cfg, name)) < 0:
            raise ConfigError(f"forecast.{name}: must be >= 0, found {getattr(cfg, name)!r}")
    for name in ("operating_days_per_year", "grade_window_m"):
        if not _number(name, getattr(cfg, name)) > 0:
            raise ConfigError(f"forecast.{name}: must be > 0, found {getattr(cfg, name)!r}")
    if cfg.operating_days_per_year > MAX_DAYS_PER_YEAR:
        raise ConfigError(f"forecast.operating_days_per_year: at most {MAX_DAYS_PER_YEAR}, found {cfg.operating_days_per_year!r}")
    for name in _SHARES:
        if not 0 <= _number(name, getattr(cfg, name)) < 1:
            raise ConfigError(f"forecast.{name}: must be a share in [0, 1), found {getattr(cfg, name)!r}")
    if cfg.catalogue is not None and (not isinstance(cfg.catalogue, str) or not cfg.catalogue):
        raise ConfigError(f"forecast.catalogue: expected a folder path, found {cfg.catalogue!r}")


def _check_tables(cfg: ForecastConfig) -> None:
    for name in _NUMBER_MAPS:
        for key, value in getattr(cfg, name).items():
            if _number(f"{name}.{key}", value) < 0:
                raise ConfigError(f"forecast.{name}.{key}: must be >= 0, found {value!r}")
    for name, liquid in (("fuel_price_per_l", True), ("fuel_price_per_kg", False), ("wtt_co2_g_per_mj", None),
                         ("ttw_co2_kg_per_kg", None)):
        for key in getattr(cfg, name):
            if key not in FUELS:
                raise ConfigError(f"forecast.{name}: unknown fuel {key!r}; known fuels: {', '.join(FUELS)}")
            if liquid is not None and FUELS[key].liquid != liquid:
                other = "fuel_price_per_kg" if liquid else "fuel_price_per_l"
                raise ConfigError(f"forecast.{name}.{key}: {key} is sold by the {'kg' if liquid else 'litre'}; use {other}")


def _check_classes(cfg: ForecastConfig) -> None:
    for name in (*_CLASS_MAPS, "current_spec"):
        for key, value in getattr(cfg, name).items():
            if not isinstance(value, str) or not value:
                raise ConfigError(f"forecast.{name}.{key}: expected a string, found {value!r}")
    classes = [(f"{name}.{k}", v) for name in _CLASS_MAPS for k, v in getattr(cfg, name).items()]
    classes += [(f"current_spec.{k} (key)", k) for k in cfg.current_spec]
    if cfg.default_class is not None:
        classes.append(("default_class", cfg.default_class))
    for where, value in classes:
        if value not in VEHICLE_CLASSES:
            raise ConfigError(f"forecast.{where}: unknown vehicle class {value!r}; choose from {VEHICLE_CLASSES}")
