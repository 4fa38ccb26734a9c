"""Speed from positions, distance and acceleration on the grid: hand calculations."""

from __future__ import annotations

import numpy as np
from geographiclib.geodesic import Geodesic

from fleetfuel.clean.motion import acceleration_m_s2, cumulative_distance_m, speed_from_positions


def test_speed_from_positions_central_and_one_sided() -> None:
    # three fixes 0.0001 deg of latitude apart at 1 s: each step is the geodesic length
    # (geographiclib reference), the middle speed is their mean, the ends one-sided
    lat = np.array([48.0, 48.0001, 48.0002, 48.0003])
    lon = np.full(4, 11.0)
    steps = [Geodesic.WGS84.Inverse(lat[i], 11.0, lat[i + 1], 11.0)["s12"] for i in range(3)]
    v = speed_from_positions(lat, lon, np.zeros(4, dtype=np.int64), 1.0)
    np.testing.assert_allclose(v, [steps[0], (steps[0] + steps[1]) / 2, (steps[1] + steps[2]) / 2, steps[2]],
                               rtol=1e-12)
    # a break between samples 1 and 2: no difference across it; a lone fix has no speed
    v = speed_from_positions(lat, lon, np.array([0, 0, 1, 1]), 1.0)
    np.testing.assert_allclose(v, [steps[0], steps[0], steps[2], steps[2]], rtol=1e-12)
    assert np.isnan(speed_from_positions(lat[:1], lon[:1], np.zeros(1), 1.0)[0])


def test_distance_is_trapezoidal_and_stops_at_breaks() -> None:
    v = np.array([0.0, 2.0, 4.0, 4.0, 10.0])
    seg = np.array([0, 0, 0, 1, 1])
    # by hand: 1 + 3 = 4 m in the first stretch, then 0 across the break, then 7 m
    np.testing.assert_allclose(cumulative_distance_m(v, seg, 1.0), [0.0, 1.0, 4.0, 4.0, 11.0])


def test_acceleration_by_hand() -> None:
    v = np.array([0.0, 1.0, 3.0, 6.0, 6.0])
    seg = np.array([0, 0, 0, 0, 1])
    np.testing.assert_allclose(acceleration_m_s2(v, seg, 1.0)[:4], [1.0, 1.5, 2.5, 3.0])
    assert np.isnan(acceleration_m_s2(v, seg, 1.0)[4])  # a lone sample after a break


def test_inputs_unchanged() -> None:
    v = np.array([0.0, 1.0, np.nan, 3.0])
    lat = np.array([48.0, 48.0001, np.nan, 48.0003])
    lon = np.full(4, 11.0)
    seg = np.zeros(4, dtype=np.int64)
    copies = [a.copy() for a in (v, lat, lon, seg)]
    speed_from_positions(lat, lon, seg, 1.0)
    cumulative_distance_m(v, seg, 1.0)
    acceleration_m_s2(v, seg, 1.0)
    for a, b in zip((v, lat, lon, seg), copies, strict=True):
        assert np.array_equal(a, b, equal_nan=True)
