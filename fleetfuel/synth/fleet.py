"""The synthetic fleet of Quillmere Haulage & Transit: N vehicles x D days at any logging rate.

:data:`ROSTER` is the company's fourteen vehicles, listed in an order that mixes the duties, so
the first ``n`` of them are a varied small fleet; larger fleets repeat the roster with new ids.
Each vehicle drives one duty route a day from its shift start (local time in
:data:`SCENARIO_TIMEZONE`), with its own logger. Randomness: one seed sequence per vehicle,
spawned from the fleet seed by roster position, and one per day under it, so a vehicle's days do
not change when the fleet grows or when another vehicle changes.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Final

import numpy as np
import pandas as pd
import pyarrow as pa

from fleetfuel import schema
from fleetfuel.errors import ConfigError
from fleetfuel.synth import duties
from fleetfuel.synth.drive import TRUTH_COLUMNS, DriveTruth, Logger, drive
from fleetfuel.synth.routes import Route
from fleetfuel.synth.speed import DriveConfig
from fleetfuel.synth.vehicles import VEHICLE_CLASSES

SCENARIO_TIMEZONE: Final = "Etc/GMT-1"
"""The scenario's local time: UTC+1 all year (an IANA zone naming no place; POSIX sign convention)."""


@dataclass(frozen=True, slots=True, kw_only=True)
class VehiclePlan:
    """One vehicle of the roster.

    Attributes
    ----------
    vehicle_id : str
        Fleet id.
    vehicle_class : str
        Key of :data:`fleetfuel.synth.vehicles.VEHICLE_CLASSES`.
    duty : str
        One of :data:`fleetfuel.synth.duties.DUTIES`.
    shift_start : str
        Local start of the working day, ``HH:MM``.
    district : str
        Parcel district (``parcel_round``).
    drops : tuple of int
        Range of drops a day (``parcel_round``), or deliveries per town (``regional``).
    dwell_s : float
        Planned delivery dwell (``regional``). [s]
    round_trips : int
        Bus round trips a shift.
    logger : Logger
        The vehicle's telematics unit.
    layout : str
        Export layout of the sample fleet (``sample_logs/build_sample_fleet.py``).
    use_share : float
        Share of working days the vehicle is used (pool car). [1]
    """

    vehicle_id: str
    vehicle_class: str
    duty: str
    shift_start: str
    district: str = ""
    drops: tuple[int, int] = (0, 0)
    dwell_s: float = 0.0
    round_trips: int = 0
    logger: Logger = Logger()
    layout: str = ""
    use_share: float = 1.0


_CAN_01: Final = Logger(rate_hz=1.0, fuel_counter_step_l=0.1, odometer_start_m=0.0, odometer_step_m=5.0)
_CAN_05: Final = Logger(rate_hz=0.2, fuel_counter_step_l=0.5, odometer_start_m=0.0, odometer_step_m=100.0)

