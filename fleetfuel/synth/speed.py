"""Kinematically plausible speed profiles along a :class:`~fleetfuel.synth.routes.Route`.

The profile is built on a uniform distance grid with array operations only:

1. a *cap* per grid point: the speed limit times a per-drive driver factor and a slow wobble,
   the curve speed :math:`\\sqrt{a_{lat}/\\kappa}`, the governed top speed, and on climbs the
   steady climbing speed of the class, relaxed over :attr:`VehicleClass.climb_relax_m` (a
   first-order filter in distance: the vehicle's momentum carries it into the hill); zero at
   stops (red lights, give-way stops, deliveries, bus stops), low at slow points;
2. a backward pass bounding deceleration, :math:`v_i^2 \\le \\min_{j \\ge i}(c_j^2 + 2d(s_j - s_i))`,
   a reversed cumulative minimum;
3. a forward pass bounding the speed-dependent (power-limited) acceleration. With
   :math:`\\tau(v) = \\int_0^v u/a(u)\\,du` (the distance needed to reach ``v`` from rest)
   the bound is :math:`\\tau(v_i) \\le \\min_{j \\le i}(\\tau(c_j) + S_i - S_j)`, a cumulative
   minimum, where :math:`S` is distance warped by the climb (less acceleration uphill).

Between grid points the acceleration is constant (see :mod:`fleetfuel.synth.drive` for time).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy.signal import lfilter

from fleetfuel.constants import STANDARD_GRAVITY_M_S2
from fleetfuel.errors import ConfigError
from fleetfuel.synth import routes as rt
from fleetfuel.synth.routes import Route
from fleetfuel.synth.vehicles import VehicleClass

FloatArray = npt.NDArray[np.float64]
@dataclass(frozen=True, slots=True, kw_only=True)
class DriveConfig:
    """How drivers drive and loggers log. Defaults: typical, common practice, no source.

    Attributes
    ----------
    grid_step_m : float
        Distance grid of the speed profile. [m]
    speed_factor_sigma : float
        Spread of the per-drive factor on speed limits (drivers hold about the limit). [1]
    wobble : float
        Amplitude of the slow relative speed fluctuation in free flow. [1]
    wobble_length_m : float
        Length scale of that fluctuation. [m]
    aggression_range : tuple of float
        Range of the per-drive share of the class's acceleration and braking bounds used. [1]
    climb_accel_floor : float
        Smallest share of the flat acceleration left on a steep climb. [1]
    light_red_share : float
        Share of signalised junctions met at red. [1]
    light_red_max_s : float
        Longest wait at red. [s]
    give_way_stop_share : float
        Share of give-way junctions where the vehicle stops. [1]
    give_way_max_s : float
        Longest wait at a give-way. [s]
    give_way_speed_m_s : float
        Crawl speed through a give-way without stopping. [m/s]
    roundabout_speed_m_s : float
        Speed through a roundabout. [m/s]
    roundabout_stop_share : float
        Share of roundabouts with a stop at entry. [1]
    bus_stop_skip_share : float
        Share of bus stops with nobody to board or alight. [1]
    dwell_sigma : float
        Log-normal spread of planned dwell times. [1]
    logger_sleep_after_s : float
        The logger stops after this long with the engine off, until the next start. [s]
    start_idle_s, end_idle_s : float
        Engine-on standing time before setting off and after arriving, when the route plans none. [s]
    """

    grid_step_m: float = 2.0
    speed_factor_sigma: float = 0.04
    wobble: float = 0.05
    wobble_length_m: float = 400.0
    aggression_range: tuple[float, float] = (0.75, 1.0)
    climb_accel_floor: float = 0.3
    light_red_share: float = 0.45
    light_red_max_s: float = 55.0
    give_way_stop_share: float = 0.35
    give_way_max_s: float = 8.0
    give_way_speed_m_s: float = 3.0
    roundabout_speed_m_s: float = 6.5
    roundabout_stop_share: float = 0.2
    bus_stop_skip_share: float = 0.12
    dwell_sigma: float = 0.35
    logger_sleep_after_s: float = 300.0
    start_idle_s: float = 90.0
    end_idle_s: float = 45.0

    def __post_init__(self) -> None:
        if not 0.1 <= self.grid_step_m <= 20:
            raise ConfigError(f"synth.grid_step_m must be in [0.1, 20] m, got {self.grid_step_m}")


SPEED_TABLE_POINTS: Final = 6001
"""Points of the speed table of ``tau(v)``: 0 to :data:`SPEED_TABLE_SPAN` x top speed."""
SPEED_TABLE_SPAN: Final = 1.2
MIN_TABLE_ACCEL_M_S2: Final = 1e-3
"""Floor of the acceleration in ``tau(v)`` (keeps the table finite above the top speed). [m/s^2]"""
CLIMB_TABLE_MAX_GRADE: Final = 0.25
CLIMB_TABLE_POINTS: Final = 501
WOBBLE_CLIP_SIGMA: Final = 2.0
"""The free-flow speed wobble is clipped at this many standard deviations."""


@lru_cache(maxsize=32)
def _tau_table(vehicle: VehicleClass) -> tuple[FloatArray, FloatArray]:
    """``v -> tau(v) = int_0^v u / a(u) du`` on a fine speed grid. [m/s], [m]"""
    v = np.linspace(0.0, vehicle.max_speed_m_s * SPEED_TABLE_SPAN, SPEED_TABLE_POINTS)
    a = np.maximum(vehicle.accel_power(v), MIN_TABLE_ACCEL_M_S2)
    integrand = v / a
    tau = np.r_[0.0, np.cumsum((integrand[1:] + integrand[:-1]) / 2 * np.diff(v))]
    return v, tau


@lru_cache(maxsize=32)
def _climb_table(vehicle: VehicleClass) -> tuple[FloatArray, FloatArray]:
    grade = np.linspace(0.0, CLIMB_TABLE_MAX_GRADE, CLIMB_TABLE_POINTS)
    return grade, vehicle.climb_speed_m_s(grade)


def _smooth_noise(n: int, step_m: float, length_m: float, rng: np.random.Generator) -> FloatArray:
    coarse = rng.standard_normal(int(n * step_m / length_m) + 2)
    return np.interp(np.arange(n) * step_m / length_m, np.arange(len(coarse)), coarse)


def _feature_outcomes(route: Route, cfg: DriveConfig, rng: np.random.Generator) -> tuple[FloatArray, ...]:
    """Stops (at, dwell, kind, engine_off) and slow points (at, cap) from features and plans."""
    kind = route.feature_kind
    u = rng.uniform(size=len(kind))
    wait = rng.uniform(size=len(kind))
    red = (kind == rt.LIGHT) & (u < cfg.light_red_share)
    gw_stop = (kind == rt.GIVE_WAY) & (u < cfg.give_way_stop_share)
    rb_stop = (kind == rt.ROUNDABOUT) & (u < cfg.roundabout_stop_share)
    feature_stop = red | gw_stop | rb_stop
    dwell = np.where(red, wait * cfg.light_red_max_s, wait * cfg.give_way_max_s)
    slow = ~feature_stop & np.isin(kind, (rt.GIVE_WAY, rt.ROUNDABOUT))
    slow_cap = np.where(kind == rt.GIVE_WAY, cfg.give_way_speed_m_s, cfg.roundabout_speed_m_s)

    planned_dwell = route.stop_dwell_s * rng.lognormal(0.0, cfg.dwell_sigma, len(route.stop_dwell_s))
    served = ~((route.stop_kind == rt.BUS_STOP) & (rng.uniform(size=len(route.stop_kind)) < cfg.bus_stop_skip_share))
    at = np.r_[route.feature_at_m[feature_stop], route.stop_at_m[served]]
    dwell_all = np.r_[dwell[feature_stop], planned_dwell[served]]
    kind_all = np.r_[kind[feature_stop], route.stop_kind[served]]
    off_all = np.r_[np.zeros(feature_stop.sum(), dtype=bool), route.stop_engine_off[served]]
    return at, dwell_all, kind_all.astype(np.int64), off_all, route.feature_at_m[slow], slow_cap[slow]


def _merge_stops(
    idx: npt.NDArray[np.int64], dwell: FloatArray, kind: npt.NDArray[np.int64], off: npt.NDArray[np.bool_]
) -> tuple[npt.NDArray[np.int64], FloatArray, npt.NDArray[np.int64], npt.NDArray[np.bool_]]:
    """One stop per grid cluster (stops one grid step apart merge: dwell summed, plan kind kept)."""
    order = np.argsort(idx, kind="stable")
    idx, dwell, kind, off = idx[order], dwell[order], kind[order], off[order]
    cluster = np.r_[0, np.cumsum(np.diff(idx) > 1)]
    starts = np.r_[0, np.flatnonzero(np.diff(cluster)) + 1]
    return (
        idx[starts],
        np.add.reduceat(dwell, starts),
        np.maximum.reduceat(kind, starts),
        np.logical_or.reduceat(off, starts),
    )


def speed_profile(
    route: Route, vehicle: VehicleClass, cfg: DriveConfig, rng: np.random.Generator
) -> tuple[FloatArray, FloatArray, pd.DataFrame]:
    """Speed on the distance grid and the realised stops.

    Returns
    -------
    s_m : ndarray
        Grid distances, uniform, from 0 to the route length. [m]
    v_m_s : ndarray
        Speed at the grid points (zero at each stop and at both ends). [m/s]
    stops : DataFrame
        ``grid_index``, ``at_m``, ``kind``, ``dwell_s``, ``engine_off`` of the realised stops,
        including the start and the end.
    """
    n = max(3, int(np.ceil(route.length_m / cfg.grid_step_m)) + 1)
    s = np.linspace(0.0, route.length_m, n)
    ds = s[1] - s[0]
    aggression = rng.uniform(*cfg.aggression_range)
    factor = 1 + cfg.speed_factor_sigma * rng.standard_normal()
    wobble = 1 + cfg.wobble * np.clip(_smooth_noise(n, ds, cfg.wobble_length_m, rng), -WOBBLE_CLIP_SIGMA, WOBBLE_CLIP_SIGMA)
    cap = route.limit_at(s) * factor * wobble
    curvature = np.interp(s, route.line.s_m, route.line.curvature_1_m)
    cap = np.minimum(cap, np.sqrt(vehicle.lateral_accel_m_s2 / np.maximum(curvature, 1e-9)))
    grade = route.elevation.grade(s)
    g_tab, v_tab = _climb_table(vehicle)
    climb = np.interp(np.maximum(grade, 0.0), g_tab, v_tab)
    alpha = min(1.0, ds / vehicle.climb_relax_m)
    climb = lfilter([alpha], [1.0, alpha - 1.0], climb, zi=[climb[0] * (1 - alpha)])[0]
    cap = np.minimum(np.minimum(cap, climb), vehicle.max_speed_m_s)

    at, dwell, kind, off, slow_at, slow_cap = _feature_outcomes(route, cfg, rng)
    slow_idx = np.clip(np.rint(slow_at / ds).astype(np.int64), 0, n - 1)
    np.minimum.at(cap, slow_idx, slow_cap)
    first = (route.stop_at_m <= ds).any()
    last = (route.stop_at_m >= route.length_m - ds).any()
    idx = np.r_[np.clip(np.rint(at / ds).astype(np.int64), 0, n - 1), 0, n - 1]
    dwell = np.r_[dwell, 0.0 if first else cfg.start_idle_s, 0.0 if last else cfg.end_idle_s]
    kind = np.r_[kind, rt.DEPOT, rt.DEPOT]
    off = np.r_[off, False, False]
    idx, dwell, kind, off = _merge_stops(idx, dwell, kind, off)
    cap[idx] = 0.0

    decel = vehicle.max_decel_m_s2 * aggression
    w = np.minimum.accumulate((cap**2 + 2 * decel * s)[::-1])[::-1]
    v_back = np.sqrt(np.maximum(w - 2 * decel * s, 0.0))
    v_tab, tau_tab = _tau_table(vehicle)
    keep = np.maximum(cfg.climb_accel_floor, 1 - STANDARD_GRAVITY_M_S2 * np.maximum(grade, 0.0) / vehicle.max_accel_m_s2)
    warped = np.r_[0.0, np.cumsum(keep[:-1] * ds)] * aggression
    tau_cap = np.interp(v_back, v_tab, tau_tab)
    tau = warped + np.minimum.accumulate(tau_cap - warped)
    v = np.minimum(np.interp(tau, tau_tab, v_tab), v_back)
    v[idx] = 0.0
    stops = pd.DataFrame({"grid_index": idx, "at_m": s[idx], "kind": kind, "dwell_s": dwell, "engine_off": off})
    return s, v, stops
