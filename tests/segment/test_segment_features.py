"""Micro-trip and cycle statistics against published cycle figures and hand calculations."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from segment_frames import KMH, cycle, frame

from fleetfuel.errors import InputDataError
from fleetfuel.segment import (
    FEATURE_COLUMNS,
    LOGGING_COLUMNS,
    SegmentConfig,
    features_of_trace,
    group_features,
    microtrip_features,
    split_microtrips,
)

MILE_M = 1609.344  # NIST SP 811, exact
MPH = MILE_M / 3600.0


def _published(value: float, decimals: int) -> float:
    # SOURCES.md (reference_cycles): a figure passes when it equals the published one rounded to
    # the number of decimals the figure is published with.
    return round(value, decimals)


def test_udds_duration_distance_mean_speed_match_epa() -> None:
    t, v = cycle("udds")
    f = features_of_trace(t, v)
    # EPA UDDS, 40 CFR Part 86 Appendix I (figures as listed in ../shared/reference_cycles/SOURCES.md):
    # 1369 s, 7.45 mi (11.99 km), 19.59 mph mean, 56.7 mph max.
    assert f["duration_s"] == 1369.0
    assert _published(f["distance_m"] / MILE_M, 2) == 7.45
    assert _published(f["distance_m"] / 1000.0, 2) == 11.99
    assert _published(f["mean_speed_m_s"] / MPH, 2) == 19.59
    assert _published(f["max_speed_m_s"] / MPH, 1) == 56.7


@pytest.mark.parametrize(
    ("name", "duration_s", "miles", "mph"),
    [
        ("hwfet", 765.0, 10.26, 48.3),  # EPA HWFET, 40 CFR Part 600 Appendix I (SOURCES.md)
        ("us06", 596.0, 8.01, 48.37),  # EPA US06, 40 CFR Part 86 Appendix I (SOURCES.md)
    ],
)
def test_epa_highway_cycles_match_published_figures(
    name: str, duration_s: float, miles: float, mph: float
) -> None:
    t, v = cycle(name)
    f = features_of_trace(t, v)
    decimals = len(str(mph).split(".")[1])
    assert f["duration_s"] == duration_s
    assert _published(f["distance_m"] / MILE_M, 2) == miles
    assert _published(f["mean_speed_m_s"] / MPH, decimals) == mph


def test_wltc_class3b_matches_gtr15() -> None:
    t, v = cycle("wltc_class3b")
    f = features_of_trace(t, v)
    # UN GTR No. 15 Annex 1, WLTC class 3b: 1800 s, 23.266 km, max 131.3 km/h (SOURCES.md).
    assert f["duration_s"] == 1800.0
    assert _published(f["distance_m"] / 1000.0, 3) == 23.266
    assert _published(f["max_speed_m_s"] / KMH, 1) == 131.3


def test_hand_computed_rpa_pke_and_modes() -> None:
    # Worked by hand. t = 0..4 s, v = 0, 2, 4, 4, 0 m/s.
    # Weights w = 0.5, 1, 1, 1, 0.5 s -> duration 4 s; distance = sum(w v) = 2 + 4 + 4 = 10 m
    #   (= trapezoid (0+2)/2 + (2+4)/2 + (4+4)/2 + (4+0)/2 = 10 m).
    # Central differences a = 2 (one-sided), 2, 1, -2, -4 (one-sided) m/s^2.
    # RPA = sum(w v a [a > 0.1]) / D = (1*2*2 + 1*4*1) / 10 = 0.8 m/s^2; in the terms of
    #   Reg. (EU) 2017/1151 Annex IIIA App. 7a (dt = 1 s, d_i = v_i dt): (2*2 + 4*1) / (2+4+4) = 0.8 too.
    # PKE = sum(max(v_i^2 - v_{i-1}^2, 0)) / D = (4 + 12) / 10 = 1.6 m/s^2 (= 2 * 8 J/kg kinetic
    #   energy gained / 10 m).
    # Idle rows 0 and 4 (w 0.5 each): idle share 1/4. Acceleration rows 1, 2 (a > 0.278): 2/4;
    #   deceleration row 3: 1/4; cruise 0. Mean positive acceleration (2 + 1) / 2 = 1.5 m/s^2;
    #   mean negative -2 m/s^2. RMS = sqrt((0.5*4 + 4 + 1 + 4 + 0.5*16) / 4) = sqrt(4.75).
    # Speed: mean 10/4 = 2.5, running 10/3, std sqrt((4 + 16 + 16)/4 - 2.5^2) = sqrt(2.75).
    # One stop (4 -> 0 m/s) in 10 m: 100 stops per km.
    # Grade 0, .05, .05, -.05, 0: |g| distance-weighted (2*.05 + 4*.05 + 4*.05)/10 = 0.05;
    #   climb (2*.05 + 4*.05) m in 10 m = 30 m/km.
    f = features_of_trace([0, 1, 2, 3, 4], [0.0, 2.0, 4.0, 4.0, 0.0], [0, 0.05, 0.05, -0.05, 0])
    expected = {
        "duration_s": 4.0,
        "distance_m": 10.0,
        "rpa_m_s2": 0.8,
        "pke_m_s2": 1.6,
        "idle_share": 0.25,
        "accel_share": 0.5,
        "decel_share": 0.25,
        "cruise_share": 0.0,
        "mean_pos_accel_m_s2": 1.5,
        "mean_neg_accel_m_s2": -2.0,
        "rms_accel_m_s2": np.sqrt(4.75),
        "mean_speed_m_s": 2.5,
        "mean_running_speed_m_s": 10 / 3,
        "max_speed_m_s": 4.0,
        "speed_std_m_s": np.sqrt(2.75),
        "stops_per_km": 100.0,
        "mean_abs_grade": 0.05,
        "climb_m_per_km": 30.0,
    }
    assert set(expected) == set(FEATURE_COLUMNS)
    for name, value in expected.items():
        assert f[name] == pytest.approx(value, rel=1e-12, abs=1e-12), name


def test_hand_computed_constant_acceleration_rpa_equals_half_pke() -> None:
    # v = 0, 1, 2, 3 m/s at 1 s steps (a = 1 m/s^2 throughout). Worked by hand:
    # w = 0.5, 1, 1, 0.5; D = 0 + 1 + 2 + 1.5 = 4.5 m; RPA = (1*1 + 2*1 + 0.5*3*1) / 4.5 = 1.0 m/s^2.
    # PKE = (1 + 3 + 5) / 4.5 = 2.0 m/s^2. Kinematics check: uniform acceleration from rest has
    # v_end^2 = 2 a D, so PKE = v_end^2 / D = 2a = 2 and RPA = a * sum(w v) / D = a = 1.
    f = features_of_trace([0, 1, 2, 3], [0, 1, 2, 3])
    assert f["distance_m"] == pytest.approx(4.5, rel=1e-12)
    assert f["rpa_m_s2"] == pytest.approx(1.0, rel=1e-12)
    assert f["pke_m_s2"] == pytest.approx(2.0, rel=1e-12)


def test_rpa_threshold_follows_eu_positive_acceleration() -> None:
    # Reg. (EU) 2017/1151 Annex IIIA App. 7a: only a > 0.1 m/s^2 counts. A creep at 0.05 m/s^2 gives 0.
    t = np.arange(0, 41)
    f = features_of_trace(t, 5.0 + 0.05 * t)
    assert f["rpa_m_s2"] == 0.0
    assert f["pke_m_s2"] > 0.0


def test_low_rate_trace_has_no_acceleration_statistics() -> None:
    t = np.arange(0, 600, 30.0)
    v = np.r_[0.0, np.full(t.size - 2, 10.0), 0.0]
    f = features_of_trace(t, v)
    assert np.isnan(f["rpa_m_s2"]) and np.isnan(f["accel_share"])
    # trapezoid by hand: 18 interior samples at 10 m/s over 30 s steps: (19 - 1) * 30 * 10 = 5400 m
    assert f["distance_m"] == pytest.approx(5400.0, rel=1e-12)


def test_bad_trace_raises_input_error() -> None:
    with pytest.raises(InputDataError, match="strictly increasing"):
        features_of_trace([0, 0, 1], [1, 2, 3])
    with pytest.raises(InputDataError, match="one length"):
        features_of_trace([0, 1, 2], [1, 2])


def test_microtrips_add_up_to_the_trace() -> None:
    # Additivity of the one discretisation: micro-trip distances sum to the cycle's distance
    # (the idle outside the trip adds no distance); durations to the trip's span.
    t, v = cycle("udds")
    samples = frame(v)
    table = microtrip_features(samples)
    whole = features_of_trace(t, v)
    assert table["distance_m"].sum() == pytest.approx(whole["distance_m"], rel=1e-12)
    moving = np.flatnonzero(v >= SegmentConfig().stop_speed_m_s)
    # trip: departure row (first moving - 1) to arrival row (last moving + 1)
    assert table["duration_s"].sum() == pytest.approx(moving[-1] + 1 - (moving[0] - 1), rel=1e-12)
    tail = list(FEATURE_COLUMNS) + list(LOGGING_COLUMNS)
    assert list(table.columns[-len(tail) :]) == tail
    # logged at 1 Hz throughout; a micro-trip runs stop to stop (common practice, no source)
    assert (table["max_step_s"] == 1.0).all() and table["ends_at_rest"].all()
    assert table["microtrip_id"].is_unique


def test_group_features_equal_trace_features_of_the_same_samples() -> None:
    # One definition: all micro-trips of a trip in one group give the trip's trace statistics.
    t, v = cycle("udds")
    samples = split_microtrips(frame(v))
    rows = samples.loc[samples["trip_id"].notna()]
    labels = pd.Series("all", index=pd.Index(rows["microtrip_id"].unique()), name="type")
    grouped = group_features(samples, labels).loc["all"]
    trip_t = t[rows.index.to_numpy()]
    direct = features_of_trace(trip_t, v[rows.index.to_numpy()], np.zeros(trip_t.size))
    pd.testing.assert_series_equal(grouped, direct, check_names=False, rtol=1e-12)


def test_group_features_leaves_out_unlisted_microtrips_without_joining_neighbours() -> None:
    t, v = cycle("udds")
    samples = split_microtrips(frame(v))
    ids = samples["microtrip_id"].dropna().unique()
    per = microtrip_features(samples).set_index("microtrip_id")
    one = group_features(samples, pd.Series("x", index=pd.Index([ids[3]]))).loc["x"]
    assert one["duration_s"] == pytest.approx(per.loc[ids[3], "duration_s"], rel=1e-12)
    assert one["distance_m"] == pytest.approx(per.loc[ids[3], "distance_m"], rel=1e-12)


def test_microtrip_features_leave_input_unchanged() -> None:
    _, v = cycle("us06")
    samples = frame(v)
    before = samples.copy(deep=True)
    microtrip_features(samples)
    pd.testing.assert_frame_equal(samples, before)
