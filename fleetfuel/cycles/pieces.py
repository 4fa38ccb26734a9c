r"""The pool of real driving pieces a representative cycle is assembled from.

A micro-trip is *measured* when it is logged at the fleet's cycle step (the time step covering
most driving; low-rate logs are typed and weighted but not cut into cycles) with its
accelerations observable; measured driving makes the types' targets and SAFD (and the fuel check,
:mod:`fleetfuel.cycles.validate`), wherever it starts and ends. Pieces are taken from the
*eligible* micro-trips, the measured ones starting and ending at rest, plus the long measured ones
that start or end moving (a trip cut at a gap on the motorway): of those only the pieces that
join at splice levels are kept, never one starting or ending moving where it should be at rest.
A micro-trip no longer than ``cfg.max_piece_share * cfg.target_duration_s`` is one piece
(``whole``). A longer one (a motorway or rural run that alone outlasts the cycle) is cut at *splice points* into a ``head``
(its idle and start up to the first cut), ``window`` pieces (cut to cut) and a ``tail`` (last cut
to the stop). Splice points are cruise samples (:math:`|a| \le a_{mode}`) whose speed is within
``cfg.splice_tolerance_m_s`` of one of the type's *splice levels*, at least ``cfg.window_s``
apart. A type has up to ``cfg.splice_levels`` levels, the quantiles :math:`k / (n + 1)` of the
moving speeds of its long micro-trips (levels closer than twice the tolerance merged), so a
hairpin climb is cut at a low level and a motorway at a high one. Each cut piece carries an
*entry* level (that of its first row) and an *exit* level (that of the row after its last);
whole micro-trips, heads' entries and tails' exits are at rest (level -1). Pieces join where one's
exit level is the next one's entry level, i.e. at (nearly) equal speed: a cycle is whole
micro-trips plus at most one chain head -> windows -> tail walking through the levels
(:mod:`fleetfuel.cycles.assemble`). A cycle built from pieces stays real driving with a few
splices, in the spirit of the micro-trip method (Tong, Hung & Cheung 1999; from memory) extended
to journeys longer than the cycle. The pieces of a micro-trip partition its samples.

Every piece's statistics come from :func:`fleetfuel.segment.microtrip_features` (whole pieces
are micro-trips; cut pieces are computed on their rows with their trip neighbours, so that the
kinematics are those of the full log), turned into additive sums by
:func:`fleetfuel.cycles.stats.additive_sums`. Each piece has an id (``<microtrip_id>`` for a whole
micro-trip, ``<microtrip_id>#<k>`` for cut pieces, k from 0), its micro-trip, vehicle, start and
end time, levels, and the positions of its first and last row in the segmented sample frame, so
the assembled cycle can be read back.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

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
    "entry_level",
    "exit_level",
    "start_utc",
    "end_utc",
    "duration_s",
    "distance_m",
    "first_row",
    "last_row",
)
"""Columns of :attr:`PiecePool.table` (levels -1: at rest; rows: positions in the segmented
sample frame)."""
STEP_MATCH: Final = 1e-6  # relative: equal time steps up to float round-off
REST: Final = -1
OBSERVED_STATS: Final = ("accel_share", "cruise_share", "decel_share", "rms_accel_m_s2")
"""Statistics that are NaN exactly when a micro-trip's acceleration is not observable (low-rate
logs; :mod:`fleetfuel.segment.features`). The mean positive and negative accelerations are also
NaN for driving without an acceleration or deceleration phase (a motorway run cut at a gap), so
they do not say whether a micro-trip is measured."""


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
    type_safd : dict of str to ndarray
        Time in each SAFD cell of all eligible driving of each type. [s]
    levels_m_s : dict of str to ndarray
        Splice levels of each type with long micro-trips. [m/s]
    step_s : float
        Time step of the eligible samples (the cycles' time step). [s]
    """

    table: pd.DataFrame
    sums: FloatArray
    safd: FloatArray
    type_safd: dict[str, FloatArray]
    levels_m_s: dict[str, FloatArray]
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


