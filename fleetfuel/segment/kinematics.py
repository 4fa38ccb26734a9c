r"""Per-row kinematics on contiguous segments (trips, or a whole cycle): the one discretisation.

Every statistic of :mod:`fleetfuel.segment.features` (and the trip table's distance) is a
weighted sum over rows of the quantities computed here, so one definition serves micro-trips,
trips, duty-cycle types and representative cycles alike.

For row :math:`i` of a segment with times :math:`t` and speeds :math:`v`:

- weight (time the row stands for) :math:`w_i = (t_{i+1} - t_{i-1}) / 2`, with the segment's first
  and last rows taking half of their one neighbouring step. :math:`\sum w_i` is the segment's
  duration and :math:`\sum w_i v_i` is the trapezoidal integral of speed, i.e. its distance;
- acceleration by central difference :math:`a_i = (v_{i+1} - v_{i-1}) / (t_{i+1} - t_{i-1})`
  (one-sided at the segment's ends), the scheme of Regulation (EU) 2017/1151, Annex IIIA,
  Appendix 7a for 1 Hz data (from memory); NaN where the difference spans more than
  ``2 * cfg.max_accel_step_s`` (not observable);
- the pair of rows :math:`(i-1, i)` of a segment belongs to row :math:`i`: kinetic-energy
  increment :math:`v_i^2 - v_{i-1}^2` and a stop event when :math:`v_{i-1}` is moving and
  :math:`v_i` is stopped.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fleetfuel.segment._frame import BoolArray, FloatArray
from fleetfuel.segment.config import SegmentConfig


@dataclass(frozen=True, slots=True)
class RowKinematics:
    """Per-row quantities of :func:`row_kinematics` (see the module docstring)."""

    weight_s: FloatArray
    accel_m_s2: FloatArray
    dke_m2_s2: FloatArray
    stop_event: BoolArray


def row_kinematics(
    time_s: FloatArray, speed_m_s: FloatArray, first: BoolArray, last: BoolArray, cfg: SegmentConfig
) -> RowKinematics:
    """Weights, accelerations, kinetic-energy increments and stop events of every row.

    Parameters
    ----------
    time_s : ndarray
        Sample times, increasing within each segment. [s]
    speed_m_s : ndarray
        Speeds (NaN read as 0). [m/s]
    first, last : ndarray of bool
        True on the first / last row of each contiguous segment.
    cfg : SegmentConfig
        ``stop_speed_m_s`` and ``max_accel_step_s``.

    Returns
    -------
    RowKinematics
        ``weight_s`` [s], ``accel_m_s2`` [m/s^2], ``dke_m2_s2`` (:math:`v_i^2 - v_{i-1}^2`, 0 on a
        segment's first row) [m^2/s^2], ``stop_event`` (moving -> stopped on this row) [bool].
    """
    t = np.asarray(time_s, dtype=np.float64)
    v = np.nan_to_num(np.asarray(speed_m_s, dtype=np.float64), nan=0.0)
    t_prev, t_next = np.r_[t[:1], t[:-1]], np.r_[t[1:], t[-1:]]
    v_prev, v_next = np.r_[v[:1], v[:-1]], np.r_[v[1:], v[-1:]]
    t_prev = np.where(first, t, t_prev)
    v_prev = np.where(first, v, v_prev)
    t_next = np.where(last, t, t_next)
    v_next = np.where(last, v, v_next)
    span = t_next - t_prev
    weight = span / 2
    with np.errstate(divide="ignore", invalid="ignore"):
        accel = np.where(span > 0, (v_next - v_prev) / span, 0.0)
    accel = np.where(span > 2 * cfg.max_accel_step_s, np.nan, accel)
    dke = np.where(first, 0.0, v**2 - v_prev**2)
    stopped = v < cfg.stop_speed_m_s
    stop_event = ~first & stopped & (v_prev >= cfg.stop_speed_m_s)
    return RowKinematics(weight_s=weight, accel_m_s2=accel, dke_m2_s2=dke, stop_event=stop_event)
