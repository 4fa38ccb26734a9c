r"""Representative-cycle assembly: choose real pieces of a type to match its statistics.

Method (micro-trip selection, after Tong, Hung & Cheung 1999 and Hung et al. 2007, from memory):
candidate cycles are random combinations of the type's pieces (:mod:`fleetfuel.cycles.pieces`)
adding up to the target duration. Each round scores ``cfg.candidates`` of them at once and
improves the round's best by an exchange search (our addition: each pass evaluates every single
swap, addition and removal of a piece at once and applies the best, until none improves or
``cfg.swap_passes`` is reached); the best over ``cfg.rounds`` rounds is kept. The score of a candidate is

.. math:: S = \sqrt{\overline{e^2}} + \sum_s \max(e_s - \tau, 0) + w\,\Delta_{SAFD}

with :math:`e_s` the normalised error of statistic :math:`s` against the type
(:func:`fleetfuel.cycles.stats.normalised_errors`, :math:`\tau` 80 % of the 5 % goal, see
:data:`SEARCH_GOAL_SHARE`), so the search drives every statistic under its goal, and :math:`\Delta_{SAFD}` the SAFD difference
(:mod:`fleetfuel.cycles.safd`). A candidate whose duration is off the target by more than
``cfg.duration_tolerance`` scores infinity.

Everything is vectorised: a round is one sparse (candidates x pieces) selection matrix times the
pieces' additive sums and SAFD counts; an exchange pass scores all moves with the SAFD difference
expanded into dot products, :math:`\lVert h - H_i + H_j \rVert^2` from precomputed products.
Seeded: one generator per type from ``(cfg.seed, type number)``.

A cycle is its pieces in order: the whole micro-trips (as drawn), then the chain of a head, its
windows and a tail when there is one; each starts and ends at rest except where a chain's pieces
join at the splice speed.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy import sparse

from fleetfuel import schema
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.pieces import PiecePool
from fleetfuel.cycles.stats import SUM_COLUMNS, normalised_errors, stats_from_sums

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

CHUNK: Final = 256  # candidates drawn at once (bounds the keys matrix to CHUNK x pieces)
IMPROVEMENT: Final = 1e-12  # smallest score gain an exchange must bring
# The search aims at 80 % of the statistics' goal: the splices and the ends of the pieces move the
# assembled trace's statistics slightly off the pieces' sums (our choice, no source).
SEARCH_GOAL_SHARE: Final = 0.8
EXCHANGE_SAMPLE: Final = 600  # outside pieces tried per exchange pass (bounds a pass to ~10^4 moves)
_T = SUM_COLUMNS.index("t")
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
        Score of the selection (see the module docstring); inf when no valid cycle exists.
    evaluated : int
        Candidates and moves scored.
    """

    pieces: IntArray
    score: float
    evaluated: int


@dataclass(frozen=True, slots=True)
class _Problem:
    """One type's pool and target, as arrays (pool rows ``idx``)."""

    idx: IntArray
    kind: npt.NDArray[np.str_]
    duration: FloatArray
    sums: FloatArray
    hist: FloatArray
    target: FloatArray
    target_p: FloatArray
    cfg: CyclesConfig

    def score(self, sums: FloatArray, hist_sq: FloatArray, hist_p: FloatArray, hist_total: FloatArray) -> FloatArray:
        """Scores from summed sums and the SAFD moments :math:`\\sum q^2`, :math:`\\sum q p`, :math:`\\sum q`."""
        cfg = self.cfg
        err = normalised_errors(stats_from_sums(sums), self.target, cfg)
        p_sq = float(np.sum(self.target_p**2))
        with np.errstate(invalid="ignore", divide="ignore"):
            diff = (hist_sq / hist_total**2 - 2 * hist_p / hist_total + p_sq) / p_sq
        excess = np.maximum(err - SEARCH_GOAL_SHARE * cfg.stat_tolerance, 0.0)
        total = np.sqrt(np.mean(err**2, axis=-1)) + np.sum(excess, axis=-1)
        total = total + cfg.safd_weight * np.where(hist_total > 0, diff, np.inf)
        off = np.abs(sums[..., _T] - cfg.target_duration_s) > cfg.duration_tolerance * cfg.target_duration_s
        return np.where(off | ~np.isfinite(total), np.inf, total)

    def score_sets(self, x: sparse.csr_matrix) -> FloatArray:
        """Scores of the sets given as rows of a (sets x pool) 0/1 matrix."""
        sums = np.asarray(x @ self.sums)
        hist = np.asarray(x @ self.hist)
        return self.score(sums, np.sum(hist**2, axis=1), hist @ self.target_p, hist.sum(axis=1))


