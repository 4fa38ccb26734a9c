"""Combustion powertrain: hand calculations from the road-load equation, the Willans line and the
fuel-map grid; idle, fuel cut, full-load and governor limits; EPA CO2 factors."""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest
from simtraces import KMH, constant_speed, reference_cycle, spec

from fleetfuel.constants import STANDARD_GRAVITY_M_S2
from fleetfuel.simulate import SimConfig, VehicleSpec, simulate_trace
from fleetfuel.simulate.fuelmap import max_torque_nm

RHO_SEA_LEVEL = 1.225  # ISO 2533, the default (sea level, ISA temperature)


def willans_fuel_g_s(spec_: VehicleSpec, rpm: float, torque_nm: float) -> float:
    """Fuel rate by hand from the extended Willans line (Guzzella & Onder 2010, Sec. 2.3)."""
    engine = spec_.engine
    assert engine is not None and engine.willans is not None
    w = engine.willans
    vd_m3 = w.displacement_l / 1000
    cm = 2 * w.stroke_m * rpm / 60  # mean piston speed [m/s]
    pme = max(torque_nm, 0.0) * 4 * math.pi / vd_m3  # four-stroke: T = pme Vd / (4 pi)
    pme0 = (w.friction_mep_bar[0] + w.friction_mep_bar[1] * cm**2) * 1e5
    e0 = w.efficiency[0] + w.efficiency[1] * cm + w.efficiency[2] * cm**2
    e1 = w.efficiency_load_slope_per_bar / 1e5
    pmf = (e0 - math.sqrt(e0**2 - 4 * e1 * (pme + pme0))) / (2 * e1)  # e1 pmf^2 - e0 pmf + (pme + pme0) = 0
    return pmf * vd_m3 * rpm / 120 / engine.fuel_properties.lower_heating_value_j_kg * 1000


def map_fuel_g_s(spec_: VehicleSpec, rpm: float, torque_nm: float) -> float:
    """Fuel rate by hand: bilinear interpolation in the spec's fuel-map CSV read with the csv module."""
    assert spec_.engine is not None and spec_.engine.fuel_map_path is not None
    with open(spec_.engine.fuel_map_path, newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(line for line in handle if not line.startswith("#")))
    table = {(float(r["engine_speed_rpm"]), float(r["torque_nm"])): float(r["fuel_rate_g_s"]) for r in rows}
    speeds = sorted({k[0] for k in table})
    torques = sorted({k[1] for k in table})
    s0 = max(s for s in speeds if s <= rpm)
    s1 = min(s for s in speeds if s > rpm)
    t0 = max(t for t in torques if t <= torque_nm)
    t1 = min(t for t in torques if t > torque_nm)
    fs, ft = (rpm - s0) / (s1 - s0), (torque_nm - t0) / (t1 - t0)
    low = table[s0, t0] + ft * (table[s0, t1] - table[s0, t0])
    high = table[s1, t0] + ft * (table[s1, t1] - table[s1, t0])
    return low + fs * (high - low)


def engine_point(spec_: VehicleSpec, speed_m_s: float, gear: int, force_n: float) -> tuple[float, float]:
    """Engine speed [rpm] and torque [N m] by hand: wheel -> final drive -> gearbox, plus auxiliaries."""
    ratio = spec_.driveline.gear_ratios[gear - 1] * spec_.driveline.final_drive_ratio
    omega = speed_m_s / spec_.rolling_radius_m * ratio
    torque = force_n * spec_.rolling_radius_m / (ratio * spec_.driveline.efficiency) + spec_.auxiliary.power_kw * 1000 / omega
    return omega * 60 / (2 * math.pi), torque


