"""Standstill: parked GNSS drift zeroed (synthetic truth), a creeping queue left alone."""

from __future__ import annotations

import numpy as np
import pytest
from clean_frames import raw_frame, straight_track, synthetic

from fleetfuel import schema, synth
from fleetfuel.clean import CleanConfig, clean_vehicle, standstill
from fleetfuel.clean.geodesy import step_distance_m
from fleetfuel.clean.parked import drift_runs, hold_positions

CFG = CleanConfig()
# Three long stops with the engine running (the logger keeps logging), drift at every one.
ROUTE = synth.line_route(15_000.0, limit_kmh=60.0, stops=[(3_000.0, 400.0, False), (7_000.0, 900.0, False),
                                                          (11_000.0, 300.0, False)])
DRIFT = synth.DefectSpec(drift_min_stop_s=120.0, drift_share=1.0, position_sigma_m=2.5, speed_sigma_m_s=0.1)


def _drift_spans(drop: tuple[str, ...]):
    truth, frame, injected = synthetic(ROUTE, "rigid_7t5", seed=3, spec=DRIFT, drop=drop)
    assert len(injected.drift) == 3
    clean = clean_vehicle(frame, CFG).samples
    rows = clean[schema.SOURCE_ROW].to_numpy()
    spans = [clean[(rows >= a) & (rows <= b)] for a, b in injected.drift[["first_row", "last_row"]].itertuples(index=False)]
    # synth truth: the route is driven once, whatever the stops
    assert clean[schema.DISTANCE_M].iloc[-1] == pytest.approx(truth.distance_m, rel=0.01)
    return spans


def test_parked_drift_zeroed_with_reported_speed() -> None:
    # the receiver reports small non-zero speeds while its fixes wander (synth drift defect)
    for span in _drift_spans(()):
        assert span[schema.IS_PARKED].all() and (span[schema.SPEED_M_S] == 0).all()
        assert np.ptp(span[schema.DISTANCE_M]) == 0  # no creeping distance
        assert np.ptp(span[schema.LAT_DEG]) == 0 and np.ptp(span[schema.LON_DEG]) == 0  # position held


def test_parked_drift_zeroed_position_only() -> None:
    # Position-only logger: speeds come from the wandering fixes. The generator's drift offset
    # (about 12 m) starts abruptly at the stop, which reads as a few metres per second for the
    # first seconds (creep_window_s); after that the stop is held.
    for span in _drift_spans((schema.SPEED_M_S,)):
        assert span[schema.IS_PARKED].mean() > 0.97
        assert np.ptp(span[schema.DISTANCE_M]) < 25.0  # at most the one offset, not 0.6 m/s * dwell


def test_creeping_queue_is_not_parked() -> None:
    # 1 m/s for two minutes along a straight road: it makes good what its speed claims
    v = np.r_[np.full(30, 8.0), np.full(120, 1.0), np.full(30, 8.0)]
    lat, lon = straight_track(v)
    clean = clean_vehicle(raw_frame(np.arange(v.size, dtype=float), v, lat_deg=lat, lon_deg=lon), CFG).samples
    assert not clean[schema.IS_PARKED].any()
    expected = np.sum((v[1:] + v[:-1]) / 2)  # trapezoidal distance of the speeds, by hand
    assert clean[schema.DISTANCE_M].iloc[-1] == pytest.approx(expected)


def test_yard_loop_counts_as_standstill() -> None:
    # a drift run: 90 s at 0.8 m/s reported, fixes wandering around one spot (net progress ~0)
    t = np.arange(90.0)
    lat = 48.0 + 5e-5 * np.sin(t / 5)
    lon = 11.0 + 5e-5 * np.cos(t / 5)
    speed = np.full(90, 0.8)
    seg = np.zeros(90, dtype=np.int64)
    assert drift_runs(speed, lat, lon, seg, 1.0, CFG).all()
    assert not drift_runs(speed[:50], lat[:50], lon[:50], seg[:50], 1.0, CFG).any()  # under 60 s


def test_inputs_unchanged() -> None:
    t = np.arange(100.0)
    lat = 48.0 + 1e-5 * np.sin(t)
    lon = np.full(100, 11.0)
    speed = np.full(100, 0.3)
    seg = np.zeros(100, dtype=np.int64)
    copies = [a.copy() for a in (lat, lon, speed)]
    parked = standstill(speed, lat, lon, seg, 1.0, CFG)
    held_lat, held_lon = hold_positions(lat, lon, parked, seg)
    assert np.nansum(step_distance_m(held_lat, held_lon)) == 0
    for a, b in zip((lat, lon, speed), copies, strict=True):
        assert np.array_equal(a, b)
