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

The names below load their module on first use (PEP 562): the engine's workers import a few of
the stage's modules to run their tasks and need not load scikit-learn for the clustering they
never run (it takes about a second to import).
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

_HOMES = {
    "build": ("ACCEPTANCE_COLUMNS", "COMPOSITION_COLUMNS", "CycleSet", "build_cycles"),
    "cluster": ("CLUSTER_FEATURES", "DutyTypeClusterer", "fit_types", "predict_types"),
    "config": ("CyclesConfig",),
    "labels": ("describe_type", "label_types"),
    "safd": ("safd_difference", "safd_edges", "safd_of_trace"),
    "stats": ("TARGET_STATS",),
    "validate": ("CHECK_COLUMNS", "FuelModel", "cycle_rates", "fuel_check", "holdout_check", "microtrip_consumption"),
    "weights": ("route_type_mix", "type_weights"),
}
_MODULE_OF = {name: module for module, names in _HOMES.items() for name in names}
__all__ = sorted(_MODULE_OF)

if TYPE_CHECKING:  # what type checkers and editors see
    from fleetfuel.cycles.build import ACCEPTANCE_COLUMNS, COMPOSITION_COLUMNS, CycleSet, build_cycles  # noqa: F401
    from fleetfuel.cycles.cluster import CLUSTER_FEATURES, DutyTypeClusterer, fit_types, predict_types  # noqa: F401
    from fleetfuel.cycles.config import CyclesConfig  # noqa: F401
    from fleetfuel.cycles.labels import describe_type, label_types  # noqa: F401
    from fleetfuel.cycles.safd import safd_difference, safd_edges, safd_of_trace  # noqa: F401
    from fleetfuel.cycles.stats import TARGET_STATS  # noqa: F401
    from fleetfuel.cycles.validate import (  # noqa: F401
        CHECK_COLUMNS,
        FuelModel,
        cycle_rates,
        fuel_check,
        holdout_check,
        microtrip_consumption,
    )
    from fleetfuel.cycles.weights import route_type_mix, type_weights  # noqa: F401


def __getattr__(name: str) -> Any:
    if name not in _MODULE_OF:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{_MODULE_OF[name]}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
