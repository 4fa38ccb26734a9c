"""segment stage: operating periods, trips, micro-trips, their features, and routes.

The clean frame in, copies with id columns out (``period_id``, ``trip_id``, ``microtrip_id``;
definitions and id format in :mod:`fleetfuel.segment.labels`). Operating periods are the
partition unit of the later stages: every per-sample function gives the same result for a
period processed alone. Route discovery is the one fleet-level step (on the trip table).

>>> from fleetfuel import segment
>>> samples = segment.split_microtrips(clean_samples, segment.SegmentConfig())   # doctest: +SKIP
>>> features = segment.microtrip_features(samples)                                # doctest: +SKIP
>>> samples, routes = segment.assign_routes(samples, None, segment.SegmentConfig())  # doctest: +SKIP
"""

from __future__ import annotations

from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.discovery import discover_routes
from fleetfuel.segment.features import (
    FEATURE_COLUMNS,
    LOGGING_COLUMNS,
    features_of_trace,
    group_features,
    microtrip_features,
)
from fleetfuel.segment.microtrips import split_microtrips
from fleetfuel.segment.routes import ROUTE_TABLE_COLUMNS, assign_routes, with_routes
from fleetfuel.segment.routesfile import load_routes_file
from fleetfuel.segment.trips import operating_periods, period_table, split_trips, trip_table

__all__ = [
    "FEATURE_COLUMNS",
    "LOGGING_COLUMNS",
    "ROUTE_TABLE_COLUMNS",
    "SegmentConfig",
    "assign_routes",
    "with_routes",
    "discover_routes",
    "features_of_trace",
    "group_features",
    "load_routes_file",
    "microtrip_features",
    "operating_periods",
    "period_table",
    "split_microtrips",
    "split_trips",
    "trip_table",
]
