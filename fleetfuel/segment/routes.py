"""Routes of trips, in order of precedence, and the route table.

For each trip, the first of these that applies gives its route and its ``route_source``
(:data:`fleetfuel.schema.ROUTE_SOURCES`):

``column``
    the logs carry a ``route`` column: the trip takes the most frequent value among its samples;
``file``
    a routes file (:mod:`fleetfuel.segment.routesfile`) maps the trip's vehicle and start time to
    a route;
``discovered``
    the trip has start and end positions: automatic discovery (:mod:`fleetfuel.segment.discovery`)
    clusters it with the other such trips, routes named ``R01``, ``R02``, ...;
``per_vehicle``
    no positions: one route per vehicle, named ``VEH-<vehicle_id>``.

Route discovery looks at the whole fleet's trips at once (a fleet-level step on the small trip
table); mapping routes onto samples is a join on ``trip_id`` that works period by period.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.segment._frame import ordered
from fleetfuel.segment.config import METRES_PER_KM, SegmentConfig
from fleetfuel.segment.discovery import describe_ends, discover_routes
from fleetfuel.segment.routesfile import RULE_COLUMNS, load_routes_file, match_rules
from fleetfuel.segment.trips import split_trips, trip_table
from fleetfuel.units import SECONDS_PER_HOUR

PER_VEHICLE_PREFIX = "VEH-"
ROUTE_TABLE_COLUMNS = (
    schema.ROUTE,
    schema.ROUTE_SOURCE,
    "vehicles",
    "vehicle_ids",
    "trips",
    "distance_km",
    "unlogged_km",
    "duration_h",
    "end_a_lat_deg",
    "end_a_lon_deg",
    "end_b_lat_deg",
    "end_b_lon_deg",
    "description",
    "payload_kg",
    "planned_annual_km",
)
"""Columns of the route table of :func:`assign_routes` (distance in km and time in h, for people)."""


def given_routes(trips: pd.DataFrame, rules: pd.DataFrame | None = None) -> tuple[pd.Series, pd.Series]:
    """Route and ``route_source`` of the trips a route column or the routes file names (<NA> elsewhere)."""
    route = (
        trips[schema.ROUTE].astype("string")
        if schema.ROUTE in trips.columns
        else pd.Series(pd.NA, index=trips.index, dtype="string")
    )
    source = pd.Series(pd.NA, index=trips.index, dtype="string")
    source[route.notna()] = "column"
    if rules is not None and not rules.empty:
        open_trips = trips.loc[route.isna()]
        matched = open_trips[schema.TRIP_ID].map(match_rules(open_trips, rules))
        hit = matched.notna()
        route[hit.index[hit]] = matched[hit]
        source[hit.index[hit]] = "file"
    return route, source


def trip_routes(
    trips: pd.DataFrame, samples: pd.DataFrame | None, cfg: SegmentConfig, rules: pd.DataFrame | None = None,
    cells: pd.DataFrame | None = None,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Route and ``route_source`` of every trip, and the discovered routes' end places.

    ``cells`` are the path cells of the trips left to discovery (:func:`given_routes` gives none;
    :func:`fleetfuel.segment.discovery.path_cells`), e.g. computed partition by partition; when
    None they are computed from ``samples``.

    Returns
    -------
    trips : DataFrame
        The trip table with ``route`` and ``route_source`` filled for every trip.
    ends : DataFrame
        :data:`fleetfuel.segment.discovery.DISCOVERED_COLUMNS` of the discovered routes.
    """
    out = trips.copy()
    route, source = given_routes(out, rules)
    taken = set(route.dropna().tolist()) | (set() if rules is None else set(rules[schema.ROUTE].tolist()))
    found, ends = discover_routes(out.loc[route.isna()], samples, cfg, taken=taken, cells=cells)
    guess = out[schema.TRIP_ID].map(found)
    hit = route.isna() & guess.notna()
    route[hit] = guess[hit]
    source[hit] = "discovered"
    rest = route.isna()
    route[rest] = PER_VEHICLE_PREFIX + out.loc[rest, schema.VEHICLE_ID].astype(str)
    source[rest] = "per_vehicle"
    out[schema.ROUTE] = route
    out[schema.ROUTE_SOURCE] = source
    return out, ends


def load_rules(routes_file: str | Path | pd.DataFrame | None) -> pd.DataFrame | None:
    """The rules of a routes file (path, or rules already loaded), in :data:`RULE_COLUMNS`; None for none."""
    rules = routes_file if routes_file is None or isinstance(routes_file, pd.DataFrame) else load_routes_file(routes_file)
    return None if rules is None else rules[list(RULE_COLUMNS)]


