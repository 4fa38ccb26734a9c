"""Read a vehicle spec TOML into :class:`~fleetfuel.simulate.spec.VehicleSpec`.

Each section's keys are declared in :data:`SECTIONS` (kind, required). Unknown keys, missing
required keys and wrong types are refused with one line naming the file, ``[section]`` and key;
range checks live on the dataclasses and are re-raised here with the file name in front.
"""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any, Final

from fleetfuel.errors import SpecError
from fleetfuel.simulate.spec import VehicleSpec
from fleetfuel.simulate.spec_parts import Auxiliary, Battery, Body, Cost, Driveline, Engine, Motor, Willans
from fleetfuel.simulate.tyre import tyre_rolling_radius_m

NUM, TEXT, NUMS, PAIRS, PATH, TABLE = "number", "text", "list of numbers", "list of [rpm, nm] pairs", "file", "table"
REQUIRED, OPTIONAL = True, False

SECTIONS: Final[dict[str, dict[str, tuple[str, bool]]]] = {
    "": {"name": (TEXT, REQUIRED), "vehicle_class": (TEXT, REQUIRED), "powertrain": (TEXT, REQUIRED),
         "body": (TABLE, REQUIRED), "driveline": (TABLE, REQUIRED), "engine": (TABLE, OPTIONAL),
         "motor": (TABLE, OPTIONAL), "battery": (TABLE, OPTIONAL), "auxiliary": (TABLE, REQUIRED),
         "cost": (TABLE, OPTIONAL)},
    "body": {"curb_mass_kg": (NUM, REQUIRED), "payload_kg": (NUM, REQUIRED), "max_gross_mass_kg": (NUM, REQUIRED),
             "driven_axle_load_share": (NUM, REQUIRED), "front_area_m2": (NUM, REQUIRED),
             "drag_coefficient": (NUM, REQUIRED), "rolling_coefficient": (NUM, REQUIRED),
             "tyre": (TEXT, OPTIONAL), "rolling_radius_m": (NUM, OPTIONAL),
             "governed_speed_kmh": (NUM, OPTIONAL), "rotating_mass_share": (NUM, OPTIONAL)},
    "driveline": {"gear_ratios": (NUMS, REQUIRED), "final_drive_ratio": (NUM, REQUIRED),
                  "efficiency": (NUM, REQUIRED), "shift_time_s": (NUM, OPTIONAL)},
    "engine": {"fuel": (TEXT, REQUIRED), "rated_power_kw": (NUM, REQUIRED), "rated_speed_rpm": (NUM, REQUIRED),
               "idle_speed_rpm": (NUM, REQUIRED), "max_speed_rpm": (NUM, REQUIRED),
               "full_load_torque": (PAIRS, REQUIRED), "fuel_map": (PATH, OPTIONAL), "willans": (TABLE, OPTIONAL),
               "inertia_kg_m2": (NUM, OPTIONAL), "motoring_torque_share": (NUM, OPTIONAL)},
    "engine.willans": {"displacement_l": (NUM, REQUIRED), "stroke_m": (NUM, REQUIRED),
                       "efficiency": (NUMS, REQUIRED), "efficiency_load_slope_per_bar": (NUM, REQUIRED),
                       "friction_mep_bar": (NUMS, REQUIRED)},
    "motor": {"rated_power_kw": (NUM, REQUIRED), "max_torque_nm": (NUM, REQUIRED), "max_speed_rpm": (NUM, REQUIRED),
              "efficiency": (NUM, OPTIONAL), "efficiency_map": (PATH, OPTIONAL), "inertia_kg_m2": (NUM, OPTIONAL)},
    "battery": {"usable_kwh": (NUM, REQUIRED), "discharge_efficiency": (NUM, REQUIRED),
                "charge_efficiency": (NUM, REQUIRED), "charger_efficiency": (NUM, REQUIRED),
                "max_charge_power_kw": (NUM, REQUIRED), "regen_share": (NUM, REQUIRED), "mass_kg": (NUM, REQUIRED),
                "initial_soc": (NUM, OPTIONAL)},
    "auxiliary": {"power_kw": (NUM, REQUIRED)},
    "cost": {"purchase_price": (NUM, REQUIRED), "residual_share": (NUM, REQUIRED), "life_years": (NUM, REQUIRED),
             "maintenance_per_km": (NUM, REQUIRED), "currency": (TEXT, OPTIONAL)},
}
"""section -> key -> (kind, required). The top level is section ``""``."""

_RENAMED: Final = {"fuel_map": "fuel_map_path", "efficiency_map": "efficiency_map_path"}


