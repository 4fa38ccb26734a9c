"""Parts of a vehicle spec (body, driveline, engine, motor, battery, auxiliary, cost).

Frozen dataclasses that check their ranges on construction; see :mod:`fleetfuel.simulate.spec`
for the whole spec and the loader. Range errors name ``[section] key``; the loader prefixes the file.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.constants import FUELS, FuelProperties
from fleetfuel.errors import SpecError
from fleetfuel.simulate.spec_ranges import check_range

VEHICLE_CLASSES: Final = ("van", "rigid_truck", "tractor_trailer", "city_bus", "car")
POWERTRAINS: Final = ("combustion", "electric")

KMH_M_S: Final = 1000.0 / 3600.0  # km/h -> m/s, exact
RPM_RAD_S: Final = 2.0 * math.pi / 60.0  # rpm -> rad/s, exact
KW_W: Final = 1000.0

# Full-load curve peak power may differ from the rated power by this share (rounding of data
# sheets, rated point not at the curve's exact peak). Validation tolerance, common practice.
RATED_POWER_CURVE_TOLERANCE: Final = 0.10

# Documented defaults of the optional keys (the spec file may set each).
# Rotating parts (wheels, tyres, brake discs, axles, propeller shaft) as an equivalent mass:
# Wong, Theory of Ground Vehicles, 4th ed. (2008), Sec. 3.3 mass factor 1.04 in top gear for
# cars (from memory); we take the 0.03 share of curb mass for the part outside the prime mover.
DEFAULT_ROTATING_MASS_SHARE: Final = 0.03
DEFAULT_SHIFT_TIME_S: Final = 1.0  # automated manual gearbox traction pause, common practice, no source
DEFAULT_MOTORING_TORQUE_SHARE: Final = 0.1  # engine drag on overrun / peak torque, common practice, no source
DEFAULT_INITIAL_SOC: Final = 1.0  # start each route fully charged (overnight depot charging)


def _check_all(section: str, obj: object, names: tuple[str, ...]) -> None:
    for name in names:
        value = getattr(obj, name)
        if value is not None:
            check_range(f"{section}.{name}", value)


@dataclass(frozen=True, slots=True, kw_only=True)
class Body:
    """Masses, aerodynamics, tyres and speed limiter.

    Attributes
    ----------
    curb_mass_kg : float
        Unladen mass ready to drive, battery included for electric specs. [kg]
    payload_kg : float
        Default payload (a route may override it). [kg]
    max_gross_mass_kg : float
        Legal gross (or gross combination) mass. [kg]
    driven_axle_load_share : float
        Share of the mass on the driven wheels. [1]
    front_area_m2 : float
        Frontal area. [m^2]
    drag_coefficient : float
        Aerodynamic drag coefficient. [1]
    rolling_coefficient : float
        Rolling-resistance coefficient. [N/N]
    rolling_radius_m : float
        Dynamic rolling radius. [m]
    tyre : str or None
        ISO size designation the radius was derived from, if any.
    governed_speed_kmh : float or None
        Speed limiter setting. [km/h]
    rotating_mass_share : float
        Equivalent mass of wheels and driveline as a share of curb mass. [1]
    """

    curb_mass_kg: float
    payload_kg: float
    max_gross_mass_kg: float
    driven_axle_load_share: float
    front_area_m2: float
    drag_coefficient: float
    rolling_coefficient: float
    rolling_radius_m: float
    tyre: str | None = None
    governed_speed_kmh: float | None = None
    rotating_mass_share: float = DEFAULT_ROTATING_MASS_SHARE

    def __post_init__(self) -> None:
        _check_all("body", self, (
            "curb_mass_kg", "payload_kg", "max_gross_mass_kg", "driven_axle_load_share", "front_area_m2",
            "drag_coefficient", "rolling_coefficient", "rolling_radius_m", "governed_speed_kmh",
            "rotating_mass_share",
        ))
        if self.curb_mass_kg >= self.max_gross_mass_kg:
            raise SpecError(
                f"[body] curb_mass_kg = {self.curb_mass_kg:g} must be below max_gross_mass_kg = "
                f"{self.max_gross_mass_kg:g}"
            )
        gross = self.curb_mass_kg + self.payload_kg
        if gross > self.max_gross_mass_kg:
            raise SpecError(
                f"[body] payload_kg = {self.payload_kg:g} gives a gross mass of {gross:g} kg, above "
                f"max_gross_mass_kg = {self.max_gross_mass_kg:g} (max payload {self.max_gross_mass_kg - self.curb_mass_kg:g} kg)"
            )


@dataclass(frozen=True, slots=True, kw_only=True)
class Driveline:
    """Gearbox and final drive.

    Attributes
    ----------
    gear_ratios : tuple of float
        Gearbox ratios, lowest gear first, strictly decreasing. [1]
    final_drive_ratio : float
        Axle (final drive) ratio. [1]
    efficiency : float
        Mechanical efficiency from prime mover to wheels, constant. [1]
    shift_time_s : float
        Traction pause per gear change. [s]
    """

    gear_ratios: tuple[float, ...]
    final_drive_ratio: float
    efficiency: float
    shift_time_s: float = DEFAULT_SHIFT_TIME_S

    def __post_init__(self) -> None:
        if not self.gear_ratios:
            raise SpecError("[driveline] gear_ratios must hold at least one ratio, found none")
        for ratio in self.gear_ratios:
            check_range("driveline.gear_ratios", ratio)
        if any(b >= a for a, b in zip(self.gear_ratios, self.gear_ratios[1:], strict=False)):
            raise SpecError(
                f"[driveline] gear_ratios must be strictly decreasing (lowest gear first), found {list(self.gear_ratios)}"
            )
        _check_all("driveline", self, ("final_drive_ratio", "efficiency", "shift_time_s"))


@dataclass(frozen=True, slots=True, kw_only=True)
class Willans:
    r"""Parameters of an extended Willans line (Guzzella & Onder 2010, Sec. 2.3).

    Mean effective pressure :math:`p_{me} = e(c_m, p_{m\varphi})\, p_{m\varphi} - p_{me0}(c_m)` with
    :math:`e = e_0(c_m) - e_1 p_{m\varphi}`, :math:`e_0 = e_{00} + e_{01} c_m + e_{02} c_m^2` and
    friction :math:`p_{me0} = f_0 + f_2 c_m^2`; :math:`c_m = S n / 30` is the mean piston speed.

    Attributes
    ----------
    displacement_l : float
        Swept volume. [L]
    stroke_m : float
        Piston stroke. [m]
    efficiency : tuple of 3 float
        ``(e00, e01, e02)``: ``e0(c_m)`` [1, s/m, s^2/m^2].
    efficiency_load_slope_per_bar : float
        ``e1``: efficiency loss per bar of fuel mean effective pressure. [1/bar]
    friction_mep_bar : tuple of 2 float
        ``(f0, f2)``: friction mean effective pressure ``f0 + f2 c_m^2`` [bar, bar s^2/m^2].
    """

    displacement_l: float
    stroke_m: float
    efficiency: tuple[float, float, float]
    efficiency_load_slope_per_bar: float
    friction_mep_bar: tuple[float, float]

    def __post_init__(self) -> None:
        _check_all("engine.willans", self, ("displacement_l", "stroke_m"))
        if len(self.efficiency) != 3 or len(self.friction_mep_bar) != 2:
            raise SpecError(
                f"[engine.willans] efficiency needs 3 and friction_mep_bar 2 numbers, found "
                f"{len(self.efficiency)} and {len(self.friction_mep_bar)}"
            )
        check_range("engine.willans.efficiency_at_zero_speed", self.efficiency[0])
        for value in self.friction_mep_bar:
            check_range("engine.willans.friction_mep_bar", value)
        if self.efficiency_load_slope_per_bar < 0:
            raise SpecError(
                f"[engine.willans] efficiency_load_slope_per_bar must be >= 0, found {self.efficiency_load_slope_per_bar!r}"
            )


@dataclass(frozen=True, slots=True, kw_only=True)
class Engine:
    """Combustion engine.

    Attributes
    ----------
    fuel : str
        Key of :data:`fleetfuel.constants.FUELS`.
    rated_power_kw, rated_speed_rpm, idle_speed_rpm, max_speed_rpm : float
        Rated power [kW] and the speeds [rpm].
    full_load_torque : tuple of (float, float)
        Full-load curve, ``(engine speed [rpm], torque [N m])``, speeds strictly increasing.
    fuel_map_path : Path or None
        Fuel-map CSV (``engine_speed_rpm, torque_nm, fuel_rate_g_s`` on a full grid).
    willans : Willans or None
        Analytic fuel model, when no map is given (exactly one of the two).
    inertia_kg_m2 : float
        Rotating inertia of engine and flywheel. [kg m^2]
    motoring_torque_share : float
        Drag torque on overrun as a share of peak torque. [1]
    """

    fuel: str
    rated_power_kw: float
    rated_speed_rpm: float
    idle_speed_rpm: float
    max_speed_rpm: float
    full_load_torque: tuple[tuple[float, float], ...]
    fuel_map_path: Path | None = None
    willans: Willans | None = None
    inertia_kg_m2: float = 0.0
    motoring_torque_share: float = DEFAULT_MOTORING_TORQUE_SHARE

    def __post_init__(self) -> None:
        if self.fuel not in FUELS:
            raise SpecError(f"[engine] fuel must be one of {sorted(FUELS)}, found {self.fuel!r}")
        _check_all("engine", self, (
            "rated_power_kw", "rated_speed_rpm", "idle_speed_rpm", "max_speed_rpm", "inertia_kg_m2",
            "motoring_torque_share",
        ))
        if not self.idle_speed_rpm < self.rated_speed_rpm <= self.max_speed_rpm:
            raise SpecError(
                f"[engine] speeds must satisfy idle < rated <= max, found idle {self.idle_speed_rpm:g}, "
                f"rated {self.rated_speed_rpm:g}, max {self.max_speed_rpm:g} rpm"
            )
        self._check_curve()
        if (self.fuel_map_path is None) == (self.willans is None):
            raise SpecError("[engine] give exactly one of fuel_map = \"file.csv\" or an [engine.willans] table")

    def _check_curve(self) -> None:
        curve = self.full_load_torque
        if len(curve) < 2 or any(len(p) != 2 for p in curve):
            raise SpecError(f"[engine] full_load_torque needs >= 2 [rpm, nm] pairs, found {len(curve)} entries")
        for rpm, nm in curve:
            check_range("engine.full_load_torque.rpm", rpm)
            check_range("engine.full_load_torque.nm", nm)
        rpms = [p[0] for p in curve]
        if any(b <= a for a, b in zip(rpms, rpms[1:], strict=False)):
            raise SpecError(f"[engine] full_load_torque speeds must be strictly increasing, found {rpms}")
        if not rpms[0] <= self.rated_speed_rpm <= rpms[-1] <= self.max_speed_rpm:
            raise SpecError(
                f"[engine] full_load_torque must span rated_speed_rpm = {self.rated_speed_rpm:g} and end at or "
                f"below max_speed_rpm = {self.max_speed_rpm:g}, found {rpms[0]:g}-{rpms[-1]:g} rpm"
            )
        peak_kw = max(rpm * RPM_RAD_S * nm for rpm, nm in curve) / KW_W
        if abs(peak_kw / self.rated_power_kw - 1) > RATED_POWER_CURVE_TOLERANCE:
            raise SpecError(
                f"[engine] full_load_torque peaks at {peak_kw:.0f} kW, not within "
                f"{RATED_POWER_CURVE_TOLERANCE:.0%} of rated_power_kw = {self.rated_power_kw:g}"
            )

    @property
    def fuel_properties(self) -> FuelProperties:
        """Density, heating value and CO2 factor of the fuel."""
        return FUELS[self.fuel]

    @property
    def peak_torque_nm(self) -> float:
        """Largest full-load torque. [N m]"""
        return max(nm for _, nm in self.full_load_torque)

    def full_load_arrays(self) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
        """Full-load curve as ``(engine_speed_rpm, torque_nm)`` arrays."""
        arr = np.asarray(self.full_load_torque, dtype=np.float64)
        return arr[:, 0].copy(), arr[:, 1].copy()


@dataclass(frozen=True, slots=True, kw_only=True)
class Motor:
    """Traction motor with its inverter.

    Attributes
    ----------
    rated_power_kw : float
        Peak power at the shaft. [kW]
    max_torque_nm : float
        Peak torque below base speed. [N m]
    max_speed_rpm : float
        Highest motor speed. [rpm]
    efficiency : float or None
        Constant motor + inverter efficiency, both directions. [1]
    efficiency_map_path : Path or None
        CSV ``motor_speed_rpm, torque_nm, efficiency`` instead of the constant (exactly one).
    inertia_kg_m2 : float
        Rotor inertia. [kg m^2]
    """

    rated_power_kw: float
    max_torque_nm: float
    max_speed_rpm: float
    efficiency: float | None = None
    efficiency_map_path: Path | None = None
    inertia_kg_m2: float = 0.0

    def __post_init__(self) -> None:
        _check_all("motor", self, ("rated_power_kw", "max_torque_nm", "max_speed_rpm", "efficiency", "inertia_kg_m2"))
        if (self.efficiency is None) == (self.efficiency_map_path is None):
            raise SpecError("[motor] give exactly one of efficiency = 0.9 or efficiency_map = \"file.csv\"")
        if self.base_speed_rpm >= self.max_speed_rpm:
            raise SpecError(
                f"[motor] base speed rated_power / max_torque = {self.base_speed_rpm:.0f} rpm must be below "
                f"max_speed_rpm = {self.max_speed_rpm:g}"
            )

    @property
    def base_speed_rpm(self) -> float:
        """Corner speed where peak torque meets peak power. [rpm]"""
        return self.rated_power_kw * KW_W / self.max_torque_nm / RPM_RAD_S


@dataclass(frozen=True, slots=True, kw_only=True)
class Battery:
    """Traction battery (usable window) and charger.

    Attributes
    ----------
    usable_kwh : float
        Usable energy between the allowed state-of-charge limits. [kWh]
    discharge_efficiency, charge_efficiency : float
        Terminal-to-chemistry efficiencies each way. [1]
    charger_efficiency : float
        Grid-to-terminal efficiency of the depot charger. [1]
    max_charge_power_kw : float
        Highest regenerative charging power at the terminals. [kW]
    regen_share : float
        Share of the braking energy offered to regeneration (rest: friction brakes). [1]
    mass_kg : float
        Pack mass, already counted in ``body.curb_mass_kg``. [kg]
    initial_soc : float
        State of charge (share of the usable window) at the start of a route. [1]
    """

    usable_kwh: float
    discharge_efficiency: float
    charge_efficiency: float
    charger_efficiency: float
    max_charge_power_kw: float
    regen_share: float
    mass_kg: float
    initial_soc: float = DEFAULT_INITIAL_SOC

    def __post_init__(self) -> None:
        _check_all("battery", self, (
            "usable_kwh", "discharge_efficiency", "charge_efficiency", "charger_efficiency",
            "max_charge_power_kw", "regen_share", "mass_kg", "initial_soc",
        ))


@dataclass(frozen=True, slots=True, kw_only=True)
class Auxiliary:
    """Accessory load (HVAC, compressor, steering pump, electrics), constant. ``power_kw`` [kW]."""

    power_kw: float

    def __post_init__(self) -> None:
        _check_all("auxiliary", self, ("power_kw",))


@dataclass(frozen=True, slots=True, kw_only=True)
class Cost:
    """Ownership cost inputs (optional section); money in ``currency``."""

    purchase_price: float
    residual_share: float
    life_years: float
    maintenance_per_km: float
    currency: str = "EUR"

    def __post_init__(self) -> None:
        _check_all("cost", self, ("purchase_price", "residual_share", "life_years", "maintenance_per_km"))
