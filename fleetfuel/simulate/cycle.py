"""A speed-time cycle file as arrays for :func:`~fleetfuel.simulate.trace.simulate_trace`.

The file is read by the ingest stage's reader with the bundled ``cycle_csv`` profile (columns
``time_s``, ``speed_m_s`` or ``speed_kmh``, optional ``grade`` (rise/run) or ``elevation_m``);
grade from elevation comes from the clean stage's one grade routine
(:func:`fleetfuel.clean.elevation.road_grade`) over the distance travelled. This module only
turns the canonical frame into arrays: it knows no file format.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.elevation import road_grade
from fleetfuel.errors import InputDataError
from fleetfuel.ingest import IngestConfig, read_log

CYCLE_PROFILE: Final = "cycle_csv"
NS_PER_S: Final = 1e9
CYCLE_COLUMNS_HINT: Final = (
    "fleetfuel simulate --cycle FILE reads a CSV with columns time_s and speed_m_s or speed_kmh, optional grade "
    "(rise/run) or elevation_m; rename the columns to these (simulate takes no ingest profile)"
)
"""What a cycle file must hold, in the words of the ``simulate`` verb's options (its only cycle option is ``--cycle``)."""

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True)
class Cycle:
    """A speed trace with its grade.

    Attributes
    ----------
    time_s : ndarray
        Seconds from the file's zero. [s]
    speed_m_s : ndarray
        Speed. [m/s]
    grade : ndarray
        Road grade, rise over run (zeros when the file has neither grade nor elevation). [1]
    elevation_m : ndarray or None
        Smoothed elevation when the file has one. [m]
    grade_source : str
        ``"grade"``, ``"elevation"`` or ``"flat"``.
    """

    time_s: FloatArray
    speed_m_s: FloatArray
    grade: FloatArray
    elevation_m: FloatArray | None
    grade_source: str


def distance_m(time_s: FloatArray, speed_m_s: FloatArray) -> FloatArray:
    """Cumulative distance by the trapezoidal rule, 0 at the first sample. [m]"""
    steps = np.diff(time_s) * (speed_m_s[1:] + speed_m_s[:-1]) / 2
    return np.concatenate(([0.0], np.cumsum(steps)))


def cycle_from_frame(samples: pd.DataFrame, where: str, clean_cfg: CleanConfig | None = None) -> Cycle:
    """Arrays of one cycle from a raw canonical frame (one vehicle, in time order).

    Raises
    ------
    InputDataError
        Missing speeds, or fewer than two samples.
    """
    if len(samples) < 2:
        raise InputDataError(f"{where}: a cycle needs at least 2 rows, found {len(samples)}")
    times = samples[schema.TIME_UTC]
    time_s = (times.astype("int64").to_numpy() - times.iloc[0].value) / NS_PER_S
    speed = samples[schema.SPEED_M_S].to_numpy(dtype=np.float64)
    missing = ~np.isfinite(speed)
    if missing.any():
        row = int(samples[schema.SOURCE_ROW].to_numpy()[np.argmax(missing)])
        raise InputDataError(f"{where}: row {row}: speed is empty; a cycle needs a speed on every row")
    if schema.GRADE in samples and samples[schema.GRADE].notna().any():
        grade = samples[schema.GRADE].to_numpy(dtype=np.float64)
        if not np.isfinite(grade).all():
            row = int(samples[schema.SOURCE_ROW].to_numpy()[np.argmax(~np.isfinite(grade))])
            raise InputDataError(f"{where}: row {row}: grade is empty; give it on every row or not at all")
        return Cycle(time_s=time_s, speed_m_s=speed, grade=grade, elevation_m=None, grade_source="grade")
    elevation = samples[schema.ELEVATION_M].to_numpy(dtype=np.float64)
    if np.isfinite(elevation).sum() >= 2:
        smooth, grade = road_grade(distance_m(time_s, speed), elevation, clean_cfg or CleanConfig())
        return Cycle(time_s=time_s, speed_m_s=speed, grade=np.nan_to_num(grade), elevation_m=smooth,
                     grade_source="elevation")
    return Cycle(time_s=time_s, speed_m_s=speed, grade=np.zeros_like(speed), elevation_m=None, grade_source="flat")


def read_cycle(path: str | Path, clean_cfg: CleanConfig | None = None) -> Cycle:
    """Read a cycle CSV with the ingest reader (profile ``cycle_csv``) into a :class:`Cycle`.

    Raises
    ------
    InputDataError
        Unreadable file, a row the reader had to drop (naming the row and reason), no speed.
    """
    try:
        log = read_log(Path(path), IngestConfig(profile=CYCLE_PROFILE))
    except InputDataError as exc:
        text = str(exc)
        if "--profile" not in text:  # the reader's advice names an option of the log verbs, not of simulate
            raise
        found = text.split("; give --profile", 1)[0].partition("; found ")[2]
        raise InputDataError(f"{path}: not a cycle file" + (f"; found {found}" if found else "") + f"; {CYCLE_COLUMNS_HINT}") from None
    if len(log.dropped):
        first = log.dropped.iloc[0]
        raise InputDataError(
            f"{path}: row {int(first['source_row'])}: {first['reason']}; a cycle file must have every row usable "
            f"({len(log.dropped)} of {log.rows_in} rows unusable)"
        )
    return cycle_from_frame(log.samples, str(path), clean_cfg)
