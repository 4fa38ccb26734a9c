r"""Engine fuel rate over speed and torque: a fuel-map grid or an analytic Willans line.

API (for the combustion model; everything vectorised, any array shape, e.g. (steps, gears))
-------------------------------------------------------------------------------------------
``fuel_model(engine) -> FuelGrid | WillansLine`` (cached per Engine)
    ``model.fuel_rate_g_s(engine_speed_rpm, torque_nm) -> ndarray`` [g/s], broadcasting its two
    arguments. Torque at or below zero returns the zero-torque (motoring / idle) fuel rate and
    speeds are held to the model's range: the caller applies fuel cut on overrun, the full-load
    limit and the rpm limits.
``max_torque_nm(engine, engine_speed_rpm) -> ndarray``
    Full-load torque [N m], linear between the curve's points, the first point's value below
    it, zero above the last point (the curve ends at the governor's cut-off).
``motoring_torque_nm(engine, engine_speed_rpm) -> ndarray``
    Drag torque of the unfired engine, negative [N m]: the Willans line's friction where the
    engine has one, else ``-engine.motoring_torque_share * peak torque``.
``load_fuel_map(path) -> FuelGrid``
    Read a CSV with columns ``engine_speed_rpm, torque_nm, fuel_rate_g_s`` (``#`` comment lines
    allowed) holding a full rectangular grid; a non-uniform grid is resampled onto a uniform
    one so that lookups are index arithmetic, not searches.

The grid lookup is bilinear interpolation on a uniform grid: cell indices by
``floor((x - x0) / dx)``, four gathers and three multiply-adds per point, in one compiled pass
(numba; see :func:`_bilinear_kernel`). The Willans line is evaluated analytically, also compiled.

References
----------
Guzzella, L. and Onder, C. H., Introduction to Modeling and Control of Internal Combustion
Engine Systems, 2nd ed., Springer (2010), Sec. 2.3 (Willans approximation, mean effective
pressures, mean piston speed).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Final

import numpy as np
import numpy.typing as npt
from numba import njit

from fleetfuel.errors import SpecError
from fleetfuel.simulate.spec_parts import Engine, Willans
from fleetfuel.units import BAR_PA

FUEL_MAP_COLUMNS: Final = ("engine_speed_rpm", "torque_nm", "fuel_rate_g_s")
LITRE_M3: Final = 1.0e-3
G_KG: Final = 1000.0
FOUR_STROKE_REVS_PER_CYCLE: Final = 2  # Heywood (1988), Sec. 2.2: two crank revolutions per cycle
SECONDS_PER_MINUTE: Final = 60.0
MAX_RESAMPLED_POINTS: Final = 256  # cap per axis when a non-uniform map is put on a uniform grid
UNIFORM_RTOL: Final = 1e-6  # axis spacing tolerance for "already uniform"

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class FuelGrid:
    """Fuel rate on a uniform (engine speed x torque) grid.

    Attributes
    ----------
    speed_rpm : ndarray, shape (n,)
        Uniform engine-speed axis. [rpm]
    torque_nm : ndarray, shape (m,)
        Uniform torque axis. [N m]
    fuel_g_s : ndarray, shape (n, m)
        Fuel mass rate. [g/s]
    source : str
        File or generator the grid came from.
    """

    speed_rpm: FloatArray
    torque_nm: FloatArray
    fuel_g_s: FloatArray
    source: str = ""

    def fuel_rate_g_s(self, engine_speed_rpm: npt.ArrayLike, torque_nm: npt.ArrayLike) -> FloatArray:
        """Bilinear fuel rate [g/s] at engine speed [rpm] and torque [N m] (held to the grid)."""
        speed, torque, shape = _flat_pair(engine_speed_rpm, torque_nm)
        n, m = self.fuel_g_s.shape
        out = _bilinear_kernel(
            speed, torque, float(self.speed_rpm[0]), (n - 1) / float(self.speed_rpm[-1] - self.speed_rpm[0]),
            float(self.torque_nm[0]), (m - 1) / float(self.torque_nm[-1] - self.torque_nm[0]),
            np.ascontiguousarray(self.fuel_g_s),
        )
        return out.reshape(shape)


def _flat_pair(a: npt.ArrayLike, b: npt.ArrayLike) -> tuple[FloatArray, FloatArray, tuple[int, ...]]:
    """Both arguments broadcast, flattened C-contiguous float64 (no copy when already so), and their shape."""
    x = np.asarray(a, dtype=np.float64)
    y = np.asarray(b, dtype=np.float64)
    if x.shape != y.shape:
        x, y = np.broadcast_arrays(x, y)
    return np.ascontiguousarray(x).ravel(), np.ascontiguousarray(y).ravel(), x.shape


@njit(cache=True)
def _bilinear_kernel(speed: FloatArray, torque: FloatArray, s0: float, s_scale: float, t0: float,
                     t_scale: float, grid: FloatArray) -> FloatArray:  # pragma: no cover - compiled
    """Bilinear lookup on a uniform grid, inputs held to its edges; one pass, no temporaries.

    Compiled with numba: the numpy formulation needs a dozen full-size temporaries and their
    page faults, which made it slower than scipy's compiled interpolator on (steps x gears) arrays.
    """
    n, m = grid.shape
    out = np.empty(speed.size)
    for k in range(speed.size):
        if np.isnan(speed[k]) or np.isnan(torque[k]):
            out[k] = np.nan
            continue
        x = min(max((speed[k] - s0) * s_scale, 0.0), n - 1.0)
        y = min(max((torque[k] - t0) * t_scale, 0.0), m - 1.0)
        i = min(int(x), n - 2)
        j = min(int(y), m - 2)
        fx = x - i
        fy = y - j
        low = grid[i, j] + fy * (grid[i, j + 1] - grid[i, j])
        high = grid[i + 1, j] + fy * (grid[i + 1, j + 1] - grid[i + 1, j])
        out[k] = low + fx * (high - low)
    return out


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class WillansLine:
    r"""Analytic extended Willans line of an engine (Guzzella & Onder 2010, Sec. 2.3).

    Fuel mean effective pressure from brake mean effective pressure :math:`p_{me}`:
    :math:`e_1 p_{m\varphi}^2 - e_0 p_{m\varphi} + (p_{me} + p_{me0}) = 0`, fuel rate
    :math:`\dot m_f = p_{m\varphi} V_d n / (2 \cdot 60\, H_l)`.
    """

    params: Willans
    lower_heating_value_j_kg: float

    def mean_piston_speed_m_s(self, engine_speed_rpm: npt.ArrayLike) -> FloatArray:
        """Mean piston speed :math:`c_m = 2 S n / 60`. [m/s]"""
        return 2 * self.params.stroke_m * np.asarray(engine_speed_rpm, dtype=np.float64) / SECONDS_PER_MINUTE

    def friction_mep_pa(self, engine_speed_rpm: npt.ArrayLike) -> FloatArray:
        """Friction (and pumping) mean effective pressure :math:`f_0 + f_2 c_m^2`. [Pa]"""
        cm = self.mean_piston_speed_m_s(engine_speed_rpm)
        f0, f2 = self.params.friction_mep_bar
        return (f0 + f2 * cm**2) * BAR_PA

    def friction_torque_nm(self, engine_speed_rpm: npt.ArrayLike) -> FloatArray:
        """Friction torque :math:`p_{me0} V_d / (4 \\pi)` (four-stroke). [N m]"""
        vd = self.params.displacement_l * LITRE_M3
        return self.friction_mep_pa(engine_speed_rpm) * vd / (2 * FOUR_STROKE_REVS_PER_CYCLE * math.pi)

    def fuel_rate_g_s(self, engine_speed_rpm: npt.ArrayLike, torque_nm: npt.ArrayLike) -> FloatArray:
        """Fuel rate [g/s] at engine speed [rpm] and brake torque [N m] (torque below 0 taken as 0)."""
        p = self.params
        speed, torque, shape = _flat_pair(engine_speed_rpm, torque_nm)
        e00, e01, e02 = p.efficiency
        f0, f2 = p.friction_mep_bar
        out = _willans_kernel(
            speed, torque, p.displacement_l * LITRE_M3, p.stroke_m, e00, e01, e02,
            p.efficiency_load_slope_per_bar / BAR_PA, f0 * BAR_PA, f2 * BAR_PA, self.lower_heating_value_j_kg,
        )
        return out.reshape(shape)


@njit(cache=True)
def _willans_kernel(speed: FloatArray, torque: FloatArray, vd: float, stroke: float, e00: float, e01: float,
                    e02: float, e1: float, f0: float, f2: float, lhv: float) -> FloatArray:  # pragma: no cover
    """The extended Willans line solved for fuel mep, point by point (compiled, one pass). [g/s]"""
    out = np.empty(speed.size)
    revs = FOUR_STROKE_REVS_PER_CYCLE
    for k in range(speed.size):
        n = speed[k]
        cm = 2 * stroke * n / SECONDS_PER_MINUTE
        pme = max(torque[k], 0.0) * (2 * revs * np.pi / vd)
        e0 = e00 + e01 * cm + e02 * cm * cm
        demand = pme + f0 + f2 * cm * cm
        if e1 > 0:
            disc = max(e0 * e0 - 4 * e1 * demand, 0.0)
            pmf = 2 * demand / (e0 + np.sqrt(disc))  # stable root of e1 x^2 - e0 x + demand = 0
        else:
            pmf = demand / e0
        out[k] = pmf * vd * n / (revs * SECONDS_PER_MINUTE) / lhv * G_KG
    return out


FuelModel = FuelGrid | WillansLine


@lru_cache(maxsize=64)
def fuel_model(engine: Engine) -> FuelModel:
    """The fuel model of ``engine``: its map (read once, cached) or its Willans line."""
    if engine.willans is not None:
        return WillansLine(params=engine.willans, lower_heating_value_j_kg=engine.fuel_properties.lower_heating_value_j_kg)
    assert engine.fuel_map_path is not None  # Engine validates exactly one of the two
    return load_fuel_map(engine.fuel_map_path)


def max_torque_nm(engine: Engine, engine_speed_rpm: npt.ArrayLike) -> FloatArray:
    """Full-load torque at engine speed [rpm]; zero beyond the curve's last point. [N m]"""
    rpm, nm = engine.full_load_arrays()
    return np.interp(np.asarray(engine_speed_rpm, dtype=np.float64), rpm, nm, left=nm[0], right=0.0)


