"""The forecast stage in one call: :func:`forecast_fleet` -> :class:`~fleetfuel.forecast.result.ForecastResult`."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any, Final

import numpy as np
import pandas as pd

from fleetfuel import schema, segment
from fleetfuel.cycles import CycleSet
from fleetfuel.cycles.weights import WEIGHT_COLUMNS
from fleetfuel.errors import ConfigError
from fleetfuel.forecast.annual import annual_figures
from fleetfuel.forecast.config import ForecastConfig
from fleetfuel.forecast.energy import (
    RouteEnergy,
    cycle_runs,
    energy_from_cycles,
)
from fleetfuel.forecast.feasibility import (
    best_gradeability_pct,
    check_cell,
    payload_reason,
    usable_after_reserve_kwh,
)
from fleetfuel.forecast.logs import FrameLogs, LogCell, RouteLogs
from fleetfuel.forecast.mission import duty_mix_table, mission_table, shift_distances
from fleetfuel.forecast.ranking import fleet_ranking, route_best, savings
from fleetfuel.forecast.result import ForecastResult, assumption_list
from fleetfuel.simulate import SimConfig, SimResult, VehicleSpec
from fleetfuel.simulate.envelope import Envelope, performance_envelope
from fleetfuel.simulate.fuelmap import fuel_model, max_torque_nm
from fleetfuel.units import SECONDS_PER_HOUR

Progress = Callable[[int, int, str], None]
"""``progress(done, total, label)``: called after each route x spec cell."""

FORECAST_COLUMNS: Final = (
    schema.ROUTE, "vehicle_class", "spec", "annual_km", "fuel_l_per_100km", "fuel_l_per_year", "kwh_per_year",
    "co2_kg_per_year", "energy_cost_per_year", "tco_per_year", "feasible", "infeasible_reason",
    "spec_name", "powertrain", "fuel", "has_cost", "payload_kg", "payload_source", "simulated_on", "cycle_coverage_share",
    "fuel_kg_per_100km", "kwh_per_100km", "fuel_kg_per_year", "co2_ttw_kg_per_year", "co2_wtw_kg_per_year",
    "capital_per_year", "maintenance_per_year", "vehicles_in_service", "shortfall_share", "steepest_grade_pct",
    "startability_pct", "gradeability_pct", "max_payload_kg", "worst_shift_kwh", "usable_after_reserve_kwh",
    "worst_shift_period", "currency",
)
"""Columns of ``route_forecast`` (issue 5's leading columns first; units in the names, money in ``currency``)."""


def spec_id(spec: VehicleSpec) -> str:
    """Identifier of a spec in tables and config: its file stem, else its name."""
    return spec.source_path.stem if spec.source_path is not None else spec.name


def _check_specs(specs: Sequence[VehicleSpec], cfg: ForecastConfig) -> dict[str, VehicleSpec]:
    by_id: dict[str, VehicleSpec] = {}
    for spec in specs:
        key = spec_id(spec)
        if key in by_id:
            raise ConfigError(f"spec catalogue: two specs share the id {key!r}")
        by_id[key] = spec
    for cls, key in cfg.current_spec.items():
        if key not in by_id:
            raise ConfigError(f"forecast.current_spec.{cls}: no spec {key!r} in the catalogue; known: {', '.join(sorted(by_id))}")
        if by_id[key].vehicle_class != cls:
            raise ConfigError(f"forecast.current_spec.{cls}: spec {key!r} is a {by_id[key].vehicle_class}, not a {cls}")
    return by_id


def _use_logs(full: bool, mix: pd.DataFrame, cycles: dict[str, pd.DataFrame], driving_h: float) -> bool:
    """Simulate the route on its own logs: asked to, no cycle covers it, or it is shorter than its cycles."""
    if full:
        return True
    used = [t for t in mix.index[mix["distance_share"] > 0] if t in cycles]
    if not used:
        return True
    cycles_s = sum(float(cycles[t]["time_s"].iloc[-1] - cycles[t]["time_s"].iloc[0]) for t in used)
    return driving_h * SECONDS_PER_HOUR <= cycles_s


class _Cache:
    """Cycle runs and envelopes per (spec, payload), computed once."""

    def __init__(self, cycles: dict[str, pd.DataFrame], sim_cfg: SimConfig) -> None:
        self.cycles, self.sim_cfg = cycles, sim_cfg
        self.runs: dict[tuple[str, float], tuple[pd.DataFrame, dict[str, SimResult]]] = {}
        self.envelopes: dict[tuple[str, float], Envelope] = {}

    def run(self, key: str, spec: VehicleSpec, payload: float) -> tuple[pd.DataFrame, dict[str, SimResult]]:
        if (key, payload) not in self.runs:
            self.runs[key, payload] = cycle_runs(self.cycles, spec, payload, self.sim_cfg)
        return self.runs[key, payload]

    def envelope(self, key: str, spec: VehicleSpec, payload: float) -> Envelope:
        if (key, payload) not in self.envelopes:
            self.envelopes[key, payload] = performance_envelope(spec, payload)
        return self.envelopes[key, payload]


def _cell(mission: dict[str, Any], key: str, spec: VehicleSpec, energy: RouteEnergy | None, envelope: Envelope | None,
          payload: float, reasons: list[str], cfg: ForecastConfig) -> dict[str, object]:
    figures = annual_figures(spec, energy, float(mission["annual_km"]), float(mission["vehicles_in_service"]), cfg)
    nan = float("nan")
    return {
        schema.ROUTE: mission[schema.ROUTE], "vehicle_class": mission["vehicle_class"], "spec": key,
        "annual_km": float(mission["annual_km"]), **figures, "feasible": not reasons, "infeasible_reason": "; ".join(reasons),
        "spec_name": spec.name, "powertrain": spec.powertrain, "fuel": spec.fuel.name if spec.fuel else "electricity",
        "has_cost": spec.cost is not None, "payload_kg": payload, "payload_source": mission["payload_source"],
        "simulated_on": energy.simulated_on if energy else "", "cycle_coverage_share": energy.coverage_share if energy else nan,
        "vehicles_in_service": float(mission["vehicles_in_service"]),
        "shortfall_share": energy.shortfall_share if energy else nan, "steepest_grade_pct": mission["steepest_grade_pct"],
        "startability_pct": envelope.startability_pct if envelope else nan,
        "gradeability_pct": best_gradeability_pct(envelope) if envelope else nan,
        "max_payload_kg": spec.max_payload_kg, "worst_shift_kwh": energy.worst_shift_kwh if energy else nan,
        "usable_after_reserve_kwh": usable_after_reserve_kwh(spec, cfg),
        "worst_shift_period": energy.worst_shift_period if energy else "", "currency": cfg.currency,
    }


MAP_POINTS: Final = 40  # grid points per axis of the fuel-map contours (presentation only)


def _fuel_map_grid(spec: VehicleSpec) -> dict[str, np.ndarray]:
    """The spec's fuel model on a speed x torque grid below its full-load curve (NaN above)."""
    engine = spec.engine
    assert engine is not None
    speed = np.linspace(engine.idle_speed_rpm, engine.max_speed_rpm, MAP_POINTS)
    _, curve_nm = engine.full_load_arrays()
    torque = np.linspace(0.0, float(np.max(curve_nm)), MAP_POINTS)
    s_grid, t_grid = np.meshgrid(speed, torque)  # shape (torque, speed)
    fuel = fuel_model(engine).fuel_rate_g_s(s_grid, t_grid)
    above = t_grid > max_torque_nm(engine, s_grid)
    return {"map_speed_rpm": speed, "map_torque_nm": torque, "map_fuel_g_s": np.where(above, np.nan, fuel)}


def _operating_points(ranking: pd.DataFrame, table: pd.DataFrame, duty_mix: pd.DataFrame, cache: _Cache,
                      by_id: dict[str, VehicleSpec]) -> dict[str, object] | None:
    """Engine operating points of the winning combustion spec on the cycles of its class's duty types.

    The spec: the best-ranked combustion spec of the class with the largest energy cost (where fuel
    matters most), at its default payload; its fuel map on a grid for the contours.
    """
    combustion = ranking.loc[(ranking["powertrain"] == "combustion")].sort_values("rank")
    if combustion.empty:
        return None
    stake = table.groupby("vehicle_class")["energy_cost_per_year"].max()
    cls = max(combustion["vehicle_class"].unique(), key=lambda c: (float(stake.get(c, 0.0)), str(c)))
    key = str(combustion.loc[combustion["vehicle_class"] == cls, "spec"].iloc[0])
    spec = by_id[key]
    used = set(duty_mix.loc[(duty_mix["vehicle_class"] == cls) & (duty_mix["distance_share"] > 0), "type"])
    _, results = cache.run(key, spec, spec.payload_or_default())
    runs = [run for name, run in sorted(results.items()) if name in used] or list(results.values())
    pulling = [(r.steps.gear > 0) & (r.steps.shaft_torque_nm > 0) for r in runs]  # in gear, engine driving
    speed = np.concatenate([r.steps.shaft_speed_rpm[k] for r, k in zip(runs, pulling, strict=True)])
    torque = np.concatenate([r.steps.shaft_torque_nm[k] for r, k in zip(runs, pulling, strict=True)])
    return {"spec": key, "vehicle_class": cls, "engine_speed_rpm": speed, "torque_nm": torque, **_fuel_map_grid(spec)}


def _typed(cycle_set: CycleSet | None, microtrips: pd.DataFrame | None, samples: pd.DataFrame | RouteLogs
           ) -> tuple[pd.DataFrame, pd.DataFrame, pd.Series, dict[str, pd.DataFrame]]:
    """Typed micro-trips, type weights, type labels and cycle traces (untyped and empty without cycles)."""
    if cycle_set is not None:
        return cycle_set.microtrips, cycle_set.weights, cycle_set.types.set_index("type")["label"], cycle_set.cycles
    if microtrips is None and not isinstance(samples, pd.DataFrame):
        raise ConfigError("forecast_fleet: without a cycle set, give the micro-trip table (microtrips=...)")
    table = segment.microtrip_features(samples) if microtrips is None else microtrips
    table = table.assign(type=pd.Series(pd.NA, index=table.index, dtype="string"))
    return table, pd.DataFrame(columns=list(WEIGHT_COLUMNS)), pd.Series(dtype=str), {}


def forecast_fleet(
    samples: pd.DataFrame | RouteLogs,
    routes: pd.DataFrame,
    cycle_set: CycleSet | None,
    specs: Sequence[VehicleSpec],
    cfg: ForecastConfig | None = None,
    *,
    microtrips: pd.DataFrame | None = None,
    full: bool = False,
    sim_cfg: SimConfig | None = None,
    account: pd.DataFrame | None = None,
    progress: Progress | None = None,
    catalogue: str = "bundled models/",
) -> ForecastResult:
    """Forecast every route x competing spec; rank per class; best per route; savings.

    Parameters
    ----------
    samples : DataFrame or RouteLogs
        Segmented clean frame with routes (:func:`fleetfuel.segment.assign_routes`), or a source
        that reads each route's logs where they are (:mod:`fleetfuel.forecast.logs`).
    routes : DataFrame
        Its route table.
    cycle_set : CycleSet or None
        The cycles stage's result on those samples (:func:`fleetfuel.cycles.build_cycles`); None
        when no duty types could be formed: every route is then simulated on its own logs.
    microtrips : DataFrame, optional
        Without ``cycle_set``: the micro-trip feature table (computed from ``samples`` when None).
    specs : sequence of VehicleSpec
        Candidate specs (:func:`fleetfuel.simulate.load_catalogue`); a route competes the specs
        of its vehicle class.
    cfg : ForecastConfig, optional
    full : bool
        Simulate every route on its own logs instead of the representative cycles.
    sim_cfg : SimConfig, optional
    account : DataFrame, optional
        The data-quality account, carried into the result for the report.
    progress : callable, optional
        ``progress(done, total, label)`` after each cell.
    catalogue : str
        Where the specs came from (shown among the assumptions).

    Returns
    -------
    ForecastResult

    Raises
    ------
    ConfigError
        Unclassified vehicles, unknown current spec, missing price, currency mismatch.
    """
    cfg = cfg or ForecastConfig()
    sim_cfg = sim_cfg or SimConfig()
    by_id = _check_specs(specs, cfg)
    microtrips, weights_all, labels, cycles = _typed(cycle_set, microtrips, samples)
    logs = FrameLogs(samples) if isinstance(samples, pd.DataFrame) else samples
    current_payload = {cls: by_id[key].body.payload_kg for cls, key in cfg.current_spec.items()}
    grades = logs.steepest_grades(sorted(routes[schema.ROUTE].astype(str)), cfg.grade_window_m)
    missions = mission_table(routes, microtrips, grades, weights_all, labels, cfg, current_payload)
    shifts = shift_distances(microtrips)
    weights = weights_all.loc[weights_all["level"] == "route"]
    cache = _Cache(cycles, sim_cfg)
    cells = []  # (mission, key, spec, payload, reason, mix, on logs)
    for m in missions.to_dict("records"):
        mix = weights.loc[weights["key"] == str(m[schema.ROUTE])].set_index("type")[["distance_share", "time_share"]]
        on_logs = _use_logs(full, mix, cycles, float(m["driving_h"]))
        for key, spec in by_id.items():
            if spec.vehicle_class == m["vehicle_class"]:
                payload = float(m["payload_kg"]) if np.isfinite(m["payload_kg"]) else spec.body.payload_kg
                cells.append((m, key, spec, payload, payload_reason(spec, payload), mix, on_logs))
    wanted = [LogCell(str(m[schema.ROUTE]), spec, payload) for m, _, spec, payload, reason, _, on in cells if on and not reason]
    from_logs = iter(logs.log_energies(wanted, sim_cfg))  # every log-simulated cell at once (parallel where it can)
    rows = []
    for done, (mission, key, spec, payload, reason, mix, on_logs) in enumerate(cells, start=1):
        route = str(mission[schema.ROUTE])
        energy = envelope = None
        reasons = [reason] if reason else []
        if not reason:
            if on_logs:
                energy = next(from_logs)
            else:
                runs, _ = cache.run(key, spec, payload)
                energy = energy_from_cycles(runs, mix, shifts.loc[shifts[schema.ROUTE] == route], spec)
            envelope = cache.envelope(key, spec, payload)
            reasons = check_cell(spec, energy, envelope, float(mission["steepest_grade"]), cfg)
        rows.append(_cell(mission, key, spec, energy, envelope, payload, reasons, cfg))
        if progress is not None:
            progress(done, len(cells), f"{route} x {key}")
    table = pd.DataFrame(rows, columns=list(FORECAST_COLUMNS))
    table = table.sort_values(["vehicle_class", schema.ROUTE, "spec"], kind="stable").reset_index(drop=True)
    ranking = fleet_ranking(table)
    best = route_best(table, missions)
    duty_mix = duty_mix_table(weights_all, labels, missions)
    return ForecastResult(
        route_forecast=table, fleet_ranking=ranking, route_best=best, savings=savings(ranking, best, cfg.current_spec),
        missions=missions, duty_mix=duty_mix,
        operating_points=_operating_points(ranking, table, duty_mix, cache, by_id),
        assumptions=assumption_list(cfg, missions, full or cycle_set is None, catalogue), cycles=cycle_set,
        account=account,
        routes=routes, config=cfg, currency=cfg.currency,
    )