def measured_microtrips(microtrips: pd.DataFrame) -> tuple[pd.Series, float]:
    """Which micro-trips are driving measured at the cycles' time step, and that step.

    A micro-trip is *measured* when its accelerations are observable (:data:`OBSERVED_STATS`
    known) and every time step equals the cycle step (its ``max_step_s``,
    :data:`fleetfuel.segment.LOGGING_COLUMNS`), wherever it starts and ends: a log may start or
    break off while moving (a trip cut at a gap on the motorway), and that driving still belongs
    to its type. Measured micro-trips make the types' targets and SAFD and both sides of the fuel
    check; cycles are cut from the :func:`eligible_microtrips` among them (and from the
    splice-level pieces of long measured ones, :func:`build_pool`).

    Returns
    -------
    measured : Series of bool
        Indexed like ``microtrips``.
    step_s : float
        The time step covering the most driving time (NaN when there is none). [s]
    """
    max_step = microtrips["max_step_s"].to_numpy(dtype=np.float64, na_value=np.nan)
    known = microtrips[list(OBSERVED_STATS)].notna().all(axis=1).to_numpy() & np.isfinite(max_step)
    if not known.any():
        return pd.Series(False, index=microtrips.index), float("nan")
    duration = microtrips["duration_s"].to_numpy(dtype=np.float64)
    steps = pd.Series(duration[known]).groupby(np.round(max_step[known], 6)).sum()
    step_s = float(steps.idxmax())
    ok = known & (np.abs(max_step - step_s) <= STEP_MATCH * step_s)
    return pd.Series(ok, index=microtrips.index), step_s


def eligible_microtrips(microtrips: pd.DataFrame) -> tuple[pd.Series, float]:
    """Which micro-trips cycles may be cut from, and the cycles' time step.

    Returns
    -------
    eligible : Series of bool
        Indexed like ``microtrips``: measured (:func:`measured_microtrips`: accelerations
        observable, every time step equal to the cycle step) and first and last sample at
        rest (``ends_at_rest``), so that pieces join at rest.
    step_s : float
        The time step covering the most driving time (NaN when there is none). [s]
    """
    measured, step_s = measured_microtrips(microtrips)
    return measured & microtrips["ends_at_rest"].to_numpy(dtype=bool), step_s


def _levels(types: npt.NDArray[np.object_], v: FloatArray, n: int, tolerance_m_s: float) -> dict[str, FloatArray]:
    """Splice levels of each type: quantiles k/(n+1) of its moving speeds, near-equal ones merged."""
    quantiles = np.arange(1, n + 1) / (n + 1)
    out = {}
    for name, speeds in pd.Series(v).groupby(types).quantile(quantiles).groupby(level=0):
        values = np.sort(speeds.to_numpy(dtype=np.float64))
        keep = np.r_[True, np.diff(values) > 2 * tolerance_m_s]
        out[str(name)] = values[keep]
    return out


def _cut_codes(
    mt: IntArray, t: FloatArray, v: FloatArray, a: FloatArray, levels: FloatArray,
    cfg: CyclesConfig, segment_cfg: SegmentConfig,
) -> tuple[IntArray, IntArray]:
    """(piece number within the micro-trip, splice level of the row or -1) of each row.

    ``levels`` has one row of level speeds per row (NaN-padded) [m/s].
    """
    first, last = _edges(mt)
    start_idx = np.maximum.accumulate(np.where(first, np.arange(mt.size), 0))
    offset = t - t[start_idx]
    gap = np.abs(v[:, None] - levels)
    nearest = np.argmin(np.where(np.isfinite(gap), gap, np.inf), axis=1)
    close = np.take_along_axis(np.nan_to_num(gap, nan=np.inf), nearest[:, None], axis=1)[:, 0]
    candidate = (
        ~first
        & ~last
        & (close <= cfg.splice_tolerance_m_s)
        & (np.abs(np.nan_to_num(a, nan=np.inf)) <= segment_cfg.mode_accel_m_s2)
    )
    bucket = np.floor(offset / cfg.window_s).astype(np.int64)
    idx = np.flatnonzero(candidate & (bucket % 2 == 0))
    keys = pd.Series(idx).groupby([mt[idx], bucket[idx]], sort=False).min().to_numpy() if idx.size else idx
    cut = np.zeros(mt.size, dtype=np.int64)
    cut[keys] = 1
    total = np.cumsum(cut)
    level = np.where(cut > 0, nearest, REST).astype(np.int64)
    return total - total[start_idx], level


