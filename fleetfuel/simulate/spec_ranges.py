"""Plausible physical ranges of spec values, and the check that names ``[section] key``, range and value."""

from __future__ import annotations

import math
from typing import Final

from fleetfuel.errors import SpecError

# Plausible physical ranges, (low, high) inclusive, for road vehicles of the five classes.
# Validation limits only (catch unit slips such as tonnes for kg or percent for shares).
RANGES: Final[dict[str, tuple[float, float]]] = {
    "body.curb_mass_kg": (300.0, 45000.0),
    "body.payload_kg": (0.0, 45000.0),
    "body.max_gross_mass_kg": (500.0, 70000.0),
    "body.driven_axle_load_share": (0.05, 1.0),
    "body.front_area_m2": (1.0, 15.0),
    "body.drag_coefficient": (0.15, 1.5),
    "body.rolling_coefficient": (0.001, 0.03),
    "body.rolling_radius_m": (0.15, 0.8),
    "body.governed_speed_kmh": (20.0, 300.0),
    "body.rotating_mass_share": (0.0, 0.3),
    "driveline.gear_ratios": (0.3, 20.0),
    "driveline.final_drive_ratio": (1.0, 20.0),
    "driveline.efficiency": (0.6, 1.0),
    "driveline.shift_time_s": (0.0, 5.0),
    "engine.rated_power_kw": (10.0, 1200.0),
    "engine.rated_speed_rpm": (800.0, 9000.0),
    "engine.idle_speed_rpm": (300.0, 1500.0),
    "engine.max_speed_rpm": (800.0, 10000.0),
    "engine.full_load_torque.rpm": (0.0, 10000.0),
    "engine.full_load_torque.nm": (0.0, 6000.0),
    "engine.inertia_kg_m2": (0.0, 20.0),
    "engine.motoring_torque_share": (0.0, 0.5),
    "engine.willans.displacement_l": (0.5, 20.0),
    "engine.willans.stroke_m": (0.04, 0.3),
    "engine.willans.efficiency_at_zero_speed": (0.1, 0.65),
    "engine.willans.friction_mep_bar": (0.0, 5.0),
    "motor.rated_power_kw": (5.0, 1500.0),
    "motor.max_torque_nm": (10.0, 20000.0),
    "motor.max_speed_rpm": (500.0, 30000.0),
    "motor.efficiency": (0.5, 0.995),
    "motor.inertia_kg_m2": (0.0, 20.0),
    "battery.usable_kwh": (1.0, 2000.0),
    "battery.discharge_efficiency": (0.7, 1.0),
    "battery.charge_efficiency": (0.7, 1.0),
    "battery.charger_efficiency": (0.5, 1.0),
    "battery.max_charge_power_kw": (0.0, 2000.0),
    "battery.regen_share": (0.0, 1.0),
    "battery.mass_kg": (5.0, 15000.0),
    "battery.initial_soc": (0.0, 1.0),
    "auxiliary.power_kw": (0.0, 60.0),
    "cost.purchase_price": (0.0, 5.0e6),
    "cost.residual_share": (0.0, 1.0),
    "cost.life_years": (1.0, 40.0),
    "cost.maintenance_per_km": (0.0, 10.0),
}


def check_range(key: str, value: float) -> None:
    """Raise :class:`SpecError` when ``value`` lies outside :data:`RANGES` ``[key]``."""
    low, high = RANGES[key]
    if not (math.isfinite(value) and low <= value <= high):
        section, _, name = key.rpartition(".")
        raise SpecError(f"[{section}] {name} must be in [{low:g}, {high:g}], found {value!r}")
