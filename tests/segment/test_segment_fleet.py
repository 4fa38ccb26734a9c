"""Route discovery on whole fleets with known routes (generator truth, bundled sample fleet), real logs."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from segment_frames import SHARED

from fleetfuel.segment import SegmentConfig, assign_routes, microtrip_features, split_microtrips, trip_table

# Two duties of the generator drive the very same roads (fleetfuel.synth.duties: the pool car to
# Corvey Heights and the regional "pass out and back" both go depot -> centre -> Corvey road and
# back), so a route found from positions cannot tell them apart; they count as one route here.
SAME_ROADS = {"Pool car to Corvey": "Regional pass out back"}


def _purities(periods: pd.DataFrame, days: pd.DataFrame, truth_col: str) -> tuple[float, float]:
    """Purity (found routes hold one true route) and inverse purity (true routes stay in one found route).

    Periods are matched to the truth's duty-days of the same vehicle by overlapping time.
    """
    j = periods.merge(days, on="vehicle_id")
    j = j.loc[(j["start"] < j["end_utc"]) & (j["end"] > j["start_utc"])]
    assert len(j) == len(periods), "every operating period is one duty-day of the truth"
    table = pd.crosstab(j[truth_col].replace(SAME_ROADS), j["route"])
    total = table.to_numpy().sum()
    return table.max(axis=0).sum() / total, table.max(axis=1).sum() / total


def _periods(samples: pd.DataFrame) -> pd.DataFrame:
    rows = samples.dropna(subset=["period_id"])
    return (
        rows.groupby("period_id")
        .agg(
            vehicle_id=("vehicle_id", "first"),
            start=("time_utc", "min"),
            end=("time_utc", "max"),
            route=("route", "first"),
        )
        .reset_index()
    )


@pytest.mark.slow
def test_discovery_recovers_the_generator_fleet_duties() -> None:
    # Known truth by construction: fleetfuel.synth names each vehicle-day's duty (route_name). Seed 7
    # was not used to calibrate SegmentConfig's path-overlap defaults (seeds 0-6 were).
    synth = pytest.importorskip("fleetfuel.synth")
    fleet = synth.fleet(n_days=3, seed=7, with_truth=False)
    out, table = assign_routes(fleet.samples, None, SegmentConfig())
    days = fleet.days[["vehicle_id", "start_utc", "end_utc", "route_name"]]
    purity, inverse = _purities(_periods(out), days, "route_name")
    assert purity == 1.0  # no found route mixes two duties
    assert inverse >= 0.9  # at most a tenth of the duty-days split off their duty's route
    assert set(table["route_source"]) == {"discovered"}


LOG_SUFFIXES = (".csv", ".gz", ".zip", ".parquet", ".gpx")


def _sample_fleet() -> tuple[list[Path], pd.DataFrame]:
    """The bundled sample fleet's logs and its truth table (one row per vehicle-day), or skip."""
    from fleetfuel.errors import FleetFuelError
    from fleetfuel.resources import data_dir

    try:
        folder = data_dir("sample_logs")
    except FleetFuelError:
        pytest.skip("sample_logs/ not found")
    truths = sorted(
        p for p in folder.glob("*") if "truth" in p.name.lower() and p.suffix in (".tab", ".tsv", ".csv")
    )
    logs = sorted(p for p in folder.rglob("*") if p.is_file() and p.suffix.lower() in LOG_SUFFIXES)
    if not truths or not logs:
        pytest.skip(f"sample fleet not built yet: no logs or no truth table (TRUTH.tab) in {folder}")
    truth = pd.read_csv(truths[0], sep="," if truths[0].suffix == ".csv" else "\t")
    needed = {"vehicle_id", "start_utc", "end_utc", "route_name"}
    if not needed <= set(truth.columns):
        pytest.skip(f"{truths[0].name}: expected columns {sorted(needed)}, found {list(truth.columns)}")
    truth = truth.assign(
        start_utc=pd.to_datetime(truth["start_utc"], utc=True),
        end_utc=pd.to_datetime(truth["end_utc"], utc=True),
    )
    return logs, truth[["vehicle_id", "start_utc", "end_utc", "route_name"]]


@pytest.mark.slow
def test_discovery_recovers_the_sample_fleet_routes() -> None:
    # Known truth: sample_logs/TRUTH.tab names each vehicle-day's route (the generator's duty). The
    # logs carry the generator's defects (sample_logs/DEFECTS.tab) and go through ingest and clean.
    logs, truth = _sample_fleet()
    from fleetfuel import clean, ingest

    samples = clean.clean_batch(ingest.read_logs(logs, ingest.IngestConfig()), clean.CleanConfig()).samples
    out, _ = assign_routes(samples, None, SegmentConfig())
    periods = _periods(out).assign(vehicle_id=lambda f: f["vehicle_id"].astype(str))
    purity, inverse = _purities(
        periods, truth.assign(vehicle_id=truth["vehicle_id"].astype(str)), "route_name"
    )
    assert purity == 1.0  # no found route mixes two routes of the truth
    assert inverse >= 0.9  # at most a tenth of the vehicle-days split off their route


def _real_clean_samples() -> pd.DataFrame:
    folder = SHARED / "real_logs"
    paths = (
        sorted(p for p in folder.rglob("*") if p.is_file() and p.suffix.lower() != ".md")
        if folder.is_dir()
        else []
    )
    if not paths:
        pytest.skip(f"real logs not found under {folder} (../shared absent)")
    from fleetfuel import clean, ingest

    batch = ingest.read_logs(paths, ingest.IngestConfig())
    samples = clean.clean_batch(batch, clean.CleanConfig()).samples
    if samples.empty:
        pytest.skip("no real log survived ingest and clean")
    return samples


@pytest.mark.real_logs
def test_real_logs_segment_period_by_period_without_traceback() -> None:
    # Real third-party logs (../shared/real_logs/SOURCES.md: naturalistic driving samples, OBD-II
    # logs, GNSS tracks at 1 Hz and slower). Checks: additivity of the one discretisation and the
    # partition contract (each period alone gives the same ids and features) on messy data.
    samples = _real_clean_samples()
    whole = split_microtrips(samples)
    features = microtrip_features(whole).set_index("microtrip_id")
    trips = trip_table(whole).set_index("trip_id")
    per_trip = features.groupby("trip_id")[["duration_s", "distance_m"]].sum()
    np.testing.assert_allclose(per_trip["duration_s"], trips.loc[per_trip.index, "duration_s"], rtol=1e-9)
    np.testing.assert_allclose(
        per_trip["distance_m"], trips.loc[per_trip.index, "distance_m"], rtol=1e-9, atol=1e-6
    )
    for _, rows in whole.loc[whole["period_id"].notna()].groupby("period_id"):
        alone = split_microtrips(samples.loc[rows.index])
        pd.testing.assert_series_equal(alone["microtrip_id"], rows["microtrip_id"])
    out, table = assign_routes(whole, None, SegmentConfig())
    assert out["route"].loc[out["trip_id"].notna()].notna().all()
    assert set(table["route_source"]) <= {"discovered", "per_vehicle"}