def _problem(pool: PiecePool, type_name: str, target: FloatArray, cfg: CyclesConfig) -> _Problem:
    table = pool.table
    longest = cfg.target_duration_s * (1 + cfg.duration_tolerance)
    of_type = (table["type"] == type_name).to_numpy(dtype=bool, na_value=False)
    hist_all = pool.safd[of_type].sum(axis=0)
    usable = of_type & (table["duration_s"].to_numpy() <= longest) & (table["duration_s"].to_numpy() > 0)
    idx = np.flatnonzero(usable)
    return _Problem(
        idx=idx,
        kind=table["kind"].to_numpy(dtype=str)[idx],
        duration=table["duration_s"].to_numpy(dtype=np.float64)[idx],
        sums=pool.sums[idx],
        hist=pool.safd[idx],
        target=target,
        target_p=hist_all / max(hist_all.sum(), np.finfo(float).tiny),
        cfg=cfg,
    )


def _random_sets(prob: _Problem, rng: np.random.Generator, n: int) -> sparse.csr_matrix:
    """``n`` random sets of pieces near the target duration, as rows of a 0/1 matrix."""
    cfg = prob.cfg
    fill = np.flatnonzero(np.isin(prob.kind, ("whole", "window")))
    heads, tails = np.flatnonzero(prob.kind == "head"), np.flatnonzero(prob.kind == "tail")
    is_window = prob.kind[fill] == "window"
    chain_time = prob.duration[prob.kind != "whole"].sum()
    p_chain = chain_time / prob.duration.sum() if heads.size and tails.size else 0.0
    if not (fill[~is_window].size or p_chain):
        return sparse.csr_matrix((0, prob.idx.size))
    p_chain = 1.0 if fill[~is_window].size == 0 else p_chain
    chain = rng.random(n) < p_chain
    head = heads[rng.integers(heads.size, size=n)] if chain.any() else np.zeros(n, dtype=np.int64)
    tail = tails[rng.integers(tails.size, size=n)] if chain.any() else np.zeros(n, dtype=np.int64)
    base = np.where(chain, prob.duration[head] + prob.duration[tail], 0.0)
    shortest = prob.duration[fill].min() if fill.size else cfg.target_duration_s
    width = int(min(fill.size, np.ceil(cfg.target_duration_s * (1 + cfg.duration_tolerance) / shortest) + 1))
    rows, cols = [np.flatnonzero(chain)] * 2, [head[chain], tail[chain]]
    for start in range(0, n, CHUNK):
        part = slice(start, min(start + CHUNK, n))
        keys = rng.random((part.stop - part.start, fill.size))
        keys[np.ix_(~chain[part], is_window)] = np.inf
        if width == 0:
            continue
        take = np.argpartition(keys, width - 1, axis=1)[:, :width] if width < fill.size else np.tile(np.arange(fill.size), (keys.shape[0], 1))
        take = np.take_along_axis(take, np.argsort(np.take_along_axis(keys, take, axis=1), axis=1), axis=1)
        dur = np.where(np.isfinite(np.take_along_axis(keys, take, axis=1)), prob.duration[fill[take]], np.inf)
        totals = np.concatenate([base[part, None], base[part, None] + np.cumsum(dur, axis=1)], axis=1)
        count = np.argmin(np.abs(totals - cfg.target_duration_s), axis=1)
        r, c = np.nonzero(np.arange(width)[None, :] < count[:, None])
        rows.append(r + part.start)
        cols.append(fill[take[r, c]])
    r, c = np.concatenate(rows), np.concatenate(cols)
    return sparse.csr_matrix((np.ones(r.size), (r, c)), shape=(n, prob.idx.size))


