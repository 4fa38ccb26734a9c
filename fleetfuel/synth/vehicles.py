"""Vehicle classes of the synthetic fleet: what bounds their motion (not their fuel: see truth.py).

Each :class:`VehicleClass` gives the driving envelope the speed-profile generator respects:
a traction-limited acceleration at low speed, a power-limited one at speed (``a = (eta P / v -
F_resist) / m``), a braking deceleration drivers use in normal traffic, a governed top speed, and
what the vehicle can hold on a climb. The numbers are typical of each class, not of any product.

Sources (acceleration and deceleration ranges; from memory, check before citing):
heavy goods vehicles accelerate at about 0.3-0.8 m/s^2 from rest and decelerate at 1-2 m/s^2 in
normal traffic, vans and cars at 1-2 m/s^2 (common practice in traffic microsimulation, no source);
speed limiters of 90 km/h for lorries over 3.5 t and 100 km/h for buses: Council Directive
92/6/EEC as amended by Directive 2002/85/EC (from memory); fleets often set lorries to 85 km/h
(common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.constants import ISA_SEA_LEVEL_DENSITY_KG_M3, STANDARD_GRAVITY_M_S2
from fleetfuel.errors import ConfigError

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True)
class VehicleClass:
    """Driving envelope of one vehicle class.

    Attributes
    ----------
    name : str
        Class key (``van``, ``rigid_7t5``, ``rigid_18t``, ``tractor_40t``, ``bus_12m``, ``car``).
    description : str
        Plain-words description.
    mass_kg : float
        Typical running mass (kerb plus average load). [kg]
    rated_power_w : float
        Rated engine power. [W]
    accel_power_share : float
        Share of rated power a normal driver uses to accelerate. [1]
    max_accel_m_s2 : float
        Acceleration at low speed (traction, gearing and comfort limited). [m/s^2]
    max_decel_m_s2 : float
        Braking deceleration in normal traffic. [m/s^2]
    max_speed_m_s : float
        Governed or cruising top speed. [m/s]
    drag_area_m2 : float
        Drag coefficient times front area, for the power limit. [m^2]
    rolling_coefficient : float
        Rolling resistance coefficient, for the power limit. [1]
    climb_power_share : float
        Share of rated power held on a long climb. [1]
    lateral_accel_m_s2 : float
        Lateral acceleration a driver accepts in a curve (sets curve speeds). [m/s^2]
    climb_relax_m : float
        Distance over which speed sags to the climbing speed on a hill (momentum). [m]
    """

    name: str
    description: str
    mass_kg: float
    rated_power_w: float
    accel_power_share: float
    max_accel_m_s2: float
    max_decel_m_s2: float
    max_speed_m_s: float
    drag_area_m2: float
    rolling_coefficient: float
    climb_power_share: float
    lateral_accel_m_s2: float
    climb_relax_m: float

    def __post_init__(self) -> None:
        if not 0 < self.max_accel_m_s2 < 5 or not 0 < self.max_decel_m_s2 < 10:
            raise ConfigError(f"vehicle class {self.name}: acceleration bounds out of range")
        if self.accel_power(self.max_speed_m_s) <= 0:
            raise ConfigError(f"vehicle class {self.name}: cannot reach max_speed_m_s on the flat")

    def resistance_n(self, speed_m_s: npt.ArrayLike, grade: npt.ArrayLike = 0.0) -> FloatArray:
        """Rolling, grade and aerodynamic resistance at ``speed_m_s`` [m/s] on ``grade`` [1]. [N]"""
        v = np.asarray(speed_m_s, dtype=np.float64)
        weight = self.mass_kg * STANDARD_GRAVITY_M_S2
        aero = 0.5 * ISA_SEA_LEVEL_DENSITY_KG_M3 * self.drag_area_m2 * v**2
        return weight * (self.rolling_coefficient + np.asarray(grade)) + aero

    def accel_power(self, speed_m_s: npt.ArrayLike) -> FloatArray:
        """Largest acceleration a normal driver uses on the flat at ``speed_m_s`` [m/s]. [m/s^2]"""
        v = np.maximum(np.asarray(speed_m_s, dtype=np.float64), 1e-3)
        power_limited = (self.accel_power_share * self.rated_power_w / v - self.resistance_n(v)) / self.mass_kg
        return np.minimum(self.max_accel_m_s2, power_limited)

    def climb_speed_m_s(self, grade: npt.ArrayLike) -> FloatArray:
        """Steady speed held on ``grade`` [1] with :attr:`climb_power_share` of rated power. [m/s]

        Solves ``P = v F_resist(v)`` by bisection on a vector (40 halvings: 1e-12 relative).
        """
        g = np.asarray(grade, dtype=np.float64)
        power = self.climb_power_share * self.rated_power_w
        lo = np.zeros_like(g)
        hi = np.full_like(g, self.max_speed_m_s * 2)
        for _ in range(40):
            mid = (lo + hi) / 2
            over = mid * self.resistance_n(mid, g) > power
            hi = np.where(over, mid, hi)
            lo = np.where(over, lo, mid)
        return np.minimum(lo, self.max_speed_m_s)


_KMH: Final = 1 / 3.6  # NIST SP 811: 1 km/h = 1/3.6 m/s

VEHICLE_CLASSES: Final[dict[str, VehicleClass]] = {
    c.name: c
    for c in (
        VehicleClass(
            name="van", description="3.5 t parcel van, diesel", mass_kg=2900.0, rated_power_w=105e3,
            accel_power_share=0.6, max_accel_m_s2=1.4, max_decel_m_s2=1.6, max_speed_m_s=110 * _KMH,
            drag_area_m2=2.9, rolling_coefficient=0.009, climb_power_share=0.7, lateral_accel_m_s2=2.0,
            climb_relax_m=150.0,
        ),
        VehicleClass(
            name="rigid_7t5", description="7.5 t rigid box truck, diesel", mass_kg=6200.0, rated_power_w=140e3,
            accel_power_share=0.6, max_accel_m_s2=0.8, max_decel_m_s2=1.4, max_speed_m_s=88 * _KMH,
            drag_area_m2=4.6, rolling_coefficient=0.0075, climb_power_share=0.8, lateral_accel_m_s2=1.6,
            climb_relax_m=300.0,
        ),
        VehicleClass(
            name="rigid_18t", description="18 t rigid curtain-sider, diesel", mass_kg=13500.0, rated_power_w=210e3,
            accel_power_share=0.6, max_accel_m_s2=0.6, max_decel_m_s2=1.3, max_speed_m_s=86 * _KMH,
            drag_area_m2=5.6, rolling_coefficient=0.0065, climb_power_share=0.85, lateral_accel_m_s2=1.5,
            climb_relax_m=400.0,
        ),
        VehicleClass(
            name="tractor_40t", description="4x2 tractor unit with semi-trailer, 40 t GCW, diesel",
            mass_kg=34000.0, rated_power_w=330e3, accel_power_share=0.65, max_accel_m_s2=0.45,
            max_decel_m_s2=1.2, max_speed_m_s=85 * _KMH, drag_area_m2=5.8, rolling_coefficient=0.0055,
            climb_power_share=0.9, lateral_accel_m_s2=1.3, climb_relax_m=600.0,
        ),
        VehicleClass(
            name="bus_12m", description="12 m low-floor city bus, diesel", mass_kg=14500.0, rated_power_w=220e3,
            accel_power_share=0.6, max_accel_m_s2=1.1, max_decel_m_s2=1.3, max_speed_m_s=70 * _KMH,
            drag_area_m2=6.5, rolling_coefficient=0.008, climb_power_share=0.8, lateral_accel_m_s2=1.5,
            climb_relax_m=300.0,
        ),
        VehicleClass(
            name="car", description="compact pool car, petrol", mass_kg=1400.0, rated_power_w=85e3,
            accel_power_share=0.5, max_accel_m_s2=1.8, max_decel_m_s2=2.0, max_speed_m_s=130 * _KMH,
            drag_area_m2=0.65, rolling_coefficient=0.010, climb_power_share=0.6, lateral_accel_m_s2=2.5,
            climb_relax_m=100.0,
        ),
    )
}
"""The bundled classes, by name."""


def vehicle_class(name_or_class: str | VehicleClass) -> VehicleClass:
    """A :class:`VehicleClass` by name (or the class itself)."""
    if isinstance(name_or_class, VehicleClass):
        return name_or_class
    try:
        return VEHICLE_CLASSES[name_or_class]
    except KeyError:
        raise ConfigError(
            f"unknown vehicle class {name_or_class!r}; choose from {', '.join(VEHICLE_CLASSES)}"
        ) from None
