r"""Target statistics of the cycles, their floors, and their additive form for fast scoring.

Every statistic is defined once, in :mod:`fleetfuel.segment.features`; this module never computes
one from samples. The statistics of :data:`fleetfuel.segment.FEATURE_COLUMNS` (all but
``max_speed_m_s``) are ratios of sums over rows (time :math:`T`, distance :math:`D`, idle,
acceleration, cruise and deceleration time, stop events, ...). :func:`additive_sums` turns a
feature table back into those sums (feature times its denominator), so that the statistics of
any *combination* of micro-trips are :func:`stats_from_sums` of the summed rows: what the cycle
assembly uses to score thousands of candidate combinations in one matrix product. The
consistency with :func:`fleetfuel.segment.group_features` is checked in the tests; the final
validation of every cycle uses :func:`fleetfuel.segment.features_of_trace` on the assembled
trace itself.

Acceptance (:func:`normalised_errors`): a statistic passes when
:math:`|a - t| \le \max(\tau |t|, f)` with :math:`\tau` = ``cfg.stat_tolerance`` and :math:`f` the
statistic's floor (:func:`floors`), i.e. near-zero statistics (idle share on a motorway, climb
on flat land) are judged on an absolute scale. The normalised error
:math:`e = |a - t| / \max(|t|, f / \tau)` is at most :math:`\tau` exactly when the statistic passes.
"""

from __future__ import annotations

from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.segment.config import METRES_PER_KM
from fleetfuel.segment.features import FEATURE_COLUMNS

FloatArray = npt.NDArray[np.float64]

_SIZE_FEATURES: Final = ("duration_s", "distance_m", "max_speed_m_s")
TARGET_STATS: Final = (
    *(name for name in FEATURE_COLUMNS if name not in _SIZE_FEATURES),
    "net_climb_m_per_km",
)
r"""Statistics a representative cycle must match (definitions in :mod:`fleetfuel.segment.features`).

``net_climb_m_per_km`` is derived from two of them (:func:`with_derived`): climb minus descent
per km, :math:`2\,c - 1000\,\bar{|g|}` [m/km]. A fleet's driving returns to its depots, so a
type's net climb is near zero, but a cycle joined from pieces may run downhill overall and
underestimate fuel (climb alone does not see it). Duration and distance are set by the target
duration; the maximum speed is one sample, not a property of the distribution, so neither is
matched.
"""

SUM_COLUMNS: Final = (
    "t",  # duration [s]
    "d",  # distance [m]
    "t_idle",  # [s]
    "t_acc",  # [s]
    "t_cru",  # [s]
    "t_dec",  # [s]
    "n_stop",  # stop events [1]
    "s_acc",  # sum w a over acceleration mode [m/s]
    "s_dec",  # sum w a over deceleration mode [m/s]
    "s_a2",  # sum w a^2 [m^2/s^3]
    "s_v2",  # sum w v^2 [m^2/s]
    "s_rpa",  # sum w v a+ [m^2/s^2]
    "s_pke",  # sum of positive v^2 increments [m^2/s^2]
    "d_grade",  # distance with a known grade [m]
    "s_grade",  # sum ds |g| [m]
    "s_climb",  # sum ds max(g, 0) [m]
)
"""Additive sums behind the ratio statistics (units in the comments)."""


def with_derived(stats: pd.DataFrame | pd.Series) -> pd.DataFrame | pd.Series:
    """``stats`` (feature statistics, columns or index) with ``net_climb_m_per_km`` added. [m/km]"""
    out = stats.copy()
    net = 2 * stats["climb_m_per_km"] - METRES_PER_KM * stats["mean_abs_grade"]
    out["net_climb_m_per_km"] = net
    return out


def floors(cfg: CyclesConfig) -> dict[str, float]:
    """Absolute floor of each statistic in :data:`TARGET_STATS` (0: judged relatively only)."""
    out = dict.fromkeys(TARGET_STATS, 0.0)
    for name in ("idle_share", "accel_share", "cruise_share", "decel_share"):
        out[name] = cfg.floor_share
    out["stops_per_km"] = cfg.floor_stops_per_km
    out["mean_abs_grade"] = cfg.floor_grade
    out["climb_m_per_km"] = cfg.floor_climb_m_per_km
    out["net_climb_m_per_km"] = cfg.floor_climb_m_per_km
    return out


