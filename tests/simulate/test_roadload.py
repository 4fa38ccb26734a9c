"""Road-load terms and trace kinematics against hand calculations from the road-load equation."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fleetfuel.constants import ADHESION_DRY_ASPHALT, ADHESION_WET_ASPHALT, STANDARD_GRAVITY_M_S2
from fleetfuel.errors import InputDataError
from fleetfuel.simulate.roadload import (
    aero_drag_n,
    grade_force_n,
    road_load,
    rolling_resistance_n,
    trace_kinematics,
    traction_limit_n,
)


def test_aero_drag_hand_calculation() -> None:
    # 1/2 * 1.225 (ISO 2533) * 6.0 m^2 * 25^2 = 2296.875 N
    assert float(aero_drag_n(25.0, 6.0, 1.225)) == pytest.approx(2296.875, rel=1e-12)


def test_rolling_resistance_with_grade_cos_and_zero_at_standstill() -> None:
    # c_r m g cos(theta), theta = atan(0.10): 0.006 * 40000 * 9.80665 * cos(atan 0.1) = 2341.92 N
    expected = 0.006 * 40000 * 9.80665 * math.cos(math.atan(0.10))
    got = rolling_resistance_n(40000.0, 0.006, np.array([0.10, 0.10]), np.array([10.0, 0.0]))
    assert got[0] == pytest.approx(expected, rel=1e-12)
    assert got[0] == pytest.approx(2341.92, abs=0.01)
    assert got[1] == 0.0


def test_grade_force_uses_sine_of_the_angle() -> None:
    # m g sin(atan(grade)); 8 % up, 18 t: 18000 * 9.80665 * sin(atan 0.08) = 14076.6 N; downhill negative
    got = grade_force_n(18000.0, np.array([0.08, -0.08, 0.0]))
    assert got[0] == pytest.approx(18000 * 9.80665 * math.sin(math.atan(0.08)), rel=1e-12)
    assert got[0] == pytest.approx(14076.6, abs=0.1)
    assert got[1] == pytest.approx(-got[0]) and got[2] == 0.0


def test_road_load_sums_its_terms() -> None:
    v, a, g = np.array([0.0, 10.0, 20.0]), np.array([1.0, 0.5, -0.3]), np.array([0.0, 0.02, -0.01])
    load = road_load(v, a, g, mass_kg=1500.0, rotating_mass_kg=45.0, rolling_coefficient=0.009,
                     drag_area_m2=0.66, air_density_kg_m3=1.2)
    expected = (rolling_resistance_n(1500.0, 0.009, g, v) + aero_drag_n(v, 0.66, 1.2)
                + grade_force_n(1500.0, g) + 1545.0 * a)
    assert load.total_n == pytest.approx(expected, rel=1e-12)
    assert load.inertia_n == pytest.approx(1545.0 * a, rel=1e-12)


def test_traction_limit_dry_and_wet() -> None:
    # Wong (2008) Table 1.3 via constants: 0.8 dry, 0.5 wet; 11.5 t on the driving axle of 40 t
    mass, share = 40000.0, 11500.0 / 40000.0
    dry = traction_limit_n(mass, np.array([0.0]), share, ADHESION_DRY_ASPHALT)[0]
    wet = traction_limit_n(mass, np.array([0.0]), share, ADHESION_WET_ASPHALT)[0]
    assert dry == pytest.approx(0.8 * 11500 * STANDARD_GRAVITY_M_S2, rel=1e-12)
    assert wet == pytest.approx(0.5 * 11500 * STANDARD_GRAVITY_M_S2, rel=1e-12)


def test_central_differences_on_a_uniform_base() -> None:
    t = np.arange(5.0)
    v = np.array([0.0, 1.0, 4.0, 9.0, 16.0])  # v = t^2: exact derivative 2 t in the interior
    accel, weight = trace_kinematics(t, v)
    assert accel[1:-1] == pytest.approx([2.0, 4.0, 6.0])
    assert accel[0] == 1.0 and accel[-1] == 7.0  # one-sided at the ends
    assert weight == pytest.approx([0.5, 1, 1, 1, 0.5]) and weight.sum() == 4.0


def test_kinetic_work_telescopes_on_a_non_uniform_base() -> None:
    # Work-energy theorem: sum(m v a w) = m (v_end^2 - v_start^2) / 2 exactly, for any time base
    rng = np.random.default_rng(7)
    t = np.cumsum(rng.uniform(0.2, 3.0, 500))
    v = rng.uniform(0.0, 30.0, 500)
    accel, weight = trace_kinematics(t, v)
    assert np.sum(v * accel * weight) == pytest.approx((v[-1] ** 2 - v[0] ** 2) / 2, rel=1e-9, abs=1e-9)
    assert weight.sum() == pytest.approx(t[-1] - t[0], rel=1e-12)


def test_kinematics_refuse_bad_times_and_leave_inputs_alone() -> None:
    t, v = np.array([0.0, 1.0, 1.0, 2.0]), np.array([0.0, 1.0, 2.0, 3.0])
    with pytest.raises(InputDataError, match="strictly increasing.*row 2"):
        trace_kinematics(t, v)
    with pytest.raises(InputDataError, match="equal length"):
        trace_kinematics(t[:2], v)
    t_ok = np.array([0.0, 1.0, 3.0])
    v_ok = np.array([1.0, 2.0, 3.0])
    trace_kinematics(t_ok, v_ok)
    assert np.array_equal(t_ok, [0.0, 1.0, 3.0]) and np.array_equal(v_ok, [1.0, 2.0, 3.0])
