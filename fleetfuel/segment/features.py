r"""Driving-pattern statistics of micro-trips, groups of micro-trips and whole cycles.

One definition of each statistic serves the project: :func:`microtrip_features` (one row per
micro-trip), :func:`group_features` (any grouping of micro-trips, e.g. a duty-cycle type, computed
on all their samples together, not as an average of averages) and :func:`features_of_trace` (a
whole cycle, e.g. a representative cycle or a standard schedule). All are built on the per-row
weights :math:`w_i`, accelerations :math:`a_i` and kinetic-energy increments of
:mod:`fleetfuel.segment.kinematics`. Stopped means :math:`v < v_{stop}` (``cfg.stop_speed_m_s``);
the driving modes split moving samples at :math:`\pm a_{mode}` (``cfg.mode_accel_m_s2``).

Feature columns (:data:`FEATURE_COLUMNS`), with :math:`T = \sum w_i`, :math:`D = \sum w_i v_i`:

========================== ======== ===========================================================
column                     unit     definition
========================== ======== ===========================================================
``duration_s``             s        :math:`T`
``distance_m``             m        :math:`D` (trapezoidal integral of speed)
``mean_speed_m_s``         m/s      :math:`D / T`
``mean_running_speed_m_s`` m/s      :math:`D / (T - T_{idle})`, idle excluded
``max_speed_m_s``          m/s      :math:`\max v_i`
``speed_std_m_s``          m/s      time-weighted standard deviation of :math:`v` (idle included)
``idle_share``             1        :math:`T_{idle} / T`, :math:`T_{idle} = \sum w_i [v_i < v_{stop}]`
``accel_share``            1        time share moving with :math:`a_i > a_{mode}`
``cruise_share``           1        time share moving with :math:`|a_i| \le a_{mode}`
``decel_share``            1        time share moving with :math:`a_i < -a_{mode}`
``stops_per_km``           1/km     moving -> stopped events per km of :math:`D`
``mean_pos_accel_m_s2``    m/s^2    time-weighted mean of :math:`a_i` over acceleration mode
``mean_neg_accel_m_s2``    m/s^2    time-weighted mean of :math:`a_i` over deceleration mode (< 0)
``rms_accel_m_s2``         m/s^2    :math:`\sqrt{\sum w_i a_i^2 / T}`
``rpa_m_s2``               m/s^2    :math:`\sum w_i v_i a_i [a_i > a_{RPA}] / D`
``pke_m_s2``               m/s^2    :math:`\sum \max(v_i^2 - v_{i-1}^2, 0) / D`
``mean_abs_grade``         1        distance-weighted mean of :math:`|g_i|`
``climb_m_per_km``         m/km     :math:`\sum w_i v_i \max(g_i, 0)` per km (grade rise over run)
========================== ======== ===========================================================

Statistics with a zero denominator are NaN (e.g. running speed of an all-idle group). The
acceleration statistics (modes, accelerations, RPA) are NaN for a group holding a sample whose
acceleration is not observable (low-rate logs). Grade statistics use the samples with a finite
grade only (NaN when there are none).

References
----------
Tong, H. Y., Hung, W. T. & Cheung, C. S. (1999). Development of a driving cycle for Hong Kong.
    Atmospheric Environment 33(15), 2323-2335 (driving modes, micro-trip statistics; from memory).
Hung, W. T., Tong, H. Y., Lee, C. P., Ha, K. & Pao, L. Y. (2007). Development of a practical
    driving cycle construction methodology: a case study in Hong Kong. Transportation Research
    Part D 12(2), 115-128 (assessment parameters incl. PKE, RMS acceleration; from memory).
Commission Regulation (EU) 2017/1151, Annex IIIA, Appendix 7a: relative positive acceleration
    :math:`RPA = \sum \Delta t\,(v \cdot a_{pos}) / \sum d`, positive acceleration > 0.1 m/s^2.
"""

from __future__ import annotations

from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.errors import InputDataError
from fleetfuel.segment._frame import (
    FloatArray,
    IntArray,
    float_column,
    group_ends,
    group_starts,
    ordered,
    seconds,
)
from fleetfuel.segment.config import METRES_PER_KM, SegmentConfig
from fleetfuel.segment.kinematics import row_kinematics
from fleetfuel.segment.microtrips import split_microtrips

