"""One synthetic drive: speed profile -> timeline -> logged samples, with the truth behind them.

The speed profile (:func:`fleetfuel.synth.speed.speed_profile`) has constant acceleration
between distance-grid points, so each grid step lasts ``2 ds / (v_i + v_{i+1})``; each stop adds
a step of zero speed lasting its dwell. Samples at the logging rate are taken exactly on that
piecewise-constant-acceleration timeline (``v = v_i + a t``, ``s = s_i + v_i t + a t^2 / 2``), and
positions are interpolated along the polyline at the sample's true distance, so consecutive
fixes agree with the speed to the accuracy of the geometry. Fuel comes from the truth model
(:mod:`fleetfuel.synth.truth`), integrated step by step, so counters are right at any logging rate.

Randomness is split into independent streams (profile, logger, fuel) spawned from the seed: the
same seed drives the same trajectory whatever the logger.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa

from fleetfuel import schema
from fleetfuel.errors import ConfigError
from fleetfuel.synth import routes as rt
from fleetfuel.synth.routes import Route
from fleetfuel.synth.speed import DriveConfig, speed_profile
from fleetfuel.synth.truth import TRUTH_MODELS, TruthFuelModel, truth_fuel_l
from fleetfuel.synth.vehicles import VehicleClass, vehicle_class

FloatArray = npt.NDArray[np.float64]
NS_PER_S: Final = 1_000_000_000
SECONDS_PER_HOUR: Final = 3600.0
MOVING: Final = 0
"""Stop-kind code of a sample taken while moving (``truth.stop_kind``)."""

TRUTH_COLUMNS: Final = (
    "time_s", "distance_m", "speed_m_s", "accel_m_s2", "elevation_m", "grade", "lat_deg", "lon_deg",
    "engine_on", "stop_kind", "mass_kg", "fuel_used_l", "fuel_rate_l_h",
)
"""Columns of :attr:`DriveTruth.truth`: time from the drive's start [s], SI units, exact fuel."""

PAYLOAD_START_SHARE: Final = (0.55, 1.0)
"""Range of the payload share a goods vehicle leaves with; deliveries unload it in equal parts."""
BUS_LOAD_SHARE: Final = (0.1, 0.7)
"""Range of a city bus's passenger load between two stops, as a share of the largest payload."""


@dataclass(frozen=True, slots=True, kw_only=True)
class Logger:
    """What a telematics unit records.

    Attributes
    ----------
    rate_hz : float
        Logging rate. [Hz]
    jitter_s : float
        Uniform jitter of each sample time (event loggers), below half the period. [s]
    time_resolution_s : float
        Sample times are rounded to this, or to the period when that is shorter (1 s for most
        units; 0: exact). [s]
    fuel_counter_step_l : float or None
        Resolution of the cumulative fuel counter (0.1 or 0.5 L on CAN); None: no fuel signal. [L]
    fuel_counter_start_l : float
        Counter value at the drive's start (a lifetime total). [L]
    odometer_start_m : float or None
        Odometer at the drive's start; None: no odometer signal. [m]
    odometer_step_m : float
        Odometer resolution. [m]
    fuel_rate : bool
        Also log the instantaneous fuel rate (``fuel_rate_l_h``).
    """

    rate_hz: float = 1.0
    jitter_s: float = 0.0
    time_resolution_s: float = 1.0
    fuel_counter_step_l: float | None = None
    fuel_counter_start_l: float = 0.0
    odometer_start_m: float | None = None
    odometer_step_m: float = 100.0
    fuel_rate: bool = False

    def __post_init__(self) -> None:
        if not 0 < self.rate_hz <= 50:
            raise ConfigError(f"logger rate_hz must be in (0, 50], got {self.rate_hz}")
        if self.jitter_s * self.rate_hz >= 0.5:
            raise ConfigError(f"logger jitter_s {self.jitter_s} must stay below half the period")


