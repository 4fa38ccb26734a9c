r"""Performance envelope of a spec: top speed, gradeability, startability, acceleration.

Every figure comes from the tractive-force envelope :math:`F_g(v)` of each gear ``g``:
prime-mover torque at the speed the gear imposes (full-load curve for an engine, torque and power
limits for a motor), times the overall ratio and the driveline efficiency, over the rolling
radius, capped by the driven-axle adhesion. In the lowest gear a slipping clutch holds an engine
at its peak-torque speed below that road speed (launch). Road loads are those of
:mod:`fleetfuel.simulate.roadload` on a flat road in still air, air density from
:mod:`fleetfuel.simulate.atmosphere` (ISA at the configured elevation).

- Top speed: the highest speed where some gear's force meets the road load, within the engine's
  or motor's speed range and the governor.
- Gradeability: steepest grade held at constant speed, best gear, for each configured speed.
- Startability: steepest grade the spec can move off on (lowest gear, launch torque), limited by
  torque and by adhesion (dry and wet, :data:`fleetfuel.constants.ADHESION_DRY_ASPHALT` / ``WET``).
- Acceleration 0-50, 0-80, 0-100 km/h at full load: per gear the time is the integral
  :math:`t = \int m_{eq,g} / (F_g(v) - R(v))\,dv` (numerical quadrature on a fine speed grid),
  upshifting where the next gear pulls harder (or the engine reaches its cut-off), with a
  traction pause of ``driveline.shift_time_s`` per shift during which the spec coasts.
- Ballparks beside them: top speed from the cubic power balance
  :math:`\eta P = c_r m g v + \tfrac12 \rho c_d A v^3`, and acceleration time as kinetic energy
  over half the rated power less a loss allowance, :math:`t = \tfrac12 m v^2 / (\tfrac12 P (1 - l))`.

These are estimates: gradeability, startability and legal masses must be checked against the
maker's data and local regulations (:data:`CAUTION`).

References
----------
Wong, J. Y., Theory of Ground Vehicles, 4th ed., Wiley (2008), Ch. 3 (tractive effort, performance).
Gillespie, T. D., Fundamentals of Vehicle Dynamics, SAE (1992), Ch. 2 (acceleration performance).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
import numpy.typing as npt
from scipy.integrate import cumulative_trapezoid
from scipy.optimize import brentq

from fleetfuel.constants import ADHESION_DRY_ASPHALT, ADHESION_WET_ASPHALT, STANDARD_GRAVITY_M_S2
from fleetfuel.errors import ConfigError
from fleetfuel.simulate.atmosphere import air_density_kg_m3
from fleetfuel.simulate.fuelmap import max_torque_nm
from fleetfuel.simulate.roadload import aero_drag_n, grade_force_n, rolling_resistance_n, traction_limit_n
from fleetfuel.simulate.spec import VehicleSpec
from fleetfuel.simulate.spec_parts import KMH_M_S, RPM_RAD_S

FloatArray = npt.NDArray[np.float64]

CAUTION: Final = (
    "Caution: gradeability, startability, acceleration and legal masses are model estimates; "
    "check them against the maker's data and local regulations before a purchase or safety decision."
)
PERCENT: Final = 100.0
LIMITS: Final = ("power", "governor", "prime_mover_speed")
"""What sets the top speed."""


@dataclass(frozen=True, slots=True, kw_only=True)
class EnvelopeConfig:
    """Settings of the envelope calculation (documented defaults).

    Attributes
    ----------
    gradeability_speeds_kmh : tuple of float
        Speeds at which the sustainable grade is reported. [km/h]
    accel_targets_kmh : tuple of float
        End speeds of the standing-start acceleration times. [km/h]
    adhesion : float
        Adhesion coefficient for top speed, gradeability and acceleration (dry asphalt). [1]
    elevation_m : float
        Road elevation for the ISA air density (0: sea level, 1.225 kg/m^3). [m]
    launch_speed_m_s : float
        Creep speed at which the start on a grade is judged (rolling resistance acting). [m/s]
    speed_step_m_s : float
        Resolution of the speed grid for top speed and shift points. [m/s]
    max_speed_m_s : float
        Upper end of the speed search. [m/s]
    quadrature_points : int
        Speed points per gear for the acceleration integral.
    ballpark_loss_allowance : float
        Share of half the rated power lost to driveline and road load in the acceleration
        ballpark, common practice, no source. [1]
    bisection_steps : int
        Steps of the vectorised grade bisection (2**-steps of the bracket).
    max_grade : float
        Upper bracket of the grade search (rise over run). [1]
    """

    gradeability_speeds_kmh: tuple[float, ...] = (10.0, 20.0, 40.0, 60.0, 80.0)
    accel_targets_kmh: tuple[float, ...] = (50.0, 80.0, 100.0)
    adhesion: float = ADHESION_DRY_ASPHALT
    elevation_m: float = 0.0
    launch_speed_m_s: float = 0.5
    speed_step_m_s: float = 0.05
    max_speed_m_s: float = 120.0
    quadrature_points: int = 400
    ballpark_loss_allowance: float = 0.15
    bisection_steps: int = 60
    max_grade: float = 3.0

    def __post_init__(self) -> None:
        if not 0 < self.adhesion <= 1.5:
            raise ConfigError(f"envelope adhesion must be in (0, 1.5], found {self.adhesion!r}")
        if not 0 <= self.ballpark_loss_allowance < 1:
            raise ConfigError(f"ballpark_loss_allowance must be in [0, 1), found {self.ballpark_loss_allowance!r}")
        if self.speed_step_m_s <= 0 or self.quadrature_points < 3 or self.launch_speed_m_s <= 0:
            raise ConfigError("speed_step_m_s and launch_speed_m_s must be > 0 and quadrature_points >= 3")


@dataclass(frozen=True, slots=True, kw_only=True)
class Envelope:
    """What a spec can do at one payload (speeds [km/h], grades [%], times [s]; None: not reachable)."""

    spec_name: str
    payload_kg: float
    test_mass_kg: float
    top_speed_kmh: float
    top_speed_limit: str
    gradeability_pct: dict[float, float | None]
    startability_pct: float
    startability_wet_pct: float
    startability_limit: str
    accel_s: dict[float, float | None]
    ballpark_top_speed_kmh: float
    ballpark_accel_s: dict[float, float | None] = field(default_factory=dict)

    @property
    def accel_0_50_s(self) -> float | None:
        """Standing start to 50 km/h. [s]"""
        return self.accel_s.get(50.0)

    @property
    def accel_0_80_s(self) -> float | None:
        """Standing start to 80 km/h. [s]"""
        return self.accel_s.get(80.0)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict (keys ``top_speed_kmh``, ``accel_0_80_s``, ``gradeability_pct`` ...)."""
        out: dict[str, Any] = {
            "spec": self.spec_name,
            "payload_kg": self.payload_kg,
            "test_mass_kg": self.test_mass_kg,
            "top_speed_kmh": _rounded(self.top_speed_kmh),
            "top_speed_limit": self.top_speed_limit,
            "startability_pct": _rounded(self.startability_pct),
            "startability_wet_pct": _rounded(self.startability_wet_pct),
            "startability_limit": self.startability_limit,
            "gradeability_pct": {f"{k:g}": _rounded(v) for k, v in self.gradeability_pct.items()},
            "ballpark_top_speed_kmh": _rounded(self.ballpark_top_speed_kmh),
        }
        for target, value in self.accel_s.items():
            out[f"accel_0_{target:g}_s"] = _rounded(value)
        for target, value in self.ballpark_accel_s.items():
            out[f"ballpark_accel_0_{target:g}_s"] = _rounded(value)
        out["caution"] = CAUTION
        return out