ROSTER: Final[tuple[VehiclePlan, ...]] = (
    VehiclePlan(vehicle_id="VAN-01", vehicle_class="van", duty="parcel_round", shift_start="07:30",
                district="north-east", drops=(75, 100), logger=Logger(rate_hz=0.5), layout="depot_tracker_csv"),
    VehiclePlan(vehicle_id="RIG-01", vehicle_class="rigid_7t5", duty="regional", shift_start="06:00",
                drops=(3, 5), dwell_s=600.0, logger=_CAN_05, layout="fleet_portal_csv"),
    VehiclePlan(vehicle_id="TRK-01", vehicle_class="tractor_40t", duty="trunk", shift_start="05:00",
                logger=_CAN_01, layout="depot_tracker_csv"),
    VehiclePlan(vehicle_id="BUS-01", vehicle_class="bus_12m", duty="bus", shift_start="05:45", round_trips=7,
                logger=replace(_CAN_01, rate_hz=0.5), layout="bus_parquet"),
    VehiclePlan(vehicle_id="CAR-01", vehicle_class="car", duty="pool_car", shift_start="08:45",
                logger=Logger(rate_hz=0.5), layout="phone_gpx", use_share=0.8),
    VehiclePlan(vehicle_id="VAN-02", vehicle_class="van", duty="parcel_round", shift_start="07:15",
                district="north-west", drops=(75, 100), logger=Logger(rate_hz=0.5), layout="depot_tracker_csv"),
    VehiclePlan(vehicle_id="RIG-02", vehicle_class="rigid_18t", duty="regional", shift_start="05:30",
                drops=(2, 3), dwell_s=1500.0, logger=_CAN_05, layout="fleet_portal_csv"),
    VehiclePlan(vehicle_id="TRK-02", vehicle_class="tractor_40t", duty="trunk", shift_start="05:30",
                logger=replace(_CAN_05, rate_hz=1 / 30, jitter_s=4.0), layout="event_logger_csv"),
    VehiclePlan(vehicle_id="BUS-02", vehicle_class="bus_12m", duty="bus", shift_start="06:15", round_trips=7,
                logger=replace(_CAN_01, rate_hz=0.5), layout="bus_parquet"),
    VehiclePlan(vehicle_id="VAN-03", vehicle_class="van", duty="parcel_round", shift_start="07:30",
                district="south-west", drops=(75, 100), logger=Logger(rate_hz=1.0), layout="depot_tracker_csv"),
    VehiclePlan(vehicle_id="RIG-03", vehicle_class="rigid_18t", duty="regional", shift_start="06:30",
                drops=(2, 3), dwell_s=1500.0, logger=_CAN_05, layout="fleet_portal_csv"),
    VehiclePlan(vehicle_id="BUS-03", vehicle_class="bus_12m", duty="bus", shift_start="12:45", round_trips=7,
                logger=replace(_CAN_01, rate_hz=0.5), layout="bus_parquet"),
    VehiclePlan(vehicle_id="VAN-04", vehicle_class="van", duty="parcel_round", shift_start="07:45",
                district="south-east", drops=(75, 100), logger=Logger(rate_hz=0.5), layout="depot_tracker_csv"),
    VehiclePlan(vehicle_id="BUS-04", vehicle_class="bus_12m", duty="bus", shift_start="13:15", round_trips=7,
                logger=replace(_CAN_01, rate_hz=0.5), layout="bus_parquet"),
)
"""The fourteen vehicles of Quillmere Haulage & Transit (invented)."""

FUEL_COUNTER_START_L: Final = (20000.0, 400000.0)
"""Range of the lifetime fuel counters at the start of the log (vehicles are not new). [L]"""
ODOMETER_START_M: Final = (40e6, 900e6)
"""Range of the lifetime odometers at the start of the log. [m]"""


@dataclass(frozen=True, slots=True, kw_only=True)
class SyntheticFleet:
    """A generated fleet.

    Attributes
    ----------
    samples : DataFrame
        All vehicles' logged frames (see :class:`~fleetfuel.synth.drive.DriveTruth`), sorted by
        vehicle (roster order) and time, RangeIndex.
    truth : DataFrame or None
        Row for row with ``samples``: :data:`~fleetfuel.synth.drive.TRUTH_COLUMNS` plus
        ``vehicle_id`` and ``day`` (0-based). None when not asked for.
    vehicles : DataFrame
        One row per vehicle: ``vehicle_id``, ``vehicle_class``, ``description``, ``duty``,
        ``layout``, ``rate_hz``, ``fuel_counter_step_l``, ``odometer``.
    days : DataFrame
        One row per vehicle and day driven: ``vehicle_id``, ``day``, ``date``, ``route_name``,
        ``route_kind``, ``start_utc``, ``end_utc``, ``distance_km``, ``fuel_l`` (truth), ``rows``.
    """

    samples: pd.DataFrame
    truth: pd.DataFrame | None
    vehicles: pd.DataFrame
    days: pd.DataFrame


