"""Candidate piece sets of one type: scoring, random draws, exchange moves, and cycle order.

A candidate is a set of the type's pieces (:mod:`fleetfuel.cycles.pieces`): whole micro-trips
(rest to rest) plus at most one *chain*, a head (rest to a splice level), windows (level to
level) and a tail (level to rest) such that each level is entered as often as it is left. Chains
are drawn as random walks over the levels; exchanges keep the walk valid (a window is swapped
for one with the same entry and exit level, a head for one with the same exit, a tail for one
with the same entry; a loop window, entry equal to exit, may be added at a level the chain
visits or removed). :func:`chain_order` lays a valid set out as one trace (Hierholzer's
algorithm for an Euler path, Hierholzer 1873).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
from numba import njit
from scipy import sparse

from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.stats import SUM_COLUMNS, normalised_errors, stats_from_sums
from fleetfuel.errors import InternalError

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

REST: Final = -1
KINDS: Final = np.array(["head", "tail", "whole", "window"])  # sorted, for searchsorted codes
CHUNK: Final = 256  # candidates drawn at once (bounds the keys matrix to CHUNK x pieces)
# The search aims at 80 % of the statistics' goal: the splices and the ends of the pieces move the
# assembled trace's statistics slightly off the pieces' sums (our choice, no source).
SEARCH_GOAL_SHARE: Final = 0.8
# Weight of the errors beyond the goal: a statistic off its goal costs more than the SAFD can
# buy back (our choice, no source).
EXCESS_WEIGHT: Final = 10.0
EXCHANGE_SAMPLE: Final = 600  # outside pieces tried per exchange pass (bounds a pass to ~10^4 moves)
# A chain takes between this share of the target and all of it when whole micro-trips exist
# (our choice: leaves room for whole micro-trips of the type).
CHAIN_SHARE_MIN: Final = 0.3
_T = SUM_COLUMNS.index("t")


@dataclass(frozen=True, slots=True)
class Problem:
    """One type's usable pieces (pool rows ``idx``) and its target, as arrays."""

    idx: IntArray
    kind: npt.NDArray[np.str_]
    entry: IntArray
    exit: IntArray
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
        total = np.sqrt(np.mean(err**2, axis=-1)) + EXCESS_WEIGHT * np.sum(excess, axis=-1)
        total = total + cfg.safd_weight * np.where(hist_total > 0, diff, np.inf)
        off = np.abs(sums[..., _T] - cfg.target_duration_s) > cfg.duration_tolerance * cfg.target_duration_s
        return np.where(off | ~np.isfinite(total), np.inf, total)

    def score_sets(self, x: sparse.csr_matrix) -> FloatArray:
        """Scores of the sets given as rows of a (sets x pieces) count matrix (a repeat: inf)."""
        sums = np.asarray(x @ self.sums)
        hist = np.asarray(x @ self.hist)
        scores = self.score(sums, np.sum(hist**2, axis=1), hist @ self.target_p, hist.sum(axis=1))
        repeats = np.asarray((x > 1).sum(axis=1)).ravel() > 0
        return np.where(repeats, np.inf, scores)


def _pick(options: IntArray, groups: IntArray, wanted: IntArray, rng: np.random.Generator) -> IntArray:
    """For each ``wanted`` group, a random element of ``options`` of that group (-1: none)."""
    order = np.argsort(groups[options], kind="stable")
    sorted_opts, sorted_groups = options[order], groups[options][order]
    lo = np.searchsorted(sorted_groups, wanted, side="left")
    hi = np.searchsorted(sorted_groups, wanted, side="right")
    if sorted_opts.size == 0:
        return np.full(wanted.size, -1, dtype=np.int64)
    pick = lo + np.floor(rng.random(wanted.size) * (hi - lo)).astype(np.int64)
    return np.where(hi > lo, sorted_opts[np.minimum(pick, sorted_opts.size - 1)], -1)


def _walks(prob: Problem, rng: np.random.Generator, n: int) -> tuple[list[IntArray], list[IntArray], FloatArray, npt.NDArray[np.bool_]]:
    """``n`` random chains: (rows, cols) of their pieces, their durations, and whether each is valid."""
    cfg = prob.cfg
    heads = np.flatnonzero(prob.kind == "head")
    windows = np.flatnonzero(prob.kind == "window")
    tails = np.flatnonzero(prob.kind == "tail")
    whole = np.any(prob.kind == "whole")
    budget = cfg.target_duration_s * (rng.uniform(CHAIN_SHARE_MIN, 1.0, n) if whole else np.ones(n))
    head = heads[rng.integers(heads.size, size=n)]
    level, dur = prob.exit[head].copy(), prob.duration[head].copy()
    tail_median = float(np.median(prob.duration[tails]))
    rows, cols = [np.arange(n)], [head]
    active = np.ones(n, dtype=bool)
    shortest = prob.duration[windows].min() if windows.size else cfg.target_duration_s
    for _ in range(int(np.ceil(cfg.target_duration_s / shortest)) if windows.size else 0):  # steps, not samples
        walking = np.flatnonzero(active & (dur + tail_median < budget))
        if walking.size == 0:
            break
        step = _pick(windows, prob.entry, level[walking], rng)
        moved = step >= 0
        active[walking[~moved]] = False
        walking, step = walking[moved], step[moved]
        rows.append(walking)
        cols.append(step)
        level[walking] = prob.exit[step]
        dur[walking] += prob.duration[step]
    tail = _pick(tails, prob.entry, level, rng)
    valid = tail >= 0
    rows.append(np.flatnonzero(valid))
    cols.append(tail[valid])
    dur = dur + np.where(valid, prob.duration[np.maximum(tail, 0)], 0.0)
    return rows, cols, dur, valid


