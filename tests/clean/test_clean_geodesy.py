"""Geodesic distances against geographiclib (Karney 2013) on real tracks; position validity."""

from __future__ import annotations

import json

import gpxpy
import numpy as np
import pandas as pd
import pytest
from clean_frames import real_log
from geographiclib.geodesic import Geodesic

from fleetfuel.clean.geodesy import (
    geodesic_distance_m,
    invalid_position,
    local_plane_m,
    step_distance_m,
    valid_position,
)

REL_TOL = 1e-4  # the brief's acceptance tolerance; in practice agreement is ~1e-12


def _reference_steps(lat: np.ndarray, lon: np.ndarray) -> np.ndarray:
    # geographiclib (PyPI), Karney's reference implementation, one pair at a time
    inverse = Geodesic.WGS84.Inverse
    return np.array([inverse(lat[i], lon[i], lat[i + 1], lon[i + 1])["s12"] for i in range(lat.size - 1)])


def _gpx_points(path) -> tuple[np.ndarray, np.ndarray]:
    with open(path, encoding="utf-8") as handle:
        gpx = gpxpy.parse(handle)  # gpxpy (PyPI) parses the file independently of fleetfuel's reader
    pts = [(p.latitude, p.longitude) for t in gpx.tracks for s in t.segments for p in s.points]
    arr = np.asarray(pts, dtype=np.float64)
    return arr[:, 0], arr[:, 1]


def _assert_agrees(lat: np.ndarray, lon: np.ndarray) -> None:
    ours = step_distance_m(lat, lon)[1:]
    ref = _reference_steps(lat, lon)
    moving = ref > 1.0
    assert moving.sum() > 50
    np.testing.assert_allclose(ours[moving], ref[moving], rtol=REL_TOL)
    np.testing.assert_allclose(ours[~moving], ref[~moving], atol=1e-6)  # metres; zero-length pairs


@pytest.mark.real_logs
@pytest.mark.parametrize("pattern", ["gpxpy/around-visnjan-with-car.gpx", "gpxpy/korita-zbevnica.gpx",
                                     "gpsbabel/dg100.gpx"])
def test_geodesic_matches_geographiclib_on_real_gpx_tracks(pattern: str) -> None:
    # Real tracks (gpxpy test files; the converter's DG-100 reference track), parsed with gpxpy.
    lat, lon = _gpx_points(real_log(pattern))
    _assert_agrees(lat, lon)


@pytest.mark.real_logs
def test_geodesic_matches_geographiclib_on_munich_track() -> None:
    # The map-matching library's Munich sample trace: WKT "POINT(lon lat)", parsed here with json.
    records = json.loads(real_log("barefoot/*.json").read_text(encoding="utf-8"))
    pts = pd.Series([r["point"] for r in records]).str.extract(r"POINT\(([-\d.]+) ([-\d.]+)\)").astype(float)
    _assert_agrees(pts[1].to_numpy(), pts[0].to_numpy())


def test_equator_degree_is_a_times_pi_over_180() -> None:
    # Along the equator the geodesic is the equator itself: 1 deg = a * pi / 180 with
    # a = 6378137 m (NIMA TR8350.2, WGS 84 defining parameter) = 111319.4908 m.
    assert geodesic_distance_m(0.0, 10.0, 0.0, 11.0) == pytest.approx(6378137.0 * np.pi / 180, rel=1e-12)


def test_meridian_quarter_matches_geographiclib() -> None:
    # Equator to pole: the WGS-84 meridian quadrant, 10001965.729 m (geographiclib reference).
    ref = Geodesic.WGS84.Inverse(0.0, 0.0, 90.0, 0.0)["s12"]
    assert ref == pytest.approx(10001965.729, abs=1e-3)
    assert geodesic_distance_m(0.0, 0.0, 90.0, 0.0) == pytest.approx(ref, rel=1e-12)


def test_nan_in_nan_out_and_broadcast() -> None:
    out = geodesic_distance_m(np.array([48.0, np.nan]), 11.0, 48.001, 11.0)
    assert np.isnan(out[1]) and out[0] == pytest.approx(Geodesic.WGS84.Inverse(48, 11, 48.001, 11)["s12"])


def test_position_validity_rules() -> None:
    lat = np.array([48.0, 0.0, 91.0, np.nan, 48.0, np.nan, 1e-8])
    lon = np.array([11.0, 0.0, 11.0, 11.0, 181.0, np.nan, 1e-8])
    assert valid_position(lat, lon).tolist() == [True, False, False, False, False, False, False]
    # present but unusable: (0, 0), out of range, one coordinate only; both NaN is "no position"
    assert invalid_position(lat, lon).tolist() == [False, True, True, True, True, False, True]


def test_local_plane_scale() -> None:
    # 0.001 deg of latitude is 111.2 m on the IUGG mean sphere (R1 = 6371008.8 m, Moritz 2000)
    east, north = local_plane_m(np.array([48.0, 48.001]), np.array([11.0, 11.0]))
    assert north[1] - north[0] == pytest.approx(6371008.8 * np.deg2rad(0.001), rel=1e-9)
    assert east[1] == pytest.approx(east[0])


def test_inputs_unchanged() -> None:
    lat = np.array([48.0, 48.001, 48.002])
    lon = np.array([11.0, 11.001, 11.002])
    before = (lat.copy(), lon.copy())
    step_distance_m(lat, lon)
    local_plane_m(lat, lon)
    geodesic_distance_m(lat, lon, lat[::-1], lon[::-1])
    assert np.array_equal(lat, before[0]) and np.array_equal(lon, before[1])
