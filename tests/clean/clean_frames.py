"""Helpers for the clean-stage tests: tiny hand-built raw frames, synthetic drives, real-log paths.

No generator lives here: traces with known truth come from :mod:`fleetfuel.synth`; the hand-built
frames are a few deterministic arrays.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema, synth
from fleetfuel.ingest.base import LogBatch, LogFile, conform, empty_dropped

REPO = Path(__file__).resolve().parents[2]
REAL_LOGS = REPO.parent / "shared" / "real_logs"
START = pd.Timestamp("2024-05-06T07:00:00Z")


def real_log(pattern: str) -> Path:
    """The first real third-party log matching ``pattern`` under ``../shared/real_logs``, or skip."""
    found = sorted(REAL_LOGS.glob(pattern)) if REAL_LOGS.is_dir() else []
    if not found:
        pytest.skip(f"real log {pattern} not available under {REAL_LOGS}")
    return found[0]


def raw_frame(
    time_s: np.ndarray,
    speed_m_s: np.ndarray | None = None,
    *,
    lat_deg: np.ndarray | None = None,
    lon_deg: np.ndarray | None = None,
    elevation_m: np.ndarray | None = None,
    vehicle: str = "V1",
    source: str = "a.csv",
    start: pd.Timestamp = START,
) -> pd.DataFrame:
    """A raw canonical frame from plain arrays (times in seconds after ``start``)."""
    t = np.asarray(time_s, dtype=np.float64)
    cols: dict[str, object] = {
        schema.VEHICLE_ID: np.full(t.size, vehicle, dtype=object),
        schema.TIME_UTC: start + pd.to_timedelta(t, unit="s"),
        schema.SOURCE_FILE: np.full(t.size, source, dtype=object),
        schema.SOURCE_ROW: np.arange(t.size, dtype=np.int64),
    }
    for name, values in (
        (schema.SPEED_M_S, speed_m_s),
        (schema.LAT_DEG, lat_deg),
        (schema.LON_DEG, lon_deg),
        (schema.ELEVATION_M, elevation_m),
    ):
        if values is not None:
            cols[name] = np.asarray(values, dtype=np.float64)
    return conform(pd.DataFrame(cols))


def straight_track(speed_m_s: np.ndarray, lat0: float = 48.0, lon0: float = 11.0) -> tuple[np.ndarray, np.ndarray]:
    """Latitudes and longitudes of a due-north drive at the given 1 Hz speeds (spherical, adequate
    for test tracks of a few km). [deg]"""
    north_m = np.r_[0.0, np.cumsum((np.asarray(speed_m_s)[1:] + np.asarray(speed_m_s)[:-1]) / 2)]
    return lat0 + north_m / 111_195.0, np.full(north_m.size, lon0)


def log_file(frame: pd.DataFrame, path: str | None = None, rows_in: int | None = None) -> LogFile:
    """A LogFile around a raw frame (its ``source_file`` is set to ``path``)."""
    path = path or str(frame[schema.SOURCE_FILE].iloc[0])
    frame = frame.assign(**{schema.SOURCE_FILE: pd.Series([path] * len(frame), dtype="string")})
    return LogFile(path=Path(path), samples=frame, rows_in=len(frame) if rows_in is None else rows_in,
                   dropped=empty_dropped(), profile="test")


def batch(*files: LogFile) -> LogBatch:
    return LogBatch(files=tuple(files), failures=())


def synthetic(
    route: synth.Route,
    vehicle: str = "rigid_18t",
    seed: int = 0,
    spec: synth.DefectSpec | None = None,
    *,
    vehicle_id: str = "SYN-01",
    drop: tuple[str, ...] = (),
    rate_hz: float | None = None,
) -> tuple[synth.DriveTruth, pd.DataFrame, synth.InjectedDefects]:
    """One synthetic drive with defects, as a raw canonical frame (source ``syn.csv``, row = position).

    ``drop`` removes signal columns (e.g. ``("speed_m_s",)`` for a position-only logger).
    """
    truth = synth.drive(route, vehicle, seed=seed, vehicle_id=vehicle_id, rate_hz=rate_hz)
    damaged, injected = synth.add_defects(truth.frame, spec or synth.DefectSpec(), seed=seed)
    damaged = damaged.drop(columns=list(drop)).assign(
        **{schema.SOURCE_FILE: "syn.csv", schema.SOURCE_ROW: np.arange(len(damaged), dtype=np.int64)}
    )
    return truth, conform(damaged), injected