def _is_number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _convert(kind: str, value: Any, base: Path) -> Any:
    """The value as the dataclass wants it, or raise ValueError when its type is wrong."""
    if kind == NUM and _is_number(value):
        return float(value)
    if kind in (TEXT, PATH) and isinstance(value, str) and value.strip():
        return value if kind == TEXT else (base / value).resolve()
    if kind == NUMS and isinstance(value, list) and all(_is_number(v) for v in value):
        return tuple(float(v) for v in value)
    if kind == PAIRS and isinstance(value, list) and all(
        isinstance(p, list) and len(p) == 2 and all(_is_number(v) for v in p) for p in value
    ):
        return tuple((float(p[0]), float(p[1])) for p in value)
    if kind == TABLE and isinstance(value, dict):
        return value
    raise ValueError(kind)


def _section(path: Path, name: str, table: dict[str, Any]) -> dict[str, Any]:
    """Check one table's keys and types; return the converted values (dataclass field names)."""
    schema = SECTIONS[name]
    label = f"[{name}] " if name else ""
    for key in table:
        if key not in schema:
            raise SpecError(f"{path}: {label}unknown key {key!r}; known keys: {', '.join(schema)}")
    out: dict[str, Any] = {}
    for key, (kind, required) in schema.items():
        if key not in table:
            if required:
                raise SpecError(f"{path}: {label}missing required key {key!r} ({kind})")
            continue
        try:
            out[_RENAMED.get(key, key)] = _convert(kind, table[key], path.parent)
        except ValueError:
            found = table[key]
            raise SpecError(
                f"{path}: {label}{key} must be a {kind}, found {type(found).__name__} {found!r}"[:300]
            ) from None
    return out


def _body(path: Path, raw: dict[str, Any]) -> Body:
    values = _section(path, "body", raw)
    if ("tyre" in values) == ("rolling_radius_m" in values):
        raise SpecError(f"{path}: [body] give exactly one of tyre = \"315/70R22.5\" or rolling_radius_m")
    if "tyre" in values:
        try:
            values["rolling_radius_m"] = tyre_rolling_radius_m(values["tyre"])
        except SpecError as exc:
            raise SpecError(f"{path}: [body] tyre: {exc}") from None
    return Body(**values)


def _engine(path: Path, raw: dict[str, Any]) -> Engine:
    values = _section(path, "engine", raw)
    if "willans" in values:
        values["willans"] = Willans(**_section(path, "engine.willans", values["willans"]))
    engine = Engine(**values)
    if engine.fuel_map_path is not None:
        _check_fuel_map(path, engine)
    return engine


def _check_fuel_map(path: Path, engine: Engine) -> None:
    from fleetfuel.simulate.fuelmap import load_fuel_map

    map_path = engine.fuel_map_path
    assert map_path is not None
    if not map_path.is_file():
        raise SpecError(f"{path}: [engine] fuel_map file not found: {map_path}")
    grid = load_fuel_map(map_path)
    rpm_lo, rpm_hi = grid.speed_rpm[0], grid.speed_rpm[-1]
    if rpm_lo > engine.idle_speed_rpm or rpm_hi < engine.rated_speed_rpm or grid.torque_nm[-1] < engine.peak_torque_nm:
        raise SpecError(
            f"{path}: [engine] fuel_map {map_path.name} covers {rpm_lo:g}-{rpm_hi:g} rpm and up to "
            f"{grid.torque_nm[-1]:g} N m; it must cover idle {engine.idle_speed_rpm:g} to rated "
            f"{engine.rated_speed_rpm:g} rpm and peak torque {engine.peak_torque_nm:g} N m"
        )


def _motor(path: Path, raw: dict[str, Any]) -> Motor:
    motor = Motor(**_section(path, "motor", raw))
    if motor.efficiency_map_path is not None and not motor.efficiency_map_path.is_file():
        raise SpecError(f"{path}: [motor] efficiency_map file not found: {motor.efficiency_map_path}")
    return motor


def read_spec(path: Path) -> VehicleSpec:
    """Parse, check and build the spec in ``path`` (see :func:`fleetfuel.simulate.spec.load_spec`)."""
    try:
        with path.open("rb") as handle:
            doc = tomllib.load(handle)
    except OSError as exc:
        raise SpecError(f"{path}: cannot read spec file ({exc.strerror})") from None
    except tomllib.TOMLDecodeError as exc:
        raise SpecError(f"{path}: not valid TOML ({exc})") from None
    top = _section(path, "", doc)
    try:
        return VehicleSpec(
            name=top["name"], vehicle_class=top["vehicle_class"], powertrain=top["powertrain"],
            body=_body(path, top["body"]),
            driveline=Driveline(**_section(path, "driveline", top["driveline"])),
            engine=_engine(path, top["engine"]) if "engine" in top else None,
            motor=_motor(path, top["motor"]) if "motor" in top else None,
            battery=Battery(**_section(path, "battery", top["battery"])) if "battery" in top else None,
            auxiliary=Auxiliary(**_section(path, "auxiliary", top["auxiliary"])),
            cost=Cost(**_section(path, "cost", top["cost"])) if "cost" in top else None,
            source_path=path,
        )
    except SpecError as exc:
        message = str(exc)
        raise SpecError(message if message.startswith(str(path)) else f"{path}: {message}") from None
