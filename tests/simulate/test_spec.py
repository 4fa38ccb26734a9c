"""Spec files: loading, derived quantities, and one-line errors for broken specs."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest

from fleetfuel.constants import ADHESION_DRY_ASPHALT, STANDARD_GRAVITY_M_S2
from fleetfuel.errors import SpecError
from fleetfuel.simulate.spec import VehicleSpec, load_catalogue, load_spec

FUEL_MAP = """# tiny test map
engine_speed_rpm,torque_nm,fuel_rate_g_s
600,0,0.3
600,2500,7.0
2200,0,1.5
2200,2500,25.0
"""

COMBUSTION = """
name = "test tractor"
vehicle_class = "tractor_trailer"
powertrain = "combustion"

[body]
curb_mass_kg = 15000
payload_kg = 20000
max_gross_mass_kg = 40000
driven_axle_load_share = 0.28
front_area_m2 = 10.0
drag_coefficient = 0.6
rolling_coefficient = 0.006
tyre = "315/70R22.5"
governed_speed_kmh = 90.0
rotating_mass_share = 0.04

[driveline]
gear_ratios = [14.0, 7.0, 3.5, 1.0]
final_drive_ratio = 2.5
efficiency = 0.95

[engine]
fuel = "diesel"
rated_power_kw = 330.0
rated_speed_rpm = 1800.0
idle_speed_rpm = 600.0
max_speed_rpm = 2200.0
full_load_torque = [[600, 1200], [1000, 2300], [1400, 2300], [1800, 1751], [2200, 0]]
fuel_map = "maps/test_map.csv"
inertia_kg_m2 = 3.0

[auxiliary]
power_kw = 4.0
"""

ELECTRIC = """
name = "test e-van"
vehicle_class = "van"
powertrain = "electric"

[body]
curb_mass_kg = 2500
payload_kg = 700
max_gross_mass_kg = 3500
driven_axle_load_share = 0.55
front_area_m2 = 4.6
drag_coefficient = 0.37
rolling_coefficient = 0.0075
rolling_radius_m = 0.35

[driveline]
gear_ratios = [1.0]
final_drive_ratio = 10.0
efficiency = 0.97

[motor]
rated_power_kw = 100.0
max_torque_nm = 290.0
max_speed_rpm = 12000.0
efficiency = 0.9
inertia_kg_m2 = 0.05

[battery]
usable_kwh = 68.0
discharge_efficiency = 0.96
charge_efficiency = 0.96
charger_efficiency = 0.9
max_charge_power_kw = 60.0
regen_share = 0.8
mass_kg = 480.0

[auxiliary]
power_kw = 0.6