def roster(n_vehicles: int | None = None) -> tuple[VehiclePlan, ...]:
    """The first ``n_vehicles`` of the roster, repeated with fresh ids beyond fourteen."""
    n = len(ROSTER) if n_vehicles is None else n_vehicles
    if n < 1:
        raise ConfigError(f"synth.n_vehicles must be >= 1, got {n}")
    if n <= len(ROSTER):
        return ROSTER[:n]
    counts: dict[str, int] = {}
    for plan in ROSTER:
        prefix = plan.vehicle_id.split("-")[0]
        counts[prefix] = counts.get(prefix, 0) + 1
    out = list(ROSTER)
    for i in range(len(ROSTER), n):
        base = ROSTER[i % len(ROSTER)]
        prefix = base.vehicle_id.split("-")[0]
        counts[prefix] += 1
        out.append(replace(base, vehicle_id=f"{prefix}-{counts[prefix]:02d}"))
    return tuple(out)


def day_route(plan: VehiclePlan, rng: np.random.Generator) -> Route:
    """The route ``plan``'s vehicle drives on one day (drawn from the day's plan stream)."""
    if plan.duty == "parcel_round":
        return duties.parcel_round(rng, plan.district, int(rng.integers(plan.drops[0], plan.drops[1] + 1)))
    if plan.duty == "regional":
        variant = duties.REGIONAL_VARIANTS[int(rng.integers(len(duties.REGIONAL_VARIANTS)))]
        return duties.regional(rng, variant, int(rng.integers(plan.drops[0], plan.drops[1] + 1)), plan.dwell_s)
    if plan.duty == "trunk":
        return duties.trunk(rng)
    if plan.duty == "bus":
        return duties.bus(rng, plan.round_trips)
    if plan.duty == "pool_car":
        return duties.pool_car(rng, duties.CAR_VARIANTS[int(rng.integers(len(duties.CAR_VARIANTS)))])
    raise ConfigError(f"unknown duty {plan.duty!r}; choose from {duties.DUTIES}")


def _vehicle_days(plan: VehiclePlan, seq: np.random.SeedSequence, dates: pd.DatetimeIndex, rate_hz: float | None,
                  timezone: str, cfg: DriveConfig) -> list[tuple[int, DriveTruth]]:
    vehicle_rng, *day_seqs = seq.spawn(len(dates) + 1)
    meta = np.random.default_rng(vehicle_rng)
    logger = plan.logger if rate_hz is None else replace(plan.logger, rate_hz=rate_hz, jitter_s=0.0)
    fuel_l = meta.uniform(*FUEL_COUNTER_START_L)
    odo_m = meta.uniform(*ODOMETER_START_M)
    out = []
    for day, (date, day_seq) in enumerate(zip(dates, day_seqs, strict=True)):  # one iteration per day
        plan_seq, drive_seq = day_seq.spawn(2)
        plan_rng = np.random.default_rng(plan_seq)
        used = plan_rng.uniform() < plan.use_share
        route = day_route(plan, plan_rng)
        if not used:
            continue
        late_min = plan_rng.normal(0.0, 10.0)
        start = pd.Timestamp(f"{date.date()} {plan.shift_start}", tz=timezone) + pd.Timedelta(minutes=late_min)
        day_logger = replace(
            logger,
            fuel_counter_start_l=fuel_l,
            odometer_start_m=None if logger.odometer_start_m is None else odo_m,
        )
        result = drive(route, plan.vehicle_class, seed=drive_seq, logger=day_logger, start_utc=start.tz_convert("UTC"),
                       vehicle_id=plan.vehicle_id, cfg=cfg)
        fuel_l += result.fuel_used_l
        odo_m += result.distance_m
        out.append((day, result))
    return out


