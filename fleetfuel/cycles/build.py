"""The cycles stage in one call: types, labels, weights and a validated cycle per type.

:func:`build_cycles` takes the segmented samples and their micro-trip feature table (the
clustering input, fitted once) and returns a frozen :class:`CycleSet` of DataFrames. The fuel
check needs the vehicle model of a later stage, so it lives in :mod:`fleetfuel.cycles.validate`
and takes the model as a function.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from fleetfuel import schema
from fleetfuel.cycles.assemble import Selection
from fleetfuel.cycles.cluster import DutyTypeClusterer, by_microtrip, fit_types, predict_types, type_names
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.labels import label_types
from fleetfuel.cycles.logs import CycleLogs, FrameLogs
from fleetfuel.cycles.pieces import (
    eligible_microtrips,
    measured_microtrips,
    pool_microtrips,
    safd_types,
)
from fleetfuel.cycles.safd import safd_shape
from fleetfuel.cycles.search import PoolSearch, search_pool
from fleetfuel.cycles.stats import (
    TARGET_STATS,
    additive_sums,
    floors,
    normalised_errors,
    stats_from_sums,
)
from fleetfuel.cycles.weights import type_weights
from fleetfuel.errors import CycleError
from fleetfuel.segment.config import KMH_M_S, METRES_PER_KM, SECONDS_PER_MINUTE, SegmentConfig
from fleetfuel.units import SECONDS_PER_HOUR

ACCEPTANCE_COLUMNS: Final = (
    "type", "statistic", "target", "achieved", "relative_error", "floor", "normalised_error", "passed",
)
"""Columns of :attr:`CycleSet.acceptance` (one row per type and statistic)."""
ACCEL_STATS: Final = (
    "accel_share", "cruise_share", "decel_share", "mean_pos_accel_m_s2", "mean_neg_accel_m_s2", "rms_accel_m_s2",
    "rpa_m_s2",
)
"""Statistics that need observable accelerations (NaN otherwise, :mod:`fleetfuel.segment.features`)."""
COMPOSITION_COLUMNS: Final = (
    "type", "order", "piece_id", schema.MICROTRIP_ID, schema.VEHICLE_ID, "kind", "start_utc", "end_utc",
    "duration_s",
)


@dataclass(frozen=True, slots=True)
class CycleSet:
    """Everything the cycles stage finds (see :func:`build_cycles`).

    Attributes
    ----------
    microtrips : DataFrame
        The micro-trip feature table with ``type``, ``measured`` (logged at the cycle step with
        accelerations observable: in the types' targets and SAFD and in the fuel check)
        and ``eligible`` (measured and at rest at both ends: cut into cycle pieces).
    types : DataFrame
        One row per type: ``type``, ``label``, ``microtrips``, ``distance_km``, ``time_h``,
        ``distance_share``, ``time_share``, ``mean_speed_kmh``, ``cycle_duration_s``,
        ``cycle_distance_km``, ``pieces``, ``score``, ``safd_difference``, ``passed``, then
        ``target_<stat>``, ``achieved_<stat>``, ``error_<stat>`` (relative) per statistic.
    acceptance : DataFrame
        :data:`ACCEPTANCE_COLUMNS`: each cycle's own acceptance table.
    weights : DataFrame
        :func:`fleetfuel.cycles.weights.type_weights` (fleet, route, vehicle).
    cycles : dict of str to DataFrame
        Type -> its cycle trace (:data:`fleetfuel.cycles.assemble.TRACE_COLUMNS`); types with too
        little eligible driving have none.
    composition : DataFrame
        :data:`COMPOSITION_COLUMNS`: the pieces of every cycle, readable back by id and time.
    safd_type, safd_cycle : dict of str to ndarray
        SAFD (time shares, :func:`fleetfuel.cycles.safd.safd_shape`) of each type and its cycle.
    silhouettes : DataFrame
        ``types`` (k), ``silhouette`` (NaN: not admissible), ``chosen``.
    model : DutyTypeClusterer
        The fitted clustering (predict new micro-trips with :func:`assign`).
    cluster_columns : tuple of str
        Its input columns.
    step_s : float
        Time step of the cycles. [s]
    """

    microtrips: pd.DataFrame
    types: pd.DataFrame
    acceptance: pd.DataFrame
    weights: pd.DataFrame
    cycles: dict[str, pd.DataFrame]
    composition: pd.DataFrame
    safd_type: dict[str, np.ndarray]
    safd_cycle: dict[str, np.ndarray]
    silhouettes: pd.DataFrame
    model: DutyTypeClusterer
    cluster_columns: tuple[str, ...]
    step_s: float

    def assign(self, microtrips: pd.DataFrame) -> pd.Series:
        """Type of each row of another micro-trip feature table (e.g. a held-out day)."""
        return predict_types(self.model, self.cluster_columns, microtrips)


def _check_enough(microtrips: pd.DataFrame, cfg: CyclesConfig) -> None:
    duration = microtrips["duration_s"].to_numpy(dtype=np.float64, na_value=0.0)
    distance = microtrips["distance_m"].to_numpy(dtype=np.float64, na_value=0.0)
    usable = int(np.count_nonzero((duration >= cfg.min_fit_duration_s) & (distance > 0)))
    need = cfg.min_types + 1
    if usable < need or duration.sum() < cfg.target_duration_s:
        raise CycleError(
            f"too little driving to form cycles: found {usable} micro-trips of at least "
            f"{cfg.min_fit_duration_s:g} s and {duration.sum() / SECONDS_PER_MINUTE:.1f} min of driving; "
            f"need at least {need} micro-trips and {cfg.target_duration_s / SECONDS_PER_MINUTE:g} min"
        )


def _targets(microtrips: pd.DataFrame, names: list[str]) -> pd.DataFrame:
    """Statistics of each type on its measured micro-trips (all its micro-trips when none is).

    Sums of the micro-trips' additive sums (:func:`fleetfuel.cycles.stats.additive_sums`): the
    statistics of all the type's samples together, from the feature table alone.
    """
    # masks over the whole table, not copies of its rows (a big fleet's table is hundreds of MB)
    typed = microtrips["type"].notna().to_numpy()
    types = microtrips["type"].astype("string").fillna("")
    measured = microtrips["measured"].to_numpy(dtype=bool) & typed
    has_measured = set(types[measured])
    use = typed & (measured | ~types.isin(has_measured).to_numpy())
    names_used = types.to_numpy(dtype=object)[use]
    sums = pd.DataFrame(additive_sums(microtrips)[use]).groupby(names_used, sort=True).sum()
    stats = pd.DataFrame(stats_from_sums(sums.to_numpy(dtype=np.float64)), index=sums.index, columns=list(TARGET_STATS))
    # as on the samples: a group holding a row whose acceleration is not observable (accel_share
    # NaN, low-rate logs) has no acceleration statistics
    unobserved = pd.Series(microtrips["accel_share"].isna().to_numpy()[use]).groupby(names_used, sort=True).any()
    stats.loc[unobserved.reindex(stats.index).to_numpy(dtype=bool), list(ACCEL_STATS)] = np.nan
    return stats.reindex(names)


def _acceptance(type_name: str, target: np.ndarray, achieved: np.ndarray, cfg: CyclesConfig) -> pd.DataFrame:
    err = normalised_errors(achieved, target, cfg)
    with np.errstate(invalid="ignore", divide="ignore"):
        rel = np.where(target != 0, (achieved - target) / np.abs(target), np.nan)
    floor = floors(cfg)
    return pd.DataFrame(
        {
            "type": type_name,
            "statistic": list(TARGET_STATS),
            "target": target,
            "achieved": achieved,
            "relative_error": rel,
            "floor": [floor[s] for s in TARGET_STATS],
            "normalised_error": err,
            "passed": err <= cfg.stat_tolerance,
        }
    )


def _composition(type_name: str, chosen: pd.DataFrame) -> pd.DataFrame:
    """The composition rows of a cycle from its chosen pieces' pool rows (cycle order)."""
    out = chosen[["piece_id", schema.MICROTRIP_ID, schema.VEHICLE_ID, "kind", "start_utc", "end_utc", "duration_s"]].copy()
    out.insert(0, "order", np.arange(1, len(out) + 1))
    out.insert(0, "type", type_name)
    return out.reset_index(drop=True)[list(COMPOSITION_COLUMNS)]


def _type_table(
    names: list[str], labels: pd.Series, weights: pd.DataFrame, acceptance: pd.DataFrame,
    cycles: dict[str, pd.DataFrame], selections: dict[str, Selection], safd_diff: dict[str, float],
) -> pd.DataFrame:
    fleet = weights.loc[weights["level"] == "fleet"].set_index("type").reindex(names)
    table = pd.DataFrame({"type": names, "label": labels.reindex(names).to_numpy()})
    for col in ("microtrips", "distance_km", "time_h", "distance_share", "time_share"):
        table[col] = fleet[col].to_numpy()
    table["mean_speed_kmh"] = table["distance_km"] * METRES_PER_KM / (table["time_h"] * SECONDS_PER_HOUR) / KMH_M_S
    table["cycle_duration_s"] = [cycles[n]["time_s"].iloc[-1] if n in cycles else np.nan for n in names]
    table["cycle_distance_km"] = [
        float(np.trapezoid(cycles[n]["speed_m_s"], cycles[n]["time_s"])) / METRES_PER_KM if n in cycles else np.nan
        for n in names
    ]
    table["pieces"] = [len(selections[n].pieces) for n in names]
    table["score"] = [selections[n].score for n in names]
    table["safd_difference"] = [safd_diff.get(n, np.nan) for n in names]
    passed = acceptance.groupby("type")["passed"].all()
    table["passed"] = [bool(passed.get(n, False)) for n in names]
    wide = acceptance.pivot(index="type", columns="statistic")
    for prefix, col in (("target_", "target"), ("achieved_", "achieved"), ("error_", "relative_error")):
        part = wide[col].reindex(index=names, columns=list(TARGET_STATS))
        for stat in TARGET_STATS:
            table[prefix + stat] = part[stat].to_numpy(dtype=np.float64)
    return table


def build_cycles(
    samples: pd.DataFrame | CycleLogs,
    microtrips: pd.DataFrame,
    cfg: CyclesConfig | None = None,
    segment_cfg: SegmentConfig | None = None,
) -> CycleSet:
    """Cluster micro-trips into duty-cycle types and build a validated representative cycle each.

    Parameters
    ----------
    samples : DataFrame or CycleLogs
        Segmented clean frame (:func:`fleetfuel.segment.split_microtrips`, optionally with routes
        from :func:`fleetfuel.segment.assign_routes`), sorted by vehicle and time; or logs that
        answer for it where they are (:class:`fleetfuel.cycles.logs.CycleLogs`, e.g. the work
        folder): only each type's SAFD and the pool's micro-trips (at most ``cfg.pool_max_s`` of
        driving per type) are read.
    microtrips : DataFrame
        Its micro-trip feature table (:func:`fleetfuel.segment.microtrip_features`); a subset of
        micro-trips (e.g. all days but one) builds the cycles of that subset.
    cfg : CyclesConfig, optional
    segment_cfg : SegmentConfig, optional
        The thresholds the features were computed with.

    Returns
    -------
    CycleSet

    Raises
    ------
    CycleError
        Too little driving to form cycles (one line saying what was found and what is needed).
    """
    cfg = cfg or CyclesConfig()
    segment_cfg = segment_cfg or SegmentConfig()
    # One BLAS/OpenMP thread: the products here are small, so thread start-up dominates (measured
    # 30x slower on two cores), and one thread keeps every sum in one order (same bytes each run).
    with threadpool_limits(limits=1):
        return _build(FrameLogs(samples) if isinstance(samples, pd.DataFrame) else samples, microtrips, cfg,
                      segment_cfg)


def _build(logs: CycleLogs, microtrips: pd.DataFrame, cfg: CyclesConfig, segment_cfg: SegmentConfig) -> CycleSet:
    table = by_microtrip(microtrips)
    _check_enough(table, cfg)
    try:
        model, columns = fit_types(table, cfg)
    except ValueError as exc:
        raise CycleError(f"too little driving to form cycles: {exc}") from None
    names = type_names(model.n_types_)
    table["type"] = predict_types(model, columns, table)
    measured, step_s = measured_microtrips(table)
    eligible, _ = eligible_microtrips(table)
    table["measured"] = measured.to_numpy() & table["type"].notna().to_numpy()
    table["eligible"] = eligible.to_numpy() & table["measured"].to_numpy()
    if not table["eligible"].any():
        raise CycleError(
            "too little driving to form cycles: no micro-trip is logged at a uniform time step with "
            f"observable accelerations (found {len(table)} micro-trips, all from low-rate or irregular logs)"
        )
    targets = _targets(table, names)
    labels = label_types(targets)
    type_safd = logs.type_safd(safd_types(table), cfg, segment_cfg)
    in_pool = table.loc[pool_microtrips(table, cfg)]
    pool_type = in_pool["type"].astype("string").to_numpy(dtype=object, na_value=None)
    cycles, selections, safd_type, safd_cycle, safd_diff, accept, parts = {}, {}, {}, {}, {}, [], []
    jobs = []
    for number, name in enumerate(names):
        counts = type_safd.get(name, np.zeros(0))
        if counts.sum() > 0:
            safd_type[name] = (counts / counts.sum()).reshape(safd_shape(cfg))
        target = targets.loc[name, list(TARGET_STATS)].to_numpy(dtype=np.float64)
        mine = in_pool.loc[pool_type == name]
        jobs.append(PoolSearch(name, number, target, counts, safd_type.get(name, np.zeros(safd_shape(cfg))), mine,
                               logs.pool_rows(mine[schema.MICROTRIP_ID].astype(str).tolist()), step_s, cfg,
                               segment_cfg))
    # The biggest pools first, so that parallel workers finish together (a search's time grows with
    # its type's pieces); results are taken back in type order.
    size = [float(job.microtrips["duration_s"].sum()) for job in jobs]
    longest_first = sorted(range(len(jobs)), key=lambda k: (-size[k], k))
    searched = dict(zip(longest_first, logs.map(search_pool, [jobs[k] for k in longest_first], "type cycles"),
                        strict=True))
    for job, found in zip(jobs, (searched[k] for k in range(len(jobs))), strict=True):  # types in order
        name = job.key
        if found is None:
            selections[name] = Selection(pieces=np.zeros(0, dtype=np.int64), score=float("inf"), evaluated=0)
            continue
        selections[name] = found.selection
        cycles[name], safd_cycle[name], safd_diff[name] = found.trace, found.safd, found.safd_diff
        accept.append(_acceptance(name, job.target, found.achieved, cfg))
        parts.append(_composition(name, found.pieces))
    if not accept:
        raise CycleError(
            f"too little driving to form cycles: none of the {len(names)} duty-cycle types has "
            f"{cfg.target_duration_s / SECONDS_PER_MINUTE:g} min of driving logged at a uniform time step "
            f"({int(table['eligible'].sum())} usable micro-trips, "
            f"{table.loc[table['eligible'], 'duration_s'].sum() / SECONDS_PER_MINUTE:.1f} min)"
        )
    acceptance = pd.concat(accept, ignore_index=True)
    weights = type_weights(table, names)
    silhouettes = pd.DataFrame(
        {"types": list(model.silhouettes_), "silhouette": list(model.silhouettes_.values())}
    )
    silhouettes["chosen"] = silhouettes["types"] == model.n_types_
    composition = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=list(COMPOSITION_COLUMNS))
    return CycleSet(
        microtrips=table,
        types=_type_table(names, labels, weights, acceptance, cycles, selections, safd_diff),
        acceptance=acceptance,
        weights=weights,
        cycles=cycles,
        composition=composition,
        safd_type=safd_type,
        safd_cycle=safd_cycle,
        silhouettes=silhouettes,
        model=model,
        cluster_columns=columns,
        step_s=step_s,
    )
