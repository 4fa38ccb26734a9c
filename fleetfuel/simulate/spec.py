"""Candidate vehicle specs: frozen dataclasses, validated on construction, loaded from TOML.

API (for the physics modules; all masses [kg], lengths [m], powers in the name's unit)
---------------------------------------------------------------------------------------
``load_spec(path) -> VehicleSpec``
    Read one spec TOML (``models/*.toml``). Unknown, missing, mistyped or out-of-range keys
    raise :class:`~fleetfuel.errors.SpecError` with a one-line message naming file and key.
``load_catalogue(folder=None) -> tuple[VehicleSpec, ...]``
    Every ``*.toml`` of ``folder`` (default: the bundled ``models/``), sorted by file name.

``VehicleSpec`` (frozen, slots, kw_only): ``name, vehicle_class, powertrain, body, driveline,
engine (Engine | None), motor (Motor | None), battery (Battery | None), auxiliary, cost
(Cost | None), source_path (Path | None)``. Derived:

- ``spec.rolling_radius_m`` [m]; ``spec.drag_area_m2`` (Cd * A) [m^2]
- ``spec.payload_or_default(payload_kg=None)`` [kg], refusing a payload beyond the legal gross mass
- ``spec.test_mass_kg(payload_kg=None)`` = curb + payload [kg] (SpecError beyond max gross mass)
- ``spec.max_payload_kg`` = max gross - curb [kg]
- ``spec.overall_ratios`` ndarray (gears,) = gear ratio * final drive [1]
- ``spec.equivalent_mass_kg(payload_kg=None)`` ndarray (gears,): test mass + rotating-mass
  allowance (``body.rotating_mass_share`` * curb mass, wheels and driveline) + prime-mover
  inertia reflected to the wheel ``I * (i_g i_f / r)^2`` [kg]
- ``spec.rated_power_w`` [W] (engine or motor), ``spec.fuel`` (FuelProperties | None)
- ``spec.governed_speed_m_s`` [m/s] or ``inf``
- ``spec.adhesion_force_n(adhesion, payload_kg=None)`` driven-axle load * adhesion [N]

``Engine``: ``fuel`` (key of ``fleetfuel.constants.FUELS``), ``rated_power_kw``, ``rated_speed_rpm``,
``idle_speed_rpm``, ``max_speed_rpm``, ``full_load_torque`` (tuple of (rpm, N m) pairs, rpm
increasing), ``fuel_map_path`` (Path | None, absolute) or ``willans`` (:class:`Willans` | None),
``inertia_kg_m2``, ``motoring_torque_share``. Fuel rates: ``fleetfuel.simulate.fuelmap.fuel_model(engine)``.
``Motor``: ``rated_power_kw``, ``max_torque_nm``, ``max_speed_rpm``, ``efficiency`` (constant, share)
or ``efficiency_map_path``, ``inertia_kg_m2``; ``motor.base_speed_rpm`` (power = torque * speed corner).
``Battery``: ``usable_kwh``, ``discharge_efficiency``, ``charge_efficiency``, ``charger_efficiency``,
``max_charge_power_kw`` (regen limit at the terminals), ``regen_share`` (share of braking energy
offered to regen), ``mass_kg`` (already inside curb mass), ``initial_soc``.
``Driveline``: ``gear_ratios`` (tuple, first = lowest gear, strictly decreasing), ``final_drive_ratio``,
``efficiency``, ``shift_time_s`` (traction pause per shift).
``Auxiliary``: ``power_kw`` (constant accessory load). ``Cost``: ``purchase_price``, ``residual_share``,
``life_years``, ``maintenance_per_km``, ``currency``.

Variants with :func:`dataclasses.replace`; every dataclass validates its ranges in ``__post_init__``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from fleetfuel.constants import STANDARD_GRAVITY_M_S2, FuelProperties
from fleetfuel.errors import SpecError
from fleetfuel.simulate.spec_parts import (
    KMH_M_S,
    KW_W,
    POWERTRAINS,
    VEHICLE_CLASSES,
    Auxiliary,
    Battery,
    Body,
    Cost,
    Driveline,
    Engine,
    Motor,
    Willans,
)
from fleetfuel.simulate.spec_ranges import RANGES

__all__ = [
    "POWERTRAINS", "RANGES", "VEHICLE_CLASSES", "Auxiliary", "Battery", "Body", "Cost", "Driveline",
    "Engine", "Motor", "VehicleSpec", "Willans", "load_catalogue", "load_spec",
]


@dataclass(frozen=True, slots=True, kw_only=True)
class VehicleSpec:
    """One candidate vehicle: a combustion spec has ``engine``; an electric one ``motor`` and ``battery``.

    Attributes
    ----------
    name : str
        Free text shown in tables.
    vehicle_class : str
        One of :data:`VEHICLE_CLASSES`.
    powertrain : str
        One of :data:`POWERTRAINS`.
    body, driveline, auxiliary : Body, Driveline, Auxiliary
    engine : Engine or None
    motor : Motor or None
    battery : Battery or None
    cost : Cost or None
    source_path : Path or None
        File the spec was read from.
    """

    name: str
    vehicle_class: str
    powertrain: str
    body: Body
    driveline: Driveline
    engine: Engine | None
    motor: Motor | None
    battery: Battery | None
    auxiliary: Auxiliary
    cost: Cost | None = None
    source_path: Path | None = None

    def __post_init__(self) -> None:
        if self.vehicle_class not in VEHICLE_CLASSES:
            raise SpecError(f"vehicle_class must be one of {VEHICLE_CLASSES}, found {self.vehicle_class!r}")
        if self.powertrain not in POWERTRAINS:
            raise SpecError(f"powertrain must be one of {POWERTRAINS}, found {self.powertrain!r}")
        combustion = self.powertrain == "combustion"
        present = {"engine": self.engine is not None, "motor": self.motor is not None,
                   "battery": self.battery is not None}
        wanted = {"engine": combustion, "motor": not combustion, "battery": not combustion}
        for section, has in present.items():
            if has != wanted[section]:
                verb = "needs" if wanted[section] else "must not have"
                raise SpecError(f"[{section}] a {self.powertrain} spec {verb} an [{section}] section")
        if self.battery is not None and self.battery.mass_kg >= self.body.curb_mass_kg:
            raise SpecError(
                f"[battery] mass_kg = {self.battery.mass_kg:g} must be below body.curb_mass_kg = "
                f"{self.body.curb_mass_kg:g} (the pack is part of the curb mass)"
            )

    # --- masses ---------------------------------------------------------------------------
    @property
    def max_payload_kg(self) -> float:
        """Legal gross mass minus curb mass. [kg]"""
        return self.body.max_gross_mass_kg - self.body.curb_mass_kg

    def payload_or_default(self, payload_kg: float | None = None) -> float:
        """``payload_kg`` or the spec's default; refuses negative payload or one beyond max gross mass. [kg]"""
        payload = self.body.payload_kg if payload_kg is None else float(payload_kg)
        if not np.isfinite(payload) or payload < 0:
            raise SpecError(f"{self._where()}: payload must be >= 0 kg, found {payload!r}")
        if payload > self.max_payload_kg:
            raise SpecError(
                f"{self._where()}: payload {payload:g} kg gives a gross mass of "
                f"{payload + self.body.curb_mass_kg:g} kg, above max_gross_mass_kg = "
                f"{self.body.max_gross_mass_kg:g} (max payload {self.max_payload_kg:g} kg)"
            )
        return payload

    def test_mass_kg(self, payload_kg: float | None = None) -> float:
        """Curb mass plus payload (default: the spec's payload). [kg]"""
        return self.body.curb_mass_kg + self.payload_or_default(payload_kg)

    @property
    def prime_mover_inertia_kg_m2(self) -> float:
        """Engine or motor rotating inertia. [kg m^2]"""
        part = self.engine if self.engine is not None else self.motor
        return part.inertia_kg_m2 if part is not None else 0.0

    def equivalent_mass_kg(self, payload_kg: float | None = None) -> npt.NDArray[np.float64]:
        r"""Inertial mass per gear, :math:`m + s\,m_{curb} + I (i_g i_f / r)^2`.

        Parameters
        ----------
        payload_kg : float, optional
            Payload (default: the spec's). [kg]

        Returns
        -------
        ndarray, shape (gears,)
            Translational mass plus the rotating-mass allowance and the prime mover's
            inertia reflected to the wheels. [kg]

        References
        ----------
        Wong, J. Y., Theory of Ground Vehicles, 4th ed., Wiley (2008), Sec. 3.3 (mass factor).
        """
        translational = self.test_mass_kg(payload_kg) + self.body.rotating_mass_share * self.body.curb_mass_kg
        reflected = self.prime_mover_inertia_kg_m2 * (self.overall_ratios / self.rolling_radius_m) ** 2
        return translational + reflected

    # --- geometry and gearing -------------------------------------------------------------
    @property
    def rolling_radius_m(self) -> float:
        """Dynamic rolling radius. [m]"""
        return self.body.rolling_radius_m

    @property
    def drag_area_m2(self) -> float:
        """Drag coefficient times frontal area. [m^2]"""
        return self.body.drag_coefficient * self.body.front_area_m2

    @property
    def overall_ratios(self) -> npt.NDArray[np.float64]:
        """Gear ratio times final drive ratio, lowest gear first. [1]"""
        return np.asarray(self.driveline.gear_ratios, dtype=np.float64) * self.driveline.final_drive_ratio

    @property
    def governed_speed_m_s(self) -> float:
        """Speed-limiter setting, ``inf`` when none. [m/s]"""
        kmh = self.body.governed_speed_kmh
        return float("inf") if kmh is None else kmh * KMH_M_S

    # --- power ----------------------------------------------------------------------------
    @property
    def rated_power_w(self) -> float:
        """Rated power of the engine, or peak power of the motor. [W]"""
        if self.engine is not None:
            return self.engine.rated_power_kw * KW_W
        assert self.motor is not None  # guaranteed by __post_init__
        return self.motor.rated_power_kw * KW_W

    @property
    def fuel(self) -> FuelProperties | None:
        """Fuel of a combustion spec, None for an electric one."""
        return self.engine.fuel_properties if self.engine is not None else None

    def adhesion_force_n(self, adhesion: float, payload_kg: float | None = None) -> float:
        """Largest tractive force the driven wheels can pass: driven-axle load times adhesion. [N]

        Parameters
        ----------
        adhesion : float
            Peak tyre-road adhesion coefficient, e.g. ``fleetfuel.constants.ADHESION_DRY_ASPHALT``. [1]
        payload_kg : float, optional
            Payload (default: the spec's). [kg]
        """
        load_n = self.test_mass_kg(payload_kg) * STANDARD_GRAVITY_M_S2 * self.body.driven_axle_load_share
        return load_n * adhesion

    def _where(self) -> str:
        return str(self.source_path) if self.source_path is not None else self.name


def load_spec(path: str | Path) -> VehicleSpec:
    """Read and validate one spec TOML file; relative fuel-map paths resolve against the file.

    Raises
    ------
    SpecError
        One line naming the file and key: unreadable TOML, unknown or missing key, wrong type,
        value out of range, payload beyond the legal gross mass, bad fuel map.
    """
    from fleetfuel.simulate.spec_load import read_spec

    return read_spec(Path(path))


def load_catalogue(folder: str | Path | None = None) -> tuple[VehicleSpec, ...]:
    """Every ``*.toml`` spec in ``folder`` (default: the bundled ``models/``), sorted by file name."""
    from fleetfuel.resources import data_dir

    root = data_dir("models") if folder is None else Path(folder)
    if not root.is_dir():
        raise SpecError(f"{root}: spec folder not found")
    return tuple(load_spec(p) for p in sorted(root.glob("*.toml")))
