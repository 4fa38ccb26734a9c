r"""Energy of one spec on one route: per-km intensities, shortfall and the worst shift's battery draw.

Two ways, both through :func:`fleetfuel.simulate.simulate_trace` (nothing here is physics):

representative cycles (default)
    the spec is simulated once on each duty type's representative cycle
    (:attr:`fleetfuel.cycles.CycleSet.cycles`); the route's intensity is the distance-weighted mix
    :math:`e_r = \sum_k w_{rk}\, E_k / D_k` with :math:`w_{rk}` the route's share of distance of
    type :math:`k` (:attr:`~fleetfuel.cycles.CycleSet.weights`), renormalised over the types that
    have a cycle (the share covered is reported). The shortfall share is the time-weighted mix of
    the cycles' shortfall time shares. A shift's battery draw is
    :math:`\sum_k d_{pk}\, B_k / D_k` over the shift's distance by type (distance without a
    cycle at the route's intensity), :math:`B_k` the energy drawn from the usable window.
route logs (``full``)
    each operating period of the route is simulated on its own logs: its trips laid end to end
    (the standstills between trips, which belong to no trip or micro-trip, are left out, as in
    the cycles), starting each shift with the spec's initial state of charge. Intensities are
    totals over distance; a shift's draw is the deepest state of charge reached times the usable
    energy.

Energy drawn from the usable window of a battery: :math:`(SOC_0 - SOC) \cdot E_{usable}` [kWh],
above :math:`E_{usable}` when the shift empties the battery.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.simulate import SimConfig, SimResult, VehicleSpec, simulate_trace

FloatArray = npt.NDArray[np.float64]
RUN_COLUMNS: Final = ("distance_km", "duration_s", "fuel_kg", "fuel_l", "grid_kwh", "drawn_kwh", "shortfall_s")
"""Columns of :func:`cycle_runs` (one row per type): km, s, kg, L (NaN: gaseous), kWh, kWh, s."""
NO_TYPE: Final = "(none)"


@dataclass(frozen=True, slots=True, kw_only=True)
class RouteEnergy:
    """One spec on one route.

    Attributes
    ----------
    fuel_kg_per_km, fuel_l_per_km : float
        Fuel burnt per km (``fuel_l_per_km`` NaN for a gaseous fuel, 0 for electric). [kg/km, L/km]
    grid_kwh_per_km : float
        Grid energy per km, charger and charging losses included (0 for combustion). [kWh/km]
    shortfall_share : float
        Share of driving time the spec could not follow the trace. [1]
    worst_shift_kwh : float
        Largest battery draw of one shift (NaN for combustion). [kWh]
    worst_shift_period : str
        Its operating period ("" for combustion).
    simulated_on : str
        ``"cycles"`` or ``"logs"``.
    coverage_share : float
        Share of the route's distance whose type has a cycle (1 on logs). [1]
    simulated_km : float
        Distance simulated. [km]
    """

    fuel_kg_per_km: float
    fuel_l_per_km: float
    grid_kwh_per_km: float
    shortfall_share: float
    worst_shift_kwh: float
    worst_shift_period: str
    simulated_on: str
    coverage_share: float
    simulated_km: float


def _drawn_kwh(spec: VehicleSpec, run: SimResult, cfg: SimConfig, deepest: bool) -> float:
    """Energy drawn from the usable window: to the end (cycles) or the deepest point (shift). [kWh]"""
    if spec.battery is None:
        return float("nan")
    soc0 = spec.battery.initial_soc if cfg.initial_soc is None else cfg.initial_soc
    soc = run.totals.soc_min if deepest else run.totals.soc_end
    if soc is None:  # an electric run always carries its state of charge
        return float("nan")
    return float((soc0 - soc) * spec.battery.usable_kwh)


def _totals_row(spec: VehicleSpec, run: SimResult, cfg: SimConfig, deepest: bool) -> dict[str, float]:
    t = run.totals
    return {
        "distance_km": t.distance_km,
        "duration_s": t.duration_s,
        "fuel_kg": t.fuel_kg,
        "fuel_l": float("nan") if t.fuel_l is None else t.fuel_l,
        "grid_kwh": t.grid_kwh,
        "drawn_kwh": _drawn_kwh(spec, run, cfg, deepest),
        "shortfall_s": t.shortfall_s,
    }


def cycle_runs(
    cycles: Mapping[str, pd.DataFrame], spec: VehicleSpec, payload_kg: float, cfg: SimConfig
) -> tuple[pd.DataFrame, dict[str, SimResult]]:
    """Simulate ``spec`` at ``payload_kg`` on every type's cycle.

    Returns
    -------
    runs : DataFrame
        Index type, :data:`RUN_COLUMNS`.
    results : dict of str to SimResult
        The simulations (operating points for the report).
    """
    rows, results = {}, {}
    for name, trace in cycles.items():
        run = simulate_trace(trace["time_s"].to_numpy(), trace["speed_m_s"].to_numpy(), trace["grade"].to_numpy(),
                             spec, payload_kg=payload_kg, cfg=cfg, elevation_m=trace["elevation_m"].to_numpy())
        rows[name] = _totals_row(spec, run, cfg, deepest=False)
        results[name] = run
    runs = pd.DataFrame.from_dict(rows, orient="index", columns=list(RUN_COLUMNS))
    runs.index.name = "type"
    return runs, results


def energy_from_cycles(runs: pd.DataFrame, mix: pd.DataFrame, shifts: pd.DataFrame, spec: VehicleSpec) -> RouteEnergy:
    """Route intensities from the cycle runs and the route's type mix (see the module docstring).

    Parameters
    ----------
    runs : DataFrame
        :func:`cycle_runs` of the spec.
    mix : DataFrame
        Index type; ``distance_share`` and ``time_share`` of the route [1].
    shifts : DataFrame
        The route's ``period_id``, ``type``, ``distance_km`` (:func:`fleetfuel.forecast.mission.shift_distances`).
    spec : VehicleSpec
    """
    usable = runs.loc[runs["distance_km"] > 0]
    share = mix["distance_share"].reindex(usable.index).fillna(0.0)
    coverage = float(share.sum())
    w = share / coverage if coverage > 0 else share
    per_km = usable[["fuel_kg", "fuel_l", "grid_kwh", "drawn_kwh"]].div(usable["distance_km"], axis=0)
    intensity = per_km.mul(w, axis=0).sum(axis=0, min_count=1)
    tau = mix["time_share"].reindex(usable.index).fillna(0.0)
    tau = tau / tau.sum() if tau.sum() > 0 else tau
    shortfall = float((usable["shortfall_s"] / usable["duration_s"] * tau).sum())
    worst, period = float("nan"), ""
    if spec.battery is not None and not shifts.empty:
        rate = shifts["type"].map(per_km["drawn_kwh"]).fillna(float(intensity["drawn_kwh"]))
        drawn = (shifts["distance_km"] * rate).groupby(shifts[schema.PERIOD_ID]).sum()
        period = str(drawn.idxmax())
        worst = float(drawn.max())
    fuel_l = float(intensity["fuel_l"]) if spec.fuel is None or spec.fuel.liquid else float("nan")
    return RouteEnergy(
        fuel_kg_per_km=float(intensity["fuel_kg"]), fuel_l_per_km=fuel_l, grid_kwh_per_km=float(intensity["grid_kwh"]),
        shortfall_share=shortfall, worst_shift_kwh=worst, worst_shift_period=period, simulated_on="cycles",
        coverage_share=coverage, simulated_km=float(usable["distance_km"].sum()),
    )


@dataclass(frozen=True, slots=True)
class ShiftTrace:
    """One operating period's trips laid end to end: times [s], speed [m/s], grade [1], elevation [m]."""

    period_id: str
    time_s: FloatArray
    speed_m_s: FloatArray
    grade: FloatArray
    elevation_m: FloatArray | None