def _rounded(value: float | None, digits: int = 2) -> float | None:
    return None if value is None or not np.isfinite(value) else round(float(value), digits)


@dataclass(frozen=True, slots=True)
class _Forces:
    """Per-spec quantities shared by the envelope's parts."""

    spec: VehicleSpec
    mass_kg: float
    rho: float
    adhesion: float

    def prime_mover_torque_nm(self, rpm: FloatArray, launch: npt.NDArray[np.bool_]) -> FloatArray:
        """Full-load torque at prime-mover speed [rpm]; ``launch`` marks clutch-slip points. [N m]"""
        engine, motor = self.spec.engine, self.spec.motor
        if engine is not None:
            curve_rpm, curve_nm = engine.full_load_arrays()
            launch_rpm = float(curve_rpm[np.argmax(curve_nm)])
            held = np.where(launch & (rpm < launch_rpm), launch_rpm, rpm)
            torque = max_torque_nm(engine, held)
            return np.where((held >= engine.idle_speed_rpm) & (held <= engine.max_speed_rpm), torque, 0.0)
        assert motor is not None
        omega = rpm * RPM_RAD_S
        power_limited = np.divide(self.spec.rated_power_w, omega, out=np.full_like(omega, np.inf), where=omega > 0)
        torque = np.minimum(motor.max_torque_nm, power_limited)
        return np.where(rpm <= motor.max_speed_rpm, torque, 0.0)

    def tractive_n(self, speed_m_s: FloatArray, grade: float | FloatArray = 0.0) -> FloatArray:
        """Largest force at the wheels per speed and gear, adhesion-capped, shape (speeds, gears). [N]"""
        spec = self.spec
        v = np.asarray(speed_m_s, dtype=np.float64)[:, None]
        ratios = spec.overall_ratios[None, :]
        rpm = v / spec.rolling_radius_m * ratios / RPM_RAD_S
        launch = np.zeros(rpm.shape, dtype=bool)
        launch[:, 0] = True
        torque = self.prime_mover_torque_nm(rpm, launch)
        force = torque * ratios * spec.driveline.efficiency / spec.rolling_radius_m
        grip = traction_limit_n(self.mass_kg, grade, spec.body.driven_axle_load_share, self.adhesion)
        return np.minimum(force, np.asarray(grip)[..., None] if np.ndim(grip) else grip)

    def road_n(self, speed_m_s: FloatArray, grade: float | FloatArray = 0.0) -> FloatArray:
        """Rolling + aerodynamic + grade force at constant speed. [N]"""
        v = np.asarray(speed_m_s, dtype=np.float64)
        return (rolling_resistance_n(self.mass_kg, self.spec.body.rolling_coefficient, grade, v)
                + aero_drag_n(v, self.spec.drag_area_m2, self.rho) + grade_force_n(self.mass_kg, grade))


