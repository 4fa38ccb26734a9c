r"""Simulate one vehicle spec over one speed trace: :func:`simulate_trace` -> :class:`SimResult`.

Steps: check the trace; cap the speed at what the spec can reach (speed limiter, and the highest
engine or motor speed in the top gear), recording the difference as a speed deficit; kinematics
by central differences (:func:`fleetfuel.simulate.roadload.trace_kinematics`: uniform or
non-uniform time base, trapezoidal weights); air density from the elevation and temperature
(ISA); road load; the powertrain (combustion or electric); shortfall and totals.

Shortfall (where the spec cannot follow the trace; never clipped silently): a step is short when
the trace's speed is above the spec's reach, when the traction force demanded exceeds what the
powertrain and adhesion deliver, or (electric) when the battery's usable energy is exhausted.
Reported: seconds short, energy short (wheel work demanded by the trace minus work delivered, on
short steps), and the largest speed deficit. The deficit within a run of consecutive short steps
accumulates :math:`\Delta F / m_{eq} \cdot w` (the speed the vehicle falls behind while it cannot
keep up; it is assumed to rejoin the trace when the run ends), plus the cap's difference.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
import numpy.typing as npt

from fleetfuel.constants import JOULES_PER_KWH
from fleetfuel.errors import InputDataError
from fleetfuel.simulate.atmosphere import air_density_kg_m3
from fleetfuel.simulate.combustion import PowertrainSteps, simulate_combustion
from fleetfuel.simulate.config import SimConfig
from fleetfuel.simulate.electric import simulate_electric
from fleetfuel.simulate.roadload import RoadLoad, road_load, trace_kinematics, traction_limit_n
from fleetfuel.simulate.shift import gear_changes
from fleetfuel.simulate.spec import VehicleSpec
from fleetfuel.simulate.spec_parts import KMH_M_S, RPM_RAD_S

FloatArray = npt.NDArray[np.float64]
G_PER_KG = 1000.0
M_PER_KM = 1000.0
KM_PER_100KM = 100.0
# Force deficit below which a step does not count as short (float round-off guard). [N]
SHORTFALL_TOL_N = 1e-6


@dataclass(frozen=True, slots=True, kw_only=True)
class SimTotals:
    r"""Totals over the trace (what ``fleetfuel simulate --json`` prints).

    Attributes
    ----------
    duration_s, distance_km, mean_speed_kmh, max_speed_kmh : float
        Trace statistics (distance: trapezoidal sum of the trace speed). [s, km, km/h, km/h]
    wheel_energy_kwh : float
        Positive traction work delivered at the wheels. [kWh]
    fuel_kg, fuel_l : float (fuel_l None for gaseous fuels)
        Fuel burnt (zero for electric specs). [kg, L]
    fuel_l_per_100km, fuel_kg_per_100km : float or None
        Per distance. [L/100 km, kg/100 km]
    battery_kwh : float
        Net energy out of the battery terminals (regeneration netted). [kWh]
    grid_kwh : float
        Energy from the grid to restore the battery, charger and charging losses included. [kWh]
    battery_throughput_kwh : float
        Energy through the battery terminals both ways, :math:`\sum |P| \Delta t` (ageing). [kWh]
    energy_kwh_per_km : float
        ``battery_kwh`` (electric) per km. [kWh/km] (None for combustion)
    co2_kg : float
        Tank-to-wheel CO2. [kg]
    shortfall_s, shortfall_kwh, max_speed_deficit_kmh : float
        Where the spec could not follow the trace. [s, kWh, km/h]
    gear_changes : int
        Gear selections differing from the previous engaged gear.
    rolling_kwh, aero_kwh : float
        Work against rolling resistance and drag. [kWh]
    grade_net_kwh, kinetic_net_kwh : float
        Net potential and translational kinetic work (zero on a closed loop). [kWh]
    friction_brake_kwh, regen_kwh : float
        Energy taken by friction brakes; regenerated energy at the battery terminals. [kWh]
    idle_s : float
        Time at standstill. [s]
    soc_end, soc_min : float or None
        Battery state of charge at the end and lowest (electric). [1]
    """

    duration_s: float
    distance_km: float
    mean_speed_kmh: float
    max_speed_kmh: float
    wheel_energy_kwh: float
    fuel_l: float | None
    fuel_kg: float
    fuel_l_per_100km: float | None
    fuel_kg_per_100km: float | None
    battery_kwh: float
    grid_kwh: float
    battery_throughput_kwh: float
    energy_kwh_per_km: float | None
    co2_kg: float
    shortfall_s: float
    shortfall_kwh: float
    max_speed_deficit_kmh: float
    gear_changes: int
    rolling_kwh: float
    aero_kwh: float
    grade_net_kwh: float
    kinetic_net_kwh: float
    friction_brake_kwh: float
    regen_kwh: float
    idle_s: float
    soc_end: float | None
    soc_min: float | None

    def as_dict(self) -> dict[str, float | int | None]:
        """Plain dict (JSON-ready)."""
        return asdict(self)


@dataclass(frozen=True, slots=True, kw_only=True)
class SimResult:
    """One spec over one trace: per-step arrays (shape (n,)) and :class:`SimTotals`.

    Attributes
    ----------
    spec_name : str
    payload_kg : float
        [kg]
    time_s, speed_m_s, accel_m_s2, grade, weight_s : ndarray
        Times [s], speed followed (capped at the spec's reach) [m/s], acceleration [m/s^2],
        grade [1], time each step stands for [s].
    road : RoadLoad
        Road-load terms. [N]
    steps : PowertrainSteps
        Gear, shaft speed and torque, wheel force, shortfall, brakes, fuel, battery, state of charge.
    short : ndarray of bool
        Steps where the spec could not follow the trace.
    speed_deficit_m_s : ndarray
        Speed the vehicle falls behind the trace. [m/s]
    totals : SimTotals
    """

    spec_name: str
    payload_kg: float
    time_s: FloatArray
    speed_m_s: FloatArray
    accel_m_s2: FloatArray
    grade: FloatArray
    weight_s: FloatArray
    road: RoadLoad
    steps: PowertrainSteps
    short: npt.NDArray[np.bool_]
    speed_deficit_m_s: FloatArray
    totals: SimTotals


def _as_trace(time_s: npt.ArrayLike, speed_m_s: npt.ArrayLike, grade: npt.ArrayLike | None,
              elevation_m: npt.ArrayLike | None) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray | None]:
    t = np.array(time_s, dtype=np.float64)  # copies: inputs are never touched
    v = np.array(speed_m_s, dtype=np.float64)
    if t.ndim != 1 or v.shape != t.shape or t.size < 2:
        raise InputDataError(f"trace: expected time_s and speed_m_s as 1-D arrays of equal length >= 2, found shapes {t.shape} and {v.shape}")
    g = np.zeros_like(t) if grade is None else np.array(np.broadcast_to(grade, t.shape), dtype=np.float64)
    z = None if elevation_m is None else np.array(np.broadcast_to(elevation_m, t.shape), dtype=np.float64)
    for name, arr in (("time_s", t), ("speed_m_s", v), ("grade", g), ("elevation_m", z)):
        if arr is not None and not np.all(np.isfinite(arr)):
            row = int(np.argmax(~np.isfinite(arr)))
            raise InputDataError(f"trace {name}: expected finite numbers, found {float(arr[row])!r} at row {row}")
    if np.any(v < 0):
        row = int(np.argmax(v < 0))
        raise InputDataError(f"trace speed_m_s: expected >= 0, found {float(v[row])!r} at row {row}")
    return t, v, g, z


def reach_speed_m_s(spec: VehicleSpec) -> float:
    """Highest speed the spec can reach: speed limiter, or the prime mover's top speed in top gear. [m/s]"""
    top_ratio = float(spec.overall_ratios[-1])
    max_rpm = spec.engine.max_speed_rpm if spec.engine is not None else spec.motor.max_speed_rpm  # type: ignore[union-attr]
    geared = max_rpm * RPM_RAD_S * spec.rolling_radius_m / top_ratio
    return min(spec.governed_speed_m_s, geared)


def _run_deficit(short: npt.NDArray[np.bool_], dv: FloatArray) -> FloatArray:
    """Cumulative sum of ``dv`` within runs of consecutive ``short`` steps, zero elsewhere."""
    out = np.zeros(short.size)
    idx = np.flatnonzero(short)
    if idx.size:
        step = dv[idx]
        total = np.cumsum(step)
        starts = np.concatenate(([True], np.diff(idx) != 1))
        first = np.maximum.accumulate(np.where(starts, np.arange(idx.size), 0))
        out[idx] = total - (total[first] - step[first])
    return out


def simulate_trace(time_s: npt.ArrayLike, speed_m_s: npt.ArrayLike, grade: npt.ArrayLike | None,
                   spec: VehicleSpec, payload_kg: float | None = None, cfg: SimConfig | None = None, *,
                   elevation_m: npt.ArrayLike | None = None) -> SimResult:
    """Fuel or electricity, and shortfall, of ``spec`` following a speed trace.

    Parameters
    ----------
    time_s : array_like, shape (n,)
        Sample times, strictly increasing; uniform or not. [s]
    speed_m_s : array_like, shape (n,)
        Trace speed, >= 0. [m/s]
    grade : array_like, shape (n,), scalar, or None
        Road grade, rise over run (None: flat). [1]
    spec : VehicleSpec
        Candidate vehicle (:func:`fleetfuel.simulate.load_spec`).
    payload_kg : float, optional
        Payload; default the spec's; refused above the legal gross mass. [kg]
    cfg : SimConfig, optional
        Simulation settings (default :class:`SimConfig()`).
    elevation_m : array_like, optional
        Elevation per sample for the air density (default ``cfg.base_elevation_m``). [m]

    Returns
    -------
    SimResult

    Raises
    ------
    InputDataError
        Malformed trace (lengths, non-finite values, negative speed, times not increasing).
    SpecError
        Payload beyond the legal gross mass.
    """
    cfg = SimConfig() if cfg is None else cfg
    t, v_trace, g, z = _as_trace(time_s, speed_m_s, grade, elevation_m)
    payload = spec.payload_or_default(payload_kg)
    mass = spec.test_mass_kg(payload)
    rotating = spec.body.rotating_mass_share * spec.body.curb_mass_kg
    reach = reach_speed_m_s(spec)
    v = np.minimum(v_trace, reach) if v_trace.max() > reach else v_trace
    accel, weight = trace_kinematics(t, v)
    rho = air_density_kg_m3(cfg.base_elevation_m if z is None else z, cfg.ambient_temp_c)
    road = road_load(v, accel, g, mass_kg=mass, rotating_mass_kg=rotating,
                     rolling_coefficient=spec.body.rolling_coefficient, drag_area_m2=spec.drag_area_m2,
                     air_density_kg_m3=rho)
    base = road.total_n
    adhesion = traction_limit_n(mass, g, spec.body.driven_axle_load_share, cfg.adhesion_coefficient)
    if spec.engine is not None:
        steps = simulate_combustion(spec, t, v, accel, base, adhesion, cfg, payload)
    else:
        steps = simulate_electric(spec, t, v, accel, weight, base, adhesion, cfg, payload)
    capped = v_trace > v
    forced = steps.shortfall_n > SHORTFALL_TOL_N
    depleted = steps.soc < 0 if spec.engine is None else np.zeros(t.size, dtype=bool)
    short = capped | forced | depleted
    equivalent = mass + rotating
    deficit = v_trace - v
    if forced.any():
        deficit = deficit + _run_deficit(forced, steps.shortfall_n / equivalent * weight)
    accel_trace = trace_kinematics(t, v_trace)[0] if capped.any() else accel
    totals = _totals(spec, t, v_trace, v, weight, road, steps, short, deficit, mass, rotating, g, rho,
                     accel_trace=accel_trace, cfg=cfg)
    return SimResult(spec_name=spec.name, payload_kg=payload, time_s=t, speed_m_s=v, accel_m_s2=accel, grade=g,
                     weight_s=weight, road=road, steps=steps, short=short, speed_deficit_m_s=deficit, totals=totals)


def _dot(a: npt.ArrayLike, b: npt.ArrayLike) -> float:
    """Sum of ``a * b`` by numpy's pairwise summation, not BLAS ``ddot``: a threaded BLAS splits
    long dot products by thread count, so the last digits would depend on the machine and on
    the engine a task runs in (one thread in workers)."""
    return float(np.sum(np.multiply(a, b)))


def _totals(spec: VehicleSpec, t: FloatArray, v_trace: FloatArray, v: FloatArray, w: FloatArray, road: RoadLoad,
            steps: PowertrainSteps, short: npt.NDArray[np.bool_], deficit: FloatArray, mass: float, rotating: float,
            g: FloatArray, rho: FloatArray, accel_trace: FloatArray, cfg: SimConfig) -> SimTotals:
    vw = v * w  # distance per step [m]: energies are dot products with it, no temporaries

    def kwh_force(force_n: FloatArray) -> float:
        return float(_dot(force_n, vw) / JOULES_PER_KWH)

    duration = float(t[-1] - t[0])
    distance_km = float(_dot(v_trace, w) / M_PER_KM)
    wheel_positive_kwh = kwh_force(np.maximum(steps.wheel_force_n, 0.0))
    # demanded by the trace itself (uncapped speed) on the short steps, minus what was delivered
    shortfall_kwh = 0.0
    if short.any():
        idx = np.flatnonzero(short)
        demand = road_load(v_trace[idx], accel_trace[idx], g[idx], mass_kg=mass, rotating_mass_kg=rotating,
                           rolling_coefficient=spec.body.rolling_coefficient, drag_area_m2=spec.drag_area_m2,
                           air_density_kg_m3=np.broadcast_to(rho, t.shape)[idx]).total_n * v_trace[idx]
        missing_w = np.maximum(demand - np.maximum(steps.wheel_force_n[idx] * v[idx], 0.0), 0.0)
        shortfall_kwh = float(_dot(missing_w, w[idx]) / JOULES_PER_KWH)
    fuel_kg = float(_dot(steps.fuel_rate_g_s, w) / G_PER_KG)
    fuel = spec.fuel
    per_100 = KM_PER_100KM / distance_km if distance_km > 0 else float("nan")
    fuel_l = fuel_kg / fuel.density_kg_l if fuel is not None and fuel.liquid else (0.0 if fuel is None else None)
    battery_kwh = float(_dot(steps.battery_power_w, w) / JOULES_PER_KWH)
    grid_kwh = 0.0
    soc_end = soc_min = None
    if spec.battery is not None:
        b = spec.battery
        soc_end, soc_min = float(steps.soc[-1]), float(np.min(steps.soc))
        soc0 = b.initial_soc if cfg.initial_soc is None else cfg.initial_soc
        grid_kwh = (soc0 - soc_end) * b.usable_kwh / (b.charge_efficiency * b.charger_efficiency)
    return SimTotals(
        duration_s=duration,
        distance_km=distance_km,
        mean_speed_kmh=distance_km * M_PER_KM / duration / KMH_M_S if duration > 0 else 0.0,
        max_speed_kmh=float(np.max(v_trace) / KMH_M_S),
        wheel_energy_kwh=wheel_positive_kwh,
        fuel_l=fuel_l,
        fuel_kg=fuel_kg,
        fuel_l_per_100km=None if fuel_l is None else fuel_l * per_100,
        fuel_kg_per_100km=fuel_kg * per_100 if fuel is not None else None,
        battery_kwh=battery_kwh,
        grid_kwh=grid_kwh,
        battery_throughput_kwh=float(_dot(np.abs(steps.battery_power_w), w) / JOULES_PER_KWH),
        energy_kwh_per_km=battery_kwh / distance_km if spec.battery is not None and distance_km > 0 else None,
        co2_kg=fuel_kg * fuel.co2_kg_per_kg if fuel is not None else 0.0,
        shortfall_s=float(np.sum(w[short])),
        shortfall_kwh=shortfall_kwh,
        max_speed_deficit_kmh=float(np.max(deficit) / KMH_M_S),
        gear_changes=gear_changes(steps.gear),
        rolling_kwh=kwh_force(road.rolling_n),
        aero_kwh=kwh_force(road.aero_n),
        grade_net_kwh=kwh_force(road.grade_n),
        kinetic_net_kwh=float(mass * _dot(road.inertia_n, vw) / (mass + rotating) / JOULES_PER_KWH),
        friction_brake_kwh=kwh_force(steps.friction_brake_n),
        regen_kwh=float(_dot(steps.regen_power_w, w) / JOULES_PER_KWH),
        idle_s=float(np.sum(w[v <= 0])),
        soc_end=soc_end,
        soc_min=soc_min,
    )


RANGE_CAUTION = ("caution: battery use comes from a model; keep a range reserve for weather, ageing and "
                 "detours, and check against the maker's data before a purchase decision")


def totals_text(result: SimResult, cycle: str = "") -> str:
    """Human-readable summary of a :class:`SimResult` (units in every label)."""
    t = result.totals
    lines = [f"spec: {result.spec_name}   payload: {result.payload_kg:.0f} kg" + (f"   cycle: {cycle}" if cycle else ""),
             f"duration {t.duration_s:.0f} s   distance {t.distance_km:.3f} km   mean {t.mean_speed_kmh:.1f} km/h   "
             f"max {t.max_speed_kmh:.1f} km/h",
             f"wheel energy {t.wheel_energy_kwh:.3f} kWh   (rolling {t.rolling_kwh:.3f}, aero {t.aero_kwh:.3f}, "
             f"friction brakes {t.friction_brake_kwh:.3f} kWh)"]
    if result.steps.fuel_rate_g_s.any():
        litres = "" if t.fuel_l is None else f"{t.fuel_l:.3f} L   {t.fuel_l_per_100km:.2f} L/100 km   "
        lines.append(f"fuel {litres}{t.fuel_kg:.3f} kg   CO2 {t.co2_kg:.2f} kg (tank to wheel)   "
                     f"gear changes {t.gear_changes}")
    if t.soc_end is not None:
        lines.append(f"battery {t.battery_kwh:.3f} kWh ({t.energy_kwh_per_km:.3f} kWh/km)   grid {t.grid_kwh:.3f} kWh   "
                     f"regen {t.regen_kwh:.3f} kWh   state of charge end {t.soc_end:.1%}, lowest {t.soc_min:.1%}")
        lines.append(RANGE_CAUTION)
    if t.shortfall_s > 0:
        lines.append(f"SHORTFALL: the spec cannot follow the cycle for {t.shortfall_s:.0f} s "
                     f"({t.shortfall_kwh:.3f} kWh short, largest speed deficit {t.max_speed_deficit_kmh:.1f} km/h)")
    else:
        lines.append("the spec follows the whole cycle (no shortfall)")
    return "\n".join(lines)
