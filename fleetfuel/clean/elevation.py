r"""Elevation smoothing and road grade over distance: the one grade routine of fleetfuel.

GNSS receivers without a barometer report altitude with an error of a few metres that wanders
slowly in *time* (correlation times of tens of seconds to minutes) and is quantised (often to
1 m). Summed naively, that error is the main source of false climb, and with it of false grade
energy in the vehicle model; smoothing it away with too wide a window flattens real hills, the
opposite bug. The method, for one stretch of a log (no break inside):

1. **Distance grid.** Samples are binned on a uniform grid of ``grade_step_m`` along the
   driven distance and averaged per bin; time spent standing still therefore counts once (a
   parked receiver's wandering altitude is averaged, not drawn as a cliff). Empty bins (fast
   driving, dropouts) are filled by linear interpolation.
2. **Robust despiking.** Bins further than ``elevation_outlier_m`` from the running median over
   ``elevation_outlier_window_m`` are dropped and refilled (a receiver's cold-start altitude,
   dropouts to zero or below sea level: no road rises that much within the window), then a
   running median over ``grade_despike_m`` removes short glitches and spikes (Tukey 1977;
   Hampel 1974 for the outlier rule).
3. **l1 trend filtering** (Kim, Koh, Boyd and Gorinevsky 2009): the profile :math:`x` minimises

   .. math:: \tfrac12 \int (y - x)^2 \, ds + \mu \sum_k |g_{k+1} - g_k|,

   with :math:`g` the grade of :math:`x` between grid points and :math:`\mu` =
   ``grade_penalty_m3``. The result is piecewise linear: a stretch of road keeps one constant
   grade unless the data pay for a change. Random altitude wander, whose wiggles are a few metres
   high, does not pay for the grade changes it would need, so a flat road stays flat; a real hill
   is kept at full height because its large, consistent rise does (the l1 penalty shrinks an
   isolated peak by a fixed amount, not in proportion to its size, unlike a linear low-pass).
   Solved by the primal-dual interior-point method of the same paper on the banded dual:
   a few tens of banded solves, O(n) each.
4. **Grade** over a window of ``grade_window_m``: the rise of the smoothed profile between the
   window's ends divided by its length (the mean grade of the window), clipped to
   ``+-grade_limit`` (clipped samples are counted).
5. **Climb**: the plain sum of the smoothed profile's positive increments (no hysteresis
   threshold: what the model climbs is what the profile climbs).

Measured on the synthetic generator (:mod:`fleetfuel.synth`, ``DefectSpec.typical()``: 4 m
altitude error with 60 s correlation, 1 m steps, dropouts), with the defaults: flat roads come
out with well under 1 m/km of climb, hills of 60 m and more keep their height within the altitude
noise; see ``tests/clean/test_elevation.py`` for the figures. Very small hills (under ~10 m over
500 m) are flattened: they cannot be told from the altitude noise of a GNSS receiver. For clean
elevation (a survey, a terrain model, a barometric altimeter) a smaller ``grade_penalty_m3``
keeps more detail.

References
----------
Hampel, F. R. (1974). The influence curve and its role in robust estimation. JASA 69, 383-393.
Kim, S.-J., Koh, K., Boyd, S. and Gorinevsky, D. (2009). l1 trend filtering. SIAM Review
51(2), 339-360. doi:10.1137/070690274
Tukey, J. W. (1977). Exploratory Data Analysis. Addison-Wesley (running medians).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import numpy.typing as npt
from scipy import ndimage

from fleetfuel.clean.config import CleanConfig
from fleetfuel.clean.trendfilter import dual_solution

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]


class GradeProfile(NamedTuple):
    """Result of :func:`grade_profile`, arrays over the input samples.

    Attributes
    ----------
    elevation_m : ndarray
        Smoothed elevation. [m]
    grade : ndarray
        Road grade, rise over run, clipped to the limit. [1]
    clipped : ndarray of bool
        Samples whose grade was clipped.
    climb_m : float
        Climb of the smoothed profile over the stretch. [m]
    """

    elevation_m: FloatArray
    grade: FloatArray
    clipped: BoolArray
    climb_m: float


def trend_filter(y: npt.ArrayLike, lam: float) -> FloatArray:
    r"""l1 trend filtering: :math:`\min_x \tfrac12\|y - x\|^2 + \lambda \|D x\|_1`, D the second difference.

    Primal-dual interior-point method on the dual (a box-constrained QP with the pentadiagonal
    matrix :math:`D D^T`), after Kim, Koh, Boyd and Gorinevsky (2009), section 6.

    Parameters
    ----------
    y : array_like
        Values on a uniform grid (at least 3). [any unit]
    lam : float
        Penalty weight (same unit as ``y``). Larger: fewer, smaller slope changes.

    Returns
    -------
    ndarray
        The piecewise-linear fit.
    """
    y = np.asarray(y, dtype=np.float64)
    if y.size < 3 or lam <= 0:
        return y.copy()
    z = dual_solution(np.ascontiguousarray(y), float(lam))
    fit = y.copy()
    fit[:-2] -= z
    fit[1:-1] += 2 * z
    fit[2:] -= z
    return fit


def _odd(n: float) -> int:
    return max(1, int(round(n)) // 2 * 2 + 1)


def _binned(d: FloatArray, z: FloatArray, step_m: float) -> tuple[float, FloatArray]:
    """Start of the grid and the bin means of ``z`` over distance (empty bins interpolated)."""
    d0 = float(d.min())
    size = int(np.ceil((float(d.max()) - d0) / step_m)) + 1  # the grid covers every sample
    b = np.minimum(np.rint((d - d0) / step_m).astype(np.int64), size - 1)
    count = np.bincount(b, minlength=size)
    total = np.bincount(b, weights=z, minlength=size)
    grid = np.arange(size, dtype=np.float64)
    have = count > 0
    return d0, np.interp(grid, grid[have], total[have] / count[have])


def grade_profile(distance_m: npt.ArrayLike, elevation_m: npt.ArrayLike, cfg: CleanConfig) -> GradeProfile:
    """Smoothed elevation, grade, clipped-grade mask and climb of ONE stretch (see module notes).

    Parameters
    ----------
    distance_m : array_like
        Distance along the stretch, non-decreasing (NaN: unknown). [m]
    elevation_m : array_like
        Elevation as read (NaN in dropouts). [m]
    cfg : CleanConfig
        ``grade_step_m``, ``elevation_outlier_window_m``, ``elevation_outlier_m``, ``grade_despike_m``,
        ``grade_penalty_m3``, ``grade_window_m``, ``grade_limit``.

    Returns
    -------
    GradeProfile
        Arrays over the input samples (NaN where the distance is unknown or no elevation at all).
    """
    d = np.asarray(distance_m, dtype=np.float64)
    z = np.asarray(elevation_m, dtype=np.float64)
    n = d.size
    nan = np.full(n, np.nan)
    none = np.zeros(n, dtype=bool)
    ok = np.isfinite(d) & np.isfinite(z)
    if not ok.any():
        return GradeProfile(nan, nan.copy(), none, float("nan"))
    ds = cfg.grade_step_m
    d0, binned = _binned(d[ok], z[ok], ds)
    fin = np.isfinite(d)
    if binned.size < 3:
        level = np.where(fin, float(np.mean(z[ok])), np.nan)
        return GradeProfile(level, np.where(fin, 0.0, np.nan), none, 0.0)
    reference = ndimage.median_filter(binned, size=_odd(cfg.elevation_outlier_window_m / ds), mode="reflect")
    good = np.abs(binned - reference) <= cfg.elevation_outlier_m
    if good.any() and not good.all():
        cells = np.arange(binned.size)
        binned = np.interp(cells, cells[good], binned[good])
    despiked = ndimage.median_filter(binned, size=_odd(cfg.grade_despike_m / ds), mode="nearest")
    offset = float(np.median(despiked))
    smooth = trend_filter(despiked - offset, cfg.grade_penalty_m3 / ds**2) + offset
    half = max(1, int(round(cfg.grade_window_m / (2 * ds))))
    ahead = np.r_[smooth[half:], np.full(half, smooth[-1])]
    behind = np.r_[np.full(half, smooth[0]), smooth[:-half]]
    idx = np.arange(smooth.size)
    span = (np.minimum(idx + half, smooth.size - 1) - np.maximum(idx - half, 0)) * ds
    grade_grid = (ahead - behind) / span
    grid_m = d0 + ds * idx
    elev, grade = nan.copy(), nan.copy()
    elev[fin] = np.interp(d[fin], grid_m, smooth)
    grade[fin] = np.interp(d[fin], grid_m, grade_grid)
    clipped = np.abs(np.nan_to_num(grade)) > cfg.grade_limit
    grade = np.clip(grade, -cfg.grade_limit, cfg.grade_limit)
    climb = float(np.clip(np.diff(smooth), 0, None).sum())
    return GradeProfile(elev, grade, clipped, climb)


def road_grade(
    distance_m: npt.ArrayLike, elevation_m: npt.ArrayLike, cfg: CleanConfig | None = None
) -> tuple[FloatArray, FloatArray]:
    """Smoothed elevation [m] and road grade [1] at each sample of one stretch.

    The one grade routine of fleetfuel (see module notes); the vehicle model uses it for cycle
    files that carry elevation.

    Parameters
    ----------
    distance_m : array_like
        Distance along the stretch, non-decreasing. [m]
    elevation_m : array_like
        Elevation as read (NaN in dropouts). [m]
    cfg : CleanConfig, optional
        Grade settings; the documented defaults when omitted.

    Returns
    -------
    (elevation_smoothed_m, grade) : tuple of ndarray
        [m], [1] (rise over run).
    """
    prof = grade_profile(distance_m, elevation_m, cfg or CleanConfig())
    return prof.elevation_m, prof.grade


def climb_m(elevation_m: npt.ArrayLike) -> float:
    """Climb of a profile: the sum of its positive increments (NaN skipped, no threshold). [m]"""
    z = np.asarray(elevation_m, dtype=np.float64)
    z = z[np.isfinite(z)]
    return float(np.clip(np.diff(z), 0, None).sum()) if z.size > 1 else 0.0