def _moves(prob: _Problem, members: IntArray, rng: np.random.Generator) -> tuple[IntArray, IntArray, FloatArray]:
    """Single exchanges of ``members``: (removed, added, SAFD cross product), -1 for none.

    Every member may be removed or swapped; the pieces it may be swapped for (or that may be
    added) are all others of the type, or a seeded sample of ``EXCHANGE_SAMPLE`` of them.
    """
    inside = np.zeros(prob.idx.size, dtype=bool)
    inside[members] = True
    chain = bool(np.any(prob.kind[members] == "head"))
    is_fill = np.isin(prob.kind, ("whole", "window") if chain else ("whole",))
    out_fill = np.flatnonzero(is_fill & ~inside)
    if out_fill.size > EXCHANGE_SAMPLE:
        out_fill = np.sort(rng.choice(out_fill, size=EXCHANGE_SAMPLE, replace=False))
    in_fill = members[is_fill[members]]
    blocks = [(in_fill, out_fill)]
    for kind in ("head", "tail") if chain else ():
        blocks.append((members[prob.kind[members] == kind], np.flatnonzero((prob.kind == kind) & ~inside)))
    removed, added, cross = [in_fill, np.full(out_fill.size, -1)], [np.full(in_fill.size, -1), out_fill], []
    cross = [np.zeros(in_fill.size + out_fill.size)]
    for old, new in blocks:
        removed.append(old.repeat(new.size))
        added.append(np.tile(new, old.size))
        cross.append((prob.hist[old] @ prob.hist[new].T).ravel())
    return np.concatenate(removed), np.concatenate(added), np.concatenate(cross)


def _improve(
    prob: _Problem, members: IntArray, score: float, rng: np.random.Generator
) -> tuple[IntArray, float, int]:
    """Exchange search from ``members`` (pool-local indices); returns members, score, moves scored."""
    pad = np.zeros(1)
    h_norm = np.r_[np.einsum("ij,ij->i", prob.hist, prob.hist), pad]
    h_p = np.r_[prob.hist @ prob.target_p, pad]
    h_sum = np.r_[prob.hist.sum(axis=1), pad]
    sums_pad = np.vstack([prob.sums, np.zeros((1, prob.sums.shape[1]))])
    evaluated = 0
    for _ in range(prob.cfg.swap_passes):
        r, a, cross = _moves(prob, members, rng)
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


def _ordered(prob: _Problem, members: IntArray) -> IntArray:
    """Cycle order: whole micro-trips as drawn, then head, windows, tail."""
    rank = {"whole": 0, "head": 1, "window": 2, "tail": 3}
    keys = np.array([rank[k] for k in prob.kind[members]])
    return members[np.argsort(keys, kind="stable")]


def select_pieces(pool: PiecePool, type_name: str, target: FloatArray, cfg: CyclesConfig, type_number: int) -> Selection:
    """Choose the pieces of ``type_name``'s representative cycle.

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
    Selection
        Pool rows in cycle order; ``score`` inf (no pieces) when the type has too little eligible
        driving for the target duration.
    """
    prob = _problem(pool, type_name, target, cfg)
    rng = np.random.default_rng([cfg.seed, type_number])
    best_score, best, evaluated = np.inf, np.zeros(0, dtype=np.int64), 0
    for _ in range(cfg.rounds):
        x = _random_sets(prob, rng, cfg.candidates)
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
        if score < best_score:
            best_score, best = score, members
    if not np.isfinite(best_score):
        return Selection(pieces=np.zeros(0, dtype=np.int64), score=float("inf"), evaluated=evaluated)
    return Selection(pieces=prob.idx[_ordered(prob, best)], score=best_score, evaluated=evaluated)


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