def additive_sums(features: pd.DataFrame) -> FloatArray:
    """Sums (:data:`SUM_COLUMNS`) of each row of a feature table, shape (n, len(SUM_COLUMNS)).

    Parameters
    ----------
    features : DataFrame
        Rows of :func:`fleetfuel.segment.microtrip_features` (or any table with
        :data:`fleetfuel.segment.FEATURE_COLUMNS`). A NaN statistic contributes nothing.
    """

    def col(name: str) -> FloatArray:
        return features[name].to_numpy(dtype=np.float64, na_value=np.nan)

    t, d = np.nan_to_num(col("duration_s")), np.nan_to_num(col("distance_m"))
    mean_v = np.nan_to_num(col("mean_speed_m_s"))
    std_v = np.nan_to_num(col("speed_std_m_s"))
    grade_known = np.isfinite(col("mean_abs_grade"))
    t_acc = np.nan_to_num(col("accel_share")) * t
    t_dec = np.nan_to_num(col("decel_share")) * t
    columns = {
        "t": t,
        "d": d,
        "t_idle": np.nan_to_num(col("idle_share")) * t,
        "t_acc": t_acc,
        "t_cru": np.nan_to_num(col("cruise_share")) * t,
        "t_dec": t_dec,
        "n_stop": np.nan_to_num(col("stops_per_km")) * d / METRES_PER_KM,
        "s_acc": np.nan_to_num(col("mean_pos_accel_m_s2")) * t_acc,
        "s_dec": np.nan_to_num(col("mean_neg_accel_m_s2")) * t_dec,
        "s_a2": np.nan_to_num(col("rms_accel_m_s2")) ** 2 * t,
        "s_v2": (std_v**2 + mean_v**2) * t,
        "s_rpa": np.nan_to_num(col("rpa_m_s2")) * d,
        "s_pke": np.nan_to_num(col("pke_m_s2")) * d,
        "d_grade": np.where(grade_known, d, 0.0),
        "s_grade": np.nan_to_num(col("mean_abs_grade")) * d,
        "s_climb": np.nan_to_num(col("climb_m_per_km")) * d / METRES_PER_KM,
    }
    return np.column_stack([columns[name] for name in SUM_COLUMNS])


def _ratio(num: FloatArray, den: FloatArray) -> FloatArray:
    out = np.full(np.broadcast(num, den).shape, np.nan)
    np.divide(num, den, out=out, where=den > 0)
    return out


def stats_from_sums(sums: FloatArray) -> FloatArray:
    """Statistics (:data:`TARGET_STATS`, last axis) of sums (:data:`SUM_COLUMNS`, last axis).

    Works on any leading shape, e.g. (candidates, len(SUM_COLUMNS)).
    """
    s = {name: sums[..., k] for k, name in enumerate(SUM_COLUMNS)}
    mean_v = _ratio(s["d"], s["t"])
    values = {
        "mean_speed_m_s": mean_v,
        "mean_running_speed_m_s": _ratio(s["d"], s["t"] - s["t_idle"]),
        "speed_std_m_s": np.sqrt(np.maximum(_ratio(s["s_v2"], s["t"]) - mean_v**2, 0.0)),
        "idle_share": _ratio(s["t_idle"], s["t"]),
        "accel_share": _ratio(s["t_acc"], s["t"]),
        "cruise_share": _ratio(s["t_cru"], s["t"]),
        "decel_share": _ratio(s["t_dec"], s["t"]),
        "stops_per_km": _ratio(s["n_stop"] * METRES_PER_KM, s["d"]),
        "mean_pos_accel_m_s2": _ratio(s["s_acc"], s["t_acc"]),
        "mean_neg_accel_m_s2": _ratio(s["s_dec"], s["t_dec"]),
        "rms_accel_m_s2": np.sqrt(np.maximum(_ratio(s["s_a2"], s["t"]), 0.0)),
        "rpa_m_s2": _ratio(s["s_rpa"], s["d"]),
        "pke_m_s2": _ratio(s["s_pke"], s["d"]),
        "mean_abs_grade": _ratio(s["s_grade"], s["d_grade"]),
        "climb_m_per_km": _ratio(s["s_climb"] * METRES_PER_KM, s["d_grade"]),
        "net_climb_m_per_km": _ratio((2 * s["s_climb"] - s["s_grade"]) * METRES_PER_KM, s["d_grade"]),
    }
    return np.stack([values[name] for name in TARGET_STATS], axis=-1)


def error_scale(target: FloatArray, cfg: CyclesConfig) -> FloatArray:
    """Denominator of the normalised error: :math:`\\max(|t|, f / \\tau)` per statistic."""
    floor = np.array([floors(cfg)[name] for name in TARGET_STATS])
    return np.maximum(np.abs(target), floor / cfg.stat_tolerance)


def normalised_errors(achieved: FloatArray, target: FloatArray, cfg: CyclesConfig) -> FloatArray:
    """:math:`e = |a - t| / \\max(|t|, f / \\tau)` (last axis: :data:`TARGET_STATS`).

    A statistic whose target is NaN (e.g. grade of logs without elevation) has error 0: it is not
    judged. An achieved NaN against a finite target is an infinite error.
    """
    scale = error_scale(target, cfg)
    diff = np.abs(achieved - target)
    with np.errstate(invalid="ignore", divide="ignore"):
        err = np.where(scale > 0, diff / np.where(scale > 0, scale, 1.0), np.where(diff == 0, 0.0, np.inf))
    err = np.where(np.isnan(err), np.inf, err)
    return np.where(np.isfinite(target), err, 0.0)
