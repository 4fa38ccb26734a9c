r"""Combustion powertrain over a trace: wheel -> final drive -> gearbox -> engine, all gears at once.

For a block of steps the wheel force, engine speed, engine torque and full-load torque are
evaluated in every gear as (steps, gears) arrays; :mod:`fleetfuel.simulate.shift` picks one gear
per step; fuel is then read from the engine's fuel model (map or Willans line) for the chosen
operating points (all gears when the strategy is ``best_efficiency``).

Per step (Guzzella & Sciarretta 2013, Ch. 3; Wong 2008, Ch. 3):

- engine speed :math:`n = (v / r)\, i_g i_f \cdot 60 / 2\pi`; wheel torque :math:`F r`;
- engine torque :math:`T_e = F r / (i_g i_f \eta)` when pulling, :math:`F r \eta / (i_g i_f)` on
  overrun (losses then help braking), plus the auxiliaries :math:`P_{aux} / \omega_e`
  (auxiliary power is taken at the crankshaft);
- the prime mover's inertia reflected to the wheels adds :math:`I (i_g i_f / r)^2 a` per gear
  (:meth:`VehicleSpec.equivalent_mass_kg`);
- full-load limit: the delivered torque is at most the full-load torque; the traction force is
  also capped by adhesion; what is missing is returned as ``shortfall_n`` (never clipped
  silently);
- overrun (:math:`T_e \le 0`) above the fuel-cut speed: fuel falls linearly from the zero-load rate
  at zero torque to nothing at the motoring torque (fuel cut); engine drag brakes, friction brakes
  take the rest (the engine torque reported is then the motoring torque: the friction brakes' share
  is not carried by the crankshaft); at or below the cut speed the engine runs at its zero-load rate;
- launch below the lowest gear's idle road speed: gear 1 with the clutch slipping, engine held at
  the launch speed, clutch torque = engine torque (slip power is lost);
- standstill and clutch-open coasting: engine idles carrying the auxiliaries (idle fuel), or is
  off at standstill with ``engine_off_at_standstill``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from fleetfuel.simulate import shift
from fleetfuel.simulate.config import SimConfig
from fleetfuel.simulate.fuelmap import fuel_model, max_torque_nm, motoring_torque_nm
from fleetfuel.simulate.spec import VehicleSpec
from fleetfuel.simulate.spec_parts import KW_W, RPM_RAD_S

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True)
class PowertrainSteps:
    """Per-step result of a powertrain over a trace (combustion or electric).

    Attributes
    ----------
    gear : ndarray of int8
        Gear engaged, 1-based; 0 = neutral / clutch open.
    shaft_speed_rpm, shaft_torque_nm : ndarray
        Engine (or motor) speed [rpm] and delivered torque [N m], auxiliaries included.
    wheel_force_n : ndarray
        Force delivered at the wheels by the powertrain and brakes together (demand minus
        shortfall). [N]
    shortfall_n : ndarray
        Traction force demanded but not delivered (full load, motor limit, adhesion). [N]
    friction_brake_n : ndarray
        Force taken by the friction brakes (positive). [N]
    fuel_rate_g_s : ndarray
        Fuel mass rate (zeros for an electric spec). [g/s]
    battery_power_w : ndarray
        Power out of the battery terminals, negative while charging (zeros for combustion). [W]
    soc : ndarray
        Battery state of charge, share of usable energy (NaN for combustion). [1]
    regen_power_w : ndarray
        Power recovered at the battery terminals by regenerative braking (>= 0). [W]
    """

    gear: npt.NDArray[np.int8]
    shaft_speed_rpm: FloatArray
    shaft_torque_nm: FloatArray
    wheel_force_n: FloatArray
    shortfall_n: FloatArray
    friction_brake_n: FloatArray
    fuel_rate_g_s: FloatArray
    battery_power_w: FloatArray
    soc: FloatArray
    regen_power_w: FloatArray


@dataclass(frozen=True, slots=True, kw_only=True)
class GearGrid:
    """One block of steps evaluated in every gear, arrays of shape (steps, gears).

    Attributes
    ----------
    speed_norm : ndarray
        Normalised engine speed :math:`(n - n_{idle}) / (n_{rated} - n_{idle})`. [1]
    engine_torque_nm : ndarray
        Engine torque needed, auxiliaries included (meaningless where the engine would turn
        below idle: those gears are not usable there). [N m]
    full_load_nm : ndarray
        Full-load torque at that speed. [N m]
    load : ndarray
        ``engine_torque_nm / full_load_nm``: above 1 the gear cannot carry the demand. [1]
    wheel_rev_per_min : ndarray, shape (steps,)
        Wheel speed. [rpm]
    overall_ratios : ndarray, shape (gears,)
        Gear times final-drive ratio. [1]
    """

    speed_norm: FloatArray
    engine_torque_nm: FloatArray
    full_load_nm: FloatArray
    load: FloatArray
    wheel_rev_per_min: FloatArray
    overall_ratios: FloatArray

    def engine_speed_rpm(self) -> FloatArray:
        """Engine speed in every gear, (steps, gears). [rpm]"""
        return np.multiply.outer(self.wheel_rev_per_min, self.overall_ratios)


def evaluate_gears(spec: VehicleSpec, speed_m_s: FloatArray, accel_m_s2: FloatArray, base_force_n: FloatArray,
                   inertia_extra_kg: FloatArray) -> GearGrid:
    r"""Engine speed, torque, full-load torque and load in every gear for a block of steps.

    Per-step and per-gear factors are separated, so each (steps, gears) array is one matrix
    product of a (steps, 2) by a (2, gears) factor (one pass, written once):
    :math:`T_e = p_i / R_g + q_i\, m_g / R_g` with :math:`R_g = i_g i_f`,
    :math:`p_i = F_i c_i + P_{aux} r / v_i`, :math:`q_i = a_i c_i`, :math:`c_i = r / \eta` (pulling)
    or :math:`r \eta` (overrun; the sign is taken from the road load, the prime mover's own inertia
    term being small), and :math:`n^*_{ig} = u_i R_g - n_{idle} / \Delta n`.

    Parameters
    ----------
    spec : VehicleSpec
        A combustion spec.
    speed_m_s, accel_m_s2, base_force_n : ndarray, shape (n,)
        Speed [m/s], acceleration [m/s^2] and road load without the engine's inertia [N].
    inertia_extra_kg : ndarray, shape (gears,)
        Engine inertia reflected to the wheels per gear. [kg]

    Returns
    -------
    GearGrid
    """
    engine = spec.engine
    assert engine is not None
    radius_m, eta = spec.rolling_radius_m, spec.driveline.efficiency
    ratios = spec.overall_ratios
    idle, span = engine.idle_speed_rpm, engine.rated_speed_rpm - engine.idle_speed_rpm
    c = np.where(base_force_n >= 0, radius_m / eta, radius_m * eta)
    with np.errstate(divide="ignore"):
        aux = np.where(speed_m_s > 0, spec.auxiliary.power_kw * KW_W * radius_m / speed_m_s, 0.0)
    per_step = np.empty((speed_m_s.size, 2))
    np.multiply(base_force_n, c, out=per_step[:, 0])
    per_step[:, 0] += aux
    np.multiply(accel_m_s2, c, out=per_step[:, 1])
    # explicit products, not a BLAS matrix product: the same digits whatever the thread count
    torque = per_step[:, :1] * (1 / ratios) + per_step[:, 1:] * (inertia_extra_kg / ratios)
    wheel_rpm = speed_m_s / (radius_m * RPM_RAD_S)
    speed_norm = wheel_rpm[:, None] * (ratios / span) + (-idle / span)
    rpm, nm = engine.full_load_arrays()
    full = np.interp(speed_norm, (rpm - idle) / span, nm, left=nm[0], right=0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        load = torque / full
    return GearGrid(speed_norm=speed_norm, engine_torque_nm=torque, full_load_nm=full, load=load,
                    wheel_rev_per_min=wheel_rpm, overall_ratios=ratios)


def fuel_rate_with_cut_g_s(spec: VehicleSpec, speed_rpm: FloatArray, torque_nm: FloatArray, cut_rpm: float) -> FloatArray:
    r"""Fuel rate with fuel cut on overrun. [g/s]

    Above ``cut_rpm`` a net torque between the motoring (drag) torque :math:`T_m < 0` and zero
    needs the share :math:`(T - T_m) / (0 - T_m)` of the zero-load fuel rate (the Willans line is
    linear there); at or below :math:`T_m` the fuel is cut. At or below ``cut_rpm`` the idle
    governor keeps fuelling at the zero-load rate.
    """
    assert spec.engine is not None
    rate = fuel_model(spec.engine).fuel_rate_g_s(speed_rpm, torque_nm)
    drag = motoring_torque_nm(spec.engine, speed_rpm)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(drag < 0, np.clip((torque_nm - drag) / -drag, 0.0, 1.0), 0.0)
    overrun = (torque_nm <= 0) & (speed_rpm > cut_rpm)
    return np.where(overrun, rate * share, rate)


def _thresholds(cfg: SimConfig, load_share: FloatArray) -> tuple[FloatArray, FloatArray]:
    up = cfg.upshift_speed_light + (cfg.upshift_speed_full - cfg.upshift_speed_light) * load_share
    down = cfg.downshift_speed_light + (cfg.downshift_speed_full - cfg.downshift_speed_light) * load_share
    return up, down


def simulate_combustion(spec: VehicleSpec, time_s: FloatArray, speed_m_s: FloatArray, accel_m_s2: FloatArray,
                        base_force_n: FloatArray, adhesion_n: FloatArray, cfg: SimConfig,
                        payload_kg: float | None = None) -> PowertrainSteps:
    """Gear, engine operating point, fuel and shortfall per step of a trace.

    Parameters
    ----------
    spec : VehicleSpec
        A combustion spec.
    time_s, speed_m_s, accel_m_s2 : ndarray, shape (n,)
        The trace (speed already capped at what the spec can reach). [s, m/s, m/s^2]
    base_force_n : ndarray, shape (n,)
        Road load at the wheels, inertia of vehicle and wheels included, engine inertia not. [N]
    adhesion_n : ndarray, shape (n,)
        Adhesion limit of the tractive force. [N]
    cfg : SimConfig
    payload_kg : float, optional
        Payload (default: the spec's). [kg]

    Returns
    -------
    PowertrainSteps
    """
    engine = spec.engine
    assert engine is not None
    steps = speed_m_s.size
    idle, rated = engine.idle_speed_rpm, engine.rated_speed_rpm
    span = rated - idle
    launch_rpm = idle + cfg.launch_speed * span
    cut_rpm = idle + cfg.fuel_cut_speed * span
    equivalent = spec.equivalent_mass_kg(payload_kg)
    inertia_extra = equivalent - (spec.test_mass_kg(payload_kg) + spec.body.rotating_mass_share * spec.body.curb_mass_kg)
    idle_speed_m_s = idle * RPM_RAD_S * spec.rolling_radius_m / spec.overall_ratios[0]

    out = {name: np.zeros(steps) for name in ("rpm", "torque", "force", "short", "brake", "fuel")}
    gear_out = np.zeros(steps, dtype=np.int8)
    state = shift.initial_state()
    nstar_max = (engine.max_speed_rpm - idle) / span
    for start in range(0, steps, cfg.chunk_steps):
        sl = slice(start, min(start + cfg.chunk_steps, steps))
        v, a, f0 = speed_m_s[sl], accel_m_s2[sl], base_force_n[sl]
        grid = evaluate_gears(spec, v, a, f0, inertia_extra)
        pulling = f0 > 0
        mode = np.where(v <= 0, shift.MODE_NEUTRAL,
                        np.where(v < idle_speed_m_s, np.where(pulling, shift.MODE_LAUNCH, shift.MODE_NEUTRAL),
                                 shift.MODE_DRIVE)).astype(np.int8)
        load_share = np.clip(f0 * v / spec.rated_power_w, 0.0, 1.0)
        up, down = _thresholds(cfg, load_share)
        cost = None
        if cfg.shift_strategy == "best_efficiency":
            cost = fuel_rate_with_cut_g_s(spec, grid.engine_speed_rpm(),
                                          np.minimum(grid.engine_torque_nm, grid.full_load_nm), cut_rpm)
        gear = shift.choose_gears(cfg.shift_strategy, time_s[sl], mode, ~pulling, grid.speed_norm, grid.load, cost,
                                  up, down, margin=cfg.shift_landing_margin, reserve=cfg.upshift_torque_reserve,
                                  efficiency_margin=cfg.best_efficiency_margin, nstar_max=nstar_max,
                                  dwell_s=cfg.min_gear_dwell_s, state=state)
        gear_out[sl] = gear
        _operating_points(spec, gear, mode, v, a, f0, adhesion_n[sl], inertia_extra, launch_rpm, cut_rpm, cfg,
                          out, sl)
    nan = np.full(steps, np.nan)
    return PowertrainSteps(gear=gear_out, shaft_speed_rpm=out["rpm"], shaft_torque_nm=out["torque"],
                           wheel_force_n=out["force"], shortfall_n=out["short"], friction_brake_n=out["brake"],
                           fuel_rate_g_s=out["fuel"], battery_power_w=np.zeros(steps), soc=nan,
                           regen_power_w=np.zeros(steps))


def _operating_points(spec: VehicleSpec, gear: npt.NDArray[np.int8], mode: npt.NDArray[np.int8], v: FloatArray,
                      a: FloatArray, f0: FloatArray, adhesion_n: FloatArray, inertia_extra: FloatArray,
                      launch_rpm: float, cut_rpm: float, cfg: SimConfig, out: dict[str, FloatArray], sl: slice) -> None:
    """Fill ``out[...][sl]`` with the chosen gear's operating point, fuel, shortfall and brakes."""
    engine = spec.engine
    assert engine is not None
    radius_m, eta = spec.rolling_radius_m, spec.driveline.efficiency
    aux_w = spec.auxiliary.power_kw * KW_W
    k = np.maximum(gear.astype(np.intp) - 1, 0)
    launch = mode == shift.MODE_LAUNCH
    neutral = gear == 0
    ratio = spec.overall_ratios[k]
    force = np.where(neutral, f0, f0 + a * inertia_extra[k])
    rpm = np.where(launch, launch_rpm, np.where(neutral, engine.idle_speed_rpm, v / radius_m * ratio / RPM_RAD_S))
    aux = aux_w / (rpm * RPM_RAD_S)
    # torque the engine must give (launch: clutch torque = engine torque, slip power lost)
    torque = np.where(force >= 0, force * (radius_m / eta), force * (radius_m * eta)) / ratio + aux
    torque = np.where(neutral, aux, torque)
    full = max_torque_nm(engine, rpm)
    # traction capacity at the wheels: full load less auxiliaries, and adhesion
    capacity = np.minimum((full - aux) * ratio * (eta / radius_m), adhesion_n)
    pulling = (force > 0) & (v > 0) & ~neutral
    delivered = np.where(pulling, np.minimum(force, np.maximum(capacity, 0.0)), force)
    short = np.where(pulling, force - delivered, 0.0)
    torque = np.where(pulling, delivered * radius_m / (ratio * eta) + aux, torque)
    # braking: engine drag (fuel cut) in gear, friction brakes for the rest; the crankshaft carries
    # at most the drag torque, the friction brakes' share never passes through the driveline
    drag = motoring_torque_nm(engine, rpm)
    drag_wheel = np.where(neutral, 0.0, (drag - aux) * ratio / (eta * radius_m))
    brake = np.where(force < 0, np.maximum(drag_wheel - force, 0.0), 0.0)
    torque = np.where((force < 0) & ~neutral, np.maximum(torque, drag), torque)
    rate = fuel_model(engine).fuel_rate_g_s(rpm, torque)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(drag < 0, np.clip((torque - drag) / -drag, 0.0, 1.0), 0.0)
    overrun = (torque <= 0) & (rpm > cut_rpm) & ~neutral
    fuel = np.where(overrun, rate * share, rate)
    if cfg.engine_off_at_standstill:
        fuel = np.where(v <= 0, 0.0, fuel)
    out["rpm"][sl] = rpm
    out["torque"][sl] = torque
    out["force"][sl] = delivered
    out["short"][sl] = short
    out["brake"][sl] = brake
    out["fuel"][sl] = fuel