def _with_neighbours(rows: IntArray, n: int) -> IntArray:
    """``rows`` plus the row before and after each (clipped to the frame), sorted, unique."""
    return np.unique(np.clip(np.concatenate([rows - 1, rows, rows + 1]), 0, n - 1))


def _cut_pieces(
    samples: pd.DataFrame, long_pos: IntArray, mt: IntArray, mt_ids: pd.Index, row_type: npt.NDArray[np.object_],
    motion: tuple[FloatArray, FloatArray, FloatArray, FloatArray], cfg: CyclesConfig, segment_cfg: SegmentConfig,
) -> tuple[pd.DataFrame, pd.DataFrame, FloatArray, dict[str, FloatArray]]:
    """Cut the long micro-trips: (piece rows, their features, SAFD counts, levels per type)."""
    t, v, a, w = (x[long_pos] for x in motion)
    moving = v >= segment_cfg.stop_speed_m_s
    levels = _levels(row_type[moving], v[moving], cfg.splice_levels, cfg.splice_tolerance_m_s)
    grid = np.full((v.size, cfg.splice_levels), np.nan)
    for name, values in levels.items():  # one assignment per type
        grid[np.ix_(row_type == name, np.arange(values.size))] = values
    number, cut_level = _cut_codes(mt, t, v, a, grid, cfg, segment_cfg)
    cuts = pd.Series(number).groupby(mt).transform("max").to_numpy()
    key = pd.Series(mt_ids.to_numpy()[mt]) + "#" + pd.Series(number).map("{:03d}".format)
    key = key.where(cuts > 0, pd.Series(mt_ids.to_numpy()[mt]))
    code, ids = pd.factorize(key)
    first = pd.Series(np.arange(mt.size)).groupby(code).min().to_numpy()
    last = pd.Series(np.arange(mt.size)).groupby(code).max().to_numpy()
    num, n_cuts = number[first], cuts[first]
    entry = cut_level[first]
    exit_ = np.where(num < n_cuts, cut_level[np.minimum(last + 1, mt.size - 1)], REST)
    kind = np.where(n_cuts == 0, "whole", np.where(num == 0, "head", np.where(num == n_cuts, "tail", "window")))
    meta = pd.DataFrame({
        "piece_id": np.asarray(ids, dtype=object), "mt_code": mt[first], "kind": kind,
        "entry_level": entry, "exit_level": exit_, "first_row": long_pos[first], "last_row": long_pos[last],
    })
    copy = samples.iloc[_with_neighbours(long_pos, len(samples))].copy()
    column = pd.Series(pd.NA, index=samples.index, dtype="string")
    column.iloc[long_pos] = key.to_numpy()
    copy[schema.MICROTRIP_ID] = column.reindex(copy.index)
    features = segment.microtrip_features(copy, segment_cfg).set_index(schema.MICROTRIP_ID)
    hist = safd_counts(v, a, w, code.astype(np.int64), len(ids), cfg)
    return meta, features.reindex(meta["piece_id"]).reset_index(drop=True), hist, levels


def type_safd_counts(
    samples: pd.DataFrame, types: pd.Series, cfg: CyclesConfig, segment_cfg: SegmentConfig
) -> dict[str, FloatArray]:
    """Time in each SAFD cell of each type's micro-trips (``types``: microtrip_id -> type) in
    ``samples`` (a segmented frame, sorted; kinematics trip by trip). [s]

    Additive: the counts of a fleet are the sums of its partitions' counts.
    """
    row_type = samples[schema.MICROTRIP_ID].astype("string").map(types)
    pos = np.flatnonzero(row_type.notna().to_numpy())
    if not pos.size:
        return {}
    code, names = _codes(row_type.iloc[pos])
    _, v, a, w = row_motion(samples, segment_cfg)
    counts = safd_counts(v[pos], a[pos], w[pos], code, len(names), cfg)
    return {str(name): counts[k] for k, name in sorted(enumerate(names), key=lambda kv: str(kv[1]))}


