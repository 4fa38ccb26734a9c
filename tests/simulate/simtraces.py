"""Traces and paths shared by the simulate tests (a helper module, not a test file).

Synthetic traces here have a known truth by construction; the published figures they are
built from are cited where they are defined.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from fleetfuel.simulate import VehicleSpec, load_spec
from fleetfuel.simulate.cycle import Cycle, read_cycle

REPO = Path(__file__).resolve().parents[2]
MODELS = REPO / "models"
SHARED = REPO.parent / "shared"
KMH = 1 / 3.6  # km/h -> m/s


def spec(stem: str) -> VehicleSpec:
    """A catalogue spec by file stem (``models/<stem>.toml``)."""
    return load_spec(MODELS / f"{stem}.toml")


def shared_folder(name: str) -> Path:
    """``../shared/<name>`` beside the repository, or skip the test cleanly."""
    folder = SHARED / name
    if not folder.is_dir():
        pytest.skip(f"{folder} absent (third-party data lives beside the repository)")
    return folder


def reference_cycle(stem: str) -> Cycle:
    """A standard cycle of ``../shared/reference_cycles`` read with the ingest reader (``cycle_csv``)."""
    path = shared_folder("reference_cycles") / f"{stem}.csv"
    if not path.is_file():
        pytest.skip(f"{path} absent")
    return read_cycle(path)


def constant_speed(speed_m_s: float, duration_s: float, step_s: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Times and a constant speed (no launch, no stop: zero acceleration everywhere)."""
    t = np.arange(0.0, duration_s + step_s / 2, step_s)
    return t, np.full(t.size, speed_m_s)


def ramp_cruise_stop(cruise_m_s: float, length_m: float, accel_m_s2: float, decel_m_s2: float | None = None,
                     step_s: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Start from rest at ``accel``, cruise, stop at ``decel`` after ``length_m`` (1 Hz samples)."""
    decel = accel_m_s2 if decel_m_s2 is None else decel_m_s2
    t_acc, t_dec = cruise_m_s / accel_m_s2, cruise_m_s / decel
    cruise_s = (length_m - cruise_m_s * (t_acc + t_dec) / 2) / cruise_m_s
    end = t_acc + cruise_s + t_dec
    t = np.arange(0.0, np.ceil(end) + step_s / 2, step_s)
    v = np.minimum.reduce([accel_m_s2 * t, np.full(t.size, cruise_m_s), np.maximum(decel * (end - t), 0.0)])
    return t, np.maximum(v, 0.0)


def rolling_grade(time_s: np.ndarray, speed_m_s: np.ndarray, grade_max: float, wavelength_m: float) -> np.ndarray:
    """Sinusoidal grade over distance, zero at the start: gently rolling terrain. [1]"""
    s = np.concatenate(([0.0], np.cumsum(np.diff(time_s) * (speed_m_s[1:] + speed_m_s[:-1]) / 2)))
    return grade_max * np.sin(2 * np.pi * s / wavelength_m)


def motorway_trace() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """100 km of motorway at a steady 85 km/h over gently rolling grades of +/-1 %.

    85 km/h: EU heavy trucks are limited to 90 km/h (Council Directive 92/6/EEC as amended) and
    run cruise control just below it (common practice, no source). +/-1 % over a 4 km wavelength:
    "gentle grades", well inside motorway design limits of 4-5 % (common practice, no source).
    Start at 0.2 m/s^2 and stop at the same rate (a laden 40 t truck, common practice).
    """
    t, v = ramp_cruise_stop(85 * KMH, 100_000.0, 0.2)
    return t, v, rolling_grade(t, v, 0.01, 4000.0)


def bus_stop_pattern(stops: int = 25) -> tuple[np.ndarray, np.ndarray]:
    """A city-bus route with a stop every 400 m: 1.0 m/s^2 up to 40 km/h, cruise, 1.0 m/s^2 down, 20 s dwell.

    Built from published figures (all from memory): stop spacing of 400 m or more is typical in
    European cities (UITP guidance on bus stop spacing); 20 s is a typical dwell time per stop
    (TCRP Report 100, Transit Capacity and Quality of Service Manual, 2nd ed., 2003: 15-30 s);
    40 km/h cruising on urban arterials and 1.0 m/s^2 for passenger comfort with standees
    (common practice, no source). The mean speed comes out at 21.5 km/h, close to the 18.6 km/h
    of the UITP "easy urban" bus test cycle (from memory).
    """
    v_cruise, accel, dwell_s, spacing_m = 40 * KMH, 1.0, 20.0, 400.0
    ramp_s = v_cruise / accel
    cruise_s = (spacing_m - v_cruise * ramp_s) / v_cruise
    drive_s = 2 * ramp_s + cruise_s
    period = drive_s + dwell_s
    t = np.arange(0.0, np.floor(period * stops) + 1.0)
    tau = np.mod(t, period)
    v = np.minimum.reduce([accel * tau, np.full(t.size, v_cruise), accel * (drive_s - tau)])
    return t, np.maximum(v, 0.0)