def performance_envelope(spec: VehicleSpec, payload_kg: float | None = None,
                         cfg: EnvelopeConfig | None = None) -> Envelope:
    """Top speed, gradeability, startability and acceleration of ``spec`` at ``payload_kg``.

    Parameters
    ----------
    spec : VehicleSpec
        The candidate spec.
    payload_kg : float, optional
        Payload (default: the spec's); beyond the legal gross mass raises SpecError. [kg]
    cfg : EnvelopeConfig, optional
        Speeds, targets, adhesion and numerics (documented defaults).

    Returns
    -------
    Envelope
    """
    cfg = cfg or EnvelopeConfig()
    payload = spec.payload_or_default(payload_kg)
    mass = spec.test_mass_kg(payload)
    rho = float(air_density_kg_m3(cfg.elevation_m))
    forces = _Forces(spec, mass, rho, cfg.adhesion)
    top, limit = top_speed_m_s(forces, cfg)
    start_dry, start_limit = startability(forces, cfg)
    start_wet, _ = startability(_Forces(spec, mass, rho, ADHESION_WET_ASPHALT), cfg)
    grades = {
        kmh: (None if kmh * KMH_M_S > top else float(_steepest_grade(forces, np.array([kmh * KMH_M_S]), cfg)[0]) * PERCENT)
        for kmh in cfg.gradeability_speeds_kmh
    }
    accel = acceleration_times_s(forces, spec.equivalent_mass_kg(payload), top, cfg)
    ballpark_v = ballpark_top_speed_m_s(spec, mass, rho)
    ballpark = {
        kmh: (ballpark_accel_s(spec, mass, kmh * KMH_M_S, cfg) if kmh * KMH_M_S <= ballpark_v else None)
        for kmh in cfg.accel_targets_kmh
    }
    return Envelope(
        spec_name=spec.name, payload_kg=payload, test_mass_kg=mass, top_speed_kmh=top / KMH_M_S,
        top_speed_limit=limit, gradeability_pct=grades, startability_pct=start_dry * PERCENT,
        startability_wet_pct=start_wet * PERCENT, startability_limit=start_limit, accel_s=accel,
        ballpark_top_speed_kmh=ballpark_v / KMH_M_S, ballpark_accel_s=ballpark,
    )