def shift_traces(samples: pd.DataFrame, route: str) -> list[ShiftTrace]:
    """The route's operating periods as traces (trips end to end, one time step apart).

    Rows of trips on ``route`` only; missing grade is taken as flat, missing elevation is carried
    from the nearest sample (None when the shift has none).
    """
    keep = (samples[schema.ROUTE].astype("string") == route).fillna(False).to_numpy() & samples[schema.TRIP_ID].notna().to_numpy()
    rows = samples.loc[keep, [schema.PERIOD_ID, schema.TRIP_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.GRADE, schema.ELEVATION_M]]
    rows = rows.sort_values([schema.PERIOD_ID, schema.TIME_UTC], kind="stable")
    codes, periods = pd.factorize(rows[schema.PERIOD_ID])
    # seconds from each shift's own first row: a shift's trace never depends on the route's other shifts
    first_time = rows[schema.TIME_UTC].groupby(codes).transform("min") if len(rows) else rows[schema.TIME_UTC]
    t = (rows[schema.TIME_UTC] - first_time).dt.total_seconds().to_numpy() if len(rows) else np.zeros(0)
    out: list[ShiftTrace] = []
    trip_codes, _ = pd.factorize(rows[schema.TRIP_ID])
    bounds = np.flatnonzero(np.diff(codes)) + 1
    for idx in np.split(np.arange(len(rows)), bounds):
        if idx.size < 2:
            continue
        tt, trips = t[idx], trip_codes[idx]
        steps = np.diff(tt)
        step = float(np.median(steps[steps > 0])) if np.any(steps > 0) else 1.0
        first = np.flatnonzero(np.r_[True, trips[1:] != trips[:-1]])
        last = np.r_[first[1:] - 1, idx.size - 1]
        run = np.cumsum(np.isin(np.arange(idx.size), first)) - 1
        span = tt[last] - tt[first]
        offset = np.r_[0.0, np.cumsum(span + step)[:-1]]
        time_s = tt - tt[first][run] + offset[run]
        z = rows[schema.ELEVATION_M].iloc[idx].astype(np.float64).ffill().bfill().to_numpy()
        out.append(ShiftTrace(
            period_id=str(periods[codes[idx[0]]]), time_s=time_s,
            speed_m_s=np.nan_to_num(rows[schema.SPEED_M_S].to_numpy(dtype=np.float64)[idx], nan=0.0),
            grade=np.nan_to_num(rows[schema.GRADE].to_numpy(dtype=np.float64, na_value=np.nan)[idx], nan=0.0),
            elevation_m=z if np.isfinite(z).all() else None,
        ))
    return out