@dataclass(frozen=True, slots=True, kw_only=True)
class DriveTruth:
    """One synthetic drive: the logged frame and, row for row, the truth behind it.

    Attributes
    ----------
    frame : DataFrame
        What a logger exports, in canonical columns (:mod:`fleetfuel.schema`): ``vehicle_id``,
        ``time_utc``, ``speed_m_s``, ``lat_deg``, ``lon_deg``, ``elevation_m`` (true and
        noise-free: add defects with :func:`fleetfuel.synth.add_defects`), and ``fuel_used_l``,
        ``fuel_rate_l_h``, ``odometer_m`` when the logger has them (quantised like counters).
    truth : DataFrame
        :data:`TRUTH_COLUMNS`, same index as ``frame``.
    stops : DataFrame
        The realised stops: ``at_m``, ``kind``, ``dwell_s``, ``engine_off``, ``start_s``
        (from the drive's start), including the start and the end of the drive.
    route_name, vehicle_class : str
        What was driven, by what.
    start_utc : Timestamp
        Start of the drive.
    end_time_s : float
        Duration of the drive. [s]
    fuel_used_l : float
        Exact truth fuel of the whole drive. [L]
    distance_m : float
        Length driven. [m]
    """

    frame: pd.DataFrame
    truth: pd.DataFrame
    stops: pd.DataFrame
    route_name: str
    vehicle_class: str
    start_utc: pd.Timestamp
    end_time_s: float
    fuel_used_l: float
    distance_m: float


def _streams(seed: int | np.random.SeedSequence) -> list[np.random.Generator]:
    seq = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    return [np.random.default_rng(s) for s in seq.spawn(3)]


def _timeline(s: FloatArray, v: FloatArray, stops: pd.DataFrame) -> dict[str, npt.NDArray]:
    """Points (grid points, stops doubled) and the steps between them."""
    n = len(s)
    idx = stops["grid_index"].to_numpy()
    rep = np.ones(n, dtype=np.int64)
    rep[idx] = 2
    grid = np.repeat(np.arange(n), rep)
    dwell_at = np.zeros(n)
    dwell_at[idx] = stops["dwell_s"].to_numpy()
    off_at = np.zeros(n, dtype=bool)
    off_at[idx] = stops["engine_off"].to_numpy()
    kind_at = np.zeros(n, dtype=np.int64)
    kind_at[idx] = stops["kind"].to_numpy()
    sp, vp = s[grid], v[grid]
    dwell = grid[1:] == grid[:-1]
    vsum = vp[:-1] + vp[1:]
    dt = np.where(dwell, dwell_at[grid[:-1]], 2 * np.diff(sp) / np.where(dwell, 1.0, vsum))
    accel = np.where(dwell | (dt <= 0), 0.0, np.diff(vp) / np.where(dt > 0, dt, 1.0))
    return {
        "s": sp, "v": vp, "t": np.r_[0.0, np.cumsum(dt)], "dt": dt, "a": accel,
        "engine_on": ~(dwell & off_at[grid[:-1]]),
        "kind": np.where(dwell, kind_at[grid[:-1]], MOVING),
        "grid": grid,
    }


def _step_mass(line: dict[str, npt.NDArray], stops: pd.DataFrame, model: TruthFuelModel, cls: str,
               rng: np.random.Generator) -> FloatArray:
    """Running mass of each step: payload unloaded at deliveries, passengers changing at bus stops."""
    kind = stops["kind"].to_numpy()
    start = rng.uniform(*PAYLOAD_START_SHARE) * model.payload_max_kg
    deliveries = kind == rt.DELIVERY
    change = np.zeros(len(kind))
    if deliveries.any():
        change[deliveries] = -start / deliveries.sum()
    payload = np.clip(start + np.cumsum(change), 0.0, model.payload_max_kg)
    if cls.startswith("bus"):  # passengers: a fresh load after every stop, no drift
        start = BUS_LOAD_SHARE[0] * model.payload_max_kg
        load = rng.uniform(*BUS_LOAD_SHARE, len(kind)) * model.payload_max_kg
        payload = np.where(kind == rt.BUS_STOP, load, start)
    # payload after stop k applies from the end of that stop's dwell step onwards
    step_grid = line["grid"][:-1]
    stop_idx = stops["grid_index"].to_numpy()
    standing = line["grid"][1:] == step_grid
    passed = np.where(standing, np.searchsorted(stop_idx, step_grid, side="left"),
                      np.searchsorted(stop_idx, step_grid, side="right"))
    return model.kerb_mass_kg + np.r_[start, payload][passed]