FEATURE_COLUMNS: Final = (
    "duration_s",
    "distance_m",
    "mean_speed_m_s",
    "mean_running_speed_m_s",
    "max_speed_m_s",
    "speed_std_m_s",
    "idle_share",
    "accel_share",
    "cruise_share",
    "decel_share",
    "stops_per_km",
    "mean_pos_accel_m_s2",
    "mean_neg_accel_m_s2",
    "rms_accel_m_s2",
    "rpa_m_s2",
    "pke_m_s2",
    "mean_abs_grade",
    "climb_m_per_km",
)
"""Columns of every feature table, in order (definitions in the module docstring)."""
LOGGING_COLUMNS: Final = ("max_step_s", "ends_at_rest")
"""How a micro-trip was logged, after :data:`FEATURE_COLUMNS` in :func:`microtrip_features`: its
largest time step [s] (NaN for a single row) and whether its first and last rows are at rest
(below ``cfg.stop_speed_m_s``). The cycles stage reads them to pick the micro-trips logged at its
time step (:func:`fleetfuel.cycles.pieces.measured_microtrips`) without the samples."""


def _ratio(num: FloatArray, den: FloatArray) -> FloatArray:
    out = np.full(num.shape, np.nan)
    np.divide(num, den, out=out, where=den > 0)
    return out


def _features(
    time_s: FloatArray,
    speed_m_s: FloatArray,
    grade: FloatArray | None,
    segment: IntArray,
    group: IntArray,
    n_groups: int,
    cfg: SegmentConfig,
) -> dict[str, FloatArray]:
    """Feature arrays (one value per group) of rows labelled with contiguous ``segment`` codes.

    ``segment`` delimits the rows whose neighbours count in weights and accelerations (a trip);
    ``group`` (0..n_groups-1, any order; -1: row left out) says which statistic each row adds to.
    """
    first, last = group_starts(segment), group_ends(segment)
    kin = row_kinematics(time_s, speed_m_s, first, last, cfg)
    v = np.nan_to_num(np.asarray(speed_m_s, dtype=np.float64), nan=0.0)
    w, a = kin.weight_s, kin.accel_m_s2
    bins = np.where(group >= 0, group, n_groups)

    def total(values: npt.ArrayLike) -> FloatArray:
        weights = np.asarray(values, dtype=np.float64)
        return np.bincount(bins, weights=weights, minlength=n_groups + 1)[:n_groups]

    idle = v < cfg.stop_speed_m_s
    a0 = np.nan_to_num(a, nan=0.0)
    acc = ~idle & (a0 > cfg.mode_accel_m_s2)
    dec = ~idle & (a0 < -cfg.mode_accel_m_s2)
    cru = ~idle & ~acc & ~dec
    ds = w * v
    duration, distance = total(w), total(ds)
    idle_s, acc_s, dec_s = total(w * idle), total(w * acc), total(w * dec)
    mean_speed = _ratio(distance, duration)
    out = {
        "duration_s": duration,
        "distance_m": distance,
        "mean_speed_m_s": mean_speed,
        "mean_running_speed_m_s": _ratio(distance, duration - idle_s),
        "max_speed_m_s": pd.Series(v).groupby(bins).max().reindex(range(n_groups)).to_numpy(np.float64),
        "speed_std_m_s": np.sqrt(np.maximum(_ratio(total(w * v * v), duration) - mean_speed**2, 0.0)),
        "idle_share": _ratio(idle_s, duration),
        "accel_share": _ratio(acc_s, duration),
        "cruise_share": _ratio(total(w * cru), duration),
        "decel_share": _ratio(dec_s, duration),
        "stops_per_km": _ratio(total(kin.stop_event) * METRES_PER_KM, distance),
        "mean_pos_accel_m_s2": _ratio(total(w * a0 * acc), acc_s),
        "mean_neg_accel_m_s2": _ratio(total(w * a0 * dec), dec_s),
        "rms_accel_m_s2": np.sqrt(_ratio(total(w * a0 * a0), duration)),
        "rpa_m_s2": _ratio(total(ds * a0 * (a0 > cfg.rpa_min_accel_m_s2)), distance),
        "pke_m_s2": _ratio(total(np.maximum(kin.dke_m2_s2, 0.0)), distance),
    }
    unobserved = total(~np.isfinite(a)) > 0
    for name in (
        "accel_share",
        "cruise_share",
        "decel_share",
        "mean_pos_accel_m_s2",
        "mean_neg_accel_m_s2",
        "rms_accel_m_s2",
        "rpa_m_s2",
    ):
        out[name] = np.where(unobserved, np.nan, out[name])
    if grade is None:
        out["mean_abs_grade"] = np.full(n_groups, np.nan)
        out["climb_m_per_km"] = np.full(n_groups, np.nan)
    else:
        g = np.asarray(grade, dtype=np.float64)
        known = np.isfinite(g)
        g0 = np.where(known, g, 0.0)
        graded_distance = total(ds * known)
        out["mean_abs_grade"] = _ratio(total(ds * np.abs(g0)), graded_distance)
        out["climb_m_per_km"] = _ratio(total(ds * np.maximum(g0, 0.0)) * METRES_PER_KM, graded_distance)
    return {name: out[name] for name in FEATURE_COLUMNS}


