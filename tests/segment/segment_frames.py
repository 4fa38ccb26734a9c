"""Builders of small clean-like frames for the segment tests (known truth by construction)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

KMH = 1 / 3.6  # 1 km/h in m/s (NIST SP 811: exact)
EARTH_R = 6371008.8  # IUGG mean radius, only for placing synthetic fixes
REPO = Path(__file__).resolve().parents[2]
SHARED = REPO.parent / "shared"
CYCLES = SHARED / "reference_cycles"


def cycle(name: str) -> tuple[np.ndarray, np.ndarray]:
    """(time_s, speed_m_s) of a standard cycle CSV in ../shared/reference_cycles (skip if absent)."""
    matches = sorted(CYCLES.glob(f"{name}*.csv")) if CYCLES.is_dir() else []
    if not matches:
        pytest.skip(f"reference cycle {name!r} not found under {CYCLES} (../shared absent)")
    table = pd.read_csv(matches[0])
    return table["time_s"].to_numpy(float), table["speed_kmh"].to_numpy(float) * KMH


def frame(
    speed_m_s, start: str = "2024-03-04T08:00:00Z", vehicle: str = "V1", step_s: float = 1.0, **columns
) -> pd.DataFrame:
    """A clean-like frame: uniform steps, no gaps, nothing parked, plus any extra columns."""
    v = np.asarray(speed_m_s, dtype=float)
    times = pd.Timestamp(start) + pd.to_timedelta(np.arange(v.size) * step_s, unit="s")
    out = pd.DataFrame(
        {
            "vehicle_id": pd.array([vehicle] * v.size, dtype="string"),
            "time_utc": times,
            "speed_m_s": v,
            "gap_break": np.zeros(v.size, dtype=bool),
            "is_parked": np.zeros(v.size, dtype=bool),
            "is_interpolated": np.zeros(v.size, dtype=bool),
            "distance_m": np.cumsum(v) * step_s,
            "grade": np.zeros(v.size),
        }
    )
    for name, values in columns.items():
        out[name] = values
    return out


def join(*frames: pd.DataFrame) -> pd.DataFrame:
    """Concatenate frames (of several vehicles or times) into one sorted clean frame."""
    out = pd.concat(frames, ignore_index=True)
    return out.sort_values(["vehicle_id", "time_utc"], kind="stable").reset_index(drop=True)


def runs(moving: np.ndarray) -> int:
    """Number of runs of True: each stop-to-stop section of a trace starting and ending stopped."""
    edges = np.diff(np.r_[0, moving.astype(np.int8), 0])
    return int(np.count_nonzero(edges == 1))


def drive_profile(
    length_m: float, cruise_m_s: float = 12.0, accel_m_s2: float = 1.0, idle_s: int = 20
) -> np.ndarray:
    """1 Hz speeds: idle, accelerate, cruise, brake to rest, idle, covering about ``length_m``."""
    ramp = np.arange(0.0, cruise_m_s, accel_m_s2)
    ramp_m = 2 * ramp.sum()
    cruise = np.full(max(int((length_m - ramp_m) / cruise_m_s), 1), cruise_m_s)
    return np.r_[np.zeros(idle_s), ramp[1:], cruise, ramp[::-1], np.zeros(idle_s)]


def along(
    waypoints_deg: list[tuple[float, float]], speed_m_s: np.ndarray, noise_m: float = 0.0, seed: int = 0
) -> tuple[np.ndarray, np.ndarray]:
    """Fixes (lat, lon) [deg] of a vehicle driving ``speed_m_s`` (1 Hz) along a polyline.

    The polyline is flattened about its first point (equirectangular); the distance driven is
    scaled to the polyline's length so the trip ends at the last waypoint.
    """
    pts = np.radians(np.asarray(waypoints_deg, dtype=float))
    lat0 = pts[0, 0]
    xy = np.column_stack([EARTH_R * np.cos(lat0) * (pts[:, 1] - pts[0, 1]), EARTH_R * (pts[:, 0] - lat0)])
    seg = np.r_[0.0, np.cumsum(np.hypot(*np.diff(xy, axis=0).T))]
    s = np.r_[0.0, np.cumsum((speed_m_s[1:] + speed_m_s[:-1]) / 2)]
    s = s / s[-1] * seg[-1]
    x, y = np.interp(s, seg, xy[:, 0]), np.interp(s, seg, xy[:, 1])
    rng = np.random.default_rng(seed)
    x, y = (
        x + rng.normal(0, noise_m, x.size) * (noise_m > 0),
        y + rng.normal(0, noise_m, y.size) * (noise_m > 0),
    )
    lat = np.degrees(lat0 + y / EARTH_R)
    lon = np.degrees(pts[0, 1] + x / (EARTH_R * np.cos(lat0)))
    return lat, lon