def top_speed_m_s(forces: _Forces, cfg: EnvelopeConfig) -> tuple[float, str]:
    """Highest flat-road speed some gear can hold, and what limits it (one of :data:`LIMITS`). [m/s]"""
    spec = forces.spec
    v = np.arange(cfg.speed_step_m_s, cfg.max_speed_m_s, cfg.speed_step_m_s)
    surplus = forces.tractive_n(v).max(axis=1) - forces.road_n(v)
    ok = surplus > 0
    if not ok[0]:
        return 0.0, "power"
    first_bad = int(np.argmin(ok)) if not ok.all() else v.size
    if first_bad == v.size:
        reached, limit = float(v[-1]), "prime_mover_speed"
    else:
        def net(speed: float) -> float:
            return float(forces.tractive_n(np.array([speed])).max() - forces.road_n(np.array([speed]))[0])

        lo, hi = float(v[first_bad - 1]), float(v[first_bad])
        reached = brentq(net, lo, hi) if net(hi) < 0 else hi
        # a cliff (cut-off speed reached) rather than a smooth power balance
        limit = "prime_mover_speed" if forces.tractive_n(np.array([hi])).max() == 0 else "power"
    if spec.governed_speed_m_s <= reached:
        return spec.governed_speed_m_s, "governor"
    return reached, limit


def _steepest_grade(forces: _Forces, speed_m_s: FloatArray, cfg: EnvelopeConfig,
                    lowest_gear_only: bool = False) -> FloatArray:
    """Steepest grade (rise/run) held at each constant speed, by vectorised bisection. [1]"""
    lo = np.zeros(speed_m_s.shape)
    hi = np.full(speed_m_s.shape, cfg.max_grade)
    for _ in range(cfg.bisection_steps):
        mid = (lo + hi) / 2
        available = forces.tractive_n(speed_m_s, mid)
        available = available[:, 0] if lowest_gear_only else available.max(axis=1)
        ok = available >= forces.road_n(speed_m_s, mid)
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
    return lo


def startability(forces: _Forces, cfg: EnvelopeConfig) -> tuple[float, str]:
    """Steepest grade the spec can move off on in its lowest gear, and its limit (torque/adhesion). [1]"""
    speed = np.array([cfg.launch_speed_m_s])
    grade = float(_steepest_grade(forces, speed, cfg, lowest_gear_only=True)[0])
    spec = forces.spec
    unlimited = _Forces(spec, forces.mass_kg, forces.rho, np.inf)
    torque_grade = float(_steepest_grade(unlimited, speed, cfg, lowest_gear_only=True)[0])
    return grade, ("adhesion" if grade < torque_grade else "torque")


def _gear_segments(forces: _Forces, top_m_s: float, cfg: EnvelopeConfig) -> list[tuple[int, float, float]]:
    """(gear, start speed, shift speed) of a full-load run from standstill to ``top_m_s``."""
    v = np.arange(0.0, top_m_s + cfg.speed_step_m_s, cfg.speed_step_m_s)
    v = np.minimum(v, top_m_s)
    force = forces.tractive_n(v)
    gears = force.shape[1]
    segments: list[tuple[int, float, float]] = []
    start, gear = 0.0, 0
    while True:
        if gear == gears - 1:
            segments.append((gear, start, top_m_s))
            return segments
        after = v > start
        better = after & (force[:, gear + 1] > force[:, gear])  # strictly: adhesion-capped ties stay
        if not better.any():
            segments.append((gear, start, top_m_s))
            return segments
        shift = float(v[int(np.argmax(better))])
        segments.append((gear, start, shift))
        start, gear = shift, gear + 1


