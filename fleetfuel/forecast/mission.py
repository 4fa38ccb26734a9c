"""Mission mix of each route: what the route asks of a vehicle, from the observed logs.

Definitions (one row per route of the segment stage's route table):

operating period, shift
    the segment stage's operating period (a vehicle's driving between rests of at least
    ``SegmentConfig.period_rest_s``, 4 h by default): the unit an electric vehicle must cover
    on one depot charge (no charging during a shift is assumed).
fleet operating days
    distinct UTC dates on which any operating period of the fleet starts: the observed window.
km per operating day
    route distance (trips, :func:`fleetfuel.segment.assign_routes`) over the fleet operating
    days: the fleet's average daily distance on the route, days it was not driven included.
vehicles in service
    operating periods on the route over the fleet operating days: vehicles the route keeps busy
    on an average day. A vehicle's purchase is charged to the routes it serves in this proportion,
    so that a class's vehicles in service add up to its vehicles.
annual km
    ``ForecastConfig.planned_annual_km`` for the route, else the routes file's
    ``planned_annual_km``, else km per operating day x ``operating_days_per_year``.
payload
    ``ForecastConfig.payload_kg`` for the route, else the routes file's ``payload_kg``, else
    the default payload of the class's current spec (``ForecastConfig.current_spec``: the load the
    route carries today, so that every candidate carries the same), else each spec's own default
    payload (NaN here, ``payload_source`` "spec default").
vehicle class
    the first rule that applies: ``route_class`` of the route; else the classes of the vehicles
    seen on it (``vehicle_class`` of the vehicle, else its id's longest matching
    ``class_prefixes`` entry, case-insensitive, else ``default_class``); several classes on one
    route: the one of most vehicles (ties: alphabetical), noted in ``class_source``.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Final

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.errors import ConfigError
from fleetfuel.forecast.config import ForecastConfig
from fleetfuel.segment.config import METRES_PER_KM
from fleetfuel.units import SECONDS_PER_HOUR

PERCENT: Final = 100.0
MISSION_COLUMNS: Final = (
    schema.ROUTE,
    "vehicle_class",
    "class_source",
    "vehicle_ids",
    "vehicles",
    "operating_periods",
    "operating_days",
    "fleet_operating_days",
    "trips",
    "distance_km",
    "driving_h",
    "km_per_operating_day",
    "vehicles_in_service",
    "annual_km",
    "annual_km_source",
    "payload_kg",
    "payload_source",
    "steepest_grade",
    "steepest_grade_pct",
    "grade_window_m",
    "longest_shift_km",
    "longest_shift_h",
    "longest_shift_period",
    "duty_mix",
)
"""Columns of :func:`mission_table` (km, h, kg, grade as rise over run and in %)."""


def vehicle_class_of(vehicle_id: str, cfg: ForecastConfig) -> tuple[str | None, str]:
    """Class of one vehicle and the rule that gave it (``vehicle_class``, ``prefix``, ``default``)."""
    if vehicle_id in cfg.vehicle_class:
        return cfg.vehicle_class[vehicle_id], "vehicle_class"
    upper = vehicle_id.upper()
    hits = [p for p in cfg.class_prefixes if upper.startswith(p.upper())]
    if hits:
        return cfg.class_prefixes[max(hits, key=len)], "prefix"
    if cfg.default_class is not None:
        return cfg.default_class, "default_class"
    return None, "none"


def route_classes(routes: pd.DataFrame, cfg: ForecastConfig) -> pd.DataFrame:
    """Vehicle class and its source per route (rules in the module docstring).

    Raises
    ------
    ConfigError
        A route whose vehicles no rule classifies (the message names them and the keys to set).
    """
    rows = []
    for route, ids in zip(routes[schema.ROUTE].astype(str), routes["vehicle_ids"].astype(str), strict=True):
        if route in cfg.route_class:
            rows.append((route, cfg.route_class[route], "route_class"))
            continue
        found = {v: vehicle_class_of(v, cfg) for v in ids.split()}
        missing = sorted(v for v, (c, _) in found.items() if c is None)
        if missing:
            raise ConfigError(
                f"route {route}: no vehicle class for vehicle(s) {', '.join(missing)}; set [forecast] "
                f"vehicle_class = {{ {missing[0]} = \"van\" }}, route_class, class_prefixes or default_class"
            )
        counts = pd.Series([c for c, _ in found.values()]).value_counts()
        top = sorted(counts.index[counts == counts.max()])[0]
        sources = sorted({s for c, s in found.values() if c == top})
        note = "+".join(sources)
        if len(counts) > 1:
            note += " (mixed: " + ", ".join(f"{c} x{n}" for c, n in counts.sort_index().items()) + ")"
        rows.append((route, top, note))
    return pd.DataFrame(rows, columns=[schema.ROUTE, "vehicle_class", "class_source"])


def shift_distances(microtrips: pd.DataFrame) -> pd.DataFrame:
    """Distance and time of each (route, operating period), by duty type.

    Returns
    -------
    DataFrame
        ``route``, ``period_id``, ``type`` (``"(none)"`` for micro-trips without one),
        ``distance_km`` [km], ``duration_h`` [h].
    """
    def text(name: str) -> pd.Series:  # Arrow-backed texts, not a Python object per micro-trip
        return microtrips[name].astype("string").fillna("(none)").astype(str).reset_index(drop=True)

    frame = pd.DataFrame(
        {
            schema.ROUTE: text(schema.ROUTE),
            schema.PERIOD_ID: microtrips[schema.PERIOD_ID].astype(str).reset_index(drop=True),
            "type": text("type"),
            "distance_km": microtrips["distance_m"].to_numpy(dtype=np.float64, na_value=0.0) / METRES_PER_KM,
            "duration_h": microtrips["duration_s"].to_numpy(dtype=np.float64, na_value=0.0) / SECONDS_PER_HOUR,
        }
    )
    return frame.groupby([schema.ROUTE, schema.PERIOD_ID, "type"], sort=True, as_index=False)[["distance_km", "duration_h"]].sum()


def fleet_operating_days(microtrips: pd.DataFrame) -> int:
    """Distinct UTC dates on which an operating period starts (at least 1). [d]"""
    starts = pd.to_datetime(microtrips.groupby(schema.PERIOD_ID)["start_utc"].min(), utc=True)
    return max(int(starts.dt.date.nunique()), 1)


def _duty_mix_text(weights: pd.DataFrame, labels: pd.Series) -> pd.Series:
    rows = weights.loc[(weights["level"] == "route") & (weights["distance_share"] > 0)]
    rows = rows.sort_values(["key", "distance_share"], ascending=[True, False])
    text = rows.assign(
        part=[f"{t} {labels.get(t, '')} {s * PERCENT:.0f} %".replace("  ", " ") for t, s in zip(rows["type"], rows["distance_share"], strict=True)]
    )
    return text.groupby("key")["part"].agg(", ".join)


def mission_table(
    routes: pd.DataFrame,
    microtrips: pd.DataFrame,
    grades: pd.Series,
    weights: pd.DataFrame,
    type_labels: pd.Series,
    cfg: ForecastConfig,
    current_payload_kg: Mapping[str, float] | None = None,
) -> pd.DataFrame:
    """One row per route: :data:`MISSION_COLUMNS` (definitions in the module docstring).

    Parameters
    ----------
    routes : DataFrame
        Route table (:func:`fleetfuel.segment.assign_routes`).
    microtrips : DataFrame
        Typed micro-trip table (:attr:`fleetfuel.cycles.CycleSet.microtrips`).
    grades : Series
        Route -> steepest sustained grade [1] (:meth:`fleetfuel.forecast.logs.RouteLogs.steepest_grades`;
        routes missing from it get NaN).
    weights : DataFrame
        Type weights (:attr:`fleetfuel.cycles.CycleSet.weights`).
    type_labels : Series
        Type -> label.
    cfg : ForecastConfig
    current_payload_kg : mapping of str to float, optional
        Vehicle class -> default payload of its current spec. [kg]
    """
    table = routes[[schema.ROUTE, "vehicle_ids", "vehicles", "trips", "distance_km", "duration_h", "payload_kg", "planned_annual_km"]].copy()
    table[schema.ROUTE] = table[schema.ROUTE].astype(str)
    table = table.merge(route_classes(table, cfg), on=schema.ROUTE, how="left")
    days = fleet_operating_days(microtrips)
    shifts = shift_distances(microtrips)
    per_shift = shifts.groupby([schema.ROUTE, schema.PERIOD_ID], as_index=False)[["distance_km", "duration_h"]].sum()
    by_route = per_shift.groupby(schema.ROUTE)
    longest = per_shift.sort_values([schema.ROUTE, "distance_km"], ascending=[True, False]).drop_duplicates(schema.ROUTE).set_index(schema.ROUTE)
    starts = pd.to_datetime(microtrips.groupby(schema.PERIOD_ID)["start_utc"].min(), utc=True).dt.date
    route_days = per_shift.assign(day=per_shift[schema.PERIOD_ID].map(starts)).groupby(schema.ROUTE)["day"].nunique()
    table["operating_periods"] = table[schema.ROUTE].map(by_route.size()).fillna(0).astype(np.int64)
    table["operating_days"] = table[schema.ROUTE].map(route_days).fillna(0).astype(np.int64)
    table["fleet_operating_days"] = days
    table["driving_h"] = table.pop("duration_h")
    table["km_per_operating_day"] = table["distance_km"] / days
    table["vehicles_in_service"] = table["operating_periods"] / days
    planned_cfg = table[schema.ROUTE].map(cfg.planned_annual_km).astype(np.float64)
    planned_file = table.pop("planned_annual_km").astype(np.float64)
    observed = table["km_per_operating_day"] * cfg.operating_days_per_year
    table["annual_km"] = planned_cfg.fillna(planned_file).fillna(observed)
    table["annual_km_source"] = np.where(planned_cfg.notna(), "config", np.where(planned_file.notna(), "routes file", "observed"))
    payload_cfg = table[schema.ROUTE].map(cfg.payload_kg).astype(np.float64)
    payload_file = table["payload_kg"].astype(np.float64)
    payload_now = table["vehicle_class"].map(dict(current_payload_kg or {})).astype(np.float64)
    table["payload_kg"] = payload_cfg.fillna(payload_file).fillna(payload_now)
    table["payload_source"] = np.select(
        [payload_cfg.notna(), payload_file.notna(), payload_now.notna()],
        ["config", "routes file", "current spec default"], default="spec default")
    table["steepest_grade"] = table[schema.ROUTE].map(grades).astype(np.float64)
    table["steepest_grade_pct"] = table["steepest_grade"] * PERCENT
    table["grade_window_m"] = cfg.grade_window_m
    table["longest_shift_km"] = table[schema.ROUTE].map(longest["distance_km"]).astype(np.float64)
    table["longest_shift_h"] = table[schema.ROUTE].map(longest["duration_h"]).astype(np.float64)
    table["longest_shift_period"] = table[schema.ROUTE].map(longest[schema.PERIOD_ID]).astype("string")
    table["duty_mix"] = table[schema.ROUTE].map(_duty_mix_text(weights, type_labels)).fillna("").astype(str)
    return table[list(MISSION_COLUMNS)].sort_values(["vehicle_class", schema.ROUTE], kind="stable").reset_index(drop=True)


def duty_mix_table(weights: pd.DataFrame, type_labels: pd.Series, classes: pd.DataFrame) -> pd.DataFrame:
    """Route x duty type shares (long form): ``route, vehicle_class, type, label, distance_km,
    time_h, distance_share, time_share`` (shares of the route's distance and time [1])."""
    rows = weights.loc[weights["level"] == "route"].rename(columns={"key": schema.ROUTE})
    rows = rows.merge(classes[[schema.ROUTE, "vehicle_class"]], on=schema.ROUTE, how="inner")
    rows["label"] = rows["type"].map(type_labels).fillna("").astype(str)
    cols = [schema.ROUTE, "vehicle_class", "type", "label", "distance_km", "time_h", "distance_share", "time_share"]
    return rows[cols].sort_values([schema.ROUTE, "type"], kind="stable").reset_index(drop=True)