def shift_runs(traces: Sequence[ShiftTrace], spec: VehicleSpec, payload_kg: float, cfg: SimConfig) -> pd.DataFrame:
    """:data:`RUN_COLUMNS` and ``period_id`` of ``spec`` simulated on each shift (one row each)."""
    rows = []
    for trace in traces:
        run = simulate_trace(trace.time_s, trace.speed_m_s, trace.grade, spec, payload_kg=payload_kg, cfg=cfg,
                             elevation_m=trace.elevation_m)
        rows.append({**_totals_row(spec, run, cfg, deepest=True), schema.PERIOD_ID: trace.period_id})
    return pd.DataFrame(rows, columns=[*RUN_COLUMNS, schema.PERIOD_ID])


def energy_of_runs(runs: pd.DataFrame, spec: VehicleSpec) -> RouteEnergy:
    """Route intensities from its shifts' runs (:func:`shift_runs`, any order: summed by period id)."""
    runs = runs.sort_values(schema.PERIOD_ID, kind="stable").reset_index(drop=True)
    km = float(runs["distance_km"].sum())

    def per(col: str) -> float:
        return float(runs[col].sum() / km) if km > 0 else float("nan")

    duration = float(runs["duration_s"].sum())
    worst, period = float("nan"), ""
    if spec.battery is not None and not runs.empty:
        k = int(runs["drawn_kwh"].to_numpy().argmax())
        worst, period = float(runs["drawn_kwh"].iloc[k]), str(runs[schema.PERIOD_ID].iloc[k])
    fuel_l = per("fuel_l") if spec.fuel is None or spec.fuel.liquid else float("nan")
    return RouteEnergy(
        fuel_kg_per_km=per("fuel_kg"), fuel_l_per_km=fuel_l, grid_kwh_per_km=per("grid_kwh"),
        shortfall_share=float(runs["shortfall_s"].sum() / duration) if duration > 0 else 0.0,
        worst_shift_kwh=worst, worst_shift_period=period, simulated_on="logs", coverage_share=1.0, simulated_km=km,
    )


def energy_from_logs(traces: Sequence[ShiftTrace], spec: VehicleSpec, payload_kg: float, cfg: SimConfig) -> RouteEnergy:
    """Route intensities from simulating every shift on its own logs (see the module docstring)."""
    return energy_of_runs(shift_runs(traces, spec, payload_kg, cfg), spec)
