r"""Road load of a vehicle following a speed trace (quasi-static, backward model).

The tractive force at the wheels is the sum of four terms (Wong 2008, Ch. 3; Guzzella &
Sciarretta 2013, Ch. 2):

.. math::

    F = \underbrace{c_r m g \cos\theta}_{\text{rolling}}
      + \underbrace{\tfrac12 \rho c_d A v^2}_{\text{aerodynamic}}
      + \underbrace{m g \sin\theta}_{\text{grade}}
      + \underbrace{m_{eq} a}_{\text{inertia}},
    \qquad \tan\theta = \text{grade (rise over run)}.

Still air is assumed (no wind). Rolling resistance acts only while the vehicle moves.
A negative force is a braking demand, met by regeneration, engine drag or friction brakes
(see :mod:`fleetfuel.simulate.combustion` and :mod:`fleetfuel.simulate.electric`).

Kinematics (:func:`trace_kinematics`): the acceleration at sample ``i`` is the central difference
over its two neighbours, :math:`a_i = (v_{i+1} - v_{i-1}) / (t_{i+1} - t_{i-1})` (one-sided at
the two ends), on a uniform or non-uniform time base. Each sample stands for the time
:math:`w_i = (t_{i+1} - t_{i-1}) / 2` (half an interval at each end; trapezoidal rule), so
energies are :math:`\sum_i P_i w_i`. With these two choices the translational kinetic work
:math:`\sum_i m v_i a_i w_i` telescopes to exactly :math:`\tfrac12 m (v_N^2 - v_0^2)` on any time
base, so a closed loop has zero net kinetic work by construction (a second-order non-uniform
stencil would not). On a uniform base the stencil is second-order accurate.

References
----------
Wong, J. Y., Theory of Ground Vehicles, 4th ed., Wiley (2008), Ch. 3.
Guzzella, L., Sciarretta, A., Vehicle Propulsion Systems, 3rd ed., Springer (2013), Ch. 2.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from fleetfuel.constants import STANDARD_GRAVITY_M_S2
from fleetfuel.errors import InputDataError

FloatArray = npt.NDArray[np.float64]


def trace_kinematics(time_s: npt.ArrayLike, speed_m_s: npt.ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Acceleration by central differences and the time each sample stands for.

    Parameters
    ----------
    time_s : array_like, shape (n,)
        Sample times, strictly increasing, uniform or not. [s]
    speed_m_s : array_like, shape (n,)
        Speed at those times. [m/s]

    Returns
    -------
    accel_m_s2 : ndarray, shape (n,)
        :math:`(v_{i+1} - v_{i-1}) / (t_{i+1} - t_{i-1})`, one-sided at the ends. [m/s^2]
    weight_s : ndarray, shape (n,)
        Trapezoidal weights :math:`(t_{i+1} - t_{i-1}) / 2`; they sum to the duration. [s]

    Raises
    ------
    InputDataError
        Fewer than two samples, or times not strictly increasing.
    """
    t = np.asarray(time_s, dtype=np.float64)
    v = np.asarray(speed_m_s, dtype=np.float64)
    if t.ndim != 1 or t.shape != v.shape or t.size < 2:
        raise InputDataError(f"time_s and speed_m_s: expected two 1-D arrays of equal length >= 2, found shapes {t.shape} and {v.shape}")
    step = np.diff(t)
    if not np.all(step > 0):
        row = int(np.argmax(~(step > 0))) + 1
        raise InputDataError(f"time_s: expected strictly increasing times, found {float(t[row])!r} after {float(t[row - 1])!r} at row {row}")
    accel = np.empty_like(v)
    weight = np.empty_like(t)
    accel[1:-1] = (v[2:] - v[:-2]) / (t[2:] - t[:-2])
    accel[0] = (v[1] - v[0]) / step[0]
    accel[-1] = (v[-1] - v[-2]) / step[-1]
    weight[1:-1] = (t[2:] - t[:-2]) / 2
    weight[0] = step[0] / 2
    weight[-1] = step[-1] / 2
    return accel, weight


def rolling_resistance_n(mass_kg: float, rolling_coefficient: float, grade: npt.ArrayLike,
                         speed_m_s: npt.ArrayLike) -> FloatArray:
    r"""Rolling resistance :math:`c_r m g \cos\theta` while moving, zero at standstill.

    Parameters
    ----------
    mass_kg : float
        Vehicle mass carried by the tyres. [kg]
    rolling_coefficient : float
        Rolling-resistance coefficient. [N/N]
    grade : array_like
        Road grade, rise over run. [1]
    speed_m_s : array_like
        Speed; the force is zero where it is zero. [m/s]

    Returns
    -------
    ndarray
        Force opposing motion. [N]
    """
    g = np.asarray(grade, dtype=np.float64)
    cos_theta = 1 / np.sqrt(1 + g * g)
    moving = np.asarray(speed_m_s, dtype=np.float64) > 0
    return np.where(moving, rolling_coefficient * mass_kg * STANDARD_GRAVITY_M_S2 * cos_theta, 0.0)


def aero_drag_n(speed_m_s: npt.ArrayLike, drag_area_m2: float, air_density_kg_m3: npt.ArrayLike) -> FloatArray:
    r"""Aerodynamic drag :math:`\tfrac12 \rho c_d A v^2` in still air.

    Parameters
    ----------
    speed_m_s : array_like
        Speed relative to still air. [m/s]
    drag_area_m2 : float
        Drag coefficient times frontal area. [m^2]
    air_density_kg_m3 : array_like
        Air density (:func:`fleetfuel.simulate.atmosphere.air_density_kg_m3`). [kg/m^3]

    Returns
    -------
    ndarray
        Drag force. [N]
    """
    v = np.asarray(speed_m_s, dtype=np.float64)
    return np.asarray(air_density_kg_m3, dtype=np.float64) * drag_area_m2 * v * v / 2