def safd_types(microtrips: pd.DataFrame) -> pd.Series:
    """microtrip_id -> type of the micro-trips a type's SAFD counts (``measured``, else ``eligible``)."""
    flag = "measured" if "measured" in microtrips.columns else "eligible"
    keep = microtrips[flag].to_numpy(dtype=bool) & microtrips["type"].notna().to_numpy()
    # two columns masked, not the table's rows copied; Arrow-backed texts, not a Python object per
    # micro-trip (a big fleet has ~10^6)
    ids = microtrips[schema.MICROTRIP_ID].astype("string").array[keep]
    return pd.Series(microtrips["type"].astype("string").array[keep], index=pd.Index(ids), dtype="string")


def pool_microtrips(microtrips: pd.DataFrame, cfg: CyclesConfig) -> npt.NDArray[np.bool_]:
    """Which micro-trips the pool is cut from: the eligible ones and the long measured ones.

    A type with more than ``cfg.pool_max_s`` of them gets a seeded draw (``cfg.seed``, in
    micro-trip id order, so the draw does not depend on the engine): micro-trips in drawn order
    until their duration reaches ``cfg.pool_max_s``.
    """
    duration = microtrips["duration_s"].to_numpy(dtype=np.float64, na_value=0.0)
    long_mt = duration > cfg.max_piece_share * cfg.target_duration_s
    measured = microtrips["measured"].to_numpy(dtype=bool) if "measured" in microtrips.columns else False
    chosen = microtrips["eligible"].to_numpy(dtype=bool) | (measured & long_mt)
    # type codes and the id order from Arrow (no Python text per micro-trip: a big fleet has ~10^6)
    codes, names = pd.factorize(microtrips["type"].astype("string"), use_na_sentinel=True)
    id_rank = np.empty(len(microtrips), dtype=np.int64)
    id_rank[pc.sort_indices(pa.array(microtrips[schema.MICROTRIP_ID].astype("string").array)).to_numpy()] = (
        np.arange(len(microtrips)))
    rng = np.random.default_rng(cfg.seed)
    for code in sorted(set(codes[chosen & (codes >= 0)].tolist()), key=lambda c: str(names[c])):
        members = np.flatnonzero(chosen & (codes == code))
        if duration[members].sum() <= cfg.pool_max_s:
            continue
        drawn = members[np.argsort(id_rank[members], kind="stable")][rng.permutation(members.size)]
        keep = np.cumsum(duration[drawn]) - duration[drawn] < cfg.pool_max_s
        chosen[drawn[~keep]] = False
    return chosen


