"""Battery-electric powertrain: hand calculations of terminal energy, state of charge, grid energy
(through the charger), regeneration and its limits, and the motor's torque and power limits."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from simtraces import KMH, constant_speed, spec

from fleetfuel.constants import STANDARD_GRAVITY_M_S2
from fleetfuel.simulate import SimConfig, simulate_trace
from fleetfuel.simulate.electric import motor_torque_limit_nm, state_of_charge

RHO_SEA_LEVEL = 1.225  # ISO 2533


def steady_force_n(s, speed_m_s: float, grade: float) -> float:
    """Road-load equation by hand (Wong 2008, Ch. 3): rolling, drag and grade at constant speed."""
    mass = s.test_mass_kg()
    cos, sin = 1 / np.hypot(1, grade), grade / np.hypot(1, grade)
    return (s.body.rolling_coefficient * mass * STANDARD_GRAVITY_M_S2 * cos
            + 0.5 * RHO_SEA_LEVEL * s.drag_area_m2 * speed_m_s**2 + mass * STANDARD_GRAVITY_M_S2 * sin)


def test_constant_speed_terminal_soc_and_grid_energy_by_hand() -> None:
    s = spec("van_electric")
    v, duration = 80 * KMH, 600.0
    t, speed = constant_speed(v, duration)
    result = simulate_trace(t, speed, None, s)
    b = s.battery
    terminal_w = steady_force_n(s, v, 0.0) * v / (s.driveline.efficiency * s.motor.efficiency) + s.auxiliary.power_kw * 1000
    terminal_kwh = terminal_w * duration / 3.6e6
    assert result.totals.battery_kwh == pytest.approx(terminal_kwh, rel=5e-3)
    chemistry_kwh = terminal_kwh / b.discharge_efficiency
    assert result.totals.soc_end == pytest.approx(b.initial_soc - chemistry_kwh / b.usable_kwh, rel=1e-9)
    # grid -> charger -> terminals -> chemistry
    assert result.totals.grid_kwh == pytest.approx(chemistry_kwh / (b.charge_efficiency * b.charger_efficiency), rel=5e-3)
    assert result.totals.grid_kwh > result.totals.battery_kwh
    assert result.totals.fuel_kg == 0.0 and result.totals.co2_kg == 0.0 and result.totals.regen_kwh == 0.0


def test_regeneration_downhill_by_hand() -> None:
    s = spec("van_electric")
    v, duration, grade = 60 * KMH, 300.0, -0.05
    t, speed = constant_speed(v, duration)
    result = simulate_trace(t, speed, np.full(t.size, grade), s, cfg=SimConfig(initial_soc=0.5))
    force = steady_force_n(s, v, grade)
    assert force < 0  # a braking demand
    b, eta_dl, eta_m = s.battery, s.driveline.efficiency, s.motor.efficiency
    regen_mech_w = b.regen_share * force * v * eta_dl  # motor shaft, losses of the gear reduce it
    regen_dc_w = regen_mech_w * eta_m
    assert result.totals.regen_kwh == pytest.approx(-regen_dc_w * duration / 3.6e6, rel=5e-3)
    terminal_w = regen_dc_w + s.auxiliary.power_kw * 1000
    assert result.totals.battery_kwh == pytest.approx(terminal_w * duration / 3.6e6, rel=5e-3)
    assert result.totals.soc_end == pytest.approx(0.5 - terminal_w * duration / 3.6e6 * b.charge_efficiency / b.usable_kwh, rel=1e-6)
    assert result.totals.friction_brake_kwh == pytest.approx(-(1 - b.regen_share) * force * v * duration / 3.6e6, rel=5e-3)


def test_full_battery_refuses_regeneration() -> None:
    s = spec("van_electric")
    t, speed = constant_speed(60 * KMH, 120.0)
    result = simulate_trace(t, speed, np.full(t.size, -0.05), s, cfg=SimConfig(initial_soc=1.0))
    # the auxiliaries still draw; charging stops at a full battery, the rest goes to the friction brakes
    assert result.totals.soc_end <= 1.0
    assert result.totals.regen_kwh == pytest.approx(s.auxiliary.power_kw * 120 / 3600, rel=1e-6)
    assert result.totals.battery_kwh == pytest.approx(0.0, abs=1e-9)
    force = steady_force_n(s, 60 * KMH, -0.05)
    expected_brake = -force * 60 * KMH * 120 / 3.6e6 - s.auxiliary.power_kw * 120 / 3600 / (s.motor.efficiency * s.driveline.efficiency)
    assert result.totals.friction_brake_kwh == pytest.approx(expected_brake, rel=1e-3)


def test_regeneration_capped_by_charge_power() -> None:
    # all braking offered to the motor; 130 km/h down 15 %: ~66 kW at the wheels, ~57 kW after the
    # gear and motor losses, above the 50 kW charge limit at the terminals
    base = spec("car_electric")
    s = dataclasses.replace(base, battery=dataclasses.replace(base.battery, regen_share=1.0))
    t, speed = constant_speed(130 * KMH, 60.0)
    result = simulate_trace(t, speed, np.full(t.size, -0.15), s, cfg=SimConfig(initial_soc=0.5))
    assert np.min(result.steps.battery_power_w) == pytest.approx(-s.battery.max_charge_power_kw * 1000, rel=1e-9)
    assert result.totals.friction_brake_kwh > 0


def test_motor_limits_and_shortfall() -> None:
    s = spec("van_electric")
    m = s.motor
    base = m.rated_power_kw * 1000 / m.max_torque_nm * 60 / (2 * np.pi)  # corner speed [rpm]
    limit = motor_torque_limit_nm(m, np.array([0.0, base / 2, 2 * base, m.max_speed_rpm + 1]))
    assert limit[0] == limit[1] == m.max_torque_nm
    assert limit[2] == pytest.approx(m.max_torque_nm / 2)  # constant power above the corner speed
    assert limit[3] == 0.0
    # 90 km/h up 15 %: m g sin(theta) v = 3200 * 9.81 * 0.148 * 25 = 116 kW > 100 kW peak
    t, speed = constant_speed(90 * KMH, 60.0)
    result = simulate_trace(t, speed, np.full(t.size, 0.15), s)
    assert result.totals.shortfall_s == pytest.approx(60.0)
    assert result.totals.shortfall_kwh > 0


def test_state_of_charge_kernel_by_hand() -> None:
    # 1 kWh usable from 50 %: draw 3.6 kW for 100 s (0.1 kWh at the terminals, 0.1 / 0.9 from chemistry),
    # then charge 3.6 kW for 100 s (0.1 * 0.8 into chemistry)
    power = np.array([3600.0, -3600.0])
    weight = np.array([100.0, 100.0])
    soc, accepted = state_of_charge(power, weight, usable_kwh=1.0, initial_soc=0.5, discharge_efficiency=0.9,
                                    charge_efficiency=0.8)
    assert soc[0] == pytest.approx(0.5 - 0.1 / 0.9, rel=1e-12)
    assert soc[1] == pytest.approx(0.5 - 0.1 / 0.9 + 0.08, rel=1e-12)
    assert np.array_equal(accepted, power)


def test_depleted_battery_is_a_shortfall_not_hidden() -> None:
    s = spec("van_electric")
    small = dataclasses.replace(s, battery=dataclasses.replace(s.battery, usable_kwh=2.0))
    t, speed = constant_speed(80 * KMH, 1800.0)  # ~8 kWh needed
    result = simulate_trace(t, speed, None, small)
    assert result.totals.soc_min < 0
    assert result.totals.shortfall_s > 0
    full = simulate_trace(t, speed, None, s)
    assert result.totals.battery_kwh == pytest.approx(full.totals.battery_kwh, rel=1e-12)  # need reported in full
