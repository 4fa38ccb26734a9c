"""Shaft torque while braking: the engine or motor carries only what the driveline can take.

Physical invariants checked on every braking step (force balance at the wheels, Newton's second
law as in Wong 2008, Ch. 3): demand = driveline share + friction brakes, with the driveline share
at most the unfired engine's motoring torque (fuel cut on overrun, Guzzella & Sciarretta 2013,
Ch. 3) or the motor's torque limit (Guzzella & Sciarretta 2013, Ch. 4); the friction brakes take
the rest and never appear as shaft torque.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from simtraces import KMH, constant_speed, ramp_cruise_stop, spec

from fleetfuel.simulate import SimConfig, simulate_trace
from fleetfuel.simulate.electric import motor_efficiency, motor_torque_limit_nm
from fleetfuel.simulate.fuelmap import motoring_torque_nm

RPM_RAD_S = 2 * math.pi / 60  # rev/min -> rad/s, exact


def _ratio(s, gear: np.ndarray) -> np.ndarray:
    return s.overall_ratios[np.maximum(gear.astype(int) - 1, 0)]


def test_engine_carries_at_most_its_motoring_torque_in_a_hard_stop() -> None:
    # 34.2 t at 80 km/h braking at 2 m/s^2: about 68 kN at the wheels, some 14 000 N m at the
    # crankshaft in top gear if the engine had to carry it; an unfired engine absorbs only its drag.
    s = spec("tractor_40t_diesel_axle264")
    t, v = ramp_cruise_stop(80 * KMH, 3000.0, accel_m_s2=0.4, decel_m_s2=2.0)
    result = simulate_trace(t, v, None, s)
    steps = result.steps
    drag = motoring_torque_nm(s.engine, steps.shaft_speed_rpm)
    in_gear = steps.gear > 0
    assert np.all(steps.shaft_torque_nm[in_gear] >= drag[in_gear] - 1e-9)
    # the spec's fuel map engine: motoring torque = 0.1 x peak torque (default share, common
    # practice, no source) = 0.1 x 2300 N m = 230 N m
    hard = in_gear & (steps.friction_brake_n > 0)
    assert hard.sum() >= 5  # the stop takes ~11 s; in gear on the friction brakes for most of it (neutral at the end)
    assert steps.shaft_torque_nm[hard] == pytest.approx(-0.1 * 2300.0, rel=1e-12)
    # force balance at the wheels on braking steps: engine share + friction brakes = demand
    braking = in_gear & (steps.wheel_force_n < 0)
    aux = s.auxiliary.power_kw * 1000 / (steps.shaft_speed_rpm[braking] * RPM_RAD_S)
    engine_share = (steps.shaft_torque_nm[braking] - aux) * _ratio(s, steps.gear[braking]) / (
        s.rolling_radius_m * s.driveline.efficiency)
    np.testing.assert_allclose(engine_share - steps.friction_brake_n[braking], steps.wheel_force_n[braking],
                               rtol=1e-9, atol=1e-6)
    # the engine is on fuel cut while it brakes above the cut speed: no fuel burnt on those steps
    cut = s.engine.idle_speed_rpm + SimConfig().fuel_cut_speed * (s.engine.rated_speed_rpm - s.engine.idle_speed_rpm)
    assert np.all(steps.fuel_rate_g_s[hard & (steps.shaft_speed_rpm > cut)] == 0.0)


def test_motor_regenerates_within_its_limit_and_friction_takes_the_rest() -> None:
    # every braking newton offered to the motor (regen share 1) in a 3 m/s^2 stop from 80 km/h of a
    # 3.2 t van: ~9.6 kN at the wheels, above what the motor's torque limit gives at the wheels
    base = spec("van_electric")
    s = dataclasses.replace(base, battery=dataclasses.replace(base.battery, regen_share=1.0))
    t, v = ramp_cruise_stop(80 * KMH, 2000.0, accel_m_s2=1.0, decel_m_s2=3.0)
    result = simulate_trace(t, v, None, s, cfg=SimConfig(initial_soc=0.5))
    steps = result.steps
    limit = motor_torque_limit_nm(s.motor, steps.shaft_speed_rpm)
    assert np.all(np.abs(steps.shaft_torque_nm) <= limit + 1e-9)
    braking = (result.speed_m_s > 0) & (steps.wheel_force_n < 0)
    motor_share = steps.shaft_torque_nm[braking] * _ratio(s, steps.gear[braking]) / (
        s.rolling_radius_m * s.driveline.efficiency)
    np.testing.assert_allclose(motor_share - steps.friction_brake_n[braking], steps.wheel_force_n[braking],
                               rtol=1e-9, atol=1e-6)
    at_limit = braking & np.isclose(np.abs(steps.shaft_torque_nm), limit, rtol=1e-9) & (steps.friction_brake_n > 0)
    assert at_limit.any()  # the case the limit matters in: the motor at its limit, friction brakes for the rest


def test_full_battery_motor_torque_feeds_only_the_auxiliaries() -> None:
    # downhill at 60 km/h with a full battery: the battery accepts nothing, so the motor regenerates
    # only the auxiliaries' power (power balance at the terminals): T omega eta_motor = -P_aux
    s = spec("van_electric")
    t, v = constant_speed(60 * KMH, 120.0)
    result = simulate_trace(t, v, np.full(t.size, -0.05), s, cfg=SimConfig(initial_soc=1.0))
    steps = result.steps
    omega = steps.shaft_speed_rpm * RPM_RAD_S
    eff = motor_efficiency(s.motor, steps.shaft_speed_rpm, steps.shaft_torque_nm)
    np.testing.assert_allclose(steps.shaft_torque_nm * omega * eff, -s.auxiliary.power_kw * 1000, rtol=1e-6)
    assert np.all(steps.friction_brake_n > 0)