def acceleration_times_s(forces: _Forces, equivalent_mass_kg: FloatArray, top_m_s: float,
                         cfg: EnvelopeConfig) -> dict[float, float | None]:
    """Standing-start times to each target speed at full load, shift pauses included. [s]

    Per gear, :math:`t(v) = \\int m_{eq,g} / (F_g - R)\\,dv` by the trapezoidal rule on a fine
    speed grid; between gears the spec coasts for ``shift_time_s`` under road load (clutch open,
    so only wheels and driveline add to the mass), one explicit step.
    """
    spec = forces.spec
    coast_mass = forces.mass_kg + spec.body.rotating_mass_share * spec.body.curb_mass_kg
    times: list[FloatArray] = []
    speeds: list[FloatArray] = []
    clock, speed = 0.0, 0.0
    segments = _gear_segments(forces, top_m_s, cfg)
    for index, (gear, _, shift_v) in enumerate(segments):
        if shift_v <= speed:
            continue
        v = np.linspace(speed, shift_v, cfg.quadrature_points)
        net = forces.tractive_n(v)[:, gear] - forces.road_n(v)
        positive = net > 0
        if not positive.all():  # top speed reached in this gear: stop just before the balance point
            v, net = v[: int(np.argmin(positive))], net[: int(np.argmin(positive))]
            if v.size < 2:
                break
        t = clock + cumulative_trapezoid(equivalent_mass_kg[gear] / net, v, initial=0.0)
        times.append(t)
        speeds.append(v)
        clock, speed = float(t[-1]), float(v[-1])
        if index < len(segments) - 1 and spec.driveline.shift_time_s > 0:
            loss = float(forces.road_n(np.array([speed]))[0]) * spec.driveline.shift_time_s / coast_mass
            clock += spec.driveline.shift_time_s
            speed = max(speed - loss, 0.0)
    out: dict[float, float | None] = {}
    all_t = np.concatenate(times) if times else np.zeros(1)
    all_v = np.concatenate(speeds) if speeds else np.zeros(1)
    for kmh in cfg.accel_targets_kmh:
        target = kmh * KMH_M_S
        reached = np.flatnonzero(all_v >= target)
        if target > top_m_s or reached.size == 0:
            out[kmh] = None
            continue
        k = int(reached[0])
        if k == 0:
            out[kmh] = 0.0
            continue
        out[kmh] = float(np.interp(target, all_v[k - 1: k + 1], all_t[k - 1: k + 1]))
    return out


def ballpark_top_speed_m_s(spec: VehicleSpec, mass_kg: float, air_density: float) -> float:
    r"""Cubic power balance :math:`\eta P = c_r m g v + \tfrac12 \rho c_d A v^3`, capped by the governor. [m/s]"""
    aero = air_density * spec.drag_area_m2 / 2
    rolling = spec.body.rolling_coefficient * mass_kg * STANDARD_GRAVITY_M_S2
    power = spec.driveline.efficiency * spec.rated_power_w
    upper = (power / aero) ** (1 / 3)  # the aero-only root bounds the (single, positive) real root
    root = brentq(lambda v: aero * v**3 + rolling * v - power, 0.0, upper, xtol=1e-12, rtol=1e-15)
    return float(min(root, spec.governed_speed_m_s))


def ballpark_accel_s(spec: VehicleSpec, mass_kg: float, speed_m_s: float, cfg: EnvelopeConfig) -> float:
    r"""Kinetic energy over half the rated power less a loss allowance, :math:`\tfrac12 m v^2 / (\tfrac12 P (1-l))`. [s]"""
    return (mass_kg * speed_m_s**2 / 2) / (spec.rated_power_w / 2 * (1 - cfg.ballpark_loss_allowance))


def envelope_text(envelope: Envelope) -> str:
    """Plain-text table of an envelope for the terminal, caution last."""
    def fmt(value: float | None, unit: str) -> str:
        return "not reachable" if value is None or not np.isfinite(value) else f"{value:.1f} {unit}"

    lines = [
        f"{envelope.spec_name}  (payload {envelope.payload_kg:.0f} kg, test mass {envelope.test_mass_kg:.0f} kg)",
        f"  top speed            {fmt(envelope.top_speed_kmh, 'km/h'):>16}  limited by {envelope.top_speed_limit}"
        f"   (ballpark {fmt(envelope.ballpark_top_speed_kmh, 'km/h')})",
        f"  startability (dry)   {fmt(envelope.startability_pct, '%'):>16}  limited by {envelope.startability_limit}",
        f"  startability (wet)   {fmt(envelope.startability_wet_pct, '%'):>16}",
    ]
    for kmh, pct in envelope.gradeability_pct.items():
        lines.append(f"  {f'gradeability {kmh:g} km/h':<21}{fmt(pct, '%'):>16}")
    for kmh, seconds in envelope.accel_s.items():
        ballpark = envelope.ballpark_accel_s.get(kmh)
        lines.append(f"  {f'0-{kmh:g} km/h':<21}{fmt(seconds, 's'):>16}   (ballpark {fmt(ballpark, 's')})")
    lines.append(CAUTION)
    return "\n".join(lines)
