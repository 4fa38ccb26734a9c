"""Speed unit mix-ups in part of a log: find the blocks and undo the factor.

An export that writes a block of speeds in the wrong unit (km/h values in an mph column, m/s in
a km/h column, ...) shows as a run of moving samples whose reported speed sits a unit factor
(:data:`fleetfuel.clean.flags.UNIT_MIXUP_RATIOS`) off the speed derived from positions. The
file-level check of :func:`fleetfuel.clean.flags.speed_verdict` takes the median over the whole
file and so misses a block of a few per cent of the rows; :func:`unit_block_divisors` looks at
chunks of ``CHUNK_SAMPLES`` comparable samples instead:

1. comparable samples: reported and derived speed both known, derived at least
   ``reconcile_min_speed_m_s``;
2. the median log ratio of each chunk is matched to the nearest strong unit factor (at least
   ``unit_block_min_ratio`` away from 1) within ``unit_ratio_tolerance``;
3. a run of chunks on the same factor covering at least ``reconcile_min_samples`` comparable
   samples is a block; its two edges are moved to the sample that best separates ratios nearer
   the factor from ratios nearer 1 (fewest misplaced samples within a chunk either side);
4. the block's reported speeds are divided by the factor.

Only strong factors are undone: mph against knots (1.151) is within what a poor position track
can disagree with a good speed signal, so such a block is left to the file-level flags. A block
needs positions: a log without them cannot show a mix-up and is never changed.
"""

from __future__ import annotations

from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.flags import UNIT_MIXUP_RATIOS

FloatArray = npt.NDArray[np.float64]

CHUNK_SAMPLES: Final = 20
"""Comparable samples per chunk: enough for a median that GNSS speed noise does not move by 5 %
at 5 m/s and more, short enough that a one-minute block fills whole chunks (our choice)."""


def _edge(near_factor: npt.NDArray[np.bool_], lo: int, hi: int, inside_after: bool) -> int:
    """Index in ``[lo, hi]`` that best splits ``near_factor[lo:hi]`` into outside and inside
    samples (inside after the split when ``inside_after``); ties go to the smallest block."""
    seg = near_factor[lo:hi]
    # misplaced(p) = inside-looking samples before p + outside-looking samples from p (inside after)
    before = np.r_[0, np.cumsum(seg if inside_after else ~seg)]
    after = np.r_[np.cumsum((~seg if inside_after else seg)[::-1])[::-1], 0]
    cost = before + after
    best = np.flatnonzero(cost == cost.min())
    return lo + int(best[-1] if inside_after else best[0])


def unit_block_divisors(reported_m_s: npt.ArrayLike, derived_m_s: npt.ArrayLike, cfg: CleanConfig) -> FloatArray:
    """Per-sample divisor of the reported speed: the unit factor inside a mix-up block, else 1.

    Parameters
    ----------
    reported_m_s, derived_m_s : array_like
        Reported and position-derived speed of the same grid samples (NaN where absent). [m/s]
    cfg : CleanConfig
        ``reconcile_min_speed_m_s``, ``reconcile_min_samples``, ``unit_ratio_tolerance``,
        ``unit_block_min_ratio``.

    Returns
    -------
    ndarray
        Divisors (1.0 outside blocks); ``reported / divisor`` is the corrected speed. [1]
    """
    rep = np.asarray(reported_m_s, dtype=np.float64)
    der = np.asarray(derived_m_s, dtype=np.float64)
    out = np.ones(rep.size)
    with np.errstate(invalid="ignore"):
        idx = np.flatnonzero(np.isfinite(rep) & np.isfinite(der) & (der >= cfg.reconcile_min_speed_m_s) & (rep > 0))
    chunks = idx.size // CHUNK_SAMPLES
    min_chunks = max(1, int(np.ceil(cfg.reconcile_min_samples / CHUNK_SAMPLES)))
    if chunks < min_chunks:
        return out
    log_ratio = np.log(rep[idx] / der[idx])
    ratios = np.array([f for f in UNIT_MIXUP_RATIOS if max(f, 1 / f) >= cfg.unit_block_min_ratio])
    factors = np.log(ratios)
    medians = np.median(log_ratio[: chunks * CHUNK_SAMPLES].reshape(chunks, CHUNK_SAMPLES), axis=1)
    gap = np.abs(medians[:, None] - factors[None, :])
    nearest = np.argmin(gap, axis=1)
    code = np.where(gap[np.arange(chunks), nearest] <= np.log1p(cfg.unit_ratio_tolerance), nearest, -1)
    edges = np.flatnonzero(np.diff(np.r_[-2, code, -2]) != 0)
    for first, stop in zip(edges[:-1], edges[1:], strict=True):
        k = int(code[first])
        if k < 0 or stop - first < min_chunks:
            continue
        f = factors[k]
        near = np.abs(log_ratio - f) < np.abs(log_ratio)  # nearer the factor than 1 (log space)
        lo = first * CHUNK_SAMPLES
        hi = stop * CHUNK_SAMPLES  # the search window below reaches the samples after the last chunk
        start = _edge(near, max(0, lo - CHUNK_SAMPLES), min(idx.size, lo + CHUNK_SAMPLES), inside_after=True)
        end = _edge(near, max(start, hi - CHUNK_SAMPLES), min(idx.size, hi + CHUNK_SAMPLES), inside_after=False)
        if end > start:
            out[idx[start] : idx[end - 1] + 1] = ratios[k]
    return out
