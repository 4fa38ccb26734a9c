"""forecast stage: mission mix per route, per-route forecast of every competing spec, ranking.

The job the user came for: for each route, what each candidate spec of the route's vehicle class
would use per 100 km and per year, at what energy cost, cost of ownership and CO2, whether it can
serve the route at all (and why not), which spec is best for the whole class, which per route,
and what that saves against the fleet's current spec.

>>> from fleetfuel import forecast
>>> result = forecast.forecast_fleet(samples, routes, cycle_set, specs, forecast.ForecastConfig())  # doctest: +SKIP
>>> result.route_forecast, result.fleet_ranking, result.route_best, result.savings  # doctest: +SKIP

Modules: :mod:`~fleetfuel.forecast.config` (:class:`ForecastConfig`), :mod:`~fleetfuel.forecast.mission`
(mission mix, vehicle class, annual distance), :mod:`~fleetfuel.forecast.grade` (steepest sustained
grade), :mod:`~fleetfuel.forecast.energy` (simulation on cycles or logs),
:mod:`~fleetfuel.forecast.feasibility`, :mod:`~fleetfuel.forecast.annual` (per-year figures and cost
of ownership), :mod:`~fleetfuel.forecast.ranking`, :mod:`~fleetfuel.forecast.run` (the stage in one call).
"""

from __future__ import annotations

from fleetfuel.forecast.annual import annual_figures, annualised_capital
from fleetfuel.forecast.config import ForecastConfig
from fleetfuel.forecast.mission import MISSION_COLUMNS, mission_table, route_classes
from fleetfuel.forecast.ranking import (
    BEST_COLUMNS,
    RANKING_COLUMNS,
    SAVINGS_COLUMNS,
    fleet_ranking,
    route_best,
    savings,
)
from fleetfuel.forecast.result import ForecastResult
from fleetfuel.forecast.run import FORECAST_COLUMNS, Progress, forecast_fleet, spec_id

__all__ = [
    "BEST_COLUMNS",
    "FORECAST_COLUMNS",
    "MISSION_COLUMNS",
    "RANKING_COLUMNS",
    "SAVINGS_COLUMNS",
    "ForecastConfig",
    "ForecastResult",
    "Progress",
    "annual_figures",
    "annualised_capital",
    "fleet_ranking",
    "forecast_fleet",
    "mission_table",
    "route_best",
    "route_classes",
    "savings",
    "spec_id",
]
