"""The clean stage: raw canonical frames -> one clean, uniform-step frame and a row account.

:func:`clean_batch` partitions the batch by vehicle (rows of one vehicle from every file,
in batch order), cleans each vehicle with :func:`clean_vehicle` (see
:mod:`fleetfuel.clean.vehicle` for the steps) and builds the per-file row account
(:mod:`fleetfuel.clean.account`). Vehicles are independent, so the result does not depend on
how vehicles are grouped or scheduled.

The steps are pure functions over arrays or frames, usable on their own:
:func:`sort_samples`, :func:`duplicate_reasons`, :func:`speed_spikes`, :func:`position_outliers`,
:func:`resample`, :func:`speed_from_positions`, :func:`standstill`, :func:`road_grade`,
:func:`geodesic_distance_m`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean.account import ACCOUNT_TABLE_COLUMNS, build_account
from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.elevation import grade_profile, road_grade
from fleetfuel.clean.geodesy import geodesic_distance_m
from fleetfuel.clean.motion import speed_from_positions
from fleetfuel.clean.order import duplicate_reasons, sort_samples
from fleetfuel.clean.outliers import position_outliers, speed_spikes
from fleetfuel.clean.parked import standstill
from fleetfuel.clean.resample import resample, time_base
from fleetfuel.clean.vehicle import (
    CLEAN_COLUMNS,
    DROPPED_COLUMNS,
    VehicleClean,
    clean_vehicle,
    empty_clean_frame,
)
from fleetfuel.ingest.base import LogBatch, empty_raw_frame

__all__ = [
    "ACCOUNT_TABLE_COLUMNS",
    "CLEAN_COLUMNS",
    "CleanConfig",
    "CleanResult",
    "VehicleClean",
    "clean_batch",
    "clean_vehicle",
    "duplicate_reasons",
    "geodesic_distance_m",
    "grade_profile",
    "position_outliers",
    "resample",
    "road_grade",
    "sort_samples",
    "speed_from_positions",
    "speed_spikes",
    "standstill",
    "time_base",
]


@dataclass(frozen=True, slots=True)
class CleanResult:
    """What :func:`clean_batch` returns.

    Attributes
    ----------
    samples : DataFrame
        Clean frame (:data:`CLEAN_COLUMNS`), sorted by vehicle_id then time_utc.
    account : DataFrame
        Row account, one row per input file including failures (:data:`ACCOUNT_TABLE_COLUMNS`).
    dropped : DataFrame
        Every dropped input row, by the readers and by this stage: ``source_file``,
        ``source_row``, ``reason``.
    """

    samples: pd.DataFrame
    account: pd.DataFrame
    dropped: pd.DataFrame


def _empty_dropped() -> pd.DataFrame:
    return pd.DataFrame(
        {
            schema.SOURCE_FILE: pd.Series([], dtype="string"),
            schema.SOURCE_ROW: pd.Series([], dtype="int64"),
            "reason": pd.Series([], dtype="string"),
        }
    )


def _reader_dropped(batch: LogBatch) -> pd.DataFrame:
    parts = [
        pd.DataFrame(
            {
                schema.SOURCE_FILE: pd.Series([str(f.path)] * len(f.dropped), dtype="string"),
                schema.SOURCE_ROW: f.dropped["source_row"].to_numpy(dtype="int64"),
                "reason": f.dropped["reason"].astype("string").to_numpy(),
            }
        )
        for f in batch.files
        if len(f.dropped)
    ]
    return pd.concat(parts, ignore_index=True).astype({"reason": "string"}) if parts else _empty_dropped()


def _vehicle_parts(rows: pd.DataFrame) -> list[pd.DataFrame]:
    """Rows of each vehicle (in row order), vehicles sorted by id, missing id last.

    The same partition as ``rows.groupby(vehicle_id, sort=True, dropna=False)``; when each
    vehicle's rows are one contiguous block (files hold one vehicle, or are sorted by vehicle)
    the parts are slices, without a copy of the whole frame.
    """
    if rows.empty:
        return []
    codes, uniques = pd.factorize(rows[schema.VEHICLE_ID], sort=True, use_na_sentinel=True)
    codes = np.where(codes < 0, len(uniques), codes)  # missing ids form the last group
    starts = np.flatnonzero(np.r_[True, codes[1:] != codes[:-1]])
    if starts.size != np.unique(codes).size:  # some vehicle's rows are not contiguous
        return [part for _, part in rows.groupby(schema.VEHICLE_ID, sort=True, dropna=False)]
    stops = np.r_[starts[1:], codes.size]
    order = np.argsort(codes[starts], kind="stable")
    return [rows.iloc[starts[k] : stops[k]] for k in order]


def clean_batch(batch: LogBatch, cfg: CleanConfig | None = None) -> CleanResult:
    """Clean every file of a batch and account for every row.

    Parameters
    ----------
    batch : LogBatch
        Readers' output (files in batch order, failures).
    cfg : CleanConfig, optional
        Thresholds; the documented defaults when omitted.

    Returns
    -------
    CleanResult
        Clean samples, row account, dropped rows.
    """
    cfg = cfg or CleanConfig()
    frames = [f.samples for f in batch.files if len(f.samples)]
    rows = pd.concat(frames, ignore_index=True) if frames else empty_raw_frame()
    cleaned: list[VehicleClean] = [clean_vehicle(part, cfg) for part in _vehicle_parts(rows)]
    samples = [c.samples for c in cleaned if len(c.samples)]
    clean_dropped = [c.dropped for c in cleaned if len(c.dropped)]
    summaries = [c.files for c in cleaned if len(c.files)]
    out = pd.concat(samples, ignore_index=True) if samples else empty_clean_frame()
    cdrop = pd.concat(clean_dropped, ignore_index=True) if clean_dropped else _empty_dropped()
    summary = pd.concat(summaries, ignore_index=True) if summaries else pd.DataFrame()
    account = build_account(batch, summary, cdrop)
    dropped = pd.concat([_reader_dropped(batch), cdrop], ignore_index=True)
    dropped = dropped.astype({schema.SOURCE_FILE: "string", schema.SOURCE_ROW: "int64", "reason": "string"})
    return CleanResult(samples=out, account=account, dropped=dropped[list(DROPPED_COLUMNS)])
