"""Every demo export layout round-trips through its ingest profile within the layout's precision."""

from __future__ import annotations

from pathlib import Path

import gpxpy
import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema, synth
from fleetfuel.ingest import IngestConfig, bundled_profiles, load_profile, read_log
from fleetfuel.synth.export import write_export, write_gpx, write_parquet
from fleetfuel.units import INTERNATIONAL_MILE_M


@pytest.fixture(scope="module")
def frame() -> pd.DataFrame:
    route = synth.line_route(6000, limit_kmh=80, stops=[(3000, 40, False)],
                             hill=synth.Hill(start_m=1000, climb_m=2000, height_m=80))
    logger = synth.Logger(rate_hz=0.5, fuel_counter_step_l=0.1, fuel_counter_start_l=81234.5, odometer_start_m=2.5e8)
    d = synth.drive(route, "rigid_18t", seed=3, logger=logger, vehicle_id="RIG-09",
                    start_utc="2025-03-12T05:30:00Z")
    noisy, _ = synth.add_defects(d.frame, synth.DefectSpec(altitude_sigma_m=4.0, altitude_step_m=1.0), seed=1)
    return noisy


# (layout, file name, tolerance per canonical column in SI, from the digits written:
#  speed 0.05 km/h or 0.05 mph, 1e-6 deg or 1e-5 deg, whole metres, 0.001 L or 0.1 L, odometer digits)
LAYOUTS = [
    ("depot_tracker_csv", "tracker.csv.gz", {schema.SPEED_M_S: 0.05 / 3.6, schema.LAT_DEG: 5e-7, schema.LON_DEG: 5e-7,
                                             schema.ELEVATION_M: 0.05, schema.FUEL_USED_L: 5e-4, schema.ODOMETER_M: 0.5}),
    ("fleet_portal_csv", "RIG-09_2025-03-12.csv", {schema.SPEED_M_S: 0.005 * 0.44704, schema.LAT_DEG: 5e-7,
                                                   schema.LON_DEG: 5e-7, schema.ELEVATION_M: 0.05,
                                                   schema.FUEL_USED_L: 5e-4,
                                                   schema.ODOMETER_M: 0.0005 * INTERNATIONAL_MILE_M}),
    ("event_logger_csv", "events.csv", {schema.SPEED_M_S: 0.005 / 3.6, schema.LAT_DEG: 5e-7, schema.LON_DEG: 5e-7,
                                        schema.ELEVATION_M: 0.05, schema.FUEL_USED_L: 5e-4, schema.ODOMETER_M: 0.5}),
]


def _compare(read: pd.DataFrame, frame: pd.DataFrame, tolerances: dict[str, float]) -> None:
    assert len(read) == len(frame)
    assert (read[schema.VEHICLE_ID] == "RIG-09").all()
    assert np.array_equal(pd.DatetimeIndex(read[schema.TIME_UTC]).asi8, pd.DatetimeIndex(frame[schema.TIME_UTC]).asi8)
    for column, tol in tolerances.items():
        got, want = read[column].to_numpy(), frame[column].to_numpy()
        assert np.array_equal(np.isnan(got), np.isnan(want)), column
        assert np.nanmax(np.abs(got - want)) <= tol * (1 + 1e-9), column


@pytest.mark.parametrize(("layout", "name", "tolerances"), LAYOUTS, ids=[x[0] for x in LAYOUTS])
def test_csv_layout_round_trip(tmp_path: Path, frame: pd.DataFrame, layout: str, name: str,
                               tolerances: dict[str, float]) -> None:
    path = write_export(frame, load_profile(layout), tmp_path / name)
    log = read_log(path, IngestConfig())
    assert log.profile == layout  # found by the header, not forced
    assert log.rows_in == len(frame) and log.dropped.empty
    _compare(log.samples, frame, tolerances)


def test_fleet_portal_times_are_local_with_separate_date_and_time(tmp_path: Path, frame: pd.DataFrame) -> None:
    path = write_export(frame, "fleet_portal_csv", tmp_path / "RIG-09_2025-03-12.csv")
    header, first = path.read_text(encoding="utf-8").splitlines()[:2]
    assert header.startswith("Date;Time;")
    # 05:30 UTC is 06:30 at UTC+1 (the scenario's zone)
    assert first.startswith("12.03.2025;06:30:")
    assert "," in first.split(";")[2]  # decimal comma


