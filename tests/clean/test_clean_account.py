"""The row account: rows_in == rows_kept + sum(dropped) for every file, always (property test),
on the real logs, and with failures; a broken identity is an internal error."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from clean_frames import REAL_LOGS, batch, log_file, raw_frame, straight_track
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fleetfuel import schema
from fleetfuel.clean import ACCOUNT_TABLE_COLUMNS, CLEAN_COLUMNS, CleanConfig, clean_batch
from fleetfuel.clean.account import check_identity, weighted_median
from fleetfuel.clean.order import time_ns
from fleetfuel.errors import InternalError
from fleetfuel.ingest import IngestConfig, read_logs
from fleetfuel.ingest.base import FileFailure, LogBatch, LogFile

CFG = CleanConfig()


@st.composite
def messy_file(draw: st.DrawFn, name: str) -> LogFile:
    """A random log: two vehicles, duplicates, spikes, gaps, missing and invalid positions."""
    n = draw(st.integers(1, 250))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    steps = rng.choice([0.0, 0.1, 1.0, 1.0, 1.0, 2.0, 15.0, 90.0, 400.0], size=n)
    t = np.cumsum(steps)
    v = np.abs(10 + np.cumsum(rng.normal(0, 1.0, n)))
    spikes = rng.random(n) < 0.05
    v[spikes] += rng.uniform(10, 300, spikes.sum())
    v[rng.random(n) < 0.1] = np.nan
    lat, lon = straight_track(np.nan_to_num(v))
    lat, lon = lat.copy(), lon.copy()
    bad = rng.random(n) < 0.05
    lat[bad], lon[bad] = 0.0, 0.0
    jump = rng.random(n) < 0.03
    lat[jump] += 0.05
    gone = rng.random(n) < 0.1
    lat[gone], lon[gone] = np.nan, np.nan
    elev = 300 + np.round(rng.normal(0, 4, n))
    frame = raw_frame(t, v, lat_deg=lat, lon_deg=lon, elevation_m=elev, source=name)
    frame[schema.VEHICLE_ID] = pd.Series(np.where(rng.random(n) < 0.3, "V2", "V1"), dtype="string")
    if n > 3:  # exact repeats and repeated times with other values
        idx = rng.choice(n, size=min(5, n), replace=True)
        copies = frame.iloc[idx].copy()
        other = frame.iloc[idx[:2]].copy()
        other[schema.SPEED_M_S] = other[schema.SPEED_M_S] + 1.0
        frame = pd.concat([frame, copies, other], ignore_index=True)
        frame[schema.SOURCE_ROW] = np.arange(len(frame), dtype=np.int64)
    return log_file(frame, name)


def _assert_account(result, files: list[LogFile]) -> None:
    acc = result.account.set_index("path")
    for f in files:
        row = acc.loc[str(f.path)]
        assert row["rows_in"] == row["rows_kept"] + sum(row["dropped"].values()) == f.rows_in
        assert set(row["dropped"]) <= set(schema.DROP_REASONS)
    dropped = result.dropped.groupby(schema.SOURCE_FILE).size()
    for f in files:
        assert dropped.get(str(f.path), 0) == sum(acc.loc[str(f.path), "dropped"].values())
    s = result.samples
    assert list(s.columns) == list(CLEAN_COLUMNS)
    for _, part in s.groupby(schema.VEHICLE_ID):
        t = time_ns(part)
        assert np.all(np.diff(t) > 0)
        step = np.diff(t)[~part[schema.GAP_BREAK].to_numpy()[1:]]
        assert step.size == 0 or np.all(step == step[0])  # uniform inside stretches
    assert (s.loc[s[schema.IS_INTERPOLATED], schema.SOURCE_ROW] == -1).all()
    assert (s.loc[~s[schema.IS_INTERPOLATED], schema.SOURCE_ROW] >= 0).all()
    assert int(acc["rows_interpolated"].sum()) == int(s[schema.IS_INTERPOLATED].sum())
    assert s[schema.SPEED_M_S].dropna().between(0, CFG.speed_ceiling_m_s).all()


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.sampled_from(["a.csv", "b.csv", "c.csv"]), min_size=1, max_size=3, unique=True).flatmap(
    lambda names: st.tuples(*[messy_file(n) for n in names])))
def test_identity_holds_on_random_messy_frames(files: tuple[LogFile, ...]) -> None:
    result = clean_batch(batch(*files), CFG)
    _assert_account(result, list(files))


def test_failures_are_rows_with_error() -> None:
    good = log_file(raw_frame(np.arange(30.0), np.full(30, 5.0)), "good.csv")
    failed = FileFailure(Path("bad.csv"), "bad.csv: no time column; found ['x']")
    result = clean_batch(LogBatch(files=(good,), failures=(failed,)), CFG)
    acc = result.account.set_index("path")
    assert list(result.account.columns) == list(ACCOUNT_TABLE_COLUMNS)
    assert acc.loc["bad.csv", "error"] == failed.error and acc.loc["bad.csv", "rows_in"] == 0
    assert acc.loc["good.csv", "error"] is None and acc.loc["good.csv", "rows_kept"] == 30


def test_broken_identity_is_an_internal_error() -> None:
    # a reader claiming more rows than it returned or dropped: a bug, not bad input
    frame = raw_frame(np.arange(10.0), np.full(10, 5.0))
    with pytest.raises(InternalError, match="rows_in 12 != rows_kept 10"):
        clean_batch(batch(log_file(frame, "a.csv", rows_in=12)), CFG)
    with pytest.raises(InternalError):
        check_identity("x", 3, 1, {"made_up_reason": 2})


def test_weighted_median_by_hand() -> None:
    assert weighted_median(np.array([1.0, 30.0]), np.array([900, 100])) == 1.0
    assert weighted_median(np.array([1.0, 30.0, np.nan]), np.array([100, 900, 5])) == 30.0


def test_empty_batch() -> None:
    result = clean_batch(LogBatch(), CFG)
    assert result.samples.empty and result.account.empty and result.dropped.empty
    assert list(result.samples.columns) == list(CLEAN_COLUMNS)


@pytest.mark.real_logs
@pytest.mark.slow
def test_identity_on_every_real_log() -> None:
    if not REAL_LOGS.is_dir():
        pytest.skip("real logs not available")
    logs = read_logs([REAL_LOGS], IngestConfig())
    result = clean_batch(logs, CFG)
    _assert_account(result, list(logs.files))
    assert len(result.account) == len(logs.files) + len(logs.failures)


def test_clean_batch_leaves_inputs_alone() -> None:
    frame = raw_frame(np.r_[np.arange(20.0), 19.0, np.arange(25.0, 40.0)], np.r_[np.full(21, 5.0), np.full(15, 6.0)])
    f = log_file(frame, "a.csv")
    before = f.samples.copy(deep=True)
    clean_batch(batch(f), CFG)
    pd.testing.assert_frame_equal(f.samples, before)
