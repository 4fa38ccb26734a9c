r"""Speed-acceleration frequency distribution (SAFD) and the SAFD difference.

The SAFD is the share of driving time spent in each cell of a speed x acceleration grid (bin
widths ``cfg.safd_speed_bin_m_s`` and ``cfg.safd_accel_bin_m_s2``; speeds above
``cfg.safd_max_speed_m_s`` and accelerations beyond :math:`\pm` ``cfg.safd_max_accel_m_s2`` fall in
the edge cells). Time weights and accelerations are those of the one discretisation of
:mod:`fleetfuel.segment.kinematics` (central differences), so the SAFD agrees with the feature
statistics. Idle time sits in the lowest speed bin.

The SAFD difference of a cycle :math:`q` against its type :math:`p` (both shares summing to 1) is

.. math:: \Delta_{SAFD} = \sum_{ij} (p_{ij} - q_{ij})^2 \Big/ \sum_{ij} p_{ij}^2,

0 for identical distributions (the relative squared difference used to judge micro-trip cycles;
Hung et al. 2007, from memory, check the exact normalisation before citing).

References
----------
Hung, W. T., Tong, H. Y., Lee, C. P., Ha, K. & Pao, L. Y. (2007). Development of a practical
    driving cycle construction methodology: a case study in Hong Kong. Transportation Research
    Part D 12(2), 115-128 (SAFD as an assessment criterion; from memory).
Eastern Research Group for the US EPA (2003). Roadway-specific driving schedules for heavy-duty
    vehicles, EPA420-R-03-018 (micro-trip cycles judged on their SAFD; from memory).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.kinematics import row_kinematics

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]


def safd_edges(cfg: CyclesConfig) -> tuple[FloatArray, FloatArray]:
    """Bin edges of the SAFD grid: speed [m/s] from 0, acceleration [m/s^2] symmetric about 0."""
    n_speed = int(np.ceil(cfg.safd_max_speed_m_s / cfg.safd_speed_bin_m_s))
    n_accel = int(np.ceil(cfg.safd_max_accel_m_s2 / cfg.safd_accel_bin_m_s2))
    speed = np.arange(n_speed + 1) * cfg.safd_speed_bin_m_s
    accel = (np.arange(2 * n_accel + 1) - n_accel) * cfg.safd_accel_bin_m_s2
    return speed.astype(np.float64), accel.astype(np.float64)


def safd_shape(cfg: CyclesConfig) -> tuple[int, int]:
    """(speed bins, acceleration bins) of the grid."""
    speed, accel = safd_edges(cfg)
    return speed.size - 1, accel.size - 1


def _cell(speed_m_s: FloatArray, accel_m_s2: FloatArray, cfg: CyclesConfig) -> IntArray:
    n_speed, n_accel = safd_shape(cfg)
    i = np.clip(np.floor(speed_m_s / cfg.safd_speed_bin_m_s), 0, n_speed - 1).astype(np.int64)
    j = np.clip(np.floor(accel_m_s2 / cfg.safd_accel_bin_m_s2) + n_accel // 2, 0, n_accel - 1).astype(np.int64)
    return i * n_accel + j


def safd_counts(
    speed_m_s: FloatArray,
    accel_m_s2: FloatArray,
    weight_s: FloatArray,
    group: IntArray,
    n_groups: int,
    cfg: CyclesConfig,
) -> FloatArray:
    """Time [s] each group spends in each SAFD cell, shape (n_groups, cells), cells row-major.

    Rows with ``group < 0`` or a non-finite acceleration are left out.
    """
    n_cells = int(np.prod(safd_shape(cfg)))
    keep = (group >= 0) & np.isfinite(accel_m_s2)
    v = np.nan_to_num(speed_m_s[keep], nan=0.0)
    flat = group[keep] * n_cells + _cell(v, accel_m_s2[keep], cfg)
    counts = np.bincount(flat, weights=weight_s[keep], minlength=n_groups * n_cells)
    return counts.reshape(n_groups, n_cells).astype(np.float64)


def safd_of_trace(
    time_s: npt.ArrayLike, speed_m_s: npt.ArrayLike, cfg: CyclesConfig, segment_cfg: SegmentConfig | None = None
) -> FloatArray:
    """SAFD of one whole trace as time shares, shape :func:`safd_shape` (rows: speed bins).

    Parameters
    ----------
    time_s : array_like
        Sample times, increasing. [s]
    speed_m_s : array_like
        Speeds. [m/s]
    cfg : CyclesConfig
        Grid.
    segment_cfg : SegmentConfig, optional
        ``max_accel_step_s`` of the acceleration rule.
    """
    t = np.asarray(time_s, dtype=np.float64)
    v = np.nan_to_num(np.asarray(speed_m_s, dtype=np.float64), nan=0.0)
    first = np.zeros(t.size, dtype=bool)
    last = np.zeros(t.size, dtype=bool)
    first[0] = last[-1] = True
    kin = row_kinematics(t, v, first, last, segment_cfg or SegmentConfig())
    counts = safd_counts(v, kin.accel_m_s2, kin.weight_s, np.zeros(t.size, dtype=np.int64), 1, cfg)[0]
    return (counts / max(counts.sum(), np.finfo(float).tiny)).reshape(safd_shape(cfg))


def safd_difference(target: npt.ArrayLike, achieved: npt.ArrayLike) -> float:
    r""":math:`\sum (p - q)^2 / \sum p^2` of two distributions (each normalised to sum 1). [1]"""
    p = np.asarray(target, dtype=np.float64).ravel()
    q = np.asarray(achieved, dtype=np.float64).ravel()
    p = p / p.sum()
    q = q / q.sum()
    return float(np.sum((p - q) ** 2) / np.sum(p**2))