[cost]
purchase_price = 52000.0
residual_share = 0.3
life_years = 6.0
maintenance_per_km = 0.035
"""


def _write(folder: Path, text: str, name: str = "spec.toml") -> Path:
    (folder / "maps").mkdir(exist_ok=True)
    (folder / "maps" / "test_map.csv").write_text(FUEL_MAP, encoding="utf-8")
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture
def tractor(tmp_path: Path) -> VehicleSpec:
    return load_spec(_write(tmp_path, COMBUSTION))


def test_combustion_spec_derived_quantities(tractor: VehicleSpec, tmp_path: Path) -> None:
    assert tractor.engine is not None and tractor.motor is None and tractor.battery is None
    # relative fuel_map path resolves against the spec file's folder
    assert tractor.engine.fuel_map_path == (tmp_path / "maps" / "test_map.csv").resolve()
    assert tractor.test_mass_kg() == 35000.0
    assert tractor.test_mass_kg(0.0) == 15000.0
    assert tractor.max_payload_kg == 25000.0
    np.testing.assert_allclose(tractor.overall_ratios, [35.0, 17.5, 8.75, 2.5])
    # ETRTO: 3.05 x 1.0125 m / (2 pi)
    assert tractor.rolling_radius_m == pytest.approx(3.05 * 1.0125 / (2 * math.pi), rel=1e-12)
    assert tractor.drag_area_m2 == pytest.approx(6.0)
    assert tractor.governed_speed_m_s == pytest.approx(25.0)
    assert tractor.rated_power_w == 330e3
    assert tractor.fuel is not None and tractor.fuel.name == "diesel"


def test_equivalent_mass_hand_calculation(tractor: VehicleSpec) -> None:
    # Wong (2008) Sec. 3.3: m_eq = m + m_rot + I_e (i_g i_f / r)^2 per gear
    r = tractor.rolling_radius_m
    expected = 35000 + 0.04 * 15000 + 3.0 * (np.array([35.0, 17.5, 8.75, 2.5]) / r) ** 2
    np.testing.assert_allclose(tractor.equivalent_mass_kg(), expected, rtol=1e-12)


def test_adhesion_force_hand_calculation(tractor: VehicleSpec) -> None:
    # driven-axle load x adhesion: 35000 kg * g * 0.28 * 0.8
    expected = 35000 * STANDARD_GRAVITY_M_S2 * 0.28 * ADHESION_DRY_ASPHALT
    assert tractor.adhesion_force_n(ADHESION_DRY_ASPHALT) == pytest.approx(expected, rel=1e-12)


def test_electric_spec(tmp_path: Path) -> None:
    spec = load_spec(_write(tmp_path, ELECTRIC))
    assert spec.engine is None and spec.motor is not None and spec.battery is not None
    assert spec.fuel is None
    assert spec.rolling_radius_m == 0.35
    assert spec.governed_speed_m_s == math.inf
    # base speed = P / T_max: 100 kW / 290 N m = 344.8 rad/s = 3293 rpm
    assert spec.motor.base_speed_rpm == pytest.approx(100e3 / 290 * 60 / (2 * math.pi), rel=1e-12)
    assert spec.battery.initial_soc == 1.0
    assert spec.cost is not None and spec.cost.currency == "EUR"


def test_payload_beyond_gross_mass_refused(tractor: VehicleSpec) -> None:
    with pytest.raises(SpecError, match=r"payload 30000 kg .* above max_gross_mass_kg = 40000 \(max payload 25000 kg\)"):
        tractor.test_mass_kg(30000)
    with pytest.raises(SpecError, match="payload must be >= 0"):
        tractor.test_mass_kg(-1.0)


def test_replace_revalidates(tractor: VehicleSpec) -> None:
    with pytest.raises(SpecError, match=r"\[body\] drag_coefficient must be in \[0.15, 1.5\], found 5"):
        dataclasses.replace(tractor.body, drag_coefficient=5.0)
    faster = dataclasses.replace(tractor, body=dataclasses.replace(tractor.body, governed_speed_kmh=None))
    assert faster.governed_speed_m_s == math.inf
    assert tractor.governed_speed_m_s == pytest.approx(25.0)  # original untouched


# Each broken spec: (base text, old, new, words the one-line message must hold)
BROKEN = [
    ("unknown_top_key", COMBUSTION, 'name = "test tractor"', 'name = "x"\ncolour = "red"', ["colour", "unknown key"]),
    ("unknown_body_key", COMBUSTION, "drag_coefficient = 0.6", "dragcoef = 0.6", ["[body]", "dragcoef"]),
    ("missing_curb_mass", COMBUSTION, "curb_mass_kg = 15000\n", "", ["[body]", "curb_mass_kg", "missing"]),
    ("drag_out_of_range", COMBUSTION, "drag_coefficient = 0.6", "drag_coefficient = 3.0",
     ["[body] drag_coefficient", "[0.15, 1.5]", "found 3.0"]),
    ("rolling_is_text", COMBUSTION, "rolling_coefficient = 0.006", 'rolling_coefficient = "low"',
     ["rolling_coefficient", "must be a number", "'low'"]),
    ("mass_is_bool", COMBUSTION, "curb_mass_kg = 15000", "curb_mass_kg = true", ["curb_mass_kg", "number"]),
    ("payload_beyond_gross", COMBUSTION, "payload_kg = 20000", "payload_kg = 30000",
     ["[body] payload_kg", "max_gross_mass_kg = 40000"]),
    ("ratios_not_decreasing", COMBUSTION, "[14.0, 7.0, 3.5, 1.0]", "[14.0, 3.5, 7.0, 1.0]",
     ["[driveline] gear_ratios", "strictly decreasing"]),
    ("unknown_fuel", COMBUSTION, 'fuel = "diesel"', 'fuel = "kerosene"', ["[engine] fuel", "kerosene"]),
    ("fuel_map_missing", COMBUSTION, "maps/test_map.csv", "maps/none.csv", ["[engine] fuel_map", "none.csv"]),
    ("tyre_and_radius", COMBUSTION, 'tyre = "315/70R22.5"', 'tyre = "315/70R22.5"\nrolling_radius_m = 0.5',
     ["[body]", "tyre", "rolling_radius_m"]),
    ("tyre_malformed", COMBUSTION, 'tyre = "315/70R22.5"', 'tyre = "315-70-22.5"', ["[body] tyre", "315-70-22.5"]),
    ("not_toml", COMBUSTION, "[driveline]", "[driveline", ["not valid TOML"]),
    ("curve_power_mismatch", COMBUSTION, "rated_power_kw = 330.0", "rated_power_kw = 500.0",
     ["[engine] full_load_torque", "rated_power_kw = 500"]),
    ("no_engine_section", COMBUSTION, "[engine]", "[engine_data]", ["engine_data", "unknown key"]),
    ("missing_engine", COMBUSTION, COMBUSTION[COMBUSTION.index("[engine]"):COMBUSTION.index("[auxiliary]")], "",
     ["[engine]", "needs"]),
    ("electric_with_engine", ELECTRIC, "[auxiliary]", COMBUSTION[COMBUSTION.index("[engine]"):COMBUSTION.index("[auxiliary]")] + "[auxiliary]",
     ["[engine]", "must not have"]),
    ("battery_heavier_than_vehicle", ELECTRIC, "mass_kg = 480.0", "mass_kg = 2600.0", ["[battery] mass_kg", "curb_mass_kg"]),
    ("motor_base_above_max", ELECTRIC, "max_speed_rpm = 12000.0", "max_speed_rpm = 3000.0", ["[motor]", "max_speed_rpm"]),
    ("bad_class", ELECTRIC, 'vehicle_class = "van"', 'vehicle_class = "tank"', ["vehicle_class", "tank"]),
    ("willans_incomplete", COMBUSTION, 'fuel_map = "maps/test_map.csv"\ninertia_kg_m2 = 3.0',
     "inertia_kg_m2 = 3.0\n[engine.willans]\ndisplacement_l = 12.8\nstroke_m = 0.166\nefficiency = [0.47, 0.012, -0.0009]\nfriction_mep_bar = [0.9, 0.012]",
     ["[engine.willans]", "efficiency_load_slope_per_bar", "missing"]),
    ("motor_efficiency_share_as_percent", ELECTRIC, "efficiency = 0.9\n", "efficiency = 90\n", ["[motor] efficiency", "found 90"]),
    ("cost_missing_life", ELECTRIC, "life_years = 6.0\n", "", ["[cost]", "life_years"]),
]


@pytest.mark.parametrize(("label", "base", "old", "new", "words"), BROKEN, ids=[b[0] for b in BROKEN])
def test_broken_spec_is_one_line_error_naming_file_and_key(tmp_path: Path, label: str, base: str, old: str,
                                                           new: str, words: list[str]) -> None:
    assert base.count(old) >= 1, label
    path = _write(tmp_path, base.replace(old, new, 1), name=f"{label}.toml")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(str(path))
    for word in words:
        assert word in message, (label, message)


def test_unreadable_file(tmp_path: Path) -> None:
    with pytest.raises(SpecError, match="cannot read spec file"):
        load_spec(tmp_path / "absent.toml")


def test_bad_fuel_map_names_csv(tmp_path: Path) -> None:
    path = _write(tmp_path, COMBUSTION)
    (tmp_path / "maps" / "test_map.csv").write_text(FUEL_MAP.replace("2200,2500,25.0\n", ""), encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    assert str(path) in str(info.value) and "test_map.csv" in str(info.value) and "full grid" in str(info.value)


def test_load_catalogue_folder_sorted(tmp_path: Path) -> None:
    _write(tmp_path, ELECTRIC, "b.toml")
    _write(tmp_path, COMBUSTION, "a.toml")
    specs = load_catalogue(tmp_path)
    assert [s.source_path.name for s in specs if s.source_path] == ["a.toml", "b.toml"]
    with pytest.raises(SpecError, match="not found"):
        load_catalogue(tmp_path / "nowhere")