def fleet(
    n_vehicles: int | None = None,
    n_days: int = 5,
    *,
    rate_hz: float | None = None,
    seed: int = 0,
    start_date: str = "2025-03-10",
    with_truth: bool = True,
    timezone: str = SCENARIO_TIMEZONE,
    cfg: DriveConfig | None = None,
) -> SyntheticFleet:
    """Generate the fleet: ``n_vehicles`` of the roster over ``n_days`` working days.

    Parameters
    ----------
    n_vehicles : int, optional
        Vehicles (default: the fourteen of :data:`ROSTER`; more repeat it with new ids).
    n_days : int
        Working days (Monday to Friday, weekends skipped) from ``start_date``.
    rate_hz : float, optional
        One logging rate for every vehicle (benchmarks); default: each vehicle's own logger. [Hz]
    seed : int
        Same seed, same fleet (bit for bit).
    start_date : str
        First day (ISO date; moved to the next working day if it is a weekend).
    with_truth : bool
        Also return the truth table (about twice the memory of the samples).
    timezone : str
        IANA zone of the shift start times.
    cfg : DriveConfig, optional
        Driver behaviour.

    Returns
    -------
    SyntheticFleet
    """
    if n_days < 1:
        raise ConfigError(f"synth.n_days must be >= 1, got {n_days}")
    plans = roster(n_vehicles)
    dates = pd.bdate_range(start=start_date, periods=n_days)
    cfg = cfg or DriveConfig()
    seqs = np.random.SeedSequence(seed).spawn(len(plans))
    frames, truths, days, owners = [], [], [], []
    for k, (plan, seq) in enumerate(zip(plans, seqs, strict=True)):  # one iteration per vehicle
        for day, result in _vehicle_days(plan, seq, dates, rate_hz, timezone, cfg):
            frames.append(result.frame)
            owners.append((k, day))
            if with_truth:
                truths.append(result.truth)
            times = result.frame[schema.TIME_UTC]
            days.append({
                "vehicle_id": plan.vehicle_id, "day": day, "date": dates[day].date().isoformat(),
                "route_name": result.route_name, "route_kind": _kind(result.route_name),
                "start_utc": result.start_utc, "end_utc": result.start_utc + pd.Timedelta(seconds=result.end_time_s),
                "distance_km": result.distance_m / 1000, "fuel_l": result.fuel_used_l, "rows": len(times),
            })
    lengths = np.asarray([len(f) for f in frames], dtype=np.int64)
    codes = np.repeat(np.asarray([k for k, _ in owners], dtype=np.int64), lengths)
    ids = pd.array(pa.array([p.vehicle_id for p in plans]).take(pa.array(codes)), dtype="string")
    samples = _stack(frames, [c for c in schema.RAW_COLUMNS if any(c in f.columns for f in frames)])
    samples[schema.VEHICLE_ID] = ids
    truth = None
    if with_truth:
        truth = _stack(truths, list(TRUTH_COLUMNS))
        truth.insert(0, "vehicle_id", ids)
        truth.insert(1, "day", np.repeat(np.asarray([d for _, d in owners], dtype=np.int64), lengths))
    vehicles = pd.DataFrame([{
        "vehicle_id": p.vehicle_id, "vehicle_class": p.vehicle_class,
        "description": VEHICLE_CLASSES[p.vehicle_class].description, "duty": p.duty, "layout": p.layout,
        "rate_hz": p.logger.rate_hz if rate_hz is None else rate_hz,
        "fuel_counter_step_l": p.logger.fuel_counter_step_l, "odometer": p.logger.odometer_start_m is not None,
    } for p in plans])
    return SyntheticFleet(
        samples=samples,
        truth=truth,
        vehicles=vehicles,
        days=pd.DataFrame(days),
    )


def _stack(frames: list[pd.DataFrame], columns: list[str]) -> pd.DataFrame:
    """Concatenate frames column by column (NaN where a frame lacks a column); ids set apart."""
    out: dict[str, object] = {}
    for col in columns:
        if col == schema.VEHICLE_ID:
            out[col] = None
            continue
        if col == schema.TIME_UTC:
            ns = np.concatenate([pd.DatetimeIndex(f[col]).as_unit("ns").asi8 for f in frames])
            out[col] = pd.to_datetime(ns, unit="ns", utc=True)
        else:
            out[col] = np.concatenate([f[col].to_numpy() if col in f.columns else np.full(len(f), np.nan)
                                       for f in frames])
    return pd.DataFrame(out)


def _kind(route_name: str) -> str:
    for prefix, kind in (("Quillmere parcel", "urban_round"), ("Regional", "regional"), ("Trunk", "trunk"),
                         ("Line", "bus_line"), ("Pool", "car_trip"), ("Town", "car_trip")):
        if route_name.startswith(prefix):
            return kind
    return "other"
