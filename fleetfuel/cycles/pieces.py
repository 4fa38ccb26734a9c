r"""The pool of real driving pieces a representative cycle is assembled from.

Pieces are taken from the *eligible* micro-trips: those logged at the fleet's cycle step (the
time step covering most driving; low-rate logs are typed and weighted but not cut into cycles)
with every acceleration statistic observable. A micro-trip no longer than
``cfg.max_piece_share * cfg.target_duration_s`` is one piece (``whole``). A longer one (a
motorway or rural run that alone outlasts the cycle) is cut at *splice points* into a ``head``
(its idle and start up to the first cut), ``window`` pieces (cut to cut) and a ``tail`` (last cut
to the stop). Splice points are cruise samples (:math:`|a| \le a_{mode}`) whose speed is within
``cfg.splice_tolerance_m_s`` of the type's splice speed (the median moving speed of its long
micro-trips), at least ``cfg.window_s`` apart; so a head, any windows and a tail of the same
type join at (nearly) equal speed. The pieces of a micro-trip partition its samples: the pool
holds every eligible sample once, and the statistics of all pieces of a type add up to the
type's. A cycle built from pieces stays real driving with at most a few splices, in the spirit
of the micro-trip method (Tong, Hung & Cheung 1999; from memory) extended to journeys longer than
the cycle.

Each piece has an id (``<microtrip_id>`` for a whole micro-trip, ``<microtrip_id>#<k>`` for cut
pieces, k from 0), its micro-trip, vehicle, start and end time, and the positions of its first
and last row in the segmented sample frame, so the assembled cycle can be read back.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema, segment
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.safd import safd_counts
from fleetfuel.cycles.stats import additive_sums
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.kinematics import row_kinematics

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

PIECE_KINDS: Final = ("whole", "head", "window", "tail")
PIECE_COLUMNS: Final = (
    "piece_id",
    schema.MICROTRIP_ID,
    schema.VEHICLE_ID,
    "type",
    "kind",
    "start_utc",
    "end_utc",
    "duration_s",
    "distance_m",
    "first_row",
    "last_row",
)
"""Columns of :attr:`PiecePool.table` (rows: positions in the segmented sample frame)."""
STEP_MATCH: Final = 1e-6  # relative: equal time steps up to float round-off
ACCEL_STATS: Final = (
    "accel_share",
    "cruise_share",
    "decel_share",
    "mean_pos_accel_m_s2",
    "mean_neg_accel_m_s2",
    "rms_accel_m_s2",
    "rpa_m_s2",
)


@dataclass(frozen=True, slots=True)
class PiecePool:
    """Pieces of the eligible micro-trips.

    Attributes
    ----------
    table : DataFrame
        :data:`PIECE_COLUMNS`, one row per piece, in sample order.
    sums : ndarray, shape (pieces, len(stats.SUM_COLUMNS))
        Additive sums of each piece (:func:`fleetfuel.cycles.stats.additive_sums`).
    safd : ndarray, shape (pieces, SAFD cells)
        Time in each SAFD cell. [s]
    splice_speed_m_s : dict of str to float
        Splice speed of each type with long micro-trips. [m/s]
    step_s : float
        Time step of the eligible samples (the cycles' time step). [s]
    """

    table: pd.DataFrame
    sums: FloatArray
    safd: FloatArray
    splice_speed_m_s: dict[str, float]
    step_s: float


def _codes(values: pd.Series) -> tuple[IntArray, pd.Index]:
    codes, uniques = pd.factorize(values, use_na_sentinel=True)
    return codes.astype(np.int64), pd.Index(uniques)


def _edges(codes: IntArray) -> tuple[npt.NDArray[np.bool_], npt.NDArray[np.bool_]]:
    first = np.ones(codes.size, dtype=bool)
    first[1:] = codes[1:] != codes[:-1]
    last = np.ones(codes.size, dtype=bool)
    last[:-1] = codes[1:] != codes[:-1]
    return first, last


def row_motion(samples: pd.DataFrame, segment_cfg: SegmentConfig) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Time [s], speed [m/s], acceleration [m/s^2] and time weight [s] of every row, trip by trip.

    Uses the one discretisation of :mod:`fleetfuel.segment.kinematics`; rows outside trips get
    NaN acceleration and zero weight.
    """
    t = ((samples[schema.TIME_UTC] - pd.Timestamp(0, tz="UTC")) / pd.Timedelta(seconds=1)).to_numpy(np.float64)
    v = np.nan_to_num(samples[schema.SPEED_M_S].to_numpy(dtype=np.float64, na_value=np.nan), nan=0.0)
    trip, _ = _codes(samples[schema.TRIP_ID])
    first, last = _edges(trip)
    kin = row_kinematics(t, v, first, last, segment_cfg)
    outside = trip < 0
    return t, v, np.where(outside, np.nan, kin.accel_m_s2), np.where(outside, 0.0, kin.weight_s)


def eligible_microtrips(microtrips: pd.DataFrame, samples: pd.DataFrame) -> tuple[pd.Series, float]:
    """Which micro-trips cycles may be cut from, and the cycles' time step.

    Returns
    -------
    eligible : Series of bool
        Indexed like ``microtrips``: every acceleration statistic known and every time step
        equal to the cycle step.
    step_s : float
        The time step covering the most driving time (NaN when there is none). [s]
    """
    in_mt = samples[schema.MICROTRIP_ID].notna().to_numpy()
    ids_of_rows = samples[schema.MICROTRIP_ID].to_numpy(dtype=object)[in_mt]
    t = ((samples[schema.TIME_UTC] - pd.Timestamp(0, tz="UTC")) / pd.Timedelta(seconds=1)).to_numpy(np.float64)[in_mt]
    same = np.r_[False, ids_of_rows[1:] == ids_of_rows[:-1]]
    gaps = np.where(same, np.r_[np.nan, np.diff(t)], np.nan)
    step = pd.Series(gaps).groupby(ids_of_rows).max()
    ids = microtrips[schema.MICROTRIP_ID]
    max_step = ids.map(step).to_numpy(dtype=np.float64, na_value=np.nan)
    known = microtrips[list(ACCEL_STATS)].notna().all(axis=1).to_numpy() & np.isfinite(max_step)
    if not known.any():
        return pd.Series(False, index=microtrips.index), float("nan")
    duration = microtrips["duration_s"].to_numpy(dtype=np.float64)
    steps = pd.Series(duration[known]).groupby(np.round(max_step[known], 6)).sum()
    step_s = float(steps.idxmax())
    ok = known & (np.abs(max_step - step_s) <= STEP_MATCH * step_s)
    return pd.Series(ok, index=microtrips.index), step_s


def _cut_codes(
    mt: IntArray, t: FloatArray, v: FloatArray, a: FloatArray, long_mt: npt.NDArray[np.bool_],
    splice: FloatArray, cfg: CyclesConfig, segment_cfg: SegmentConfig,
) -> IntArray:
    """Piece number of each row within its micro-trip (0 for whole micro-trips)."""
    first, last = _edges(mt)
    start_idx = np.maximum.accumulate(np.where(first, np.arange(mt.size), 0))
    offset = t - t[start_idx]
    candidate = (
        long_mt
        & ~first
        & ~last
        & (np.abs(v - splice) <= cfg.splice_tolerance_m_s)
        & (np.abs(np.nan_to_num(a, nan=np.inf)) <= segment_cfg.mode_accel_m_s2)
    )
    bucket = np.floor(offset / cfg.window_s).astype(np.int64)
    idx = np.flatnonzero(candidate & (bucket % 2 == 0))
    keys = pd.Series(idx).groupby([mt[idx], bucket[idx]], sort=False).min().to_numpy() if idx.size else idx
    cut = np.zeros(mt.size, dtype=np.int64)
    cut[keys] = 1
    total = np.cumsum(cut)
    return total - total[start_idx]


def build_pool(
    samples: pd.DataFrame,
    microtrips: pd.DataFrame,
    step_s: float,
    cfg: CyclesConfig,
    segment_cfg: SegmentConfig,
) -> PiecePool:
    """Cut the eligible micro-trips into pieces and compute each piece's sums and SAFD.

    Parameters
    ----------
    samples : DataFrame
        Segmented clean frame (with ``microtrip_id`` and ``trip_id``), sorted by vehicle and time.
    microtrips : DataFrame
        Micro-trip table with ``type`` and a bool column ``eligible``.
    step_s : float
        Time step of the eligible micro-trips (:func:`eligible_microtrips`). [s]
    cfg, segment_cfg : CyclesConfig, SegmentConfig

    Returns
    -------
    PiecePool
    """
    chosen = microtrips.loc[microtrips["eligible"].to_numpy(), [schema.MICROTRIP_ID, "type", "duration_s"]]
    type_of = pd.Series(chosen["type"].to_numpy(), index=chosen[schema.MICROTRIP_ID].to_numpy())
    long_of = pd.Series(
        (chosen["duration_s"] > cfg.max_piece_share * cfg.target_duration_s).to_numpy(), index=type_of.index
    )
    t, v, a, w = row_motion(samples, segment_cfg)
    mt_ids = samples[schema.MICROTRIP_ID]
    keep = mt_ids.isin(type_of.index).to_numpy()
    pos = np.flatnonzero(keep)
    mt, mt_index = _codes(mt_ids.iloc[pos].astype(str))
    row_type = type_of.reindex(mt_index).to_numpy()[mt]
    long_mt = long_of.reindex(mt_index).to_numpy(dtype=bool)[mt]
    moving = v[pos] >= segment_cfg.stop_speed_m_s
    speeds = pd.Series(v[pos][long_mt & moving]).groupby(row_type[long_mt & moving]).median()
    splice_speed = {str(k): float(x) for k, x in speeds.items()}
    splice = pd.Series(row_type).map(speeds).to_numpy(dtype=np.float64, na_value=np.nan)
    number = _cut_codes(mt, t[pos], v[pos], a[pos], long_mt, splice, cfg, segment_cfg)
    piece_key = pd.Series(mt_index.to_numpy()[mt]) + np.where(long_mt, "#" + pd.Series(number).map("{:03d}".format), "")
    piece_code, piece_ids = _codes(piece_key)
    column = pd.Series(pd.NA, index=samples.index, dtype="string")
    column.iloc[pos] = piece_key.to_numpy()
    features = segment.microtrip_features(samples.assign(**{schema.MICROTRIP_ID: column}), segment_cfg)
    features = features.set_index(schema.MICROTRIP_ID).reindex(piece_ids)
    n_cuts = pd.Series(number).groupby(mt).transform("max").to_numpy()
    first_row = pd.Series(pos).groupby(piece_code).min().to_numpy()
    last_row = pd.Series(pos).groupby(piece_code).max().to_numpy()
    at_first = np.searchsorted(pos, first_row)
    num = number[at_first]
    cuts = n_cuts[at_first]
    kind = np.where(
        ~long_mt[at_first], "whole", np.where(num == 0, "head", np.where(num == cuts, "tail", "window"))
    )
    kind = np.where(long_mt[at_first] & (cuts == 0), "whole", kind)
    table = pd.DataFrame(
        {
            "piece_id": pd.array(np.asarray(piece_ids, dtype=object), dtype="string"),
            schema.MICROTRIP_ID: pd.array(mt_index.to_numpy()[mt[at_first]], dtype="string"),
            schema.VEHICLE_ID: samples[schema.VEHICLE_ID].iloc[first_row].astype("string").to_numpy(),
            "type": pd.array(row_type[at_first], dtype="string"),
            "kind": kind,
            "start_utc": samples[schema.TIME_UTC].iloc[first_row].to_numpy(),
            "end_utc": samples[schema.TIME_UTC].iloc[last_row].to_numpy(),
            "duration_s": features["duration_s"].to_numpy(dtype=np.float64),
            "distance_m": features["distance_m"].to_numpy(dtype=np.float64),
            "first_row": first_row.astype(np.int64),
            "last_row": last_row.astype(np.int64),
        }
    )
    table["start_utc"] = pd.to_datetime(table["start_utc"], utc=True)
    table["end_utc"] = pd.to_datetime(table["end_utc"], utc=True)
    safd = safd_counts(v[pos], a[pos], w[pos], piece_code, len(piece_ids), cfg)
    return PiecePool(
        table=table[list(PIECE_COLUMNS)],
        sums=additive_sums(features.reset_index(drop=True)),
        safd=safd,
        splice_speed_m_s=splice_speed,
        step_s=step_s,
    )
