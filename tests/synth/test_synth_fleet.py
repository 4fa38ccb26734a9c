"""The fleet generator: determinism, roster, truth alignment, working days."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema, synth


@pytest.fixture(scope="module")
def small() -> synth.SyntheticFleet:
    return synth.fleet(n_vehicles=3, n_days=2, seed=11)


def test_same_seed_same_fleet(small: synth.SyntheticFleet) -> None:
    again = synth.fleet(n_vehicles=3, n_days=2, seed=11)
    pd.testing.assert_frame_equal(small.samples, again.samples)
    pd.testing.assert_frame_equal(small.days, again.days)


def test_a_vehicle_does_not_change_when_the_fleet_grows(small: synth.SyntheticFleet) -> None:
    one = synth.fleet(n_vehicles=1, n_days=2, seed=11)
    first = small.samples[small.samples[schema.VEHICLE_ID] == "VAN-01"].reset_index(drop=True)
    pd.testing.assert_frame_equal(first[one.samples.columns], one.samples)
    assert first.drop(columns=one.samples.columns).isna().all().all()  # vans carry no fuel counter


def test_truth_aligned_and_days_consistent(small: synth.SyntheticFleet) -> None:
    assert small.truth is not None
    assert len(small.truth) == len(small.samples)
    assert np.array_equal(small.truth.vehicle_id.to_numpy(), small.samples[schema.VEHICLE_ID].to_numpy())
    assert list(small.vehicles.vehicle_id) == ["VAN-01", "RIG-01", "TRK-01"]
    rows = small.days.groupby("vehicle_id").rows.sum()
    counts = small.samples[schema.VEHICLE_ID].value_counts()
    assert (rows.sort_index() == counts.sort_index()).all()
    # working days from Monday 2025-03-10, shifts starting in the morning (UTC+1)
    assert sorted(small.days.date.unique()) == ["2025-03-10", "2025-03-11"]
    local_start = pd.DatetimeIndex(small.days.start_utc).tz_convert(synth.SCENARIO_TIMEZONE)
    assert ((local_start.hour >= 4) & (local_start.hour <= 9)).all()
    # counters carry over from one day to the next
    trk = small.samples[small.samples[schema.VEHICLE_ID] == "TRK-01"]
    assert trk[schema.FUEL_USED_L].is_monotonic_increasing and trk[schema.ODOMETER_M].is_monotonic_increasing


def test_rate_override_and_no_truth() -> None:
    f = synth.fleet(n_vehicles=2, n_days=1, seed=2, rate_hz=0.2, with_truth=False)
    assert f.truth is None
    steps = f.samples.groupby(schema.VEHICLE_ID)[schema.TIME_UTC].diff().dt.total_seconds().dropna()
    assert steps.median() == pytest.approx(5.0)


def test_roster_repeats_with_new_ids() -> None:
    plans = synth.roster(30)
    ids = [p.vehicle_id for p in plans]
    assert len(set(ids)) == 30
    assert ids[:14] == [p.vehicle_id for p in synth.ROSTER]
    assert "VAN-05" in ids and "BUS-05" in ids