def features_of_trace(
    time_s: npt.ArrayLike,
    speed_m_s: npt.ArrayLike,
    grade: npt.ArrayLike | None = None,
    *,
    cfg: SegmentConfig | None = None,
) -> pd.Series:
    """Statistics of one whole trace (a cycle), with the definitions of the module docstring.

    Parameters
    ----------
    time_s : array_like
        Sample times, strictly increasing. [s]
    speed_m_s : array_like
        Speeds. [m/s]
    grade : array_like, optional
        Road grade, rise over run. [1] Absent: grade statistics are NaN.
    cfg : SegmentConfig, optional
        Thresholds (defaults: :class:`SegmentConfig`).

    Returns
    -------
    Series
        Indexed by :data:`FEATURE_COLUMNS`.

    Raises
    ------
    InputDataError
        Lengths differ, fewer than two samples, or times not strictly increasing.
    """
    cfg = cfg or SegmentConfig()
    t = np.asarray(time_s, dtype=np.float64)
    v = np.asarray(speed_m_s, dtype=np.float64)
    g = None if grade is None else np.broadcast_to(np.asarray(grade, dtype=np.float64), t.shape)
    if t.ndim != 1 or v.shape != t.shape:
        raise InputDataError(
            f"trace: time_s and speed_m_s must be 1-D of one length, found {t.shape} and {v.shape}"
        )
    if t.size < 2 or not np.all(np.diff(t) > 0):
        raise InputDataError(
            f"trace: need at least 2 samples with strictly increasing time_s (found {t.size})"
        )
    zeros = np.zeros(t.size, dtype=np.int64)
    values = _features(t, v, g, zeros, zeros, 1, cfg)
    return pd.Series({name: float(arr[0]) for name, arr in values.items()}, name="trace")


def _segmented(samples: pd.DataFrame, cfg: SegmentConfig) -> pd.DataFrame:
    """Sorted ``samples`` with the id columns (computed when any is missing).

    Rows outside trips stay (their <NA> ids give code -1: in no segment's neighbourhood, in no group).
    """
    if all(c in samples.columns for c in schema.SEGMENT_ID_COLUMNS):
        return ordered(samples)
    return split_microtrips(samples, cfg)


def _grouped(
    rows: pd.DataFrame, labels: pd.Series, cfg: SegmentConfig
) -> tuple[pd.Index, dict[str, FloatArray]]:
    trip_codes, _ = pd.factorize(rows[schema.TRIP_ID])
    group_codes, uniques = pd.factorize(labels, sort=True)
    speed = float_column(rows, schema.SPEED_M_S)
    assert speed is not None
    values = _features(
        seconds(rows[schema.TIME_UTC]),
        speed,
        float_column(rows, schema.GRADE),
        trip_codes.astype(np.int64),
        group_codes.astype(np.int64),
        len(uniques),
        cfg,
    )
    return pd.Index(uniques), values


