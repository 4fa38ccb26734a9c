r"""The truth fuel model of the synthetic fleet: where the logged fuel counters come from.

This model is deliberately *not* fleetfuel's own vehicle model (``fleetfuel.simulate``, which it
never imports): it has its own formulation and its own parameters, so that a calibration of
fleetfuel's model against the synthetic logs has something real to recover and cannot succeed
by construction.

Formulation (per drive step of duration :math:`\Delta t`, mean speed :math:`v`, acceleration
:math:`a`, grade :math:`g_r`, running mass :math:`m`):

.. math::

    P_w &= v\,[\,m(1+\delta)a + m g (c_0 + c_1 v)\cos\theta + m g \sin\theta\,]
           + \tfrac12 \rho\, C_dA\, v^3, \qquad \theta = \arctan g_r \\
    P_e &= \max(P_w, 0)/\eta + P_{aux} \\
    \dot m_f &= r_{idle} + b_1 P_e + b_2 P_e^2 / P_{rated}
               \quad\text{(engine on; 0 when off or in overrun fuel cut-off)} \\
    \dot V_f &= \dot m_f \,[1 + k_{cold}\, e^{-t_{on}/\tau_{cold}}]\; F_{day}\; e^{\sigma \xi(t) - \sigma^2/2} / \rho_f

with :math:`P_e` in kW, :math:`\dot m_f` in g/s, overrun cut-off when :math:`P_w < 0` above
:attr:`TruthFuelModel.cutoff_speed_m_s`, :math:`t_{on}` the time since the day's first engine
start, :math:`F_{day}` a per-drive factor (load, weather, driver) and :math:`\xi` a unit-variance
first-order autoregressive noise in time (correlation time :attr:`TruthFuelModel.noise_corr_s`).
:math:`\rho` is the ISA sea-level air density; :math:`\rho_f` the fuel density of
:mod:`fleetfuel.constants`.

Parameters (:data:`TRUTH_MODELS`) are typical magnitudes, chosen so that the classes land in
the consumption ranges fleets report (from memory, common practice, no source): a 40 t
articulated truck on a motorway 30-35 L/100 km; an 18 t rigid on regional work 24-30; a 7.5 t
rigid 16-20; a 3.5 t parcel van on urban rounds 10-14; a 12 m diesel city bus 40-50; a compact
petrol car 6-8; idling (engine warm, accessories on) about 0.8 L/h for a van or car, 1.5-2.5 L/h
for rigid trucks, about 3 L/h for a 40 t tractor or a city bus. Marginal specific consumption of diesel engines near 200-215 g/kWh and of petrol
engines near 250 g/kWh (Heywood, Internal Combustion Engine Fundamentals, 1988, ch. 15; from
memory).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
from scipy.signal import lfilter

from fleetfuel.constants import DIESEL, FUELS, ISA_SEA_LEVEL_DENSITY_KG_M3, STANDARD_GRAVITY_M_S2

FloatArray = npt.NDArray[np.float64]

_W_PER_KW: Final = 1000.0
_G_PER_KG: Final = 1000.0


@dataclass(frozen=True, slots=True, kw_only=True)
class TruthFuelModel:
    """Parameters of the truth fuel model for one vehicle class (see the module docstring).

    Attributes
    ----------
    kerb_mass_kg : float
        Running mass with an empty load space (driver, fuel included). [kg]
    payload_max_kg : float
        Largest payload; a drive starts with a random share of it. [kg]
    rotating_mass_share : float
        :math:`\\delta`, equivalent rotating mass over mass. [1]
    rolling_c0 : float
        :math:`c_0`, rolling coefficient at rest. [1]
    rolling_c1_s_m : float
        :math:`c_1`, growth of the rolling coefficient with speed. [s/m]
    drag_area_m2 : float
        :math:`C_dA`. [m^2]
    driveline_efficiency : float
        :math:`\\eta`, wheel power over engine power. [1]
    aux_power_kw : float
        :math:`P_{aux}`, accessories (fan, compressor, alternator, air conditioning). [kW]
    rated_power_kw : float
        :math:`P_{rated}`. [kW]
    idle_g_s : float
        :math:`r_{idle}`, fuel of the unloaded engine at idle speed. [g/s]
    marginal_g_kj : float
        :math:`b_1`, marginal fuel per engine work. [g/kJ]
    load_curvature_g_kj : float
        :math:`b_2`, rise of specific fuel at high load. [g/kJ]
    cutoff_speed_m_s : float
        Above this speed, negative wheel power cuts fuel off. [m/s]
    cold_extra : float
        :math:`k_{cold}`, extra share of fuel right after a cold start. [1]
    cold_decay_s : float
        :math:`\\tau_{cold}`, warm-up time constant. [s]
    day_sigma : float
        Standard deviation of the per-drive factor :math:`F_{day}`. [1]
    noise_sigma : float
        :math:`\\sigma` of the multiplicative noise. [1]
    noise_corr_s : float
        Correlation time of the noise. [s]
    fuel : str
        Key into :data:`fleetfuel.constants.FUELS` (density).
    """

    kerb_mass_kg: float
    payload_max_kg: float
    rotating_mass_share: float
    rolling_c0: float
    rolling_c1_s_m: float
    drag_area_m2: float
    driveline_efficiency: float
    aux_power_kw: float
    rated_power_kw: float
    idle_g_s: float
    marginal_g_kj: float
    load_curvature_g_kj: float
    cutoff_speed_m_s: float
    cold_extra: float
    cold_decay_s: float
    day_sigma: float = 0.03
    noise_sigma: float = 0.05
    noise_corr_s: float = 20.0
    fuel: str = DIESEL.name

    @property
    def fuel_density_kg_l(self) -> float:
        """Density of the fuel. [kg/L]"""
        return FUELS[self.fuel].density_kg_l

    def wheel_power_kw(
        self, speed_m_s: FloatArray, accel_m_s2: FloatArray, grade: FloatArray, mass_kg: FloatArray
    ) -> FloatArray:
        """Tractive power at the wheels, :math:`P_w` (negative when braking or coasting). [kW]"""
        cos_theta = 1 / np.sqrt(1 + grade**2)  # theta = arctan(grade)
        weight = mass_kg * STANDARD_GRAVITY_M_S2
        force = (
            mass_kg * (1 + self.rotating_mass_share) * accel_m_s2
            + weight * cos_theta * (self.rolling_c0 + self.rolling_c1_s_m * speed_m_s + grade)
        )
        aero = 0.5 * ISA_SEA_LEVEL_DENSITY_KG_M3 * self.drag_area_m2 * speed_m_s**3
        return (speed_m_s * force + aero) / _W_PER_KW

    def base_rate_g_s(
        self, speed_m_s: FloatArray, accel_m_s2: FloatArray, grade: FloatArray, mass_kg: FloatArray,
        engine_on: npt.NDArray[np.bool_],
    ) -> FloatArray:
        """Noise-free warm fuel mass rate :math:`\\dot m_f`. [g/s]"""
        wheel = self.wheel_power_kw(speed_m_s, accel_m_s2, grade, mass_kg)
        engine = np.maximum(wheel, 0.0) / self.driveline_efficiency + self.aux_power_kw
        rate = self.idle_g_s + self.marginal_g_kj * engine + self.load_curvature_g_kj * engine**2 / self.rated_power_kw
        cut = (wheel < 0) & (speed_m_s > self.cutoff_speed_m_s)
        return np.where(engine_on & ~cut, rate, 0.0)


def ar1_noise(n: int, step_s: float, corr_s: float, rng: np.random.Generator) -> FloatArray:
    """Unit-variance first-order autoregressive noise on a uniform time grid (scipy lfilter).

    Parameters
    ----------
    n : int
        Number of samples.
    step_s : float
        Grid step. [s]
    corr_s : float
        Correlation time: the autocorrelation at lag ``t`` is ``exp(-t / corr_s)``. [s]
    """
    phi = np.exp(-step_s / corr_s)
    drive = rng.standard_normal(n)
    drive[1:] *= np.sqrt(1 - phi**2)  # drive[0] is the stationary start value itself
    return lfilter([1.0], [1.0, -phi], drive)


def truth_fuel_l(
    model: TruthFuelModel,
    *,
    step_start_s: FloatArray,
    step_duration_s: FloatArray,
    speed_m_s: FloatArray,
    accel_m_s2: FloatArray,
    grade: FloatArray,
    mass_kg: FloatArray,
    engine_on: npt.NDArray[np.bool_],
    warm_since_s: float,
    rng: np.random.Generator,
) -> FloatArray:
    """Fuel burnt in each drive step by the truth model. [L]

    Parameters
    ----------
    step_start_s, step_duration_s : ndarray
        Start time (from the drive's start) and duration of each step. [s]
    speed_m_s, accel_m_s2, grade, mass_kg : ndarray
        Mean speed [m/s], acceleration [m/s^2], grade [1] and running mass [kg] of each step.
    engine_on : ndarray of bool
        Engine running during the step.
    warm_since_s : float
        Time of the day's first engine start relative to the drive's start (<= 0). [s]
    rng : numpy.random.Generator
        Source of the per-drive factor and the noise.
    """
    base = model.base_rate_g_s(speed_m_s, accel_m_s2, grade, mass_kg, engine_on)
    mid = step_start_s + step_duration_s / 2
    cold = 1 + model.cold_extra * np.exp(-(mid - warm_since_s) / model.cold_decay_s)
    day = max(0.5, 1 + model.day_sigma * rng.standard_normal())
    horizon = float(mid[-1]) if len(mid) else 0.0
    grid_step = 1.0
    noise = ar1_noise(int(horizon / grid_step) + 2, grid_step, model.noise_corr_s, rng)
    xi = np.interp(mid, np.arange(len(noise)) * grid_step, noise)
    factor = cold * day * np.exp(model.noise_sigma * xi - model.noise_sigma**2 / 2)
    return base * factor * step_duration_s / (_G_PER_KG * model.fuel_density_kg_l)


TRUTH_MODELS: Final[dict[str, TruthFuelModel]] = {
    "van": TruthFuelModel(
        kerb_mass_kg=2300.0, payload_max_kg=900.0, rotating_mass_share=0.06, rolling_c0=0.0085,
        rolling_c1_s_m=0.00004, drag_area_m2=3.1, driveline_efficiency=0.90, aux_power_kw=1.2,
        rated_power_kw=105.0, idle_g_s=0.12, marginal_g_kj=0.062, load_curvature_g_kj=0.010,
        cutoff_speed_m_s=4.0, cold_extra=0.30, cold_decay_s=420.0,
    ),
    "rigid_7t5": TruthFuelModel(
        kerb_mass_kg=4300.0, payload_max_kg=3000.0, rotating_mass_share=0.05, rolling_c0=0.0072,
        rolling_c1_s_m=0.00003, drag_area_m2=4.9, driveline_efficiency=0.90, aux_power_kw=2.5,
        rated_power_kw=140.0, idle_g_s=0.22, marginal_g_kj=0.060, load_curvature_g_kj=0.008,
        cutoff_speed_m_s=5.0, cold_extra=0.25, cold_decay_s=540.0,
    ),
    "rigid_18t": TruthFuelModel(
        kerb_mass_kg=8200.0, payload_max_kg=8500.0, rotating_mass_share=0.05, rolling_c0=0.0062,
        rolling_c1_s_m=0.00002, drag_area_m2=5.9, driveline_efficiency=0.91, aux_power_kw=3.5,
        rated_power_kw=210.0, idle_g_s=0.35, marginal_g_kj=0.058, load_curvature_g_kj=0.007,
        cutoff_speed_m_s=5.0, cold_extra=0.22, cold_decay_s=600.0,
    ),
    "tractor_40t": TruthFuelModel(
        kerb_mass_kg=15500.0, payload_max_kg=24000.0, rotating_mass_share=0.04, rolling_c0=0.0050,
        rolling_c1_s_m=0.00002, drag_area_m2=5.6, driveline_efficiency=0.92, aux_power_kw=4.5,
        rated_power_kw=330.0, idle_g_s=0.50, marginal_g_kj=0.057, load_curvature_g_kj=0.006,
        cutoff_speed_m_s=6.0, cold_extra=0.20, cold_decay_s=720.0,
    ),
    "bus_12m": TruthFuelModel(
        kerb_mass_kg=11800.0, payload_max_kg=5500.0, rotating_mass_share=0.06, rolling_c0=0.0075,
        rolling_c1_s_m=0.00003, drag_area_m2=6.8, driveline_efficiency=0.88, aux_power_kw=5.0,
        rated_power_kw=220.0, idle_g_s=0.36, marginal_g_kj=0.057, load_curvature_g_kj=0.008,
        cutoff_speed_m_s=4.0, cold_extra=0.18, cold_decay_s=600.0,
    ),
    "car": TruthFuelModel(
        kerb_mass_kg=1330.0, payload_max_kg=300.0, rotating_mass_share=0.04, rolling_c0=0.0095,
        rolling_c1_s_m=0.00005, drag_area_m2=0.68, driveline_efficiency=0.88, aux_power_kw=0.6,
        rated_power_kw=85.0, idle_g_s=0.12, marginal_g_kj=0.078, load_curvature_g_kj=0.015,
        cutoff_speed_m_s=4.5, cold_extra=0.40, cold_decay_s=300.0, fuel="petrol",
    ),
}
"""Truth-model parameters by vehicle class name (typical magnitudes; see the module docstring)."""