@njit(cache=True)
def _bucket_sort(keys, cols, size, cut, slot, start):  # pragma: no cover - compiled
    """Sort ``cols[:size]`` by ``keys[cols]`` in place; the keys are uniform on ``[0, cut)``.

    Bucket sort (one bucket per element, then an insertion pass over the nearly sorted result):
    linear time on uniform keys, where a comparison sort costs :math:`n \\log n`.
    """
    start[: size + 1] = 0
    for i in range(size):
        slot[i] = min(int(keys[cols[i]] / cut * size), size - 1)
        start[slot[i] + 1] += 1
    for b in range(size):
        start[b + 1] += start[b]
    placed = start[:size].copy()
    ordered = np.empty(size, dtype=np.int64)
    for i in range(size):
        ordered[placed[slot[i]]] = cols[i]
        placed[slot[i]] += 1
    for i in range(1, size):
        col = ordered[i]
        key = keys[col]
        k = i
        while k > 0 and keys[ordered[k - 1]] > key:
            ordered[k] = ordered[k - 1]
            k -= 1
        ordered[k] = col
    cols[:size] = ordered


@njit(cache=True)
def _fill_draw(keys, width, duration, base, target):  # pragma: no cover - compiled
    """Per row of ``keys``: the ``width`` smallest keys' columns in key order (a random ordered draw
    without replacement), and how many of them bring ``base`` plus their durations nearest ``target``.

    Equal to ``argpartition`` then ``argsort`` on the kept keys and ``argmin`` over the running
    totals (first of equal ones), in one scan per row: the keys are uniform, so the ``width``
    smallest lie below ``(width + 4 sqrt(width)) / n`` but rarely (the cut doubles until they
    do), and only those few are sorted, by buckets (:func:`random_sets`' hot spot).
    """
    rows, n = keys.shape
    take = np.empty((rows, width), dtype=np.int64)
    count = np.zeros(rows, dtype=np.int64)
    below = np.empty(n, dtype=np.int64)
    slot = np.empty(n, dtype=np.int64)
    start = np.empty(n + 1, dtype=np.int64)
    first = min(1.0, (width + 4.0 * np.sqrt(width) + 4.0) / n)  # keys are uniform on [0, 1)
    for r in range(rows):
        row = keys[r]
        cut = first
        while True:
            size = 0
            for j in range(n):
                if row[j] < cut:
                    below[size] = j
                    size += 1
            if size >= width or cut >= 1.0:
                break
            cut = min(1.0, 2.0 * cut)
        _bucket_sort(row, below, size, cut, slot, start)
        take[r] = below[:width]
        best = abs(base[r] - target)
        running = 0.0
        for k in range(width):
            running += duration[take[r, k]]
            off = abs((base[r] + running) - target)
            if off < best:
                best = off
                count[r] = k + 1
    return take, count