def _logging(rows: pd.DataFrame, stop_speed_m_s: float) -> pd.DataFrame:
    """:data:`LOGGING_COLUMNS` of each micro-trip of sorted ``rows``, indexed by ``microtrip_id``."""
    in_mt = rows[schema.MICROTRIP_ID].notna().to_numpy()
    ids = rows[schema.MICROTRIP_ID].to_numpy(dtype=object)[in_mt]
    t = seconds(rows[schema.TIME_UTC])[in_mt]
    v = np.nan_to_num(rows[schema.SPEED_M_S].to_numpy(dtype=np.float64, na_value=np.nan)[in_mt], nan=0.0)
    same = np.r_[False, ids[1:] == ids[:-1]]
    steps = np.where(same, np.r_[np.nan, np.diff(t)], np.nan)
    ends = ~same | ~np.r_[same[1:], False]  # first or last row of a micro-trip
    moving_end = ends & (v >= stop_speed_m_s)
    per_mt = pd.DataFrame({"max_step_s": steps, "moving_end": moving_end}).groupby(ids).agg(
        max_step_s=("max_step_s", "max"), moving_end=("moving_end", "any"))
    return pd.DataFrame({"max_step_s": per_mt["max_step_s"].astype(np.float64),
                         "ends_at_rest": ~per_mt["moving_end"].astype(bool)})


def microtrip_features(samples: pd.DataFrame, cfg: SegmentConfig | None = None) -> pd.DataFrame:
    """One row per micro-trip: its ids, start and end, and :data:`FEATURE_COLUMNS`.

    Parameters
    ----------
    samples : DataFrame
        Clean frame, with or without the segment id columns (computed by
        :func:`fleetfuel.segment.split_microtrips` when absent). Grade from ``grade`` when present.
    cfg : SegmentConfig, optional
        Thresholds.

    Returns
    -------
    DataFrame
        Columns ``vehicle_id``, ``period_id``, ``trip_id``, ``microtrip_id``, ``start_utc``,
        ``end_utc``, ``route`` and ``route_source`` (when the samples carry them), then
        :data:`FEATURE_COLUMNS` (units in the names; definitions in the module docstring), then
        :data:`LOGGING_COLUMNS`. Sorted by vehicle and time. The input is not modified.
    """
    cfg = cfg or SegmentConfig()
    rows = _segmented(samples, cfg)
    ids = rows[schema.MICROTRIP_ID]
    index, values = _grouped(rows, ids, cfg)
    grouped = rows.groupby(ids, sort=True)
    head = pd.DataFrame(
        {
            schema.VEHICLE_ID: grouped[schema.VEHICLE_ID].first(),
            schema.PERIOD_ID: grouped[schema.PERIOD_ID].first(),
            schema.TRIP_ID: grouped[schema.TRIP_ID].first(),
            "start_utc": grouped[schema.TIME_UTC].min(),
            "end_utc": grouped[schema.TIME_UTC].max(),
        }
    ).reindex(index)
    for extra in (schema.ROUTE, schema.ROUTE_SOURCE):
        if extra in rows.columns:
            head[extra] = grouped[extra].first().reindex(index)
    logging = _logging(rows, cfg.stop_speed_m_s).reindex(index)
    logging["ends_at_rest"] = logging["ends_at_rest"].fillna(False).astype(bool)
    table = pd.concat([head, pd.DataFrame(values, index=index), logging], axis=1)
    table.index.name = schema.MICROTRIP_ID
    table = table.reset_index()
    first_cols = [schema.VEHICLE_ID, schema.PERIOD_ID, schema.TRIP_ID, schema.MICROTRIP_ID]
    table = table[first_cols + [c for c in table.columns if c not in first_cols]]
    return table.sort_values([schema.VEHICLE_ID, "start_utc"], kind="stable").reset_index(drop=True)


def group_features(
    samples: pd.DataFrame, groups: pd.Series, cfg: SegmentConfig | None = None
) -> pd.DataFrame:
    """Statistics of groups of micro-trips, each group computed on all its samples together.

    Parameters
    ----------
    samples : DataFrame
        Clean frame with or without the segment id columns.
    groups : Series
        Group label of each micro-trip, indexed by ``microtrip_id`` (e.g. a duty-cycle type).
        Micro-trips not in it are left out.
    cfg : SegmentConfig, optional

    Returns
    -------
    DataFrame
        Indexed by group label (sorted), columns :data:`FEATURE_COLUMNS`.
    """
    cfg = cfg or SegmentConfig()
    if groups.index.has_duplicates:
        raise InputDataError("groups: each microtrip_id may have one group only (duplicate index values)")
    rows = _segmented(samples, cfg)
    labels = rows[schema.MICROTRIP_ID].map(groups)
    index, values = _grouped(rows, labels, cfg)
    index.name = groups.name
    return pd.DataFrame(values, index=index)
