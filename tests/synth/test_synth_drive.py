"""Synthetic drives: determinism, kinematic plausibility, positions, elevation truth."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic

from fleetfuel import schema, synth
from fleetfuel.synth import duties
from fleetfuel.synth.network import quillmere_network

STILL = synth.DriveConfig(wobble=0.0, speed_factor_sigma=0.0, dwell_sigma=0.0)


def _accel(truth: pd.DataFrame) -> np.ndarray:
    return np.diff(truth.speed_m_s.to_numpy()) / np.diff(truth.time_s.to_numpy())


def test_same_seed_same_frame_and_other_seed_differs() -> None:
    route = synth.line_route(6000, limit_kmh=70, stops=[(3000, 30, False)], lights_every_m=1500)
    a = synth.drive(route, "van", seed=7, logger=synth.Logger(fuel_counter_step_l=0.1))
    b = synth.drive(route, "van", seed=7, logger=synth.Logger(fuel_counter_step_l=0.1))
    c = synth.drive(route, "van", seed=8, logger=synth.Logger(fuel_counter_step_l=0.1))
    pd.testing.assert_frame_equal(a.frame, b.frame)
    pd.testing.assert_frame_equal(a.truth, b.truth)
    assert not a.truth.speed_m_s.equals(c.truth.speed_m_s)


def test_frame_has_canonical_columns_and_dtypes() -> None:
    d = synth.drive(synth.line_route(3000), "car", seed=1,
                    logger=synth.Logger(fuel_counter_step_l=0.1, odometer_start_m=1e6))
    assert list(d.frame.columns) == [schema.VEHICLE_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.LAT_DEG,
                                     schema.LON_DEG, schema.ELEVATION_M, schema.FUEL_USED_L, schema.ODOMETER_M]
    assert str(d.frame[schema.TIME_UTC].dtype) == "datetime64[ns, UTC]"
    assert d.frame[schema.VEHICLE_ID].dtype == "string"
    assert list(d.truth.columns) == list(synth.TRUTH_COLUMNS)
    assert d.frame[schema.TIME_UTC].is_monotonic_increasing


@pytest.mark.parametrize("cls", ["van", "rigid_18t", "tractor_40t", "bus_12m", "car"])
def test_acceleration_within_class_bounds(cls: str) -> None:
    vehicle = synth.VEHICLE_CLASSES[cls]
    route = synth.line_route(12000, limit_kmh=90, stops=[(4000, 20, False), (8000, 60, True)], lights_every_m=1000)
    truth = synth.drive(route, cls, seed=3).truth
    acc = _accel(truth)
    # Bounds of the class (common practice, no source: trucks 0.3-0.8 m/s2 from rest, vans and
    # cars 1-2 m/s2, braking 1-2 m/s2); 0.5 % allowance for the speed-table interpolation.
    assert acc.max() <= vehicle.max_accel_m_s2 * 1.005
    assert -acc.min() <= vehicle.max_decel_m_s2 * 1.005
    assert acc.max() > 0.5 * vehicle.max_accel_m_s2  # it does accelerate near its bound
    # Power limit at speed: mean acceleration over a step never exceeds the power-limited
    # bound at the step's lower speed (the bound falls with speed).
    v0 = truth.speed_m_s.to_numpy()[:-1]
    assert np.all(acc <= vehicle.accel_power(v0) * 1.01 + 1e-9)


def test_heavy_truck_slows_on_a_climb_the_van_does_not() -> None:
    # A 7 % mean climb of 210 m over 3 km (a steep trunk-road climb; common practice, no source).
    route = synth.line_route(9000, limit_kmh=80, hill=synth.Hill(start_m=3000, climb_m=3000, height_m=210))
    truck = synth.drive(route, "tractor_40t", seed=1, cfg=STILL).truth
    van = synth.drive(route, "van", seed=1, cfg=STILL).truth
    climb = (truck.distance_m > 4000) & (truck.distance_m < 6000)
    limit = 80 / 3.6
    assert truck.speed_m_s[climb].min() < 0.6 * limit
    climb_van = (van.distance_m > 4000) & (van.distance_m < 6000)
    assert van.speed_m_s[climb_van].min() > 0.8 * limit  # 105 kW, 2.9 t: about 70 km/h at 10 %
    # steady climbing speed P = v (m g (grade + c_r) + aero) for 90 % of 330 kW, 34 t, 7 % to 10 %
    tractor = synth.VEHICLE_CLASSES["tractor_40t"]
    v_steep, v_mean = tractor.climb_speed_m_s(np.array([0.11, 0.07]))
    assert v_steep * 0.95 <= truck.speed_m_s[climb].min() <= v_mean


def test_positions_agree_with_distance_and_speed_against_geographiclib() -> None:
    rng = np.random.default_rng(5)
    route = duties.regional(rng, "pass_out_back", 2, 600.0)
    truth = synth.drive(route, "rigid_18t", seed=2, rate_hz=1.0).truth
    sample = truth.iloc[: 4000]
    lat, lon = sample.lat_deg.to_numpy(), sample.lon_deg.to_numpy()
    ds = np.diff(sample.distance_m.to_numpy())
    moving = np.flatnonzero(ds > 1.0)[::7]
    # Outside reference: Karney's geodesic algorithms (geographiclib), WGS-84.
    geo = np.array([Geodesic.WGS84.Inverse(lat[i], lon[i], lat[i + 1], lon[i + 1])["s12"] for i in moving])
    ratio = geo / ds[moving]
    assert np.all(ratio <= 1 + 1e-4)  # a chord is never longer than the road
    assert np.quantile(np.abs(ratio - 1), 0.99) < 0.01
    # distance increments agree with speed x dt (trapezoid) within 1 % for 99 % of moving steps
    v, t = sample.speed_m_s.to_numpy(), sample.time_s.to_numpy()
    trapezoid = (v[1:] + v[:-1]) / 2 * np.diff(t)
    rel = np.abs(trapezoid[ds > 1.0] / ds[ds > 1.0] - 1)
    assert np.quantile(rel, 0.99) < 0.01


def test_hill_truth_height_as_specified() -> None:
    route = synth.line_route(15000, hill=synth.Hill(start_m=2000, climb_m=7000, height_m=360), base_elevation_m=95)
    truth = synth.drive(route, "rigid_7t5", seed=4).truth
    assert route.elevation.z_m.max() - route.elevation.z_m.min() == pytest.approx(360.0, abs=1e-9)
    assert truth.elevation_m.max() == pytest.approx(455.0, abs=0.5)
    # the true grade integrates to the true elevation (rise over run)
    s = route.elevation.s_m
    rebuilt = 95 + np.r_[0.0, np.cumsum(route.elevation.grade(s[:-1]) * np.diff(s))]
    assert np.allclose(rebuilt, route.elevation.z_m, atol=1e-6)


def test_corvey_pass_climbs_360_m_in_6_to_8_km() -> None:
    road = quillmere_network().road("q_ch")
    assert road.elevation is not None
    s, z = road.elevation.s_m, road.elevation.z_m
    top = int(np.argmax(z))
    foot = int(np.flatnonzero(z[:top] <= 95.0 + 1e-6)[-1])
    assert z[top] - z[foot] == pytest.approx(360.0, abs=1.0)
    assert 6000 <= s[top] - s[foot] <= 8000


def test_flat_route_is_flat_and_stops_are_where_asked() -> None:
    route = synth.line_route(5000, stops=[(2500, 120, True)])
    d = synth.drive(route, "van", seed=1, cfg=STILL)
    assert np.all(d.truth.elevation_m == 100.0)
    assert np.all(d.truth.grade == 0.0)
    stop = d.stops[d.stops.kind == 11]  # a delivery
    assert stop.at_m.iloc[0] == pytest.approx(2500.0, abs=2.0)
    assert stop.dwell_s.iloc[0] == pytest.approx(120.0)
    standing = d.truth[(d.truth.stop_kind == 11)]
    assert (standing.speed_m_s == 0).all() and (~standing.engine_on).all()


def test_same_trajectory_at_any_logging_rate() -> None:
    route = synth.line_route(6000, lights_every_m=2000)
    fast = synth.drive(route, "rigid_7t5", seed=9, rate_hz=1.0).truth
    slow = synth.drive(route, "rigid_7t5", seed=9, logger=synth.Logger(rate_hz=1 / 30, jitter_s=3.0)).truth
    speed_at = np.interp(slow.time_s, fast.time_s, fast.speed_m_s)
    assert len(slow) < len(fast) / 20
    assert np.abs(speed_at - slow.speed_m_s).max() < 0.5  # same speed profile, linear between 1 Hz samples
    assert slow.fuel_used_l.iloc[-1] == pytest.approx(fast.fuel_used_l.iloc[-1], rel=0.02)


def test_logger_sleeps_when_the_engine_is_off_long() -> None:
    route = synth.line_route(4000, stops=[(2000, 1800, True)])
    d = synth.drive(route, "van", seed=1, cfg=STILL)
    step = np.diff(d.truth.time_s.to_numpy())
    assert step.max() == pytest.approx(1800 - STILL.logger_sleep_after_s, abs=2.0)


def test_urban_round_is_stop_and_go_and_bus_stops_every_few_hundred_metres() -> None:
    rng = np.random.default_rng(1)
    van = synth.drive(duties.parcel_round(rng, "north-east", 30), "van", seed=1).truth
    moving = van.speed_m_s > 0.5
    starts = np.count_nonzero(np.diff(moving.astype(int)) == 1)
    assert starts / (van.distance_m.iloc[-1] / 1000) > 1.0  # more than one stop per km
    assert van.speed_m_s.max() < 55 / 3.6  # town limits 30 and 50 km/h
    route = duties.bus(rng, 1)
    gaps = np.diff(np.sort(route.stop_at_m[route.stop_kind == 12]))
    assert 250 < np.median(gaps) < 550
