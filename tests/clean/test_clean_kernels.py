"""The compiled kernels of the clean stage against outside references: the short-line geodesic
against geographiclib, the per-run statistics of the parked-drift test against pandas' grouped
statistics, the grid's position-derived speed against the all-Karney one."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyproj
import pytest
from geographiclib.geodesic import Geodesic

from fleetfuel.clean.geodesy import SHORT_LINE_M, geodesic_distance_m, karney_distance_m, step_distance_m
from fleetfuel.clean.motion import grid_speed_from_positions, speed_from_positions
from fleetfuel.clean.parked import _run_ends, _run_quantiles, _run_sums


def _random_lines(n: int, seed: int, longest_m: float) -> tuple[np.ndarray, ...]:
    # end points placed with pyproj's direct geodesic (PROJ, Karney 2013) at every latitude and azimuth
    rng = np.random.default_rng(seed)
    lat1 = rng.uniform(-90.0, 90.0, n)
    lat1[: n // 10] = rng.uniform(89.0, 90.0, n // 10)  # near the pole, where meridians converge
    lon1 = rng.uniform(-180.0, 180.0, n)
    dist = 10 ** rng.uniform(-3.0, np.log10(longest_m), n)
    lon2, lat2, _ = pyproj.Geod(ellps="WGS84").fwd(lon1, lat1, rng.uniform(0.0, 360.0, n), dist)
    return lat1, lon1, np.asarray(lat2), np.asarray(lon2)


def test_short_line_kernel_matches_geographiclib() -> None:
    # geographiclib (PyPI), Karney's reference implementation, pair by pair. Measured agreement:
    # under 2e-9 relative from 1 m to 20 km, under 1e-8 m absolute below 1 m (Cartesian rounding),
    # far inside the brief's 1e-4; geographiclib's own rounding is of the same size.
    lat1, lon1, lat2, lon2 = _random_lines(3000, seed=4, longest_m=0.99 * SHORT_LINE_M)
    ours = geodesic_distance_m(lat1, lon1, lat2, lon2)
    ref = np.array([Geodesic.WGS84.Inverse(*p)["s12"] for p in zip(lat1, lon1, lat2, lon2, strict=True)])
    long_enough = ref >= 1.0
    np.testing.assert_allclose(ours[long_enough], ref[long_enough], rtol=1e-8)
    np.testing.assert_allclose(ours[~long_enough], ref[~long_enough], atol=1e-8)


def test_long_lines_go_to_karney() -> None:
    # beyond SHORT_LINE_M the pair is measured by pyproj (Karney 2013): geographiclib to 1e-12
    lat1, lon1, lat2, lon2 = _random_lines(300, seed=5, longest_m=2e7)
    far = geodesic_distance_m(lat1, lon1, lat2, lon2) > SHORT_LINE_M
    assert far.sum() > 50
    ref = np.array([Geodesic.WGS84.Inverse(*p)["s12"] for p in zip(lat1, lon1, lat2, lon2, strict=True)])
    np.testing.assert_allclose(geodesic_distance_m(lat1, lon1, lat2, lon2)[far], ref[far], rtol=1e-12)
    np.testing.assert_allclose(karney_distance_m(lat1, lon1, lat2, lon2), ref, rtol=1e-12, atol=1e-8)


def test_step_kernel_equals_pair_kernel_and_keeps_nan() -> None:
    rng = np.random.default_rng(6)
    lat = 48.0 + np.cumsum(rng.normal(0.0, 2e-4, 500))
    lon = 11.0 + np.cumsum(rng.normal(0.0, 2e-4, 500))
    lat[[10, 11, 300]] = np.nan
    steps = step_distance_m(lat, lon)
    pairs = geodesic_distance_m(lat[:-1], lon[:-1], lat[1:], lon[1:])
    np.testing.assert_array_equal(steps[1:], pairs)
    assert np.isnan(steps[[0, 10, 11, 12, 300, 301]]).all()
    assert np.isfinite(np.delete(steps, [0, 10, 11, 12, 300, 301])).all()


def test_grid_speed_is_karney_exact_where_it_becomes_the_speed() -> None:
    rng = np.random.default_rng(7)
    lat = 52.0 + np.cumsum(rng.normal(0.0, 1e-4, 400))
    lon = 4.0 + np.cumsum(rng.normal(0.0, 1e-4, 400))
    seg = np.repeat([0, 1, 2], [150, 1, 249])
    exact = rng.random(400) < 0.3
    reference = speed_from_positions(lat, lon, seg, 1.0)  # Karney (pyproj) for every step
    got = grid_speed_from_positions(lat, lon, exact, seg, 1.0)
    np.testing.assert_array_equal(got[exact], reference[exact])
    np.testing.assert_allclose(got, reference, rtol=1e-8)
    assert np.isnan(got[150]) and np.isnan(reference[150])  # a lone fix between two breaks


@pytest.mark.parametrize("seed", [0, 1])
def test_run_statistics_equal_pandas_grouped_statistics(seed: int) -> None:
    # pandas (PyPI) groupby first / last / median / quantile(0.95, linear) / sum, NaN skipped:
    # the compiled per-run statistics give the same numbers to the bit.
    rng = np.random.default_rng(seed)
    values = rng.normal(0.0, 30.0, 20_000)
    values[rng.random(values.size) < 0.1] = np.nan
    label = np.sort(rng.integers(0, 900, values.size))
    values[label == label[0]] = np.nan  # one run without any value
    bounds = np.flatnonzero(np.r_[True, label[1:] != label[:-1], True])
    grouped = pd.Series(values).groupby(label)
    other = values[::-1].copy()
    ends = _run_ends(values, other, bounds)
    np.testing.assert_array_equal(ends[0], grouped.first().to_numpy())
    np.testing.assert_array_equal(ends[2], grouped.last().to_numpy())
    np.testing.assert_array_equal(ends[4], grouped.median().to_numpy())
    np.testing.assert_array_equal(ends[5], pd.Series(other).groupby(label).median().to_numpy())
    np.testing.assert_array_equal(_run_quantiles(values, bounds, 0.95), grouped.quantile(0.95).to_numpy())
    np.testing.assert_array_equal(_run_sums(values, bounds), grouped.sum().to_numpy())
