"""Uniform grid: merged high-rate rows, interpolated short gaps, breaks at long gaps, low-rate logs."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from clean_frames import batch, log_file, raw_frame, synthetic

from fleetfuel import schema, synth
from fleetfuel.clean import CleanConfig, clean_batch, clean_vehicle, resample, time_base
from fleetfuel.clean.flags import FLAG_LOW_RATE
from fleetfuel.clean.order import time_ns
from fleetfuel.clean.resample import fill_within_segments

CFG = CleanConfig()


def test_ten_hertz_rows_are_merged_and_kept() -> None:
    t = np.arange(0.0, 20.0, 0.1)
    v = 2.0 + 0.5 * t  # constant 0.5 m/s^2
    result = clean_batch(batch(log_file(raw_frame(t, v))), CFG)
    acc = result.account.iloc[0]
    assert (acc["rows_in"], acc["rows_kept"], acc["rows_interpolated"]) == (200, 200, 0)
    s = result.samples
    assert np.all(np.diff(time_ns(s)) == 1_000_000_000)
    assert len(s) == 21  # instants 0..20 s (rows within +-0.5 s of each)
    # an instant's bin holds the rows within [-0.5, 0.5) s of it; their mean time is 0.05 s early
    np.testing.assert_allclose(s[schema.SPEED_M_S].to_numpy()[1:-1], 2.0 + 0.5 * (np.arange(1.0, 20.0) - 0.05))
    np.testing.assert_allclose(s[schema.ACCEL_M_S2].to_numpy()[2:-2], 0.5, atol=1e-9)


def test_short_gap_interpolated_long_gap_breaks() -> None:
    t = np.r_[np.arange(0.0, 50.0), np.arange(70.0, 100.0), np.arange(220.0, 260.0)]
    v = np.where(t < 60, 10.0, 14.0)
    result = clean_batch(batch(log_file(raw_frame(t, v))), CFG)
    s = result.samples
    acc = result.account.iloc[0]
    assert acc["rows_interpolated"] == 20 and acc["gaps"] == 1 and acc["rows_kept"] == t.size
    interp = s[s[schema.IS_INTERPOLATED]]
    assert (interp[schema.SOURCE_ROW] == -1).all()
    # linear between 10 m/s at 49 s and 14 m/s at 70 s
    np.testing.assert_allclose(interp[schema.SPEED_M_S], 10 + 4 * (np.arange(50.0, 70.0) - 49) / 21)
    secs = (time_ns(s) - time_ns(s)[0]) / 1e9
    assert not ((secs > 99) & (secs < 220)).any()  # nothing inside the 120 s gap
    assert s.loc[s[schema.GAP_BREAK], schema.TIME_UTC].tolist() == [s[schema.TIME_UTC].iloc[0] + pd.Timedelta(220, "s")]
    # distance does not grow across the break
    at_break = np.flatnonzero(s[schema.GAP_BREAK])[0]
    assert s[schema.DISTANCE_M].iloc[at_break] == s[schema.DISTANCE_M].iloc[at_break - 1]


def test_synthetic_outages_become_breaks() -> None:
    # synth truth: outages of 2-15 min (logger or coverage loss) start a new stretch right at the
    # first row after each outage; nothing is interpolated across them
    route = synth.line_route(60_000.0, limit_kmh=80.0, lights_every_m=3_000.0)
    spec = synth.DefectSpec(gaps_per_day=150.0, gap_s=(120.0, 600.0))
    _, frame, injected = synthetic(route, "rigid_18t", seed=7, spec=spec)
    assert len(injected.gaps) >= 2
    clean = clean_vehicle(frame, CFG).samples
    first_after = clean.loc[clean[schema.GAP_BREAK], schema.SOURCE_ROW].tolist()
    assert first_after == sorted(injected.gaps["next_row"].tolist())


def test_grid_is_epoch_aligned() -> None:
    # rows at x.4 s land on whole seconds, whatever the log's first instant
    t = np.arange(0.4, 30.4, 1.0)
    s = clean_vehicle(raw_frame(t, np.full(t.size, 5.0)), CFG).samples
    assert np.all(time_ns(s) % 1_000_000_000 == 0)
    assert not s[schema.IS_INTERPOLATED].any()


def test_low_rate_logger_detected_and_kept_at_its_step() -> None:
    # A 1-per-30 s logger (synthetic drive, same trajectory as at 1 Hz): flagged low_rate, grid
    # step 30 s, no 1 s dynamics invented, accelerations not observable (NaN).
    route = synth.line_route(20_000.0, limit_kmh=80.0, lights_every_m=2_500.0)
    _, frame, _ = synthetic(route, "van", seed=2, rate_hz=1 / 30)
    result = clean_batch(batch(log_file(frame)), CFG)
    acc = result.account.iloc[0]
    assert FLAG_LOW_RATE in acc["flags"]
    assert acc["logging_interval_s"] == pytest.approx(30.0)
    s = result.samples
    assert set(np.diff(time_ns(s)) // 1_000_000_000) == {30}
    assert s[schema.ACCEL_M_S2].isna().all()
    assert acc["distance_km"] == pytest.approx(20.0, rel=0.05)  # mean speeds between fixes integrate to the route


def test_time_base_of_event_logger() -> None:
    rng = np.random.default_rng(0)
    t = np.cumsum(rng.uniform(10.0, 60.0, 200))
    base = time_base(time_ns(raw_frame(t, np.zeros(t.size))), CFG)
    assert base.low_rate and base.step_s == round(float(np.median(np.diff(t))))
    assert base.gap_s == pytest.approx(CFG.gap_break_intervals * float(np.median(np.diff(t))))


def test_fill_within_segments_never_crosses_a_break() -> None:
    values = np.array([1.0, np.nan, 3.0, np.nan, 5.0, np.nan, 7.0])
    segment = np.array([0, 0, 0, 0, 1, 1, 1])
    k = np.arange(7)
    out = fill_within_segments(values, segment, k, max_gap_steps=10)
    np.testing.assert_allclose(out[[1, 5]], [2.0, 6.0])
    assert np.isnan(out[3])  # between 3.0 (stretch 0) and 5.0 (stretch 1)
    assert np.isnan(values[1])  # input unchanged


def test_vehicles_are_independent_of_grouping() -> None:
    route = synth.line_route(8_000.0, limit_kmh=50.0, lights_every_m=1_000.0)
    _, a, _ = synthetic(route, "van", seed=1, spec=synth.DefectSpec.typical(), vehicle_id="A")
    _, b, _ = synthetic(route, "car", seed=2, spec=synth.DefectSpec.typical(), vehicle_id="B")
    together = clean_batch(batch(log_file(a, "a.csv"), log_file(b, "b.csv")), CFG).samples
    alone_a = clean_batch(batch(log_file(a, "a.csv")), CFG).samples
    alone_b = clean_batch(batch(log_file(b, "b.csv")), CFG).samples
    pd.testing.assert_frame_equal(together, pd.concat([alone_a, alone_b], ignore_index=True))


def test_resample_input_unchanged() -> None:
    t = np.r_[np.arange(0.0, 10.0), np.arange(15.0, 20.0)]
    frame = raw_frame(t, np.arange(t.size, dtype=float))
    before = frame.copy(deep=True)
    resample(frame, time_base(time_ns(frame), CFG))
    pd.testing.assert_frame_equal(frame, before)
