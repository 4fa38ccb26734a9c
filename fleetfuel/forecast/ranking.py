"""Rank specs per vehicle class, pick the best spec per route, and the saving against today's fleet.

(a) :func:`fleet_ranking` - one spec for every route of a class. A spec's figures are the sums of
    its route rows over the routes it can serve. Ranked by ``tco_per_year`` when every spec of
    the class has a ``[cost]`` section, else by ``energy_cost_per_year`` (column ``ranked_by``).
    Specs that serve every route of the class come first; a spec that cannot serve some route is
    ranked after all of those, whatever its sums (they cover fewer kilometres), in order of the
    number of routes it cannot serve, then of its sums; ``routes_not_served`` lists them.
(b) :func:`route_best` - the best feasible spec of each route by its class's ``ranked_by``, and
    the class and fleet totals of that assignment (rows with ``level`` "class" and "fleet": the
    sums of the route rows above them).
(c) :func:`savings` - the class's current spec (``ForecastConfig.current_spec``) against the
    rank-1 spec of (a) and against the assignment of (b).

Sums: quantities (litres, kg, kWh, CO2, energy cost) add the rows where they apply; the cost of
ownership is NaN as soon as one row lacks it.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Final

import numpy as np
import pandas as pd

from fleetfuel import schema

TCO: Final = "tco_per_year"
ENERGY_COST: Final = "energy_cost_per_year"
QUANTITIES: Final = ("annual_km", "fuel_l_per_year", "fuel_kg_per_year", "kwh_per_year", "co2_kg_per_year",
                     "co2_ttw_kg_per_year", ENERGY_COST)
RANKING_COLUMNS: Final = ("vehicle_class", "rank", "spec", "spec_name", "powertrain", "ranked_by", TCO, ENERGY_COST,
                          "fuel_l_per_year", "fuel_kg_per_year", "kwh_per_year", "co2_kg_per_year",
                          "co2_ttw_kg_per_year", "annual_km", "routes", "routes_served", "routes_not_served", "serves_all")
BEST_COLUMNS: Final = ("level", schema.ROUTE, "vehicle_class", "spec", "spec_name", "ranked_by", TCO, *QUANTITIES,
                       "routes", "note")
SAVINGS_COLUMNS: Final = ("vehicle_class", "current_spec", "ranked_by", "current_value", "current_routes_not_served",
                          "best_spec", "best_value", "saving_per_year", "saving_share", "co2_saving_kg_per_year",
                          "assignment_value", "assignment_saving_per_year", "note")


def _sums(rows: pd.DataFrame) -> dict[str, float]:
    """Column sums by the rule of the module docstring."""
    out = {q: float(rows[q].sum(skipna=True)) for q in QUANTITIES}
    out[TCO] = float(rows[TCO].sum(skipna=False)) if len(rows) else float("nan")
    return out


def ranked_by(cells: pd.DataFrame) -> str:
    """``tco_per_year`` when every spec among ``cells`` has costs, else ``energy_cost_per_year``."""
    return TCO if bool(cells["has_cost"].all()) else ENERGY_COST


def fleet_ranking(route_forecast: pd.DataFrame) -> pd.DataFrame:
    """(a) of the module docstring: :data:`RANKING_COLUMNS`, one row per class and spec."""
    parts = []
    for cls, cells in route_forecast.groupby("vehicle_class", sort=True):
        metric = ranked_by(cells)
        routes = sorted(cells[schema.ROUTE].unique())
        rows = []
        for spec, own in cells.groupby("spec", sort=True):
            served = own.loc[own["feasible"].to_numpy(dtype=bool)]
            missing = sorted(set(routes) - set(served[schema.ROUTE]))
            sums = _sums(served)
            if served.empty:
                sums = dict.fromkeys(sums, float("nan"))
            rows.append({"vehicle_class": cls, "spec": spec, "spec_name": own["spec_name"].iloc[0],
                         "powertrain": own["powertrain"].iloc[0], "ranked_by": metric, **sums, "routes": len(routes),
                         "routes_served": len(routes) - len(missing), "routes_not_served": " ".join(missing),
                         "serves_all": not missing})
        table = pd.DataFrame(rows)
        table["_missing"] = table["routes"] - table["routes_served"]
        table = table.sort_values(["_missing", metric, "spec"], na_position="last", kind="stable")
        table["rank"] = np.arange(1, len(table) + 1)
        parts.append(table.drop(columns="_missing"))
    if not parts:
        return pd.DataFrame(columns=list(RANKING_COLUMNS))
    return pd.concat(parts, ignore_index=True)[list(RANKING_COLUMNS)]


def route_best(route_forecast: pd.DataFrame, missions: pd.DataFrame) -> pd.DataFrame:
    """(b) of the module docstring: :data:`BEST_COLUMNS`; route rows, then class and fleet totals.

    A route no spec can serve (or whose class has no spec in the catalogue) keeps a row with an
    empty ``spec``, NaN figures and the reason in ``note``; totals leave it out and say so.
    """
    rows = []
    for mission in missions.itertuples(index=False):
        route, cls = getattr(mission, schema.ROUTE), mission.vehicle_class
        cells = route_forecast.loc[route_forecast["vehicle_class"] == cls]
        mine = cells.loc[cells[schema.ROUTE] == route]
        base = {"level": "route", schema.ROUTE: route, "vehicle_class": cls, "routes": 1}
        if mine.empty:
            rows.append({**base, "spec": "", "spec_name": "", "ranked_by": "", **dict.fromkeys((TCO, *QUANTITIES), np.nan),
                         "note": f"no {cls} spec in the catalogue"})
            continue
        metric = ranked_by(cells)
        ok = mine.loc[mine["feasible"].to_numpy(dtype=bool)].sort_values([metric, "spec"], kind="stable")
        if ok.empty:
            rows.append({**base, "spec": "", "spec_name": "", "ranked_by": metric,
                         **dict.fromkeys((TCO, *QUANTITIES), np.nan), "note": "no spec of the class can serve this route"})
            continue
        best = ok.iloc[0]
        rows.append({**base, "spec": best["spec"], "spec_name": best["spec_name"], "ranked_by": metric,
                     **{c: float(best[c]) for c in (TCO, *QUANTITIES)}, "note": ""})
    table = pd.DataFrame(rows, columns=list(BEST_COLUMNS))
    totals = []
    for cls, own in table.groupby("vehicle_class", sort=True):
        totals.append(_total_row("class", cls, own))
    totals.append(_total_row("fleet", "", table))
    return pd.concat([table, pd.DataFrame(totals, columns=list(BEST_COLUMNS))], ignore_index=True)


def _total_row(level: str, cls: str, rows: pd.DataFrame) -> dict[str, object]:
    assigned = rows.loc[rows["spec"] != ""]
    unassigned = len(rows) - len(assigned)
    metrics = sorted(set(assigned["ranked_by"]))
    note = f"{unassigned} route(s) without a feasible spec left out" if unassigned else ""
    return {"level": level, schema.ROUTE: "", "vehicle_class": cls, "spec": "", "spec_name": "",
            "ranked_by": " / ".join(metrics), **_sums(assigned), "routes": len(assigned), "note": note}


def savings(ranking: pd.DataFrame, best: pd.DataFrame, current: Mapping[str, str]) -> pd.DataFrame:
    """(c) of the module docstring: :data:`SAVINGS_COLUMNS`, one row per class named in ``current``
    that has routes in the logs (saving > 0: the alternative costs less per year)."""
    rows = []
    for cls, spec in sorted(current.items()):
        mine = ranking.loc[ranking["vehicle_class"] == cls]
        if mine.empty:
            continue
        metric = str(mine["ranked_by"].iloc[0])
        now = mine.loc[mine["spec"] == spec]
        if now.empty:
            continue
        now, top = now.iloc[0], mine.sort_values("rank").iloc[0]
        assignment = best.loc[(best["level"] == "class") & (best["vehicle_class"] == cls)]
        assigned = float(assignment[metric].iloc[0]) if not assignment.empty else float("nan")
        note = ""
        if not now["serves_all"]:
            note = f"the current spec cannot serve {now['routes_not_served']}: its figures cover the other routes only"
        saving = float(now[metric] - top[metric])
        rows.append({"vehicle_class": cls, "current_spec": spec, "ranked_by": metric, "current_value": float(now[metric]),
                     "current_routes_not_served": now["routes_not_served"], "best_spec": top["spec"],
                     "best_value": float(top[metric]), "saving_per_year": saving,
                     "saving_share": saving / float(now[metric]) if now[metric] else float("nan"),
                     "co2_saving_kg_per_year": float(now["co2_kg_per_year"] - top["co2_kg_per_year"]),
                     "assignment_value": assigned, "assignment_saving_per_year": float(now[metric]) - assigned,
                     "note": note})
    return pd.DataFrame(rows, columns=list(SAVINGS_COLUMNS))