def random_sets(prob: Problem, rng: np.random.Generator, n: int) -> sparse.csr_matrix:
    """``n`` random sets near the target duration, as rows of a (sets x pieces) count matrix.

    A set holds, with probability the share of the type's time in cut pieces, a random chain,
    then whole micro-trips drawn in random order until the duration is nearest the target.
    """
    cfg = prob.cfg
    fill = np.flatnonzero(prob.kind == "whole")
    can_chain = bool(np.any(prob.kind == "head") and np.any(prob.kind == "tail"))
    cut_time = prob.duration[prob.kind != "whole"].sum()
    p_chain = (1.0 if fill.size == 0 else cut_time / prob.duration.sum()) if can_chain else 0.0
    if fill.size == 0 and not can_chain:
        return sparse.csr_matrix((0, prob.idx.size))
    chain = np.flatnonzero(rng.random(n) < p_chain)
    rows, cols, base = [np.zeros(0, dtype=np.int64)], [np.zeros(0, dtype=np.int64)], np.zeros(n)
    if chain.size:
        walk_rows, walk_cols, dur, valid = _walks(prob, rng, chain.size)
        rows += [chain[x] for x in walk_rows]
        cols += walk_cols
        base[chain] = np.where(valid, dur, np.inf)
    shortest = prob.duration[fill].min() if fill.size else cfg.target_duration_s
    width = int(min(fill.size, np.ceil(cfg.target_duration_s * (1 + cfg.duration_tolerance) / shortest) + 1))
    fill_duration = prob.duration[fill]
    for start in range(0, n if width else 0, CHUNK):
        part = slice(start, min(start + CHUNK, n))
        keys = rng.random((part.stop - part.start, fill.size))
        take, count = _fill_draw(keys, width, fill_duration, base[part], cfg.target_duration_s)
        at_row, at_col = np.nonzero(np.arange(width)[None, :] < count[:, None])
        rows.append(at_row + part.start)
        cols.append(fill[take[at_row, at_col]])
    all_rows, all_cols = np.concatenate(rows), np.concatenate(cols)
    x = sparse.csr_matrix((np.ones(all_rows.size), (all_rows, all_cols)), shape=(n, prob.idx.size))
    x.sum_duplicates()
    return x


def exchange_moves(prob: Problem, members: IntArray, rng: np.random.Generator) -> tuple[IntArray, IntArray, FloatArray]:
    """Valid single exchanges of ``members``: (removed, added, SAFD cross product), -1 for none.

    Whole micro-trips may be swapped, added or removed; chain pieces swapped for one with the
    same levels; loop windows added at a visited level or removed. The pieces tried from outside
    are all, or a seeded sample of ``EXCHANGE_SAMPLE`` per kind.
    """
    inside = np.zeros(prob.idx.size, dtype=bool)
    inside[members] = True

    def sample(found: IntArray) -> IntArray:
        return np.sort(rng.choice(found, size=EXCHANGE_SAMPLE, replace=False)) if found.size > EXCHANGE_SAMPLE else found

    is_whole = prob.kind == "whole"
    in_whole = members[is_whole[members]]
    out_whole = sample(np.flatnonzero(is_whole & ~inside))
    chain = members[~is_whole[members]]
    visited = np.unique(prob.exit[chain][prob.exit[chain] != REST])
    loops = (prob.kind == "window") & (prob.entry == prob.exit)
    out_loops = sample(np.flatnonzero(loops & np.isin(prob.entry, visited) & ~inside))
    in_loops = chain[loops[chain]]
    removed = [in_whole, np.full(out_whole.size, -1), in_loops, np.full(out_loops.size, -1)]
    added = [np.full(in_whole.size, -1), out_whole, np.full(in_loops.size, -1), out_loops]
    cross = [np.zeros(in_whole.size + out_whole.size + in_loops.size + out_loops.size)]
    pairs = [(in_whole, out_whole)]
    # Chain pieces are swapped within their group: same kind, same entry and exit level.
    span = prob.exit.max(initial=0) + 2
    group = (np.searchsorted(KINDS, prob.kind) * span + prob.entry + 1) * span + prob.exit + 1
    found = np.flatnonzero(np.isin(group, group[chain]) & ~inside)
    found = found[np.argsort(group[found], kind="stable")]
    lo = np.searchsorted(group[found], group[chain], side="left")
    hi = np.searchsorted(group[found], group[chain], side="right")
    for piece, a, b in zip(chain.tolist(), lo.tolist(), hi.tolist(), strict=True):  # a dozen chain pieces
        pairs.append((np.array([piece]), sample(found[a:b])))
    for old, new in pairs:
        removed.append(old.repeat(new.size))
        added.append(np.tile(new, old.size))
        cross.append((prob.hist[old] @ prob.hist[new].T).ravel())
    return np.concatenate(removed), np.concatenate(added), np.concatenate(cross)


def chain_order(prob: Problem, members: IntArray) -> IntArray:
    """Cycle order of a valid set: whole micro-trips as drawn, then the chain as one Euler path."""
    wholes = members[prob.kind[members] == "whole"]
    chain = members[prob.kind[members] != "whole"]
    if chain.size == 0:
        return wholes
    out: dict[int, list[int]] = {}
    for piece in chain[::-1].tolist():  # a few dozen pieces: the final layout only
        out.setdefault(int(prob.entry[piece]), []).append(piece)
    stack, path = [(REST, -1)], []
    while stack:
        node, edge = stack[-1]
        if out.get(node):
            nxt = out[node].pop()
            stack.append((int(prob.exit[nxt]), nxt))
        else:
            stack.pop()
            if edge >= 0:
                path.append(edge)
    ordered = np.asarray(path[::-1], dtype=np.int64)
    if ordered.size != chain.size:  # draws and exchanges keep the chain connected
        raise InternalError(f"chain of {chain.size} pieces does not form one path ({ordered.size} laid out)")
    return np.r_[wholes, ordered]