def _sample_times(end_s: float, logger: Logger, rng: np.random.Generator, start_ns: int) -> FloatArray:
    """Sample times from the drive's start [s]; rounded on the logger's clock (absolute UTC)."""
    period = 1.0 / logger.rate_hz
    phase = rng.uniform(0.0, period)
    times = phase + np.arange(int(np.floor((end_s - phase) / period)) + 1) * period
    if logger.jitter_s:
        times = times + rng.uniform(-logger.jitter_s, logger.jitter_s, len(times))
    resolution = min(logger.time_resolution_s, period)
    if resolution:
        res_ns = int(round(resolution * NS_PER_S))
        clock = np.rint((start_ns + np.rint(times * NS_PER_S)) / res_ns).astype(np.int64) * res_ns
        times = (clock - start_ns) / NS_PER_S
    return np.unique(times[(times >= 0) & (times <= end_s)])


def drive(
    route: Route,
    vehicle: str | VehicleClass,
    *,
    seed: int | np.random.SeedSequence = 0,
    logger: Logger | None = None,
    rate_hz: float | None = None,
    start_utc: str | pd.Timestamp = "2025-03-10T06:00:00Z",
    vehicle_id: str = "SYN-01",
    cfg: DriveConfig | None = None,
    fuel_model: TruthFuelModel | None = None,
    warm_since_s: float = 0.0,
) -> DriveTruth:
    """Drive ``route`` once with a vehicle of class ``vehicle`` and log it.

    Parameters
    ----------
    route : Route
        What to drive (:mod:`fleetfuel.synth.network` builds them).
    vehicle : str or VehicleClass
        A :data:`fleetfuel.synth.vehicles.VEHICLE_CLASSES` name or a class.
    seed : int or SeedSequence
        Same seed, same drive (bit for bit).
    logger : Logger, optional
        Logging rate and signals; default 1 Hz with no fuel counter.
    rate_hz : float, optional
        Shortcut: override the logger's rate. [Hz]
    start_utc : str or Timestamp
        Start of the drive (engine on). [UTC]
    vehicle_id : str
        Id written in the frame.
    cfg : DriveConfig, optional
        Driver and junction behaviour.
    fuel_model : TruthFuelModel, optional
        Truth fuel parameters; default :data:`fleetfuel.synth.truth.TRUTH_MODELS` of the class.
    warm_since_s : float
        Time of the day's first engine start relative to this drive's start (<= 0; 0: a cold
        start now). [s]
    """
    cls = vehicle_class(vehicle)
    cfg = cfg or DriveConfig()
    logger = logger or Logger()
    if rate_hz is not None:
        from dataclasses import replace

        logger = replace(logger, rate_hz=rate_hz)
    model = fuel_model or TRUTH_MODELS[cls.name]
    rng_profile, rng_logger, rng_fuel = _streams(seed)
    s_grid, v_grid, stops = speed_profile(route, cls, cfg, rng_profile)
    line = _timeline(s_grid, v_grid, stops)

    mid_s = (line["s"][:-1] + line["s"][1:]) / 2
    mass = _step_mass(line, stops, model, cls.name, rng_fuel)
    fuel_step = truth_fuel_l(
        model, step_start_s=line["t"][:-1], step_duration_s=line["dt"],
        speed_m_s=(line["v"][:-1] + line["v"][1:]) / 2, accel_m_s2=line["a"],
        grade=route.elevation.grade(mid_s), mass_kg=mass, engine_on=line["engine_on"],
        warm_since_s=warm_since_s, rng=rng_fuel,
    )
    fuel_cum = np.r_[0.0, np.cumsum(fuel_step)]

    start = pd.Timestamp(start_utc)
    start = start.tz_localize("UTC") if start.tzinfo is None else start.tz_convert("UTC")
    t_points = line["t"]
    times = _sample_times(float(t_points[-1]), logger, rng_logger, start.value)
    p = np.clip(np.searchsorted(t_points, times, side="right") - 1, 0, len(t_points) - 2)
    tau = times - t_points[p]
    a = line["a"][p]
    speed = np.maximum(line["v"][p] + a * tau, 0.0)
    dist = np.clip(line["s"][p] + line["v"][p] * tau + a * tau**2 / 2, line["s"][p], line["s"][p + 1])
    awake = line["engine_on"][p] | (tau <= cfg.logger_sleep_after_s)
    dt_p = line["dt"][p]
    share = np.where(dt_p > 0, tau / np.where(dt_p > 0, dt_p, 1.0), 0.0)
    fuel = fuel_cum[p] + fuel_step[p] * share
    rate = np.where(dt_p > 0, fuel_step[p] / np.where(dt_p > 0, dt_p, 1.0), 0.0) * SECONDS_PER_HOUR

    keep = awake
    times, p, speed, dist, a, fuel, rate = (x[keep] for x in (times, p, speed, dist, a, fuel, rate))
    lat = np.interp(dist, route.line.s_m, route.line.lat_deg)
    lon = np.interp(dist, route.line.s_m, route.line.lon_deg)
    elevation = route.elevation.at(dist)
    stamps = pd.to_datetime(start.value + np.rint(times * NS_PER_S).astype(np.int64), unit="ns", utc=True)

    columns: dict[str, object] = {
        schema.VEHICLE_ID: pd.array(pa.array([vehicle_id]).take(pa.array(np.zeros(len(times), dtype=np.int64))),
                                    dtype="string"),
        schema.TIME_UTC: stamps,
        schema.SPEED_M_S: speed,
        schema.LAT_DEG: lat,
        schema.LON_DEG: lon,
        schema.ELEVATION_M: elevation,
    }
    if logger.fuel_counter_step_l:
        q = logger.fuel_counter_step_l
        columns[schema.FUEL_USED_L] = np.round(np.floor((logger.fuel_counter_start_l + fuel) / q + 1e-9) * q, 6)
    if logger.fuel_rate:
        columns[schema.FUEL_RATE_L_H] = rate
    if logger.odometer_start_m is not None:
        q = logger.odometer_step_m
        columns[schema.ODOMETER_M] = np.floor((logger.odometer_start_m + dist) / q + 1e-9) * q
    frame = pd.DataFrame(columns)
    truth = pd.DataFrame({
        "time_s": times, "distance_m": dist, "speed_m_s": speed, "accel_m_s2": a,
        "elevation_m": elevation, "grade": route.elevation.grade(dist), "lat_deg": lat, "lon_deg": lon,
        "engine_on": line["engine_on"][p], "stop_kind": line["kind"][p], "mass_kg": mass[p],
        "fuel_used_l": fuel, "fuel_rate_l_h": rate,
    })
    stop_point = np.searchsorted(line["grid"], stops["grid_index"].to_numpy(), side="left")
    realised = stops.drop(columns="grid_index").assign(start_s=t_points[stop_point])
    return DriveTruth(
        frame=frame, truth=truth, stops=realised, route_name=route.name, vehicle_class=cls.name,
        start_utc=start, end_time_s=float(t_points[-1]), fuel_used_l=float(fuel_cum[-1]),
        distance_m=route.length_m,
    )
