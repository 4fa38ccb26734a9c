r"""Representative-cycle assembly: choose real pieces of a type to match its statistics.

Method (micro-trip selection, after Tong, Hung & Cheung 1999 and Hung et al. 2007, from memory):
candidate cycles are random combinations of the type's pieces (:mod:`fleetfuel.cycles.pieces`)
adding up to the target duration. Each round scores ``cfg.candidates`` of them at once and
improves the round's best by an exchange search (our addition: each pass evaluates every single
swap, addition and removal of a piece at once and applies the best, until none improves or
``cfg.swap_passes`` is reached). The ``cfg.rounds`` improved sets are then judged on their
assembled traces (:mod:`fleetfuel.cycles.build`: fewest statistics off their goal, then the
score) and the best is kept. The score of a candidate is

.. math:: S = \sqrt{\overline{e^2}} + 10 \sum_s \max(e_s - \tau, 0) + w\,\Delta_{SAFD}

with :math:`e_s` the normalised error of statistic :math:`s` against the type
(:func:`fleetfuel.cycles.stats.normalised_errors`, :math:`\tau` 80 % of the 5 % goal, see
:data:`SEARCH_GOAL_SHARE`), so the search drives every statistic under its goal, and :math:`\Delta_{SAFD}` the SAFD difference
(:mod:`fleetfuel.cycles.safd`). A candidate whose duration is off the target by more than
``cfg.duration_tolerance`` scores infinity.

Everything is vectorised: a round is one sparse (candidates x pieces) selection matrix times the
pieces' additive sums and SAFD counts; an exchange pass scores all moves with the SAFD difference
expanded into dot products, :math:`\lVert h - H_i + H_j \rVert^2` from precomputed products.
Seeded: one generator per type from ``(cfg.seed, type number)``.

Candidates, their draws and the exchange moves are in :mod:`fleetfuel.cycles.chains`. A cycle is
its pieces in order: the whole micro-trips (as drawn), then the chain (head, windows, tail) when
there is one; each starts and ends at rest except where a chain's pieces join at a splice level.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.cycles.chains import Problem, chain_order, exchange_moves, random_sets
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.pieces import PiecePool

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

IMPROVEMENT: Final = 1e-12  # smallest score gain an exchange must bring
TRACE_COLUMNS: Final = ("time_s", "speed_m_s", "grade", "elevation_m", "piece_id")
"""Columns of :func:`cycle_trace` (elevation relative to the start, from the grade)."""


@dataclass(frozen=True, slots=True)
class Selection:
    """The pieces chosen for one type's cycle.

    Attributes
    ----------
    pieces : ndarray of int
        Rows of the pool table, in cycle order.
    score : float
        Score of the selection predicted from the pieces' sums (see the module docstring).
    evaluated : int
        Candidates and moves scored for the type (all rounds).
    """

    pieces: IntArray
    score: float
    evaluated: int


def _problem(pool: PiecePool, type_name: str, target: FloatArray, cfg: CyclesConfig) -> Problem:
    table = pool.table
    longest = cfg.target_duration_s * (1 + cfg.duration_tolerance)
    of_type = (table["type"] == type_name).to_numpy(dtype=bool, na_value=False)
    hist_all = pool.type_safd.get(type_name, np.zeros(pool.safd.shape[1]))
    duration = table["duration_s"].to_numpy(dtype=np.float64)
    idx = np.flatnonzero(of_type & (duration <= longest) & (duration > 0))
    cells = np.flatnonzero(hist_all > 0)  # SAFD cells the type visits: the others hold no piece time
    return Problem(
        idx=idx,
        kind=table["kind"].to_numpy(dtype=str)[idx],
        entry=table["entry_level"].to_numpy(dtype=np.int64)[idx],
        exit=table["exit_level"].to_numpy(dtype=np.int64)[idx],
        duration=duration[idx],
        sums=pool.sums[idx],
        hist=pool.safd[np.ix_(idx, cells)],
        target=target,
        target_p=hist_all[cells] / max(hist_all.sum(), np.finfo(float).tiny),
        cfg=cfg,
    )


def _improve(prob: Problem, members: IntArray, score: float, rng: np.random.Generator) -> tuple[IntArray, float, int]:
    """Exchange search from ``members`` (problem-local indices); returns members, score, moves scored."""
    pad = np.zeros(1)
    h_norm = np.r_[np.einsum("ij,ij->i", prob.hist, prob.hist), pad]
    h_p = np.r_[prob.hist @ prob.target_p, pad]
    h_sum = np.r_[prob.hist.sum(axis=1), pad]
    sums_pad = np.vstack([prob.sums, np.zeros((1, prob.sums.shape[1]))])
    evaluated = 0
    for _ in range(prob.cfg.swap_passes):
        r, a, cross = exchange_moves(prob, members, rng)
        if r.size == 0:
            break
        s_cur = prob.sums[members].sum(axis=0)
        h_cur = prob.hist[members].sum(axis=0)
        dots = np.r_[prob.hist @ h_cur, pad]
        sums = s_cur - sums_pad[r] + sums_pad[a]
        sq = h_cur @ h_cur + h_norm[r] + h_norm[a] - 2 * dots[r] + 2 * dots[a] - 2 * cross
        qp = h_cur @ prob.target_p - h_p[r] + h_p[a]
        tot = h_cur.sum() - h_sum[r] + h_sum[a]
        scores = prob.score(sums, sq, qp, tot)
        evaluated += scores.size
        best = int(np.argmin(scores))
        if not scores[best] < score - IMPROVEMENT:
            break
        score = float(scores[best])
        kept = members[members != r[best]] if r[best] >= 0 else members
        members = np.r_[kept, a[best]] if a[best] >= 0 else kept
    return members, score, evaluated


def select_pieces(
    pool: PiecePool, type_name: str, target: FloatArray, cfg: CyclesConfig, type_number: int
) -> list[Selection]:
    """Candidate piece sets for ``type_name``'s representative cycle, best first.

    Parameters
    ----------
    pool : PiecePool
    type_name : str
        Type (``T1``...).
    target : ndarray
        The type's statistics (:data:`fleetfuel.cycles.stats.TARGET_STATS`).
    cfg : CyclesConfig
    type_number : int
        Seeds the generator with ``(cfg.seed, type_number)``.

    Returns
    -------
    list of Selection
        One per round that found a valid set (pool rows in cycle order), sorted by score; empty
        when the type has too little eligible driving for the target duration. The caller judges
        them on their assembled traces (:func:`cycle_trace`), which the pieces' sums only predict.
    """
    prob = _problem(pool, type_name, target, cfg)
    rng = np.random.default_rng([cfg.seed, type_number])
    found: list[tuple[float, IntArray]] = []
    evaluated = 0
    for _ in range(cfg.rounds):
        x = random_sets(prob, rng, cfg.candidates)
        if x.shape[0] == 0:
            break
        scores = prob.score_sets(x)
        evaluated += scores.size
        row = int(np.argmin(scores))
        if not np.isfinite(scores[row]):
            continue
        start = x.indices[x.indptr[row] : x.indptr[row + 1]].astype(np.int64)
        members, score, moves = _improve(prob, start, float(scores[row]), rng)
        evaluated += moves
        found.append((score, members))
    found.sort(key=lambda item: item[0])
    unique: dict[tuple[int, ...], Selection] = {}
    for score, members in found:
        pieces = prob.idx[chain_order(prob, members)]
        unique.setdefault(tuple(sorted(pieces.tolist())), Selection(pieces=pieces, score=score, evaluated=evaluated))
    return list(unique.values())


def cycle_trace(samples: pd.DataFrame, pool: PiecePool, pieces: IntArray) -> pd.DataFrame:
    """The cycle of the chosen pieces: their samples end to end on a uniform time base.

    Returns
    -------
    DataFrame
        :data:`TRACE_COLUMNS`: ``time_s`` from 0 at the pool's step [s], ``speed_m_s`` [m/s],
        ``grade`` (rise over run; unknown grade written as 0, flat) [1], ``elevation_m`` relative
        to the start (cumulative grade times distance) [m], ``piece_id`` of each sample.
    """
    table = pool.table.iloc[pieces]
    first, last = table["first_row"].to_numpy(), table["last_row"].to_numpy()
    lengths = last - first + 1
    rows = np.repeat(first - np.r_[0, np.cumsum(lengths)[:-1]], lengths) + np.arange(lengths.sum())
    speed = samples[schema.SPEED_M_S].to_numpy(dtype=np.float64, na_value=np.nan)[rows]
    grade = (
        samples[schema.GRADE].to_numpy(dtype=np.float64, na_value=np.nan)[rows]
        if schema.GRADE in samples.columns
        else np.zeros(rows.size)
    )
    speed = np.nan_to_num(speed, nan=0.0)
    grade = np.nan_to_num(grade, nan=0.0)
    time_s = np.arange(rows.size) * pool.step_s
    ds = np.r_[0.0, np.diff(time_s) * (speed[1:] + speed[:-1]) / 2]
    grade_mid = np.r_[0.0, (grade[1:] + grade[:-1]) / 2]
    return pd.DataFrame(
        {
            "time_s": time_s,
            "speed_m_s": speed,
            "grade": grade,
            "elevation_m": np.cumsum(ds * grade_mid),
            "piece_id": np.repeat(table["piece_id"].to_numpy(dtype=object), lengths),
        }
    )
