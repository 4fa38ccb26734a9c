"""True elevation along invented roads: smooth profiles with real hills, and a town terrain field.

A road's elevation is an :class:`ElevationProfile`: knots every few metres of distance along the
road, linear between knots, so the true grade is piecewise constant and is exactly the derivative
of the true elevation. Profiles come from control points (distance, elevation) joined by a
monotone piecewise-cubic Hermite interpolant (Fritsch and Carlson 1980: no overshoot, so a climb
specified as 360 m is 360 m), plus optional gentle undulation; streets of a town sample a smooth
2-D terrain field instead, so that a street has the same elevation whichever way it is driven.

References
----------
Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation.
SIAM Journal on Numerical Analysis 17(2), 238-246.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
from scipy.interpolate import PchipInterpolator

FloatArray = npt.NDArray[np.float64]

KNOT_SPACING_M: Final = 10.0
"""Distance between elevation knots [m]: finer than any grade change a vehicle feels."""


@dataclass(frozen=True, slots=True, kw_only=True)
class ElevationProfile:
    """True elevation as a function of distance along a road.

    Attributes
    ----------
    s_m : ndarray
        Knot distances, strictly increasing, from 0 to the road length. [m]
    z_m : ndarray
        Elevation at the knots. [m]
    """

    s_m: FloatArray
    z_m: FloatArray

    def _uniform_step(self) -> float:
        """The knot spacing when knots are uniform (as :func:`uniform` makes them), else 0."""
        step = (self.s_m[-1] - self.s_m[0]) / (len(self.s_m) - 1)
        return step if self.s_m[0] == 0 and np.allclose(np.diff(self.s_m), step, rtol=0, atol=1e-9 * step) else 0.0

    def at(self, s_m: npt.ArrayLike) -> FloatArray:
        """Elevation at distances ``s_m`` (linear between knots). [m]"""
        return np.interp(s_m, self.s_m, self.z_m)

    def grade(self, s_m: npt.ArrayLike) -> FloatArray:
        """Grade (rise over run) at distances ``s_m``: slope of the knot interval. [1]"""
        slope = np.diff(self.z_m) / np.diff(self.s_m)
        step = self._uniform_step()
        if step:
            idx = np.clip(np.floor(np.asarray(s_m, dtype=np.float64) / step + 1e-9).astype(np.int64), 0, len(slope) - 1)
        else:
            idx = np.clip(np.searchsorted(self.s_m, s_m, side="right") - 1, 0, len(slope) - 1)
        return slope[idx]

    def uniform(self, step_m: float = KNOT_SPACING_M) -> ElevationProfile:
        """The profile resampled on uniform knots about ``step_m`` apart (fast :meth:`grade`). [m]"""
        n = max(2, int(np.ceil(self.s_m[-1] / step_m)) + 1)
        s = np.linspace(0.0, self.s_m[-1], n)
        return ElevationProfile(s_m=s, z_m=self.at(s))

    def reversed(self) -> ElevationProfile:
        """The same road driven the other way."""
        return ElevationProfile(s_m=self.s_m[-1] - self.s_m[::-1], z_m=self.z_m[::-1].copy())

    def stretched(self, length_m: float) -> ElevationProfile:
        """The profile mapped linearly onto a road of ``length_m``. [m]"""
        return ElevationProfile(s_m=self.s_m * (length_m / self.s_m[-1]), z_m=self.z_m)


def profile_from_controls(
    length_m: float,
    control_s_m: npt.ArrayLike,
    control_z_m: npt.ArrayLike,
    *,
    undulation_m: float = 0.0,
    undulation_wavelengths_m: tuple[float, ...] = (),
    seed: int = 0,
) -> ElevationProfile:
    """Elevation profile through control points, optionally with gentle undulation.

    Parameters
    ----------
    length_m : float
        Road length. [m]
    control_s_m, control_z_m : array_like
        Control distances (first 0, last ``length_m``; increasing) and elevations. [m]
    undulation_m : float
        Amplitude of each sinusoidal undulation added between the control points; it is tapered
        to zero at every control point so the controls (summits, valleys) stay exact. [m]
    undulation_wavelengths_m : tuple of float
        Wavelengths of the undulations (random phases from ``seed``). [m]
    seed : int
        Seed of the phases.
    """
    cs = np.asarray(control_s_m, dtype=np.float64)
    cz = np.asarray(control_z_m, dtype=np.float64)
    n = max(2, int(np.ceil(length_m / KNOT_SPACING_M)) + 1)
    s = np.linspace(0.0, length_m, n)
    z = PchipInterpolator(cs, cz)(s)
    if undulation_m and undulation_wavelengths_m:
        rng = np.random.default_rng(seed)
        phases = rng.uniform(0.0, 2 * np.pi, len(undulation_wavelengths_m))
        wave = sum(np.sin(2 * np.pi * s / w + p) for w, p in zip(undulation_wavelengths_m, phases, strict=True))
        seg = np.clip(np.searchsorted(cs, s, side="right") - 1, 0, len(cs) - 2)
        frac = (s - cs[seg]) / (cs[seg + 1] - cs[seg])
        taper = np.sin(np.pi * frac) ** 2
        z = z + undulation_m * taper * wave
    return ElevationProfile(s_m=s, z_m=z)


def hill_profile(
    length_m: float, *, base_m: float, height_m: float, start_m: float, climb_m: float, descent_m: float
) -> ElevationProfile:
    """A single hill: flat at ``base_m``, a climb of ``height_m`` over ``climb_m`` starting at
    ``start_m``, a summit, a descent back to ``base_m`` over ``descent_m``, flat after. [m]"""
    top = start_m + climb_m
    controls_s = [0.0, start_m, top, top + descent_m, length_m]
    controls_z = [base_m, base_m, base_m + height_m, base_m, base_m]
    keep = np.r_[True, np.diff(controls_s) > 0]
    return profile_from_controls(length_m, np.asarray(controls_s)[keep], np.asarray(controls_z)[keep])


@dataclass(frozen=True, slots=True, kw_only=True)
class TerrainField:
    """Smooth town terrain: a base elevation plus Gaussian bumps, in the scenario plane.

    Attributes
    ----------
    base_m : float
        Elevation far from every bump. [m]
    bump_x_m, bump_y_m, bump_height_m, bump_radius_m : tuple of float
        Centre (east, north), height (negative: a hollow) and e-folding radius of each bump. [m]
    tilt_x, tilt_y : float
        Regional slope east and north (rise over run). [1]
    """

    base_m: float
    bump_x_m: tuple[float, ...] = ()
    bump_y_m: tuple[float, ...] = ()
    bump_height_m: tuple[float, ...] = ()
    bump_radius_m: tuple[float, ...] = ()
    tilt_x: float = 0.0
    tilt_y: float = 0.0

    def at(self, x_m: npt.ArrayLike, y_m: npt.ArrayLike) -> FloatArray:
        """Elevation at plane points (east ``x_m``, north ``y_m``). [m]"""
        x = np.asarray(x_m, dtype=np.float64)
        y = np.asarray(y_m, dtype=np.float64)
        z = self.base_m + self.tilt_x * x + self.tilt_y * y
        for bx, by, bh, br in zip(self.bump_x_m, self.bump_y_m, self.bump_height_m, self.bump_radius_m, strict=True):
            z = z + bh * np.exp(-((x - bx) ** 2 + (y - by) ** 2) / br**2)
        return z


def profile_from_field(
    field: TerrainField, x_m: FloatArray, y_m: FloatArray, s_m: FloatArray, start_m: float, stop_m: float
) -> ElevationProfile:
    """Sample a terrain field between distances ``start_m`` and ``stop_m`` of a plane polyline
    whose vertices (``x_m`` east, ``y_m`` north) lie at distances ``s_m``; knots count from 0. [m]"""
    n = max(2, int(np.ceil((stop_m - start_m) / KNOT_SPACING_M)) + 1)
    s = np.linspace(start_m, stop_m, n)
    return ElevationProfile(s_m=s - start_m, z_m=field.at(np.interp(s, s_m, x_m), np.interp(s, s_m, y_m)))
