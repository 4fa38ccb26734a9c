"""simulate_trace end to end: energy bookkeeping on closed loops (work-energy theorem), time bases,
adhesion limits, input checks, and inputs left unchanged."""

from __future__ import annotations

import json

import numpy as np
import pytest
from simtraces import KMH, constant_speed, ramp_cruise_stop, spec

from fleetfuel.errors import InputDataError, SpecError
from fleetfuel.simulate import SimConfig, simulate_trace


def test_closed_loop_has_zero_net_kinetic_and_potential_energy() -> None:
    # Work-energy theorem: equal start and end speed and elevation -> no net kinetic or potential work.
    # Out at +4 % for the first half of the time, back at -4 %: the trace is symmetric in time.
    t = np.arange(0.0, 201.0)
    v = np.minimum.reduce([0.8 * t, np.full(t.size, 60 * KMH), 0.8 * (t[-1] - t)])  # symmetric in time
    grade = np.where(t < t[-1] / 2, 0.04, np.where(t > t[-1] / 2, -0.04, 0.0))
    totals = simulate_trace(t, v, grade, spec("van_diesel")).totals
    climb_kwh = spec("van_diesel").test_mass_kg() * 9.80665 * 0.04 / np.hypot(1, 0.04) * np.sum(v) / 2 / 3.6e6
    assert abs(totals.grade_net_kwh) < 1e-9 * climb_kwh + 1e-12
    assert abs(totals.kinetic_net_kwh) < 1e-12
    assert totals.wheel_energy_kwh > climb_kwh  # the climb itself had to be paid for


def test_closed_loop_on_a_non_uniform_time_base() -> None:
    # Irregular logging (0.5-3 s steps), speed starting and ending at 12 m/s, a smooth hill out and back
    rng = np.random.default_rng(11)
    t = np.concatenate(([0.0], np.cumsum(rng.uniform(0.5, 3.0, 800))))
    v = 12 + 6 * np.sin(2 * np.pi * t / t[-1]) ** 2
    s = np.concatenate(([0.0], np.cumsum(np.diff(t) * (v[1:] + v[:-1]) / 2)))
    elevation = 30 * np.sin(np.pi * s / s[-1]) ** 2  # 0 -> 30 m -> 0 over the loop
    grade = 30 * np.pi / s[-1] * np.sin(2 * np.pi * s / s[-1])  # d(elevation)/ds
    totals = simulate_trace(t, v, grade, spec("car_petrol"), elevation_m=elevation).totals
    climb_kwh = spec("car_petrol").test_mass_kg() * 9.80665 * 30 / 3.6e6
    assert abs(totals.kinetic_net_kwh) < 1e-12  # telescopes exactly on any time base
    assert abs(totals.grade_net_kwh) < 2e-3 * climb_kwh  # quadrature error only


def test_uniform_and_non_uniform_sampling_of_one_trace_agree() -> None:
    # 0 -> 20 m/s at 1 m/s^2, cruise to 60 s: piecewise linear, so the trapezoidal rule is exact
    t = np.arange(0.0, 61.0)
    v = np.minimum(t, 20.0)
    keep = np.unique(np.concatenate(([0, 20, 60], np.arange(0, 61, 3), np.arange(20, 61, 7))))
    s = spec("car_electric")
    dense = simulate_trace(t, v, None, s).totals
    sparse = simulate_trace(t[keep], v[keep], None, s).totals
    assert sparse.distance_km == pytest.approx(dense.distance_km, rel=1e-12)
    assert sparse.duration_s == dense.duration_s
    mass = s.test_mass_kg()
    assert dense.kinetic_net_kwh == pytest.approx(0.5 * mass * 20**2 / 3.6e6, rel=1e-12)
    assert sparse.kinetic_net_kwh == pytest.approx(dense.kinetic_net_kwh, rel=1e-12)