def grade_force_n(mass_kg: float, grade: npt.ArrayLike) -> FloatArray:
    r"""Grade resistance :math:`m g \sin\theta` with :math:`\tan\theta` = grade (negative downhill).

    Parameters
    ----------
    mass_kg : float
        Vehicle mass. [kg]
    grade : array_like
        Road grade, rise over run. [1]

    Returns
    -------
    ndarray
        Force along the road, positive uphill. [N]
    """
    g = np.asarray(grade, dtype=np.float64)
    return mass_kg * STANDARD_GRAVITY_M_S2 * g / np.sqrt(1 + g * g)


def traction_limit_n(mass_kg: float, grade: npt.ArrayLike, driven_axle_load_share: float,
                     adhesion_coefficient: float) -> FloatArray:
    r"""Largest force the driven wheels can pass: :math:`\mu\, s\, m g \cos\theta`.

    Static axle load share; the load transfer under acceleration and on grades is neglected.

    Parameters
    ----------
    mass_kg : float
        Vehicle mass. [kg]
    grade : array_like
        Road grade, rise over run. [1]
    driven_axle_load_share : float
        Share of the weight on the driven axle(s). [1]
    adhesion_coefficient : float
        Peak tyre-road adhesion coefficient (``fleetfuel.constants.ADHESION_*``). [1]

    Returns
    -------
    ndarray
        Adhesion limit of the tractive (and of the regenerative braking) force. [N]
    """
    g = np.asarray(grade, dtype=np.float64)
    limit_n = adhesion_coefficient * driven_axle_load_share * mass_kg * STANDARD_GRAVITY_M_S2
    cos = _cos_theta(g)
    return np.full(g.shape, limit_n) if cos is None else cos * limit_n


@dataclass(frozen=True, slots=True, kw_only=True)
class RoadLoad:
    """The road-load terms per sample, all [N] along the road (positive: resisting motion).

    Attributes
    ----------
    rolling_n, aero_n, grade_n : ndarray, shape (n,)
        Rolling, aerodynamic and grade forces. [N]
    inertia_n : ndarray, shape (n,)
        Inertia of the vehicle's mass plus the wheels' and driveline's rotating-mass allowance,
        :math:`(m + m_{rot}) a`; the prime mover's reflected inertia depends on the gear and is
        added by the powertrain. [N]
    total_n : ndarray, shape (n,)
        Sum of the four: tractive force demanded at the wheels. [N]
    """

    rolling_n: FloatArray
    aero_n: FloatArray
    grade_n: FloatArray
    inertia_n: FloatArray
    total_n: FloatArray


def _cos_theta(grade: FloatArray) -> FloatArray | None:
    r""":math:`\cos\theta = 1 / \sqrt{1 + \text{grade}^2}`; None on a flat trace (all ones)."""
    if not grade.any():
        return None
    cos = grade * grade
    cos += 1
    np.sqrt(cos, out=cos)
    np.reciprocal(cos, out=cos)
    return cos


def road_load(speed_m_s: npt.ArrayLike, accel_m_s2: npt.ArrayLike, grade: npt.ArrayLike, *,
              mass_kg: float, rotating_mass_kg: float, rolling_coefficient: float,
              drag_area_m2: float, air_density_kg_m3: npt.ArrayLike) -> RoadLoad:
    """All road-load terms of a trace (the same equations as the single-term functions above,
    written with few full-length temporaries).

    Parameters
    ----------
    speed_m_s, accel_m_s2, grade : array_like, shape (n,)
        Speed [m/s], acceleration [m/s^2] (:func:`trace_kinematics`) and grade [1].
    mass_kg : float
        Vehicle mass (curb plus payload). [kg]
    rotating_mass_kg : float
        Equivalent mass of wheels and driveline (rotating-mass allowance). [kg]
    rolling_coefficient : float
        Rolling-resistance coefficient. [N/N]
    drag_area_m2 : float
        Drag coefficient times frontal area. [m^2]
    air_density_kg_m3 : array_like
        Air density, scalar or per sample. [kg/m^3]

    Returns
    -------
    RoadLoad
    """
    v = np.asarray(speed_m_s, dtype=np.float64)
    a = np.asarray(accel_m_s2, dtype=np.float64)
    g = np.broadcast_to(np.asarray(grade, dtype=np.float64), v.shape)
    weight_n = mass_kg * STANDARD_GRAVITY_M_S2
    cos = _cos_theta(g)
    rolling = np.full(v.shape, rolling_coefficient * weight_n) if cos is None else cos * (rolling_coefficient * weight_n)
    rolling[v <= 0] = 0.0
    grade_n = np.zeros(v.shape) if cos is None else g * cos * weight_n
    aero = v * v
    aero *= np.asarray(air_density_kg_m3, dtype=np.float64) * (drag_area_m2 / 2)
    inertia = a * (mass_kg + rotating_mass_kg)
    total = rolling + aero
    total += grade_n
    total += inertia
    return RoadLoad(rolling_n=rolling, aero_n=aero, grade_n=grade_n, inertia_n=inertia, total_n=total)