def build_pool(
    samples: pd.DataFrame,
    microtrips: pd.DataFrame,
    step_s: float,
    type_safd: dict[str, FloatArray],
    cfg: CyclesConfig,
    segment_cfg: SegmentConfig,
) -> PiecePool:
    """Cut the pool's micro-trips into pieces and compute each piece's sums and SAFD.

    Long measured micro-trips that start or end moving (not eligible) give their pieces that join
    at splice levels too: their windows, and the tail (head) of one that only starts (ends)
    moving. No piece starts or ends moving where it should be at rest.

    Parameters
    ----------
    samples : DataFrame
        Segmented rows (with ``microtrip_id`` and ``trip_id``) holding the pool's micro-trips and
        the row before and after each within its trip (:func:`fleetfuel.cycles.logs.microtrip_rows`),
        sorted by vehicle and time.
    microtrips : DataFrame
        The pool's rows of the micro-trip feature table (:func:`pool_microtrips`), with ``type``.
    step_s : float
        Time step of the eligible micro-trips (:func:`eligible_microtrips`). [s]
    type_safd : dict of str to ndarray
        Time in each SAFD cell of each type's measured driving (:func:`type_safd_counts`). [s]
    cfg, segment_cfg : CyclesConfig, SegmentConfig

    Returns
    -------
    PiecePool
    """
    longest_whole_s = cfg.max_piece_share * cfg.target_duration_s
    chosen = microtrips.reset_index(drop=True)
    ids = chosen[schema.MICROTRIP_ID].astype(str)
    motion = row_motion(samples, segment_cfg)
    t, v, a, w = motion
    pos = np.flatnonzero(samples[schema.MICROTRIP_ID].isin(set(ids)).to_numpy())
    mt, mt_ids = _codes(samples[schema.MICROTRIP_ID].iloc[pos].astype(str))
    at = pd.Series(np.arange(len(chosen)), index=ids.to_numpy()).reindex(mt_ids).to_numpy()
    row_type = chosen["type"].astype(str).to_numpy(dtype=object)[at][mt]
    mt_safd = safd_counts(v[pos], a[pos], w[pos], mt, len(mt_ids), cfg)
    mt_type = chosen["type"].astype(str).to_numpy(dtype=object)[at]
    is_long = (chosen["duration_s"].to_numpy() > longest_whole_s)[at]
    first = pd.Series(pos).groupby(mt).min().to_numpy()
    last = pd.Series(pos).groupby(mt).max().to_numpy()
    short = np.flatnonzero(~is_long)
    wholes = pd.DataFrame({
        "piece_id": mt_ids.to_numpy()[short], "mt_code": short, "kind": "whole", "entry_level": REST,
        "exit_level": REST, "first_row": first[short], "last_row": last[short],
    })
    whole_features = chosen.iloc[at[short]].reset_index(drop=True)
    on_long = is_long[mt]
    long_codes, local = np.unique(mt[on_long], return_inverse=True)
    levels: dict[str, FloatArray] = {}
    meta, features, hists = pd.DataFrame(), pd.DataFrame(), np.zeros((0, mt_safd.shape[1]))
    if on_long.any():
        meta, features, hists, levels = _cut_pieces(
            samples, pos[on_long], local.astype(np.int64), mt_ids[long_codes], row_type[on_long], motion,
            cfg, segment_cfg,
        )
        meta["mt_code"] = long_codes[meta["mt_code"].to_numpy()]
    table = pd.concat([wholes, meta], ignore_index=True)
    all_features = pd.concat([whole_features, features], ignore_index=True)
    table[schema.MICROTRIP_ID] = pd.array(mt_ids.to_numpy()[table["mt_code"].to_numpy()], dtype="string")
    table["piece_id"] = table["piece_id"].astype("string")
    table[schema.VEHICLE_ID] = samples[schema.VEHICLE_ID].iloc[table["first_row"]].astype("string").to_numpy()
    table["type"] = pd.array(mt_type[table["mt_code"].to_numpy()], dtype="string")
    table["entry_level"] = table["entry_level"].astype(np.int64)
    table["exit_level"] = table["exit_level"].astype(np.int64)
    table["start_utc"] = samples[schema.TIME_UTC].iloc[table["first_row"]].to_numpy()
    table["end_utc"] = samples[schema.TIME_UTC].iloc[table["last_row"]].to_numpy()
    table["duration_s"] = all_features["duration_s"].to_numpy(dtype=np.float64)
    table["distance_m"] = all_features["distance_m"].to_numpy(dtype=np.float64)
    table["start_utc"] = pd.to_datetime(table["start_utc"], utc=True)
    table["end_utc"] = pd.to_datetime(table["end_utc"], utc=True)
    moving = v >= segment_cfg.stop_speed_m_s
    ok = ~(((table["entry_level"] == REST).to_numpy() & moving[table["first_row"].to_numpy()])
           | ((table["exit_level"] == REST).to_numpy() & moving[table["last_row"].to_numpy()]))
    return PiecePool(
        table=table.loc[ok, list(PIECE_COLUMNS)].reset_index(drop=True),
        sums=additive_sums(all_features)[ok],
        safd=np.vstack([mt_safd[short], hists])[ok],
        type_safd=type_safd,
        levels_m_s=levels,
        step_s=step_s,
    )
