"""Impossible samples: speed spikes, position spikes, stale fixes, speed ceiling.

Synthetic truth: :func:`fleetfuel.synth.add_defects` reports exactly which rows it spiked.
Real data: the Munich sample trace of a map-matching library (SOURCES.md: a receiver that froze
its fix, then "jumped" at ~1690 km/h; 1194 points, 13.6 km).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from clean_frames import raw_frame, real_log, straight_track, synthetic

from fleetfuel import schema, synth
from fleetfuel.clean import CleanConfig, clean_vehicle, position_outliers, speed_spikes
from fleetfuel.clean.geodesy import step_distance_m
from fleetfuel.clean.outliers import impossible_speed, stale_fixes
from fleetfuel.ingest.base import conform

CFG = CleanConfig()
ROUTE = synth.line_route(30_000.0, limit_kmh=80.0, lights_every_m=2_000.0, stops=[(12_000.0, 300.0, False)])


def _dropped(result, reason: str) -> set[int]:
    d = result.dropped
    return set(d.loc[d["reason"] == reason, schema.SOURCE_ROW].tolist())


def test_injected_speed_spikes_removed_not_their_neighbours() -> None:
    # Spikes of +10..30 m/s in one row (synth truth); everything else typical of GNSS telematics.
    spec = synth.DefectSpec.typical(speed_spike_share=0.004, speed_spike_m_s=(10.0, 30.0), gaps_per_day=0.0,
                                    position_spike_share=0.0)
    _, frame, injected = synthetic(ROUTE, "van", seed=4, spec=spec)
    result = clean_vehicle(frame, CFG)
    spikes = set(injected.speed_spike_rows.tolist())
    assert len(spikes) >= 3
    assert _dropped(result, schema.DROP_ACCEL_IMPOSSIBLE) == spikes  # all of them, nothing else
    kept_rows = set(result.samples[schema.SOURCE_ROW].tolist())
    assert {r + 1 for r in spikes} <= kept_rows and {r - 1 for r in spikes} <= kept_rows


def test_injected_position_spikes_dropped_on_position_only_log() -> None:
    # A position-only logger (speed column removed): spiked fixes (300..3000 m off) are dropped.
    spec = synth.DefectSpec(position_spike_share=0.004, position_sigma_m=2.5)
    _, frame, injected = synthetic(ROUTE, "van", seed=5, spec=spec, drop=(schema.SPEED_M_S,))
    result = clean_vehicle(frame, CFG)
    spikes = set(injected.position_spike_rows.tolist())
    assert len(spikes) >= 3
    assert _dropped(result, schema.DROP_POSITION_JUMP) == spikes
    assert result.samples[schema.SPEED_M_S].max() < CFG.speed_ceiling_m_s


def test_position_spikes_blanked_when_speed_is_reported() -> None:
    spec = synth.DefectSpec(position_spike_share=0.004)
    _, frame, injected = synthetic(ROUTE, "van", seed=6, spec=spec)
    result = clean_vehicle(frame, CFG)
    assert result.dropped.empty  # the rows keep their reported speed
    assert int(result.files["positions_blanked"].sum()) == len(injected.position_spike_rows)


def test_hand_built_spike_step_and_ceiling() -> None:
    # 1 Hz, 20 m/s cruise; row 10 spikes to 35 m/s (removed); at row 30 the speed steps down by
    # 18 m/s and stays there (a step, not a spike: no single sample explains it, kept); row 40
    # says 300 m/s (above the ceiling).
    v = np.full(60, 20.0)
    v[10] = 35.0
    v[30:] = 2.0
    v[40] = 300.0
    t = np.arange(60.0)
    spikes = speed_spikes(t, np.where(v > CFG.speed_ceiling_m_s, np.nan, v), CFG)
    assert np.flatnonzero(spikes).tolist() == [10]
    assert np.flatnonzero(impossible_speed(v, CFG)).tolist() == [40]
    assert impossible_speed(np.array([-0.1, 0.0, np.nan]), CFG).tolist() == [True, False, False]


def test_spike_at_half_hertz() -> None:
    # a 0.5 Hz logger: +9 m/s for one sample is a gain of 4.5 m/s^2 and back, beyond the 4 m/s^2
    # a truck or van can gain; a 9 m/s drop over 2 s and back is braking a vehicle can do
    t = np.arange(0.0, 80.0, 2.0)
    v = np.full(t.size, 12.0)
    v[15] += 9.0
    assert np.flatnonzero(speed_spikes(t, v, CFG)).tolist() == [15]


def test_carry_forward_high_rate_log_has_no_spikes() -> None:
    # An OBD export at ~11 rows/s refreshing speed once a second (values carried forward between
    # refreshes), accelerating at 3 m/s^2: each change looks like 33 m/s^2 row to row, but is not.
    t = np.arange(0.0, 30.0, 0.09)
    v = 3.0 * np.floor(t)
    assert not speed_spikes(t, v, CFG).any()


def test_two_spikes_in_a_row_are_one_run() -> None:
    v = np.full(40, 15.0)
    v[20], v[21] = 40.0, 0.0  # two bad samples, off in opposite directions
    assert np.flatnonzero(speed_spikes(np.arange(40.0), v, CFG)).tolist() == [20, 21]


def test_stale_fixes_only_while_moving() -> None:
    speed = np.r_[np.full(20, 10.0), np.zeros(30), np.full(20, 10.0)]
    lat, lon = straight_track(speed)
    lat, lon = lat.copy(), lon.copy()
    lat[5:12], lon[5:12] = lat[4], lon[4]  # held fix while driving: stale
    stale = stale_fixes(np.arange(70.0), lat, lon, CFG)
    assert np.flatnonzero(stale).tolist() == list(range(5, 12))  # the repeats at the stop are kept


@pytest.mark.real_logs
def test_munich_trace_frozen_fix_is_not_driven_at_1690_kmh() -> None:
    records = json.loads(real_log("barefoot/*.json").read_text(encoding="utf-8"))
    pts = pd.Series([r["point"] for r in records]).str.extract(r"POINT\(([-\d.]+) ([-\d.]+)\)").astype(float)
    times = pd.to_datetime([r["time"] for r in records], format="%Y-%m-%d %H:%M:%S%z", utc=True)
    raw = conform(pd.DataFrame({
        schema.VEHICLE_ID: "munich", schema.TIME_UTC: times, schema.LAT_DEG: pts[1], schema.LON_DEG: pts[0],
        schema.SOURCE_FILE: "munich.json", schema.SOURCE_ROW: np.arange(len(records)),
    }))
    implied = step_distance_m(raw[schema.LAT_DEG], raw[schema.LON_DEG])[1:] * 3.6
    assert implied.max() == pytest.approx(1693, abs=5)  # SOURCES.md: "about 1690 km/h" at index 618
    result = clean_vehicle(raw, CFG)
    clean = result.samples
    # SOURCES.md: the fix is frozen for 34 s before the jump (identical positions, index 585..618)
    assert len(_dropped(result, schema.DROP_POSITION_STALE) & set(range(586, 619))) == 33
    assert clean[schema.SPEED_M_S].max() * 3.6 < 140  # urban motorway up to about 113 km/h
    assert clean[schema.DISTANCE_M].iloc[-1] / 1000 == pytest.approx(13.6, abs=0.3)  # SOURCES.md: 13.6 km
    # SOURCES.md: "about 30 % of the samples are stationary"; the receiver holds its fix when
    # stopped, so the share of zero-length steps in the raw file (25.6 %) is the closer count.
    zero_steps = float(np.mean(implied == 0))
    assert zero_steps == pytest.approx(0.256, abs=0.005)
    assert clean[schema.IS_PARKED].mean() == pytest.approx(zero_steps, abs=0.05)


def test_inputs_unchanged() -> None:
    t = np.arange(10.0)
    v = np.r_[np.full(5, 10.0), 40.0, np.full(4, 10.0)]
    lat, lon = straight_track(np.full(10, 10.0))
    copies = [a.copy() for a in (t, v, lat, lon)]
    speed_spikes(t, v, CFG)
    position_outliers(t, lat, lon, CFG)
    stale_fixes(t, lat, lon, CFG)
    for a, b in zip((t, v, lat, lon), copies, strict=True):
        assert np.array_equal(a, b)
    frame = raw_frame(t, v, lat_deg=lat, lon_deg=lon)
    before = frame.copy(deep=True)
    clean_vehicle(frame, CFG)
    pd.testing.assert_frame_equal(frame, before)