def with_routes(samples: pd.DataFrame, routed_trips: pd.DataFrame) -> pd.DataFrame:
    """``samples`` (segmented, sorted) with ``route`` and ``route_source`` of their trips set on
    every trip row; rows between trips keep a logged ``route`` value and have <NA> ``route_source``."""
    out = samples.copy()
    by_trip = routed_trips.set_index(schema.TRIP_ID)
    in_trip = out[schema.TRIP_ID].notna()
    logged = (
        out[schema.ROUTE].astype("string")
        if schema.ROUTE in out.columns
        else pd.Series(pd.NA, index=out.index, dtype="string")
    )
    out[schema.ROUTE] = logged.where(~in_trip, out[schema.TRIP_ID].map(by_trip[schema.ROUTE])).astype("string")
    out[schema.ROUTE_SOURCE] = out[schema.TRIP_ID].map(by_trip[schema.ROUTE_SOURCE]).astype("string")
    return out


def route_table(trips: pd.DataFrame, ends: pd.DataFrame, rules: pd.DataFrame | None) -> pd.DataFrame:
    """The route table (:data:`ROUTE_TABLE_COLUMNS`) of routed trips (:func:`trip_routes`)."""
    grouped = trips.groupby(schema.ROUTE, sort=True)
    precedence = {name: k for k, name in enumerate(schema.ROUTE_SOURCES)}
    table = pd.DataFrame(
        {
            schema.ROUTE_SOURCE: grouped[schema.ROUTE_SOURCE].agg(
                lambda s: min(s, key=precedence.__getitem__)
            ),
            "vehicles": grouped[schema.VEHICLE_ID].nunique(),
            "vehicle_ids": grouped[schema.VEHICLE_ID].agg(lambda s: " ".join(sorted(set(map(str, s))))),
            "trips": grouped.size(),
            "distance_km": (grouped["distance_m"].sum() + grouped["unlogged_m"].sum()) / METRES_PER_KM,
            "unlogged_km": grouped["unlogged_m"].sum() / METRES_PER_KM,
            "duration_h": grouped["duration_s"].sum() / SECONDS_PER_HOUR,
            "end_a_lat_deg": grouped["start_lat_deg"].median(),
            "end_a_lon_deg": grouped["start_lon_deg"].median(),
            "end_b_lat_deg": grouped["end_lat_deg"].median(),
            "end_b_lon_deg": grouped["end_lon_deg"].median(),
        }
    )
    found = ends.set_index(schema.ROUTE)
    ends_cols = ["end_a_lat_deg", "end_a_lon_deg", "end_b_lat_deg", "end_b_lon_deg"]
    common = table.index.intersection(found.index)
    table.loc[common, ends_cols] = found.loc[common, ends_cols].to_numpy(np.float64)
    table["description"] = [describe_ends(*row) for row in table[ends_cols].to_numpy(np.float64)]
    for key in ("payload_kg", "planned_annual_km"):
        table[key] = np.nan
        if rules is not None and not rules.empty:
            given = rules.loc[rules[key].notna()].drop_duplicates(schema.ROUTE).set_index(schema.ROUTE)[key]
            table[key] = table.index.map(given).astype(np.float64)
    table.index.name = schema.ROUTE
    return table.reset_index()[list(ROUTE_TABLE_COLUMNS)]


def assign_routes(
    samples: pd.DataFrame,
    trips: pd.DataFrame | None = None,
    cfg: SegmentConfig | None = None,
    routes_file: str | Path | pd.DataFrame | None = None,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Give every trip a route (precedence in the module docstring) and build the route table.

    Parameters
    ----------
    samples : DataFrame
        Clean frame, with or without the segment id columns (trips computed when absent).
    trips : DataFrame, optional
        Trip table of those samples (:func:`fleetfuel.segment.trip_table`); computed when None.
    cfg : SegmentConfig, optional
    routes_file : path or DataFrame, optional
        A routes file (CSV or TOML, :mod:`fleetfuel.segment.routesfile`) or its loaded rules.

    Returns
    -------
    samples_with_route : DataFrame
        A sorted copy of ``samples`` with ``route`` and ``route_source`` set on every trip row
        (rows between trips keep a logged ``route`` value and have <NA> ``route_source``).
    route_table : DataFrame
        :data:`ROUTE_TABLE_COLUMNS`, one row per route, sorted by name: its source, vehicles,
        trips, distance [km] (logged plus ``unlogged_km``, the jumps across logging gaps of
        :func:`fleetfuel.segment.trips.unlogged_distance_m`), time [h], end points [deg] with a
        description, and the routes
        file's ``payload_kg`` [kg] and ``planned_annual_km`` [km] (NaN when not given).
    """
    cfg = cfg or SegmentConfig()
    has_ids = schema.TRIP_ID in samples.columns and schema.PERIOD_ID in samples.columns
    out = ordered(samples) if has_ids else split_trips(samples, cfg)
    if trips is None:
        trips = trip_table(out, cfg)
    rules = load_rules(routes_file)
    routed, ends = trip_routes(trips, out, cfg, rules)
    return with_routes(out, routed), route_table(routed, ends, rules)
