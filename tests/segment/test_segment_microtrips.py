"""Micro-trips of concatenated standard cycles: the known stop-to-stop count, idle carried ahead."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from segment_frames import cycle, frame, runs

from fleetfuel.segment import SegmentConfig, split_microtrips

CYCLES = ("udds", "hwfet", "us06", "wltc_class3b")
STOP = SegmentConfig().stop_speed_m_s


def _concatenated(idle_s: int) -> tuple[np.ndarray, int]:
    """Speeds of UDDS, HWFET, US06, WLTC with ``idle_s`` of idle between them, and the known count.

    The reference count is taken from each cycle on its own: its runs of speed >= 1 km/h (the
    published stop threshold of SegmentConfig), one stop-to-stop section each. Every schedule
    starts and ends at rest (40 CFR Parts 86 and 600 Appendix I; UN GTR No. 15 Annex 1), checked here.
    """
    parts, count = [], 0
    for name in CYCLES:
        _, v = cycle(name)
        assert v[0] == 0.0 and v[-1] == 0.0, f"{name} must start and end at rest"
        count += runs(v >= STOP)
        parts += [v, np.zeros(idle_s)]
    return np.concatenate(parts), count


@pytest.mark.parametrize("idle_s", [60, 240])
def test_concatenated_cycles_give_the_known_microtrip_count(idle_s: int) -> None:
    v, expected = _concatenated(idle_s)
    out = split_microtrips(frame(v))
    assert out["trip_id"].nunique() == 1  # idle gaps below the 300 s trip break
    assert out["microtrip_id"].nunique() == expected


def test_long_idle_between_cycles_splits_trips_not_microtrip_count() -> None:
    v, expected = _concatenated(600)  # 10 min > trip_break_s = 5 min
    out = split_microtrips(frame(v))
    assert out["trip_id"].nunique() == len(CYCLES)
    assert out["microtrip_id"].nunique() == expected
    assert out["period_id"].nunique() == 1  # 10 min < period_rest_s = 4 h


def test_each_microtrip_is_idle_then_one_drive_ending_at_the_stop() -> None:
    _, v = cycle("udds")
    out = split_microtrips(frame(v))
    moving = out["speed_m_s"].to_numpy() >= STOP
    for _, rows in out.loc[out["microtrip_id"].notna()].groupby("microtrip_id"):
        m = moving[rows.index.to_numpy()]
        assert runs(m) == 1
        assert not m[-1]  # ends at its arrival (first stopped sample)
        first_move = int(np.argmax(m))
        assert not m[:first_move].any() and m[first_move:-1].all()
    # The second micro-trip carries the idle before it (UDDS stands still between its hills).
    second = out.loc[out["microtrip_id"] == sorted(out["microtrip_id"].dropna().unique())[1]]
    assert (second["speed_m_s"].iloc[:5] < STOP).all()


def test_ids_are_numbered_within_the_period_and_sort_by_time() -> None:
    _, v = cycle("udds")
    out = split_microtrips(frame(v, start="2024-03-04T08:00:00Z", vehicle="bus 7"))
    ids = out["microtrip_id"].dropna().unique()
    first_move = int(np.argmax(v >= STOP))
    stamp = (pd.Timestamp("2024-03-04T08:00:00Z") + pd.Timedelta(seconds=first_move)).strftime(
        "%Y%m%dT%H%M%SZ"
    )
    assert ids[0] == f"bus 7/P{stamp}/M0001"
    assert list(ids) == sorted(ids)
    assert out["trip_id"].dropna().unique().tolist() == [f"bus 7/P{stamp}/T0001"]


def test_split_microtrips_leaves_input_unchanged_and_is_deterministic() -> None:
    _, v = cycle("wltc_class3b")
    samples = frame(v)
    before = samples.copy(deep=True)
    a = split_microtrips(samples)
    b = split_microtrips(samples)
    pd.testing.assert_frame_equal(samples, before)
    pd.testing.assert_frame_equal(a, b)
    assert "microtrip_id" not in samples.columns


def test_unsorted_input_is_sorted_and_labelled_alike() -> None:
    _, v = cycle("udds")
    samples = frame(v)
    shuffled = samples.sample(frac=1.0, random_state=3)
    pd.testing.assert_frame_equal(split_microtrips(shuffled), split_microtrips(samples))


def test_naive_times_are_read_as_utc() -> None:
    _, v = cycle("hwfet")
    aware = frame(v, start="2024-03-04T08:00:00Z")
    naive = aware.assign(time_utc=aware["time_utc"].dt.tz_localize(None))
    assert split_microtrips(naive)["microtrip_id"].equals(split_microtrips(aware)["microtrip_id"])