def test_wet_road_limits_a_hill_start_by_adhesion() -> None:
    # 12 % up from rest at 0.5 m/s^2: ~59 kN wanted; the driving axle (28 % of 34.2 t) passes
    # 0.8 x 94 kN = 75 kN dry but 0.5 x 94 kN = 47 kN wet (Wong 2008, Table 1.3 via constants)
    s = spec("tractor_40t_diesel_axle264")
    t = np.arange(0.0, 11.0)
    v = np.minimum(0.5 * t, 3.0)
    grade = np.full(t.size, 0.12)
    dry = simulate_trace(t, v, grade, s, cfg=SimConfig(adhesion="dry")).totals
    wet = simulate_trace(t, v, grade, s, cfg=SimConfig(adhesion="wet")).totals
    assert dry.shortfall_s == 0.0
    assert wet.shortfall_s > 0 and wet.max_speed_deficit_kmh > 0


def test_inputs_are_left_unchanged_and_read_only_arrays_work() -> None:
    t, v = ramp_cruise_stop(50 * KMH, 2000.0, 0.8)
    grade = np.full(t.size, 0.01)
    elevation = np.linspace(100.0, 120.0, t.size)
    copies = [a.copy() for a in (t, v, grade, elevation)]
    for arr in (t, v, grade, elevation):
        arr.setflags(write=False)
    result = simulate_trace(t, v, grade, spec("van_electric"), elevation_m=elevation)
    for arr, copy in zip((t, v, grade, elevation), copies, strict=True):
        assert np.array_equal(arr, copy)
    assert result.steps.gear.shape == t.shape and result.short.shape == t.shape
    json.dumps(result.totals.as_dict())  # totals are plain JSON numbers


@pytest.mark.parametrize(
    ("time_s", "speed", "grade", "message"),
    [
        ([0.0, 1.0, 2.0], [0.0, -1.0, 0.0], None, r"speed_m_s: expected >= 0, found -1.0 at row 1"),
        ([0.0, 1.0, 2.0], [0.0, float("nan"), 0.0], None, r"speed_m_s: expected finite numbers, found nan at row 1"),
        ([0.0, 2.0, 1.0], [0.0, 1.0, 0.0], None, r"time_s: expected strictly increasing"),
        ([0.0, 1.0], [0.0, 1.0, 2.0], None, r"equal length"),
        ([0.0, 1.0, 2.0], [0.0, 1.0, 0.0], [0.0, float("inf"), 0.0], r"grade: expected finite numbers"),
    ],
)
def test_bad_traces_give_one_line_errors(time_s, speed, grade, message) -> None:
    with pytest.raises(InputDataError, match=message):
        simulate_trace(np.array(time_s), np.array(speed), None if grade is None else np.array(grade), spec("car_petrol"))


def test_payload_beyond_legal_gross_mass_is_refused() -> None:
    t, v = constant_speed(10.0, 10.0)
    with pytest.raises(SpecError, match=r"van_diesel.toml: payload 2000 kg gives a gross mass of 4150 kg"):
        simulate_trace(t, v, None, spec("van_diesel"), payload_kg=2000.0)


def test_payload_changes_the_result() -> None:
    t, v = ramp_cruise_stop(50 * KMH, 3000.0, 0.8)
    s = spec("rigid_18t_diesel_170kw")
    empty = simulate_trace(t, v, None, s, payload_kg=0.0)
    laden = simulate_trace(t, v, None, s, payload_kg=s.max_payload_kg)
    assert laden.payload_kg == s.max_payload_kg
    assert laden.totals.wheel_energy_kwh > 1.5 * empty.totals.wheel_energy_kwh
    assert laden.totals.fuel_kg > empty.totals.fuel_kg


@pytest.mark.parametrize("name", ["van_diesel", "van_electric"])
def test_totals_do_not_depend_on_blas_threads(name: str) -> None:
    # workers run one BLAS thread, the main process as many as the machine has: a long trace
    # (12 h at 1 Hz, ramps and cruises) must give the same digits either way (common practice,
    # no source: sums by numpy's pairwise summation, not a threaded BLAS dot product)
    from threadpoolctl import threadpool_limits

    t, v = ramp_cruise_stop(60.0 * KMH, 5_000.0, 1.0)
    reps = int(np.ceil(43_200 / t.size))
    t_long = np.arange(t.size * reps, dtype=np.float64)
    v_long = np.tile(v, reps)
    s = spec(name)
    free = simulate_trace(t_long, v_long, None, s).totals
    with threadpool_limits(limits=1):
        pinned = simulate_trace(t_long, v_long, None, s).totals
    assert free == pinned
