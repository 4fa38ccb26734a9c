r"""Battery-electric powertrain over a trace: wheel -> reduction gear -> motor/inverter -> battery.

Per step (Guzzella & Sciarretta 2013, Ch. 4):

- motor speed :math:`n = (v / r)\, i \cdot 60 / 2\pi`; motor torque :math:`F r / (i \eta)` when
  pulling, :math:`F r \eta / i` when braking;
- motor limit :math:`|T| \le \min(T_{max}, P_{max} / \omega)` both ways (constant torque below the
  base speed, constant power above it); traction also capped by adhesion; what is missing is
  returned as shortfall;
- motor and inverter losses: constant efficiency, or a map of efficiency over (speed, |torque|);
  electrical power :math:`P_m / \eta_m` pulling, :math:`P_m \eta_m` regenerating;
- regeneration: ``regen_share`` of the braking demand is offered to the motor, limited by the
  motor's torque and power, by adhesion of the driven axle, by the battery's charge power
  (``max_charge_power_kw`` at the terminals) and to speeds above ``regen_min_speed_m_s``;
  friction brakes take the rest (the motor torque reported is the regenerating share only, so it
  stays within the motor's limit; the friction brakes' share does not pass through the driveline);
- battery terminals carry the motor's electrical power plus the auxiliaries (electric);
  the state of charge follows the chemistry side: :math:`P / \eta_{dis}` out,
  :math:`P \eta_{chg}` in (:func:`_soc_kernel`, a recurrence compiled with numba, since a full
  battery refuses regenerated energy). The state of charge is not floored at 0: a deficit is
  reported (``soc < 0``) so the route can be flagged; and
- grid energy to restore the battery afterwards: chemistry-side energy used /
  (:math:`\eta_{chg}\,\eta_{charger}`).

With several reduction ratios the one of least battery power is used (best efficiency, with the
same dwell rule as the combustion gearbox).
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import numpy as np
import numpy.typing as npt
from numba import njit

from fleetfuel.constants import JOULES_PER_KWH
from fleetfuel.errors import SpecError
from fleetfuel.simulate import shift
from fleetfuel.simulate.combustion import PowertrainSteps
from fleetfuel.simulate.config import SimConfig
from fleetfuel.simulate.spec import VehicleSpec
from fleetfuel.simulate.spec_parts import KW_W, RPM_RAD_S, Motor

FloatArray = npt.NDArray[np.float64]
MOTOR_MAP_COLUMNS = ("motor_speed_rpm", "torque_nm", "efficiency")


@lru_cache(maxsize=32)
def _motor_map(path: Path):  # -> scipy RegularGridInterpolator over (speed, |torque|)
    from scipy.interpolate import RegularGridInterpolator

    try:
        lines = [ln for ln in path.read_text(encoding="utf-8").splitlines()
                 if ln.strip() and not ln.lstrip().startswith("#")]
    except (OSError, UnicodeDecodeError) as exc:
        raise SpecError(f"{path}: cannot read motor efficiency map ({exc})") from None
    header = tuple(c.strip() for c in lines[0].split(",")) if lines else ()
    if header != MOTOR_MAP_COLUMNS:
        raise SpecError(f"{path}: motor efficiency map header must be {','.join(MOTOR_MAP_COLUMNS)}, found {','.join(header)}")
    try:
        data = np.array([[float(c) for c in ln.split(",")] for ln in lines[1:]], dtype=np.float64)
    except ValueError:
        data = np.zeros((0, 0))
    if data.ndim != 2 or data.shape[1] != len(MOTOR_MAP_COLUMNS):
        raise SpecError(f"{path}: motor efficiency map rows must each hold 3 numbers")
    speeds, torques = np.unique(data[:, 0]), np.unique(data[:, 1])
    if data.shape[0] != speeds.size * torques.size or speeds.size < 2 or torques.size < 2:
        raise SpecError(f"{path}: motor efficiency map must be a full grid: {speeds.size} x {torques.size} points, "
                        f"found {data.shape[0]} rows")
    grid = np.full((speeds.size, torques.size), np.nan)
    grid[np.searchsorted(speeds, data[:, 0]), np.searchsorted(torques, data[:, 1])] = data[:, 2]
    if np.isnan(grid).any() or not ((grid > 0) & (grid <= 1)).all():
        raise SpecError(f"{path}: motor efficiency map needs every grid point once, each efficiency in (0, 1]")
    return RegularGridInterpolator((speeds, torques), grid)


def motor_efficiency(motor: Motor, speed_rpm: npt.ArrayLike, torque_nm: npt.ArrayLike) -> FloatArray:
    """Motor-plus-inverter efficiency at speed [rpm] and torque [N m] (same both ways). [1]

    A map is read over ``|torque|``, held to its range at the edges.
    """
    speed = np.asarray(speed_rpm, dtype=np.float64)
    torque = np.abs(np.asarray(torque_nm, dtype=np.float64))
    if motor.efficiency is not None:
        return np.full(np.broadcast_shapes(speed.shape, torque.shape), motor.efficiency)
    assert motor.efficiency_map_path is not None
    interp = _motor_map(Path(motor.efficiency_map_path))
    lo = [axis[0] for axis in interp.grid]
    hi = [axis[-1] for axis in interp.grid]
    s, t = np.broadcast_arrays(np.clip(speed, lo[0], hi[0]), np.clip(torque, lo[1], hi[1]))
    return interp(np.stack((s.ravel(), t.ravel()), axis=-1)).reshape(s.shape)


def motor_torque_limit_nm(motor: Motor, speed_rpm: npt.ArrayLike) -> FloatArray:
    """Largest motor torque at speed: ``min(T_max, P_max / omega)``, zero above max speed. [N m]"""
    speed = np.asarray(speed_rpm, dtype=np.float64)
    omega = speed * RPM_RAD_S
    with np.errstate(divide="ignore"):
        by_power = np.where(omega > 0, motor.rated_power_kw * KW_W / omega, np.inf)
    return np.where(speed <= motor.max_speed_rpm, np.minimum(motor.max_torque_nm, by_power), 0.0)


@njit(cache=True)
def _soc_kernel(power_w, weight_s, usable_j, soc0, eta_dis, eta_chg):  # pragma: no cover - compiled
    steps = power_w.shape[0]
    soc = np.empty(steps)
    accepted = np.empty(steps)
    energy = soc0 * usable_j
    for i in range(steps):
        p = power_w[i]
        if p >= 0.0:
            energy -= p / eta_dis * weight_s[i]
            accepted[i] = p
        else:
            gain = -p * eta_chg * weight_s[i]
            room = usable_j - energy
            if gain > room:
                gain = room if room > 0.0 else 0.0
                accepted[i] = -gain / (eta_chg * weight_s[i]) if weight_s[i] > 0.0 else 0.0
            else:
                accepted[i] = p
            energy += gain
        soc[i] = energy / usable_j
    return soc, accepted


def state_of_charge(power_w: FloatArray, weight_s: FloatArray, *, usable_kwh: float, initial_soc: float,
                    discharge_efficiency: float, charge_efficiency: float) -> tuple[FloatArray, FloatArray]:
    """State of charge after each step and the terminal power the battery accepted.

    Parameters
    ----------
    power_w : ndarray
        Power asked of the battery terminals, negative when charging. [W]
    weight_s : ndarray
        Time each step stands for. [s]
    usable_kwh, initial_soc, discharge_efficiency, charge_efficiency : float
        Battery data. [kWh, 1, 1, 1]

    Returns
    -------
    soc : ndarray
        Share of usable energy after each step; may fall below 0 (deficit), never above 1. [1]
    accepted_w : ndarray
        Terminal power actually exchanged: charging is cut where the battery is full. [W]
    """
    usable_j = usable_kwh * JOULES_PER_KWH
    return _soc_kernel(np.ascontiguousarray(power_w, dtype=np.float64), np.ascontiguousarray(weight_s, dtype=np.float64),
                       usable_j, float(initial_soc), float(discharge_efficiency), float(charge_efficiency))


_BLOCK_FIELDS = ("rpm", "torque", "delivered", "short", "force", "regen_force", "eff", "terminal_w")


def _gears_of_block(spec: VehicleSpec, t: FloatArray, v: FloatArray, f0: FloatArray, force_g: FloatArray,
                    rpm_g: FloatArray, limit_g: FloatArray, cfg: SimConfig, state: FloatArray) -> npt.NDArray[np.int8]:
    """Reduction ratio per step: the one of least battery power (several ratios), else 1 while moving."""
    motor = spec.motor
    assert motor is not None
    ratios, radius_m, eta = spec.overall_ratios, spec.rolling_radius_m, spec.driveline.efficiency
    if ratios.size == 1:
        return np.where(v > 0, 1, 0).astype(np.int8)
    torque_g = np.where(force_g >= 0, force_g * radius_m / (ratios * eta), force_g * radius_m * eta / ratios)
    power_g = torque_g * rpm_g * RPM_RAD_S
    eff_g = motor_efficiency(motor, rpm_g, torque_g)
    cost = np.where(power_g >= 0, power_g / eff_g, power_g * eff_g)
    with np.errstate(divide="ignore", invalid="ignore"):
        load = np.where(limit_g > 0, np.abs(torque_g) / limit_g, np.inf)
    mode = np.where(v > 0, shift.MODE_DRIVE, shift.MODE_NEUTRAL).astype(np.int8)
    zeros = np.zeros(v.size)
    return shift.choose_gears("best_efficiency", t, mode, f0 <= 0, rpm_g / motor.max_speed_rpm, load, cost, zeros,
                              zeros, margin=0.0, reserve=1.0, efficiency_margin=cfg.best_efficiency_margin,
                              nstar_max=1.0, dwell_s=cfg.min_gear_dwell_s, state=state)


def _electric_block(spec: VehicleSpec, t: FloatArray, v: FloatArray, a: FloatArray, f0: FloatArray,
                    adhesion_n: FloatArray, inertia_extra: FloatArray, cfg: SimConfig,
                    state: FloatArray) -> tuple[npt.NDArray[np.int8], dict[str, FloatArray]]:
    """Gear and operating point of one block of steps, before the battery's state of charge."""
    motor, battery = spec.motor, spec.battery
    assert motor is not None and battery is not None
    ratios, radius_m, eta = spec.overall_ratios, spec.rolling_radius_m, spec.driveline.efficiency
    aux_w = spec.auxiliary.power_kw * KW_W
    force_g = f0[:, None] + a[:, None] * inertia_extra[None, :]
    rpm_g = np.multiply.outer(v / (radius_m * RPM_RAD_S), ratios)
    limit_g = motor_torque_limit_nm(motor, rpm_g)
    gear = _gears_of_block(spec, t, v, f0, force_g, rpm_g, limit_g, cfg, state)
    rows = np.arange(v.size)
    k = np.maximum(gear.astype(np.intp) - 1, 0)
    ratio, force, rpm, limit = ratios[k], force_g[rows, k], rpm_g[rows, k], limit_g[rows, k]
    moving = v > 0
    # traction, capped by the motor and by adhesion
    pulling = moving & (force > 0)
    delivered = np.where(pulling, np.minimum(force, np.minimum(limit * ratio * eta / radius_m, adhesion_n)), force)
    # regeneration: a share of the braking demand, within the motor's and adhesion's limits
    braking = moving & (force < 0)
    regen_cap = np.minimum(limit * ratio / (eta * radius_m), adhesion_n)
    regen_force = np.where(braking & (v >= cfg.regen_min_speed_m_s),
                           np.maximum(force * battery.regen_share, -regen_cap), 0.0)
    torque = np.where(pulling, delivered * radius_m / (ratio * eta), regen_force * radius_m * eta / ratio)
    eff = motor_efficiency(motor, rpm, torque)
    mech_w = torque * (rpm * RPM_RAD_S)
    elec_w = np.where(mech_w >= 0, mech_w / eff, mech_w * eff)
    # charge-power limit at the terminals: the regenerated power net of auxiliaries
    floor_w = -battery.max_charge_power_kw * KW_W - aux_w
    cut = elec_w < floor_w
    if cut.any():
        scale = np.where(cut, floor_w / np.where(cut, elec_w, 1.0), 1.0)
        elec_w, torque, regen_force = elec_w * scale, torque * scale, regen_force * scale
    return gear, {"rpm": rpm, "torque": torque, "delivered": delivered, "short": np.where(pulling, force - delivered, 0.0),
                  "force": force, "regen_force": regen_force, "eff": eff, "terminal_w": elec_w + aux_w}


