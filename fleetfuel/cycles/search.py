"""One type's cycle search as a task: its pool, the candidate sets, the best one on its trace.

The types' searches are independent (each seeded with ``(seed, type number)``), so the stage
hands them to :meth:`fleetfuel.cycles.logs.CycleLogs.map`, which may run them side by side in
worker processes. A job (:class:`PoolSearch`) carries the type's pool micro-trips (feature rows)
and a note of where their samples are (:class:`fleetfuel.cycles.logs.PoolRows`); the task reads
the rows, cuts the type's pool of pieces (:func:`fleetfuel.cycles.pieces.build_pool`) and
searches it (:func:`search_pool`). Pieces, their sums and SAFD are each one micro-trip's and the
splice levels each one type's, so the type's pool holds the same numbers in the same order as its
share of a pool cut for all types at once (:func:`type_search`, tested): the chosen pieces do not
depend on where the job ran, and no rows travel through the engine's scheduler.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from fleetfuel import schema, segment
from fleetfuel.cycles.assemble import Selection, cycle_trace, select_pieces
from fleetfuel.cycles.chains import EXCESS_WEIGHT, FloatArray, IntArray
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.logs import PoolRows
from fleetfuel.cycles.pieces import PiecePool, build_pool
from fleetfuel.cycles.safd import safd_difference, safd_of_trace
from fleetfuel.cycles.stats import TARGET_STATS, normalised_errors, with_derived
from fleetfuel.segment.config import SegmentConfig

TRACE_INPUTS = (schema.SPEED_M_S, schema.GRADE)
"""The sample columns a cycle trace is built from (:func:`fleetfuel.cycles.assemble.cycle_trace`)."""


@dataclass(frozen=True, slots=True)
class TypeSearch:
    """The search of type ``key`` (number ``number``) on its share of the pool.

    ``pool`` holds only the type's pieces, ``samples`` only the rows they span, and
    ``pool_rows`` the position of each of those pieces in the whole pool.
    """

    key: str
    number: int
    target: FloatArray
    type_safd: FloatArray
    pool: PiecePool
    samples: pd.DataFrame
    pool_rows: IntArray
    cfg: CyclesConfig
    segment_cfg: SegmentConfig


@dataclass(frozen=True, slots=True)
class PoolSearch:
    """The search of type ``key`` (number ``number``), its pool cut where the job runs.

    ``microtrips`` are the type's pool rows of the feature table
    (:func:`fleetfuel.cycles.pieces.pool_microtrips`), ``rows`` where their samples are, and
    ``counts`` and ``shares`` the type's SAFD over all its measured driving: time per cell (empty
    when it has none) and the same as shares, shaped as :func:`fleetfuel.cycles.safd.safd_shape`. [s, 1]
    """

    key: str
    number: int
    target: FloatArray
    counts: FloatArray
    shares: FloatArray
    microtrips: pd.DataFrame
    rows: PoolRows
    step_s: float
    cfg: CyclesConfig
    segment_cfg: SegmentConfig


@dataclass(frozen=True, slots=True)
class TypeCycle:
    """What :func:`search_type` found: the chosen pieces (rows of the searched pool, cycle order),
    the cycle, its statistics (:data:`TARGET_STATS`), SAFD and SAFD difference to the type, and
    the chosen pieces' rows of the pool table (:data:`fleetfuel.cycles.pieces.PIECE_COLUMNS`)."""

    selection: Selection
    trace: pd.DataFrame
    achieved: FloatArray
    safd: FloatArray
    safd_diff: float
    pieces: pd.DataFrame


def search_pool(job: PoolSearch) -> TypeCycle | None:
    """Read the type's pool rows, cut its pool and search it (:func:`search_type`); None when the
    type has too little eligible driving for the target duration."""
    if job.microtrips.empty:
        return None
    samples = job.rows.read()
    if samples.empty:
        return None
    counts = {job.key: job.counts} if job.counts.size else {}
    pool = build_pool(samples, job.microtrips, job.step_s, counts, job.cfg, job.segment_cfg)
    return search_type(type_search(pool, samples, job.key, job.number, job.target, job.shares, job.cfg,
                                   job.segment_cfg))


def type_search(
    pool: PiecePool, samples: pd.DataFrame, name: str, number: int, target: FloatArray, type_safd: FloatArray,
    cfg: CyclesConfig, segment_cfg: SegmentConfig,
) -> TypeSearch:
    """The job of type ``name``: its pieces of ``pool`` and the rows of ``samples`` they span."""
    pool_rows = np.flatnonzero((pool.table["type"] == name).to_numpy(dtype=bool, na_value=False))
    table = pool.table.iloc[pool_rows].reset_index(drop=True)
    first, last = table["first_row"].to_numpy(np.int64), table["last_row"].to_numpy(np.int64)
    lengths = last - first + 1
    spans = np.repeat(first - np.r_[0, np.cumsum(lengths)[:-1]], lengths) + np.arange(lengths.sum())
    rows = np.unique(spans)  # a piece's rows are contiguous, so they stay contiguous here
    table["first_row"] = np.searchsorted(rows, first)
    table["last_row"] = np.searchsorted(rows, last)
    columns = [c for c in TRACE_INPUTS if c in samples.columns]
    mine = PiecePool(
        table=table,
        sums=pool.sums[pool_rows],
        safd=pool.safd[pool_rows],
        type_safd={k: v for k, v in pool.type_safd.items() if k == name},
        levels_m_s={k: v for k, v in pool.levels_m_s.items() if k == name},
        step_s=pool.step_s,
    )
    return TypeSearch(name, number, target, type_safd, mine, samples[columns].iloc[rows].reset_index(drop=True),
                      pool_rows, cfg, segment_cfg)


def search_type(job: TypeSearch) -> TypeCycle | None:
    """The best candidate set of the job's type on its assembled trace; None when the type has
    too little eligible driving for the target duration."""
    options = select_pieces(job.pool, job.key, job.target, job.cfg, job.number)
    if not options:
        return None
    judged = [_judge(job, option) for option in options]
    best = min(range(len(judged)), key=lambda k: (judged[k][0], judged[k][1]))
    _, _, trace, achieved, safd, diff = judged[best]
    chosen = options[best]
    selection = Selection(pieces=job.pool_rows[chosen.pieces], score=chosen.score, evaluated=chosen.evaluated)
    return TypeCycle(selection, trace, achieved, safd, diff, job.pool.table.iloc[chosen.pieces].reset_index(drop=True))


def _judge(job: TypeSearch, option: Selection) -> tuple[int, float, pd.DataFrame, FloatArray, FloatArray, float]:
    """A candidate on its assembled trace: (statistics off goal, score, trace, stats, SAFD, SAFD difference)."""
    cfg = job.cfg
    trace = cycle_trace(job.samples, job.pool, option.pieces)
    features = segment.features_of_trace(trace["time_s"], trace["speed_m_s"], trace["grade"], cfg=job.segment_cfg)
    achieved = with_derived(features)[list(TARGET_STATS)].to_numpy(dtype=np.float64)
    err = normalised_errors(achieved, job.target, cfg)
    safd = safd_of_trace(trace["time_s"], trace["speed_m_s"], cfg, job.segment_cfg)
    diff = safd_difference(job.type_safd, safd)
    excess = EXCESS_WEIGHT * np.sum(np.maximum(err - cfg.stat_tolerance, 0.0))
    score = float(np.sqrt(np.mean(err**2)) + excess + cfg.safd_weight * diff)
    return int(np.count_nonzero(err > cfg.stat_tolerance)), score, trace, achieved, safd, diff
