"""Trips and operating periods: breaks, key-off, night shifts, and period-by-period independence."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic
from segment_frames import cycle, frame, join

from fleetfuel import schema, synth
from fleetfuel.clean import CleanConfig, clean_batch
from fleetfuel.errors import ConfigError, InputDataError
from fleetfuel.ingest.base import LogBatch, LogFile, conform, empty_dropped
from fleetfuel.segment import (
    SegmentConfig,
    features_of_trace,
    microtrip_features,
    operating_periods,
    period_table,
    split_microtrips,
    split_trips,
    trip_table,
)
from fleetfuel.segment.trips import unlogged_distance_m


def _shift(start: str, vehicle: str, trips: int, pause_s: int) -> pd.DataFrame:
    """``trips`` UDDS runs separated by ``pause_s`` parked (1 Hz, one frame)."""
    _, v = cycle("udds")
    block = np.r_[v, np.zeros(pause_s)]
    return frame(np.tile(block, trips), start=start, vehicle=vehicle)


def _fleet() -> pd.DataFrame:
    # V1: a night shift 21:30 -> past midnight (4 trips, 20 min pauses), then a 9 h rest logged as
    # standstill, then a day shift. V2: two shifts with the logger off (no rows) for 7 h between.
    night = _shift("2024-03-04T21:30:00Z", "V1", 4, 1200)
    rest = frame(np.zeros(9 * 3600), start=night["time_utc"].iloc[-1] + pd.Timedelta(seconds=1), vehicle="V1")
    day = _shift(rest["time_utc"].iloc[-1] + pd.Timedelta(seconds=1), "V1", 2, 900)
    early = _shift("2024-03-04T05:00:00Z", "V2", 2, 600)
    late = _shift("2024-03-04T20:00:00Z", "V2", 3, 400)
    # The clean stage marks the first row after a gap.
    late["gap_break"] = np.r_[True, np.zeros(len(late) - 1, dtype=bool)]
    return join(night, rest, day, early, late)


def test_night_shift_across_midnight_is_one_period() -> None:
    out = operating_periods(_fleet())
    periods = period_table(out)
    v1 = periods.loc[periods["vehicle_id"] == "V1"].reset_index(drop=True)
    assert len(v1) == 2
    night = v1.iloc[0]
    assert night["start_utc"].date() != night["end_utc"].date()  # crosses midnight, stays whole
    assert night["trips"] == 4  # 20 min pauses end trips (> 5 min), not the period (< 4 h)
    assert night["period_id"].startswith("V1/P20240304T2130")
    v2 = periods.loc[periods["vehicle_id"] == "V2"]
    assert v2["trips"].tolist() == [2, 3]  # 7 h without rows is a rest as well


def test_period_ids_do_not_depend_on_how_periods_are_grouped() -> None:
    # The partition contract: each period processed alone gives the same ids and features.
    fleet = _fleet()
    whole = split_microtrips(fleet)
    whole_features = microtrip_features(whole).set_index("microtrip_id")
    for _, rows in whole.loc[whole["period_id"].notna()].groupby("period_id"):
        alone = split_microtrips(fleet.loc[rows.index])
        for col in ("period_id", "trip_id", "microtrip_id"):
            pd.testing.assert_series_equal(alone[col], rows[col])
        part = microtrip_features(alone).set_index("microtrip_id")
        pd.testing.assert_frame_equal(part, whole_features.loc[part.index])


def test_rest_rows_belong_to_no_period_and_no_trip() -> None:
    out = split_trips(_fleet())
    v1 = out.loc[out["vehicle_id"] == "V1"]
    assert v1["period_id"].isna().sum() >= 9 * 3600  # the logged night rest
    assert (out["trip_id"].isna() | out["period_id"].notna()).all()  # a trip row is in a period


def test_gap_break_marker_ends_a_trip() -> None:
    _, v = cycle("udds")
    samples = frame(v)
    cut = int(np.argmax(v > 10.0))  # in the middle of driving
    samples.loc[cut, "gap_break"] = True
    out = split_trips(samples)
    assert out["trip_id"].nunique() == 2
    assert out.loc[cut - 1, "trip_id"] != out.loc[cut, "trip_id"]


def test_log_absence_longer_than_trip_break_ends_a_trip() -> None:
    _, v = cycle("udds")
    a = frame(v, start="2024-03-04T08:00:00Z")
    b = frame(v, start=a["time_utc"].iloc[-1] + pd.Timedelta(minutes=10))
    assert split_trips(join(a, b))["trip_id"].nunique() == 2


@pytest.mark.parametrize(
    ("standstill_s", "rpm", "trips"),
    [
        (180, 0.0, 2),  # 3 min engine off: key-off (>= key_off_min_s = 120 s)
        (180, 700.0, 1),  # 3 min idling engine: a queue, not a trip end (< trip_break_s = 300 s)
        (60, 0.0, 1),  # 1 min engine off: stop-start at a light, not a key-off
        (400, 700.0, 2),  # 400 s idling: long standstill (>= 300 s)
    ],
)
def test_key_off_from_engine_speed(standstill_s: int, rpm: float, trips: int) -> None:
    _, v = cycle("hwfet")
    speed = np.r_[v, np.zeros(standstill_s), v]
    engine = np.where(speed > 0, 1500.0, rpm)
    out = split_trips(frame(speed, engine_speed_rpm=engine))
    assert out["trip_id"].nunique() == trips


def test_parked_flag_counts_as_stopped() -> None:
    _, v = cycle("hwfet")
    speed = np.r_[v, np.full(400, 0.4), v]  # 0.4 m/s drift while parked (above the 1 km/h stop speed)
    parked = np.r_[np.zeros(v.size, bool), np.ones(400, bool), np.zeros(v.size, bool)]
    assert split_trips(frame(speed))["trip_id"].nunique() == 1
    assert split_trips(frame(speed, is_parked=parked))["trip_id"].nunique() == 2


def test_trip_table_distance_and_positions() -> None:
    t, v = cycle("udds")
    lat = 52.0 + np.arange(v.size) * 1e-5
    lon = np.full(v.size, 5.0)
    samples = frame(v, lat_deg=lat, lon_deg=lon)
    trips = trip_table(samples)
    assert len(trips) == 1
    # Same trapezoid as the EPA figure: 11.99 km (40 CFR Part 86 App. I via SOURCES.md).
    assert trips["distance_m"].iloc[0] == pytest.approx(features_of_trace(t, v)["distance_m"], rel=1e-12)
    moving = np.flatnonzero(v >= SegmentConfig().stop_speed_m_s)
    assert trips["start_lat_deg"].iloc[0] == pytest.approx(lat[moving[0] - 1])  # departure row
    assert trips["end_lat_deg"].iloc[0] == pytest.approx(lat[moving[-1] + 1])  # arrival row
    assert trips["duration_s"].iloc[0] == pytest.approx(moving[-1] - moving[0] + 2)


def test_public_functions_leave_input_unchanged() -> None:
    fleet = _fleet()
    before = fleet.copy(deep=True)
    for fn in (operating_periods, split_trips, split_microtrips, trip_table, period_table):
        fn(fleet)
        pd.testing.assert_frame_equal(fleet, before)


def test_no_motion_gives_no_periods() -> None:
    out = split_microtrips(frame(np.zeros(100)))
    assert out["period_id"].isna().all() and out["microtrip_id"].isna().all()
    assert trip_table(out).empty


def test_missing_columns_are_named() -> None:
    with pytest.raises(InputDataError, match="speed_m_s"):
        split_trips(frame(np.zeros(3)).drop(columns="speed_m_s"))


@pytest.mark.parametrize(
    "kwargs",
    [{"trip_break_s": -1.0}, {"period_rest_s": 60.0}, {"path_min_overlap": 1.5}, {"direction_agnostic": 1}],
)
def test_config_rejects_bad_values(kwargs: dict) -> None:
    with pytest.raises(ConfigError, match="segment."):
        SegmentConfig(**kwargs)


def test_config_loads_from_a_run_toml_table() -> None:
    # The [segment] table of a run TOML maps key by key (fleetfuel.config.from_mapping).
    from fleetfuel.config import from_mapping

    cfg = from_mapping(SegmentConfig, {"trip_break_s": 600, "route_unit": "trip"}, "run.toml [segment]")
    assert cfg.trip_break_s == 600.0 and cfg.route_unit == "trip"
    with pytest.raises(ConfigError, match=r"route_unit: choose from \('period', 'trip'\)"):
        from_mapping(SegmentConfig, {"route_unit": "day"}, "run.toml [segment]")


def test_unlogged_distance_across_logging_gaps() -> None:
    # a straight 40 km drive with outages of 2-5 min (rows removed by the generator): the trips
    # miss the outages' distance; the jump from fix to fix gives it back. On a straight road the
    # straight line is the road, so logged + unlogged = the generator's distance (common practice,
    # no source: a lower bound of the road distance in general)
    route = synth.line_route(40_000.0, limit_kmh=80.0, lights_every_m=8_000.0)
    truth = synth.drive(route, "van", seed=9, vehicle_id="V1")
    damaged, injected = synth.add_defects(truth.frame, synth.DefectSpec(gaps_per_day=200.0, gap_s=(120.0, 300.0)), seed=9)
    assert len(injected.gaps) == 5 and (injected.gaps["next_row"] > 0).all()  # five outages, none at the end
    raw = conform(damaged.assign(**{schema.SOURCE_FILE: "gaps.csv", schema.SOURCE_ROW: np.arange(len(damaged))}))
    log = LogFile(path=Path("gaps.csv"), samples=raw, rows_in=len(raw), dropped=empty_dropped(), profile="test")
    clean = clean_batch(LogBatch(files=(log,), failures=()), CleanConfig()).samples
    trips = trip_table(clean)
    logged = trips["distance_m"].sum()
    assert logged < 0.95 * truth.distance_m  # the outages hide more than 5 % of the drive
    assert trips["unlogged_m"].iloc[0] == 0.0  # nothing before a period's first trip
    assert logged + trips["unlogged_m"].sum() == pytest.approx(truth.distance_m, rel=0.01)


def test_unlogged_distance_by_hand() -> None:
    # three trips of one period and one of the next: the second starts 0.01 deg of latitude north
    # of where the first ended (distance by geographiclib's WGS-84 Inverse, Karney 2013), the third
    # where the second ended (a stop: nothing), the fourth in a new period (nothing charged across
    # a period boundary)

    trips = pd.DataFrame({
        "vehicle_id": ["V1"] * 4, "period_id": ["p1", "p1", "p1", "p2"],
        "start_lat_deg": [48.0, 48.02, 48.03, 49.0], "start_lon_deg": [11.0] * 4,
        "end_lat_deg": [48.01, 48.03, 48.05, 49.1], "end_lon_deg": [11.0] * 4,
    })
    jump = unlogged_distance_m(trips)
    assert jump[0] == 0.0 and jump[2] == 0.0 and jump[3] == 0.0
    assert jump[1] == pytest.approx(Geodesic.WGS84.Inverse(48.01, 11.0, 48.02, 11.0)["s12"], rel=1e-9)
    assert unlogged_distance_m(trips.assign(start_lat_deg=[48.0, 48.0105, 48.03, 49.0]))[1] == 0.0  # 56 m: a stop
