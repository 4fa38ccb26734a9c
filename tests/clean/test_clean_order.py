"""Sorting and duplicates: exact repeats vs repeated time stamps; cross-file duplicates."""

from __future__ import annotations

import numpy as np
import pandas as pd
from clean_frames import batch, log_file, raw_frame

from fleetfuel import schema
from fleetfuel.clean import CleanConfig, clean_batch, duplicate_reasons, sort_samples
from fleetfuel.clean.order import logging_interval_s, time_ns


def test_sort_is_stable_for_equal_times() -> None:
    frame = raw_frame(np.array([2.0, 1.0, 1.0, 0.0]), np.array([3.0, 1.0, 2.0, 0.0]))
    out = sort_samples(frame)
    assert out[schema.SOURCE_ROW].tolist() == [3, 1, 2, 0]  # rows 1 and 2 keep arrival order


def test_duplicate_reasons_row_vs_time() -> None:
    # hand-built: row 1 repeats row 0 exactly; row 2 has row 0's time with another speed
    frame = raw_frame(np.array([0.0, 0.0, 0.0, 1.0]), np.array([5.0, 5.0, 6.0, 5.0]))
    reasons = duplicate_reasons(frame)
    assert reasons.tolist()[1:3] == [schema.DROP_DUPLICATE_ROW, schema.DROP_DUPLICATE_TIME]
    assert reasons.isna().tolist() == [True, False, False, True]


def test_nan_equal_nan_counts_as_exact_repeat() -> None:
    frame = raw_frame(np.array([0.0, 0.0]), np.array([np.nan, np.nan]), lat_deg=np.array([48.0, 48.0]),
                      lon_deg=np.array([11.0, 11.0]))
    assert duplicate_reasons(frame).tolist()[1] == schema.DROP_DUPLICATE_ROW


def test_cross_file_duplicate_charged_to_later_file() -> None:
    t = np.arange(0.0, 120.0)
    v = np.full(t.size, 10.0)
    first = raw_frame(t[:80], v[:80], source="a.csv")
    second = raw_frame(t[60:], v[60:], source="b.csv")  # 20 s overlap, identical values
    second_other = second.copy()
    second_other.loc[second_other.index[:5], schema.SPEED_M_S] = 11.0  # 5 of them differ
    result = clean_batch(batch(log_file(first), log_file(second_other)), CleanConfig())
    acc = result.account.set_index("path")
    assert acc.loc["a.csv", "dropped"] == {}
    assert acc.loc["b.csv", "dropped"] == {schema.DROP_DUPLICATE_ROW: 15, schema.DROP_DUPLICATE_TIME: 5}
    assert acc.loc["b.csv", "rows_kept"] == 40
    assert len(result.samples) == 120  # one sample per second, no interpolation
    assert not result.samples[schema.IS_INTERPOLATED].any()


def test_logging_interval_is_median_positive_step() -> None:
    t = np.array([0.0, 1.0, 1.0, 2.0, 3.0, 13.0])
    frame = raw_frame(t, np.zeros(t.size))
    assert logging_interval_s(time_ns(frame)) == 1.0


def test_inputs_unchanged() -> None:
    frame = raw_frame(np.array([1.0, 0.0, 0.0]), np.array([1.0, 2.0, 2.0]))
    before = frame.copy(deep=True)
    sort_samples(frame)
    duplicate_reasons(sort_samples(frame))
    pd.testing.assert_frame_equal(frame, before)