def motoring_torque_nm(engine: Engine, engine_speed_rpm: npt.ArrayLike) -> FloatArray:
    """Drag torque of the unfired engine (negative). [N m]"""
    speed = np.asarray(engine_speed_rpm, dtype=np.float64)
    if engine.willans is not None:
        return -fuel_model_willans(engine).friction_torque_nm(speed)
    return np.full_like(speed, -engine.motoring_torque_share * engine.peak_torque_nm)


def fuel_model_willans(engine: Engine) -> WillansLine:
    """The Willans line of ``engine`` (which must have one)."""
    model = fuel_model(engine)
    if not isinstance(model, WillansLine):
        raise SpecError(f"[engine] {engine.fuel_map_path}: engine has a fuel map, not a Willans line")
    return model


def _read_rows(path: Path) -> FloatArray:
    try:
        with path.open(newline="", encoding="utf-8") as handle:
            lines = [ln for ln in handle if ln.strip() and not ln.lstrip().startswith("#")]
    except OSError as exc:
        raise SpecError(f"{path}: cannot read fuel map ({exc.strerror})") from None
    rows = list(csv.reader(lines))
    if not rows or tuple(c.strip() for c in rows[0]) != FUEL_MAP_COLUMNS:
        found = rows[0] if rows else []
        raise SpecError(f"{path}: fuel map header must be {','.join(FUEL_MAP_COLUMNS)}, found {','.join(found)}")
    values = np.empty((len(rows) - 1, len(FUEL_MAP_COLUMNS)))
    for number, row in enumerate(rows[1:], start=1):
        try:
            if len(row) != len(FUEL_MAP_COLUMNS):
                raise ValueError
            values[number - 1] = [float(c) for c in row]
        except ValueError:
            raise SpecError(f"{path}: data row {number}: expected 3 numbers, found {row}") from None
    if not np.isfinite(values).all() or (values[:, 2] < 0).any():
        raise SpecError(f"{path}: fuel map values must be finite and fuel_rate_g_s >= 0")
    return values