@pytest.mark.parametrize(("stem", "fuel_by_hand"), [("car_petrol", willans_fuel_g_s), ("van_diesel", map_fuel_g_s)])
def test_constant_speed_flat_road_equals_hand_calculation(stem: str, fuel_by_hand) -> None:
    s = spec(stem)
    v, duration = 90 * KMH, 600.0
    t, speed = constant_speed(v, duration)
    result = simulate_trace(t, speed, None, s)
    mass = s.test_mass_kg()
    force = s.body.rolling_coefficient * mass * STANDARD_GRAVITY_M_S2 + 0.5 * RHO_SEA_LEVEL * s.drag_area_m2 * v**2
    # wheel energy: F v T, road-load equation (Wong 2008, Ch. 3)
    assert result.totals.wheel_energy_kwh == pytest.approx(force * v * duration / 3.6e6, rel=5e-3)
    gear = int(result.steps.gear[len(t) // 2])
    assert np.all(result.steps.gear == gear)  # steady: no shifting at all
    rpm, torque = engine_point(s, v, gear, force)
    fuel_kg = fuel_by_hand(s, rpm, torque) * duration / 1000
    assert result.totals.fuel_kg == pytest.approx(fuel_kg, rel=5e-3)
    assert result.totals.fuel_l == pytest.approx(fuel_kg / s.fuel.density_kg_l, rel=5e-3)
    assert result.totals.distance_km == pytest.approx(v * duration / 1000, rel=1e-12)
    assert result.totals.shortfall_s == 0.0


def test_idle_fuel_at_standstill_and_stop_start() -> None:
    s = spec("car_petrol")
    t, speed = constant_speed(0.0, 120.0)
    result = simulate_trace(t, speed, None, s)
    idle = s.engine.idle_speed_rpm
    aux_torque = s.auxiliary.power_kw * 1000 / (idle * 2 * math.pi / 60)
    assert result.totals.fuel_kg == pytest.approx(willans_fuel_g_s(s, idle, aux_torque) * 120 / 1000, rel=1e-6)
    assert np.all(result.steps.gear == 0) and result.totals.idle_s == 120.0
    off = simulate_trace(t, speed, None, s, cfg=SimConfig(engine_off_at_standstill=True))
    assert off.totals.fuel_kg == 0.0


def test_fuel_cut_on_overrun_downhill() -> None:
    # 7 % down at a steady 60 km/h: grade force m g sin(theta) far exceeds rolling + drag + engine drag
    s = spec("van_diesel")
    t, speed = constant_speed(60 * KMH, 300.0)
    result = simulate_trace(t, speed, np.full(t.size, -0.07), s)
    assert result.totals.fuel_kg == 0.0
    assert result.totals.friction_brake_kwh > 0
    assert np.all(result.steps.shaft_torque_nm < 0)


def test_full_load_limit_records_shortfall_not_clipping() -> None:
    # 40 t at 60 km/h up 12 %: m g sin(theta) v = 40000 * 9.81 * 0.119 * 16.7 = 780 kW >> 330 kW rated
    s = spec("tractor_40t_diesel_axle264")
    t, speed = constant_speed(60 * KMH, 120.0)
    result = simulate_trace(t, speed, np.full(t.size, 0.12), s)
    assert result.totals.shortfall_s == pytest.approx(120.0)
    assert result.totals.shortfall_kwh > 0.5 * 450 * 120 / 3600  # at least half of the missing ~450 kW
    assert result.totals.max_speed_deficit_kmh > 10
    # the engine delivers exactly its full-load torque in the gear it holds, no more
    full = max_torque_nm(s.engine, result.steps.shaft_speed_rpm)
    assert result.steps.shaft_torque_nm == pytest.approx(full, rel=1e-9)


def test_governed_speed_caps_and_records_the_deficit() -> None:
    s = spec("tractor_40t_diesel_axle264")  # 90 km/h limiter (Directive 92/6/EEC)
    t, speed = constant_speed(100 * KMH, 60.0)
    result = simulate_trace(t, speed, None, s)
    assert result.totals.max_speed_deficit_kmh == pytest.approx(10.0, abs=1e-9)
    assert result.totals.shortfall_s == pytest.approx(60.0)
    assert np.max(result.speed_m_s) == pytest.approx(90 * KMH)
    assert result.totals.distance_km == pytest.approx(100 / 3.6 * 60 / 1000)  # the trace's distance


def test_launch_slips_the_clutch_in_first_gear() -> None:
    s = spec("tractor_40t_diesel_axle264")
    t = np.arange(0.0, 21.0)
    speed = 0.25 * t  # 0.25 m/s^2 from rest: below first gear's idle road speed for ~2 s
    result = simulate_trace(t, speed, None, s)
    engine = s.engine
    idle_road_speed = engine.idle_speed_rpm * 2 * math.pi / 60 * s.rolling_radius_m / s.overall_ratios[0]
    slipping = (speed > 0) & (speed < idle_road_speed)
    assert slipping.any()
    launch_rpm = engine.idle_speed_rpm + SimConfig().launch_speed * (engine.rated_speed_rpm - engine.idle_speed_rpm)
    assert result.steps.shaft_speed_rpm[slipping] == pytest.approx(launch_rpm)
    assert np.all(result.steps.gear[slipping] == 1)
    assert result.steps.gear[0] == 0  # standstill: neutral, idling


@pytest.mark.parametrize(("stem", "epa_kg_per_l"), [("car_petrol", 2.348), ("van_diesel", 2.689)])
def test_co2_per_litre_is_epa(stem: str, epa_kg_per_l: float) -> None:
    # EPA-420-F-18-008: 8,887 g CO2 per US gallon of gasoline, 10,180 g per US gallon of diesel
    cycle = reference_cycle("udds")
    totals = simulate_trace(cycle.time_s, cycle.speed_m_s, cycle.grade, spec(stem)).totals
    assert totals.co2_kg / totals.fuel_l == pytest.approx(epa_kg_per_l, abs=5e-4)


@pytest.mark.parametrize("cycle_stem", ["udds", "hwfet"])
def test_best_efficiency_burns_no_more_than_the_rpm_window(cycle_stem: str) -> None:
    # By construction the option picks the feasible gear of lowest fuel rate (dwell and the 3 %
    # switching margin may cost a little, hence the 1 % allowance).
    cycle = reference_cycle(cycle_stem)
    for stem in ("car_petrol", "van_diesel"):
        window = simulate_trace(cycle.time_s, cycle.speed_m_s, None, spec(stem)).totals.fuel_kg
        best = simulate_trace(cycle.time_s, cycle.speed_m_s, None, spec(stem),
                              cfg=SimConfig(shift_strategy="best_efficiency")).totals.fuel_kg
        assert best <= window * 1.01
