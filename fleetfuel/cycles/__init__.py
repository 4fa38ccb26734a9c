"""cycles stage: duty-cycle types, their weights, and a validated representative cycle for each.

The micro-trip feature table (one row per micro-trip, :func:`fleetfuel.segment.microtrip_features`)
is the clustering input, fitted once; each type's cycle is assembled from real pieces of its
micro-trips (read back by id from :attr:`CycleSet.composition`) and validated against the type.

>>> from fleetfuel import cycles, segment
>>> samples = segment.split_microtrips(clean_samples)                      # doctest: +SKIP
>>> result = cycles.build_cycles(samples, segment.microtrip_features(samples))  # doctest: +SKIP
>>> result.types, result.acceptance, result.weights, result.cycles["T1"]   # doctest: +SKIP
>>> check = cycles.fuel_check(result, consumption, rates, cycles.CyclesConfig())  # doctest: +SKIP

Modules: :mod:`~fleetfuel.cycles.cluster` (types), :mod:`~fleetfuel.cycles.labels`,
:mod:`~fleetfuel.cycles.weights`, :mod:`~fleetfuel.cycles.pieces` (the pool of real driving),
:mod:`~fleetfuel.cycles.assemble` (selection), :mod:`~fleetfuel.cycles.safd`,
:mod:`~fleetfuel.cycles.stats`, :mod:`~fleetfuel.cycles.build` (the stage in one call) and
:mod:`~fleetfuel.cycles.validate` (fuel check and held-out day).
"""

from __future__ import annotations

from fleetfuel.cycles.build import ACCEPTANCE_COLUMNS, COMPOSITION_COLUMNS, CycleSet, build_cycles
from fleetfuel.cycles.cluster import CLUSTER_FEATURES, DutyTypeClusterer, fit_types, predict_types
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.labels import describe_type, label_types
from fleetfuel.cycles.safd import safd_difference, safd_edges, safd_of_trace
from fleetfuel.cycles.stats import TARGET_STATS
from fleetfuel.cycles.validate import (
    CHECK_COLUMNS,
    FuelModel,
    cycle_rates,
    fuel_check,
    holdout_check,
    microtrip_consumption,
)
from fleetfuel.cycles.weights import route_type_mix, type_weights

__all__ = [
    "ACCEPTANCE_COLUMNS",
    "CHECK_COLUMNS",
    "CLUSTER_FEATURES",
    "COMPOSITION_COLUMNS",
    "TARGET_STATS",
    "CycleSet",
    "CyclesConfig",
    "DutyTypeClusterer",
    "FuelModel",
    "build_cycles",
    "cycle_rates",
    "describe_type",
    "fit_types",
    "fuel_check",
    "holdout_check",
    "label_types",
    "microtrip_consumption",
    "predict_types",
    "route_type_mix",
    "safd_difference",
    "safd_edges",
    "safd_of_trace",
    "type_weights",
]
