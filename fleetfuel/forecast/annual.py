r"""A route x spec cell per year: distance, fuel, grid energy, CO2, energy cost, cost of ownership.

For annual distance :math:`D` [km] (:mod:`fleetfuel.forecast.mission`) and the spec's intensities
on the route (:mod:`fleetfuel.forecast.energy`):

- fuel: :math:`L_{100} = 100\,e_L` [L/100 km] and :math:`L = L_{100} D / 100` [L] (liquid fuels;
  so that L/100 km x km = litres exactly); :math:`m_f = e_{kg} D` [kg] (every fuel);
- grid energy: :math:`E = e_{grid} D` [kWh], charger and charging losses included;
- CO2 tank to wheel: :math:`m_f \cdot c_{TTW}` (``ForecastConfig.ttw_co2_kg_per_kg``, default
  :data:`fleetfuel.constants.FUELS`);
  well to wheel: tank to wheel + :math:`m_f\,H_u\,c_{WTT}` + :math:`E\,c_{grid}`
  (``co2_kg_per_year`` is the well-to-wheel figure, the fair one between fuels and electricity);
- energy cost: :math:`L p_L` (liquid) or :math:`m_f p_{kg}` (gaseous) + :math:`E p_{el}`;
- cost of ownership (when the spec has ``[cost]``):
  :math:`n\,A + c_{km} D + \text{energy cost}`, with :math:`n` the route's vehicles in service and
  :math:`A` the purchase less the residual value, annualised over the life :math:`N` at the discount
  rate :math:`r` with the capital recovery factor,
  :math:`A = (P - R (1+r)^{-N})\, r / (1 - (1+r)^{-N})`, straight-line :math:`(P - R)/N` at
  :math:`r = 0`; :math:`R` = residual share x :math:`P`.

References
----------
Brealey, R. A., Myers, S. C. & Allen, F., Principles of Corporate Finance, McGraw-Hill:
    equivalent annual cost and the annuity factor (capital recovery factor; from memory).
"""

from __future__ import annotations

from typing import Final

from fleetfuel.errors import ConfigError
from fleetfuel.forecast.config import ForecastConfig
from fleetfuel.forecast.energy import RouteEnergy
from fleetfuel.simulate import VehicleSpec
from fleetfuel.simulate.spec import Cost

KM_PER_100KM: Final = 100.0
JOULES_PER_MJ: Final = 1.0e6  # SI prefix mega, exact
GRAMS_PER_KG: Final = 1000.0  # SI prefix kilo, exact
NAN: Final = float("nan")


def annualised_capital(cost: Cost, discount_rate: float = 0.0) -> float:
    """Purchase less residual value per year of life, for one vehicle. [currency/a]

    >>> from fleetfuel.simulate.spec import Cost
    >>> annualised_capital(Cost(purchase_price=100.0, residual_share=0.2, life_years=4.0, maintenance_per_km=0.0))
    20.0
    """
    price, residual, life = cost.purchase_price, cost.residual_share * cost.purchase_price, cost.life_years
    if discount_rate == 0:
        return (price - residual) / life
    growth = (1 + discount_rate) ** -life
    return (price - residual * growth) * discount_rate / (1 - growth)


def annual_figures(
    spec: VehicleSpec, energy: RouteEnergy | None, annual_km: float, vehicles_in_service: float, cfg: ForecastConfig
) -> dict[str, float]:
    """Per-year figures of one cell (formulas in the module docstring); NaN without ``energy``.

    Returns
    -------
    dict
        ``fuel_l_per_100km``, ``fuel_kg_per_100km``, ``kwh_per_100km``, ``fuel_l_per_year``,
        ``fuel_kg_per_year``, ``kwh_per_year``, ``co2_ttw_kg_per_year``, ``co2_wtw_kg_per_year``,
        ``co2_kg_per_year`` (= well to wheel), ``energy_cost_per_year``, ``capital_per_year``,
        ``maintenance_per_year``, ``tco_per_year``.
    """
    keys = ("fuel_l_per_100km", "fuel_kg_per_100km", "kwh_per_100km", "fuel_l_per_year", "fuel_kg_per_year",
            "kwh_per_year", "co2_ttw_kg_per_year", "co2_wtw_kg_per_year", "co2_kg_per_year",
            "energy_cost_per_year", "capital_per_year", "maintenance_per_year", "tco_per_year")
    if energy is None:
        return dict.fromkeys(keys, NAN)
    fuel = spec.fuel
    out = {
        "fuel_l_per_100km": energy.fuel_l_per_km * KM_PER_100KM,
        "fuel_kg_per_100km": energy.fuel_kg_per_km * KM_PER_100KM,
        "kwh_per_100km": energy.grid_kwh_per_km * KM_PER_100KM,
    }
    out["fuel_l_per_year"] = out["fuel_l_per_100km"] * annual_km / KM_PER_100KM
    out["fuel_kg_per_year"] = energy.fuel_kg_per_km * annual_km
    out["kwh_per_year"] = energy.grid_kwh_per_km * annual_km
    ttw = wtt = fuel_cost = 0.0
    if fuel is not None:
        ttw = out["fuel_kg_per_year"] * cfg.ttw_co2_kg_per_kg.get(fuel.name, fuel.co2_kg_per_kg)
        if fuel.name not in cfg.wtt_co2_g_per_mj:
            raise ConfigError(f"forecast.wtt_co2_g_per_mj: no well-to-tank factor for fuel {fuel.name!r}")
        mj = out["fuel_kg_per_year"] * fuel.lower_heating_value_j_kg / JOULES_PER_MJ
        wtt = mj * cfg.wtt_co2_g_per_mj[fuel.name] / GRAMS_PER_KG
        amount = out["fuel_l_per_year"] if fuel.liquid else out["fuel_kg_per_year"]
        fuel_cost = amount * cfg.fuel_price(fuel.name, fuel.liquid)
    out["co2_ttw_kg_per_year"] = ttw
    out["co2_wtw_kg_per_year"] = ttw + wtt + out["kwh_per_year"] * cfg.grid_co2_kg_per_kwh
    out["co2_kg_per_year"] = out["co2_wtw_kg_per_year"]
    out["energy_cost_per_year"] = fuel_cost + out["kwh_per_year"] * cfg.electricity_price_per_kwh
    cost = spec.cost
    if cost is None:
        out.update(capital_per_year=NAN, maintenance_per_year=NAN, tco_per_year=NAN)
        return out
    if cost.currency != cfg.currency:
        raise ConfigError(f"{spec.source_path or spec.name}: [cost] currency {cost.currency!r} differs from "
                          f"forecast.currency {cfg.currency!r}; fleetfuel converts no currencies")
    out["capital_per_year"] = vehicles_in_service * annualised_capital(cost, cfg.discount_rate)
    out["maintenance_per_year"] = cost.maintenance_per_km * annual_km
    out["tco_per_year"] = out["capital_per_year"] + out["maintenance_per_year"] + out["energy_cost_per_year"]
    return out