def load_fuel_map(path: str | Path) -> FuelGrid:
    """Read a fuel-map CSV (full rectangular grid, any row order) onto a uniform grid.

    Raises
    ------
    SpecError
        Unreadable file, wrong header, non-numeric cell, missing grid points, duplicates.
    """
    path = Path(path)
    values = _read_rows(path)
    speeds = np.unique(values[:, 0])
    torques = np.unique(values[:, 1])
    if speeds.size < 2 or torques.size < 2 or values.shape[0] != speeds.size * torques.size:
        raise SpecError(
            f"{path}: fuel map must be a full grid: {speeds.size} speeds x {torques.size} torques "
            f"needs {speeds.size * torques.size} rows, found {values.shape[0]}"
        )
    grid = np.full((speeds.size, torques.size), np.nan)
    grid[np.searchsorted(speeds, values[:, 0]), np.searchsorted(torques, values[:, 1])] = values[:, 2]
    if np.isnan(grid).any():
        raise SpecError(f"{path}: fuel map has duplicate rows and missing grid points")
    speed_axis, torque_axis = _uniform(speeds), _uniform(torques)
    if speed_axis is not speeds or torque_axis is not torques:
        from scipy.interpolate import RegularGridInterpolator

        mesh = np.meshgrid(speed_axis, torque_axis, indexing="ij")
        grid = RegularGridInterpolator((speeds, torques), grid)((mesh[0], mesh[1]))
    return FuelGrid(speed_rpm=speed_axis, torque_nm=torque_axis, fuel_g_s=grid, source=str(path))


def _uniform(axis: FloatArray) -> FloatArray:
    """``axis`` itself when evenly spaced, else a uniform axis at its finest spacing (capped)."""
    steps = np.diff(axis)
    if np.allclose(steps, steps[0], rtol=UNIFORM_RTOL):
        return axis
    count = min(int(math.ceil((axis[-1] - axis[0]) / steps.min())) + 1, MAX_RESAMPLED_POINTS)
    return np.linspace(axis[0], axis[-1], count)