def test_parquet_layout_round_trip(tmp_path: Path, frame: pd.DataFrame) -> None:
    path = write_parquet(frame, "bus_parquet", tmp_path / "buses.parquet")
    log = read_log(path, IngestConfig())
    assert log.profile == "bus_parquet"
    _compare(log.samples, frame, {schema.SPEED_M_S: 0.005 / 3.6, schema.LAT_DEG: 5e-7, schema.ELEVATION_M: 0.05,
                                  schema.FUEL_USED_L: 5e-4, schema.ODOMETER_M: 0.5})


def test_gpx_round_trip_and_gpxpy_reference(tmp_path: Path, frame: pd.DataFrame) -> None:
    path = write_gpx(frame, tmp_path / "RIG-09.gpx")
    log = read_log(path, IngestConfig())
    _compare(log.samples, frame, {schema.SPEED_M_S: 0.005, schema.LAT_DEG: 5e-8, schema.LON_DEG: 5e-8,
                                  schema.ELEVATION_M: 0.05})
    # Outside reference: gpxpy parses the same points, times and elevations.
    parsed = gpxpy.parse(path.read_text(encoding="utf-8"))
    points = [p for t in parsed.tracks for s in t.segments for p in s.points]
    assert parsed.version == "1.1"
    assert len(points) == len(frame)
    assert np.allclose([p.latitude for p in points], frame[schema.LAT_DEG], atol=5e-8)
    assert np.allclose([p.elevation for p in points], frame[schema.ELEVATION_M], atol=0.05)
    stamps = pd.to_datetime([p.time for p in points], utc=True)
    assert np.array_equal(stamps.as_unit("ns").asi8, pd.DatetimeIndex(frame[schema.TIME_UTC]).asi8)


def test_exports_are_deterministic(tmp_path: Path, frame: pd.DataFrame) -> None:
    a = write_export(frame, "depot_tracker_csv", tmp_path / "a.csv.gz").read_bytes()
    b = write_export(frame, "depot_tracker_csv", tmp_path / "b.csv.gz").read_bytes()
    assert a == b


def test_one_vehicle_layout_refuses_a_fleet_and_a_wrong_file_name(tmp_path: Path, frame: pd.DataFrame) -> None:
    other = frame.assign(**{schema.VEHICLE_ID: "RIG-10"})
    both = pd.concat([frame, other], ignore_index=True)
    with pytest.raises(synth_errors()):
        write_export(both, "fleet_portal_csv", tmp_path / "RIG-09_2025-03-12.csv")
    with pytest.raises(synth_errors()):
        write_export(frame, "fleet_portal_csv", tmp_path / "RIG-10_2025-03-12.csv")


def synth_errors() -> type[Exception]:
    from fleetfuel.errors import ConfigError

    return ConfigError


def _writable(profile) -> bool:
    frame_columns = {schema.SPEED_M_S, schema.LAT_DEG, schema.LON_DEG, schema.ELEVATION_M, schema.FUEL_USED_L,
                     schema.ODOMETER_M}
    return all(rule.canonical in frame_columns for rule in profile.columns if rule.required)


@pytest.mark.parametrize("name", sorted(p.name for p in bundled_profiles() if _writable(p) and p.name != "bus_parquet"))
def test_writer_handles_every_bundled_csv_profile(tmp_path: Path, frame: pd.DataFrame, name: str) -> None:
    # The writer is generic: any bundled layout the frame can fill reads back with that profile.
    profile = load_profile(name)
    path = write_export(frame, profile, tmp_path / f"RIG-09_2025-03-12_{name}.csv")
    log = read_log(path, IngestConfig(profile=name, vehicle_id_rule="fixed", vehicle_id_value="RIG-09"))
    assert len(log.samples) == len(frame)
    assert np.array_equal(pd.DatetimeIndex(log.samples[schema.TIME_UTC]).asi8,
                          pd.DatetimeIndex(frame[schema.TIME_UTC]).asi8)
    got, want = log.samples[schema.SPEED_M_S].to_numpy(), frame[schema.SPEED_M_S].to_numpy()
    assert np.nanmax(np.abs(got - want)) < 0.01  # 2 decimals in km/h, mph, m/s or cm/s
