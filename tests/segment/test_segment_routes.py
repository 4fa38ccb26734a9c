"""Routes: logged column, routes file, automatic discovery between fixed end points, per vehicle."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic
from segment_frames import along, drive_profile, frame, join

from fleetfuel.constants import WGS84_MEAN_RADIUS_M
from fleetfuel.segment import SegmentConfig, assign_routes, discover_routes, split_trips, trip_table
from fleetfuel.segment.discovery import CELL_COLUMNS, concat_cells, discovery_origin, path_cells
from fleetfuel.segment.routes import trip_routes

A = (52.000, 5.000)  # depot (invented scenario)
B = (52.060, 5.100)  # harbour
C = (51.950, 5.150)  # retail park
DETOUR = (52.055, 4.990)  # a village west of the direct road


def _trip(waypoints, vehicle: str, start: pd.Timestamp, seed: int) -> pd.DataFrame:
    pts = np.radians(np.asarray(waypoints))
    length = sum(
        Geodesic.WGS84.Inverse(*np.degrees(p), *np.degrees(q))["s12"]
        for p, q in zip(pts[:-1], pts[1:], strict=True)
    )
    v = drive_profile(length)
    lat, lon = along(waypoints, v, noise_m=5.0, seed=seed)
    return frame(v, start=start, vehicle=vehicle, lat_deg=lat, lon_deg=lon)


def _fleet(plan: dict[str, list[list[tuple[float, float]]]], days: int = 1) -> pd.DataFrame:
    """Each vehicle drives its legs in turn (15 min parked between), on ``days`` mornings."""
    frames, seed = [], 0
    for vehicle, legs in plan.items():
        for day in range(days):
            start = pd.Timestamp("2024-03-04T07:00:00Z") + pd.Timedelta(days=day)
            for legs_waypoints in legs:
                trip = _trip(legs_waypoints, vehicle, start, seed)
                frames.append(trip)
                start = trip["time_utc"].iloc[-1] + pd.Timedelta(minutes=15)  # logger off while parked
                seed += 1
    return join(*frames)


TRIP_UNIT = SegmentConfig(route_unit="trip", direction_agnostic=True)
PLAN = {
    "V1": [[A, B], [B, A], [A, B], [B, A]],
    "V2": [[A, DETOUR, B], [B, DETOUR, A], [A, C], [C, A]],
}


def test_end_points_are_far_apart_compared_with_the_place_radius() -> None:
    # geographiclib (Karney 2013) geodesics: the fixture's places are kilometres apart, so a
    # 300 m place radius separates them, and the detour runs far off the direct road.
    for p, q in ((A, B), (A, C), (B, C)):
        assert Geodesic.WGS84.Inverse(*p, *q)["s12"] > 20 * SegmentConfig().place_radius_m
    assert Geodesic.WGS84.Inverse(*DETOUR, *A)["s12"] > 5000.0


def test_discovery_recovers_the_known_routes() -> None:
    samples = split_trips(_fleet(PLAN))
    trips = trip_table(samples)
    assert len(trips) == 8
    routes, table = discover_routes(trips, samples, TRIP_UNIT)
    by_trip = trips.assign(route=trips["trip_id"].map(routes))
    got = by_trip.groupby("route")["trip_id"].apply(lambda s: tuple(sorted(s))).sort_index().tolist()
    ids = trips["trip_id"].tolist()
    truth = [tuple(sorted(ids[0:4])), tuple(sorted(ids[4:6])), tuple(sorted(ids[6:8]))]
    assert sorted(got) == sorted(truth)
    # R01 has the most trips; then the longer of the two-trip routes (the detour).
    assert set(by_trip.loc[by_trip["vehicle_id"] == "V1", "route"]) == {"R01"}
    assert by_trip.loc[4, "route"] == "R02"
    row = table.set_index("route").loc["R01"]
    assert row["end_a_lat_deg"] == pytest.approx(A[0], abs=1e-3)  # the earliest trip starts at the depot
    assert row["end_b_lon_deg"] == pytest.approx(B[1], abs=1e-3)
    assert row["description"] == "52.0000N 5.0000E - 52.0600N 5.1000E"


def test_direction_sensitive_discovery_splits_out_and_back() -> None:
    samples = split_trips(_fleet(PLAN))
    routes, _ = discover_routes(
        trip_table(samples), samples, SegmentConfig(direction_agnostic=False, route_unit="trip")
    )
    assert routes.nunique() == 6


def test_discovery_is_deterministic_and_input_unchanged() -> None:
    fleet = _fleet(PLAN)
    before = fleet.copy(deep=True)
    a_samples, a_table = assign_routes(fleet, None, TRIP_UNIT)
    b_samples, b_table = assign_routes(fleet, None, TRIP_UNIT)
    pd.testing.assert_frame_equal(fleet, before)
    pd.testing.assert_frame_equal(a_samples, b_samples)
    pd.testing.assert_frame_equal(a_table, b_table)
    assert set(a_samples["route_source"].dropna()) == {"discovered"}
    assert a_table["trips"].tolist() == [4, 2, 2]
    assert a_table["route"].tolist() == ["R01", "R02", "R03"]


def test_route_column_wins_over_file_and_discovery(tmp_path) -> None:
    fleet = _fleet(PLAN)
    fleet["route"] = pd.array(np.where(fleet["vehicle_id"] == "V2", "City ring", None), dtype="string")
    rules = tmp_path / "routes.csv"
    rules.write_text(
        "vehicle_id,route,payload_kg\nV2,Ignored,100\nV1,Harbour shuttle,18000\n", encoding="utf-8"
    )
    out, table = assign_routes(fleet, None, SegmentConfig(), routes_file=rules)
    src = out.dropna(subset=["route_source"]).groupby("vehicle_id")["route_source"].unique().map(set)
    assert src["V2"] == {"column"} and src["V1"] == {"file"}
    row = table.set_index("route").loc["Harbour shuttle"]
    assert row["payload_kg"] == 18000.0 and row["trips"] == 4 and row["route_source"] == "file"
    assert "Ignored" not in set(table["route"])


def test_routes_file_time_windows_and_default(tmp_path) -> None:
    fleet = _fleet(PLAN)
    trips = trip_table(split_trips(fleet))
    second = trips.loc[trips["vehicle_id"] == "V1", "start_utc"].iloc[1]
    rules = tmp_path / "routes.toml"
    rules.write_text(
        "[[route]]\nvehicle_id = 'V1'\nroute = 'Other'\nplanned_annual_km = 40000\n"
        f"[[route]]\nvehicle_id = 'V1'\nroute = 'Morning run'\nstart = {second.isoformat()}\n"
        f"end = '{(second + pd.Timedelta(minutes=1)).isoformat()}'\n",
        encoding="utf-8",
    )
    out, table = assign_routes(fleet, trips, TRIP_UNIT, routes_file=rules)
    per_trip = (
        out.dropna(subset=["trip_id"]).groupby("trip_id")[["vehicle_id", "route", "route_source"]].first()
    )
    v1 = per_trip.loc[per_trip["vehicle_id"] == "V1", "route"].tolist()
    assert v1 == ["Other", "Morning run", "Other", "Other"]
    v2 = per_trip.loc[per_trip["vehicle_id"] == "V2"]
    assert set(v2["route_source"]) == {"discovered"} and v2["route"].nunique() == 2  # detour, retail park
    assert table.set_index("route").loc["Other", "planned_annual_km"] == 40000.0


def test_logs_without_positions_fall_back_to_one_route_per_vehicle() -> None:
    fleet = _fleet(PLAN).drop(columns=["lat_deg", "lon_deg"])
    out, table = assign_routes(fleet, None, SegmentConfig())
    assert table["route"].tolist() == ["VEH-V1", "VEH-V2"]
    assert set(table["route_source"]) == {"per_vehicle"}
    assert table["description"].tolist() == ["no positions", "no positions"]
    assert out.loc[out["trip_id"].isna(), "route_source"].isna().all()


def test_discovered_names_skip_names_already_taken(tmp_path) -> None:
    fleet = _fleet(PLAN)
    rules = tmp_path / "routes.csv"
    rules.write_text("vehicle_id,route\nV9,R01\n", encoding="utf-8")
    _, table = assign_routes(fleet, None, TRIP_UNIT, routes_file=rules)
    assert table["route"].tolist() == ["R02", "R03", "R04"]


def test_period_journeys_group_daily_duties_into_routes() -> None:
    # Default unit: the trips of an operating period are one journey (a day's duty). V1 and V2 drive
    # the same round A -> B -> C -> A in opposite senses; V3 shuttles A -> B -> A by the western
    # detour. Three mornings each: one period per vehicle and day. Direction-sensitive (default):
    # the two senses of the round are two routes; direction-agnostic: one.
    plan = {
        "V1": [[A, B], [B, C], [C, A]],
        "V2": [[A, C], [C, B], [B, A]],
        "V3": [[A, DETOUR, B], [B, DETOUR, A]],
    }
    fleet = _fleet(plan, days=3)
    out, table = assign_routes(fleet, None, SegmentConfig())
    per_vehicle = out.dropna(subset=["trip_id"]).groupby("vehicle_id")["route"].unique().map(list)
    assert per_vehicle.map(len).tolist() == [1, 1, 1] and per_vehicle.map(tuple).nunique() == 3
    # three journeys each: named by decreasing distance (round ~33 km, detour shuttle ~28 km)
    assert per_vehicle["V3"] == ["R03"]
    assert table.set_index("route")["trips"].to_dict() == {"R01": 9, "R02": 9, "R03": 6}
    assert table.set_index("route").loc["R01", "description"].startswith("loop at 52.0000N 5.0000E")
    out, table = assign_routes(fleet, None, SegmentConfig(direction_agnostic=True))
    per_vehicle = out.dropna(subset=["trip_id"]).groupby("vehicle_id")["route"].unique().map(list)
    assert per_vehicle.to_dict() == {"V1": ["R01"], "V2": ["R01"], "V3": ["R02"]}
    assert table.set_index("route")["trips"].to_dict() == {"R01": 18, "R02": 6}


def test_path_cells_of_each_period_give_the_routes_of_the_whole_frame() -> None:
    # The engine computes path cells period by period (one partition each) on the fleet's common
    # plane: the cells, and so the routes, are those of the whole frame at once (common practice,
    # no source: the work must not depend on how the fleet is cut).
    plan = {"V1": [[A, B], [B, C], [C, A]], "V2": [[A, C], [C, B], [B, A]], "V3": [[A, DETOUR, B], [B, DETOUR, A]]}
    samples = split_trips(_fleet(plan, days=2))
    trips = trip_table(samples)
    cfg = SegmentConfig()
    origin = discovery_origin(trips, cfg)
    ids = trips["trip_id"].astype(str)
    whole = path_cells(samples, ids, origin, cfg)
    parts = concat_cells([path_cells(rows, ids, origin, cfg) for _, rows in samples.groupby("period_id", sort=True)])
    key = list(CELL_COLUMNS)

    def tidy(cells: pd.DataFrame) -> pd.DataFrame:
        return cells.astype({"journey": str}).sort_values(key).reset_index(drop=True)

    pd.testing.assert_frame_equal(tidy(whole), tidy(parts))
    assert whole.groupby("journey").size().min() >= 20  # a ~30 km duty crosses tens of 1 km cells
    from_cells, _ = trip_routes(trips, None, cfg, cells=parts)
    from_frame, _ = trip_routes(trips, samples, cfg)
    pd.testing.assert_frame_equal(from_cells, from_frame)
    assert from_cells["route"].nunique() == 3


def _depot_points(rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray]:
    """``n`` end points around three places about 20 km apart, 15 m of GPS scatter (invented)."""
    centres = np.array([[52.00, 5.00], [52.18, 5.00], [52.00, 5.29]])  # about 20 km apart
    pick = rng.integers(0, 3, n)
    scatter = rng.normal(0.0, 15.0, (n, 2)) / WGS84_MEAN_RADIUS_M
    lat = centres[pick, 0] + np.degrees(scatter[:, 0])
    lon = centres[pick, 1] + np.degrees(scatter[:, 1] / np.cos(np.radians(52.0)))
    return lat, lon


def test_snapped_places_equal_exact_dbscan_and_stay_few_points(monkeypatch) -> None:
    # Reference: scikit-learn's DBSCAN on every point (no snapping), the same eps and metric.
    from sklearn.cluster import DBSCAN

    from fleetfuel.segment import discovery

    rng = np.random.default_rng(7)
    lat, lon = _depot_points(rng, 4000)
    cfg = SegmentConfig()
    exact = DBSCAN(eps=cfg.place_radius_m / WGS84_MEAN_RADIUS_M, min_samples=1, metric="haversine",
                   algorithm="ball_tree").fit_predict(np.radians(np.column_stack([lat, lon])))
    seen: list[int] = []
    fit_predict = DBSCAN.fit_predict

    def counting(self, x, *args, **kwargs):  # type: ignore[no-untyped-def]
        seen.append(len(x))
        return fit_predict(self, x, *args, **kwargs)

    monkeypatch.setattr(DBSCAN, "fit_predict", counting)
    got = discovery._places(lat, lon, cfg)
    assert np.array_equal(got, pd.factorize(exact)[0])
    assert got.max() == 2
    # 4000 points in three spots of 15 m scatter reach DBSCAN as a few dozen cells of 30 m
    assert len(seen) == 1 and seen[0] < 100


def test_packed_tokens_number_like_the_cell_triples() -> None:
    # Reference: pandas factorizing the (east, north, sector) triples as a MultiIndex.
    from fleetfuel.segment.paths import token_matrix

    rng = np.random.default_rng(3)
    cells = np.column_stack([rng.integers(-5000, 5000, 20_000), rng.integers(-5000, 5000, 20_000), rng.integers(0, 9, 20_000)])
    cells[10_000:] = cells[:10_000]  # repeats
    journey = np.sort(rng.integers(0, 50, 20_000))
    matrix = token_matrix(journey, cells, 50)
    ref, uniques = pd.factorize(pd.MultiIndex.from_arrays([cells[:, 0], cells[:, 1], cells[:, 2]]))
    assert matrix.shape == (50, len(uniques))
    expected = np.zeros(matrix.shape, dtype=np.int32)
    expected[journey, ref] = 1
    assert np.array_equal(matrix.toarray(), expected)
    with pytest.raises(ValueError, match="packed token range"):
        token_matrix(np.zeros(1, dtype=np.int64), np.array([[1 << 24, 0, 0]]), 1)


def test_overlap_components_do_not_depend_on_the_edge_budget(monkeypatch) -> None:
    # Reference: scipy's connected components of all neighbour pairs kept at once (a budget no
    # pair list reaches); a tiny budget reduces the pairs to spanning stars many times over.
    from fleetfuel.segment import paths

    rng = np.random.default_rng(11)
    n, width = 600, 400
    base = rng.integers(0, 40, n) * 150  # families of paths, neighbours 150 cells apart chain up
    base[rng.random(n) < 0.5] += 100_000  # two far-apart districts
    noise = (rng.random((n, width)) < 0.15) * rng.integers(10**6, 5 * 10**6, (n, width))  # 15 % detours
    east = (base[:, None] + np.arange(width) + noise).ravel()
    zero = np.zeros(n * width, dtype=np.int64)
    tokens = paths.token_matrix(np.repeat(np.arange(n), width), np.column_stack([east, zero, zero]), n)
    groups = rng.integers(0, 3, n)
    length = np.full(n, 1.0)
    cfg = SegmentConfig()
    whole = paths.overlap_clusters(tokens, groups, length, cfg)
    monkeypatch.setattr(paths, "EDGE_BUDGET", 50)
    monkeypatch.setattr(paths, "PAIR_BLOCK", 5_000)
    assert np.array_equal(paths.overlap_clusters(tokens, groups, length, cfg), whole)
    assert 100 < whole.max() + 1 < n / 2  # families joined, groups kept apart: a real partition