def simulate_electric(spec: VehicleSpec, time_s: FloatArray, speed_m_s: FloatArray, accel_m_s2: FloatArray,
                      weight_s: FloatArray, base_force_n: FloatArray, adhesion_n: FloatArray, cfg: SimConfig,
                      payload_kg: float | None = None) -> PowertrainSteps:
    """Motor operating point, battery power and state of charge per step of a trace.

    Parameters are those of :func:`fleetfuel.simulate.combustion.simulate_combustion`, plus
    ``weight_s`` (time each step stands for [s]) for the state of charge.
    """
    battery = spec.battery
    assert spec.motor is not None and battery is not None
    steps = speed_m_s.size
    inertia_extra = spec.equivalent_mass_kg(payload_kg) - (
        spec.test_mass_kg(payload_kg) + spec.body.rotating_mass_share * spec.body.curb_mass_kg)
    out = {name: np.empty(steps) for name in _BLOCK_FIELDS}
    gear = np.zeros(steps, dtype=np.int8)
    state = shift.initial_state()
    for start in range(0, steps, cfg.chunk_steps):
        sl = slice(start, min(start + cfg.chunk_steps, steps))
        gear[sl], block = _electric_block(spec, time_s[sl], speed_m_s[sl], accel_m_s2[sl], base_force_n[sl],
                                          adhesion_n[sl], inertia_extra, cfg, state)
        for name in _BLOCK_FIELDS:
            out[name][sl] = block[name]
    soc0 = battery.initial_soc if cfg.initial_soc is None else cfg.initial_soc
    soc, accepted_w = state_of_charge(out["terminal_w"], weight_s, usable_kwh=battery.usable_kwh, initial_soc=soc0,
                                      discharge_efficiency=battery.discharge_efficiency,
                                      charge_efficiency=battery.charge_efficiency)
    # a full battery refuses regeneration: that energy goes to the friction brakes too
    force, regen_force, torque = out["force"], out["regen_force"], out["torque"]
    braking = (speed_m_s > 0) & (force < 0)
    refused = np.where(braking, np.maximum(accepted_w - out["terminal_w"], 0.0), 0.0)
    if refused.any():
        with np.errstate(divide="ignore", invalid="ignore"):
            refused_force = np.where(refused > 0, refused / (out["eff"] * spec.driveline.efficiency * speed_m_s), 0.0)
            offered = regen_force
            regen_force = np.minimum(regen_force + refused_force, 0.0)
            # the motor carries only the regeneration the battery took (torque in proportion to the force)
            torque = np.where(braking & (offered < 0), torque * (regen_force / offered), torque)
    brake = np.where(braking, regen_force - force, 0.0)
    regen_w = np.where(braking, np.maximum(spec.auxiliary.power_kw * KW_W - accepted_w, 0.0), 0.0)
    return PowertrainSteps(gear=gear, shaft_speed_rpm=out["rpm"], shaft_torque_nm=torque,
                           wheel_force_n=out["delivered"], shortfall_n=out["short"], friction_brake_n=brake,
                           fuel_rate_g_s=np.zeros(steps), battery_power_w=accepted_w, soc=soc, regen_power_w=regen_w)
