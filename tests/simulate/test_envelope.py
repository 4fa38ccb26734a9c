"""Performance envelope: hand calculations, the power-doubling rule of thumb, the CLI verb."""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest

from fleetfuel.cli import main
from fleetfuel.constants import ADHESION_DRY_ASPHALT, ISA_SEA_LEVEL_DENSITY_KG_M3, STANDARD_GRAVITY_M_S2
from fleetfuel.errors import SpecError
from fleetfuel.simulate.atmosphere import air_density_kg_m3
from fleetfuel.simulate.envelope import (
    CAUTION,
    EnvelopeConfig,
    _Forces,
    _gear_segments,
    performance_envelope,
    top_speed_m_s,
)
from fleetfuel.simulate.spec import VehicleSpec, load_spec

MODELS = Path(__file__).resolve().parents[2] / "models"
G = STANDARD_GRAVITY_M_S2
RHO = float(air_density_kg_m3(0.0))  # the envelope's default air: ISA sea level
assert RHO == pytest.approx(ISA_SEA_LEVEL_DENSITY_KG_M3, rel=1e-7)  # 1.225 kg/m^3, ISO 2533


def _spec(name: str) -> VehicleSpec:
    return load_spec(MODELS / f"{name}.toml")


def _grade_from_force(force_n: float, mass_kg: float, crr: float) -> float:
    """Steepest grade for a force F: m g (sin t + c_r cos t) = F (Wong 2008, Sec. 3.1), as rise/run."""
    k = force_n / (mass_kg * G)
    theta = math.asin(k / math.sqrt(1 + crr * crr)) - math.atan(crr)
    return math.tan(theta)


def test_startability_adhesion_limited_hand_calculation() -> None:
    # Adhesion limit (Wong 2008, Sec. 3.1): mu s m g cos t = m g sin t + c_r m g cos t -> tan t = mu s - c_r
    spec = _spec("tractor_40t_diesel_axle264")
    env = performance_envelope(spec)
    expected_pct = (ADHESION_DRY_ASPHALT * 0.28 - 0.0062) * 100  # 21.78 %
    assert env.startability_limit == "adhesion"
    assert env.startability_pct == pytest.approx(expected_pct, abs=0.01)  # creep-speed drag < 0.001 %


def test_startability_torque_limited_hand_calculation() -> None:
    # Wheel force from peak motor torque in the lowest gear: T i_g i_f eta / r = 2400 * 3.6 * 3.2 * 0.95 / r
    spec = _spec("tractor_40t_electric")
    force = 2400 * 3.6 * 3.2 * 0.95 / spec.rolling_radius_m
    expected = _grade_from_force(force, spec.test_mass_kg(), 0.0062) * 100
    env = performance_envelope(spec)
    assert env.startability_limit == "torque"
    assert env.startability_pct == pytest.approx(expected, abs=0.01)
    assert env.startability_wet_pct == pytest.approx(expected, abs=0.01)  # wet grip 0.5 * 0.30 still enough


def test_gradeability_constant_power_hand_calculation() -> None:
    # At 60 km/h the electric tractor's motor is above base speed in gears 1-2: F = P eta / v.
    spec = _spec("tractor_40t_electric")
    v = 60 / 3.6
    force = 400e3 * 0.95 / v - RHO * spec.drag_area_m2 * v * v / 2
    expected = _grade_from_force(force, spec.test_mass_kg(), 0.0062) * 100
    env = performance_envelope(spec)
    assert env.gradeability_pct[60.0] == pytest.approx(expected, abs=1e-6)
    grades = [env.gradeability_pct[k] for k in (20.0, 40.0, 60.0, 80.0)]
    assert all(a > b for a, b in zip(grades, grades[1:], strict=False))


def test_power_doubling_rule_of_thumb_on_car() -> None:
    # Rule of thumb (common practice): aero-dominated, power-limited top speed grows with the cube
    # root of power, 2**(1/3) = 1.26; rolling resistance lifts the ratio a little.
    spec = _spec("car_petrol")
    assert spec.engine is not None and spec.body.governed_speed_kmh is None
    dense = tuple(float(r) for r in np.geomspace(4.0, 0.4, 60))  # gearing that never limits
    base = dataclasses.replace(spec, driveline=dataclasses.replace(spec.driveline, gear_ratios=dense))
    engine = spec.engine
    doubled = dataclasses.replace(base, engine=dataclasses.replace(
        engine, rated_power_kw=2 * engine.rated_power_kw,
        full_load_torque=tuple((rpm, 2 * nm) for rpm, nm in engine.full_load_torque)))
    v1 = performance_envelope(base)
    v2 = performance_envelope(doubled)
    assert v1.top_speed_limit == v2.top_speed_limit == "power"
    assert 1.26 <= v2.top_speed_kmh / v1.top_speed_kmh <= 1.30
    assert v1.top_speed_kmh == pytest.approx(v1.ballpark_top_speed_kmh, rel=0.01)


def test_top_speed_matches_cubic_ballpark_on_real_gearing() -> None:
    env = performance_envelope(_spec("car_petrol"))
    assert env.top_speed_limit == "power"
    assert env.top_speed_kmh == pytest.approx(env.ballpark_top_speed_kmh, rel=0.03)


def test_ballpark_top_speed_solves_cubic() -> None:
    # eta P = c_r m g v + 1/2 rho CdA v^3 (Wong 2008, Sec. 3.x power balance)
    spec = _spec("van_diesel")
    env = performance_envelope(spec)
    v = env.ballpark_top_speed_kmh / 3.6
    lhs = 0.93 * 105e3
    rhs = 0.0075 * spec.test_mass_kg() * G * v + RHO * spec.drag_area_m2 * v**3 / 2
    assert rhs == pytest.approx(lhs, rel=1e-9)


def test_governor_and_prime_mover_speed_limits() -> None:
    env = performance_envelope(_spec("tractor_40t_diesel_axle264"))
    assert env.top_speed_limit == "governor" and env.top_speed_kmh == pytest.approx(90.0)
    car = _spec("car_electric")
    free = dataclasses.replace(car, body=dataclasses.replace(car.body, governed_speed_kmh=None))
    free_env = performance_envelope(free)
    # motor cut-off: 12500 rpm / 9.1 at the rolling radius (hand)
    expected_kmh = 12500 * 2 * math.pi / 60 / 9.1 * car.rolling_radius_m * 3.6
    assert free_env.top_speed_limit == "prime_mover_speed"
    assert free_env.top_speed_kmh == pytest.approx(expected_kmh, rel=1e-6)


def test_constant_force_acceleration_closed_form() -> None:
    # Below base speed and at the adhesion limit the electric car pulls a constant force F; with
    # m dv/dt = A - B v^2 (A = F - c_r m g, B = rho CdA / 2) the standard integral gives
    # t = m / sqrt(A B) * artanh(v sqrt(B / A)) (Gillespie 1992, Ch. 2; a table integral).
    spec = _spec("car_electric")
    mass = spec.test_mass_kg()
    grip = ADHESION_DRY_ASPHALT * 0.55 * mass * G
    torque_force = 260 * 9.1 * 0.97 / spec.rolling_radius_m
    a = min(grip, torque_force) - 0.0075 * mass * G
    b = RHO * spec.drag_area_m2 / 2
    m_eq = float(spec.equivalent_mass_kg()[0])
    v = 40 / 3.6  # below the base speed of ~46.7 km/h
    expected = m_eq / math.sqrt(a * b) * math.atanh(v * math.sqrt(b / a))
    env = performance_envelope(spec, cfg=EnvelopeConfig(accel_targets_kmh=(40.0,)))
    assert env.accel_s[40.0] == pytest.approx(expected, rel=1e-4)


def test_shift_pauses_cost_about_their_duration() -> None:
    # Each traction pause costs roughly its own length (plus regaining the speed lost); common practice.
    spec = _spec("van_diesel")
    no_pause = dataclasses.replace(spec, driveline=dataclasses.replace(spec.driveline, shift_time_s=0.0))
    with_pause = performance_envelope(spec).accel_0_80_s
    without = performance_envelope(no_pause).accel_0_80_s
    assert with_pause is not None and without is not None
    forces = _Forces(spec, spec.test_mass_kg(), RHO, ADHESION_DRY_ASPHALT)
    cfg = EnvelopeConfig()
    top, _ = top_speed_m_s(forces, cfg)
    shifts = sum(1 for _, start, _ in _gear_segments(forces, top, cfg) if 0 < start < 80 / 3.6)
    assert shifts >= 2
    extra = with_pause - without
    assert 0.8 * shifts * 0.8 <= extra <= 1.5 * shifts * 0.8


def test_ballpark_acceleration_hand_calculation() -> None:
    # 1/2 m v^2 over half the rated power less 15 % (the documented allowance)
    spec = _spec("rigid_7t5_diesel")
    env = performance_envelope(spec)
    v = 80 / 3.6
    assert env.ballpark_accel_s[80.0] == pytest.approx(spec.test_mass_kg() * v * v / 2 / (150e3 / 2 * 0.85), rel=1e-12)
    assert env.accel_0_80_s is not None and env.accel_0_50_s is not None
    assert env.accel_0_50_s < env.accel_0_80_s
    assert env.accel_s[100.0] is None  # governed at 90 km/h


def test_heavier_payload_slows_and_weakens() -> None:
    spec = _spec("rigid_18t_diesel_235kw")
    light = performance_envelope(spec, payload_kg=0.0)
    heavy = performance_envelope(spec, payload_kg=spec.max_payload_kg)
    assert heavy.accel_0_80_s > light.accel_0_80_s  # type: ignore[operator]
    assert heavy.gradeability_pct[40.0] < light.gradeability_pct[40.0]  # type: ignore[operator]
    with pytest.raises(SpecError, match="above max_gross_mass_kg"):
        performance_envelope(spec, payload_kg=spec.max_payload_kg + 1)


def test_cli_envelope_json(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["envelope", str(MODELS / "van_electric.toml"), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    for key in ("top_speed_kmh", "startability_pct", "gradeability_pct", "accel_0_50_s", "accel_0_80_s",
                "ballpark_top_speed_kmh", "ballpark_accel_0_80_s"):
        assert key in data
    assert set(data["gradeability_pct"]) == {"10", "20", "40", "60", "80"}
    assert data["caution"] == CAUTION


def test_cli_envelope_text_and_payload(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["envelope", str(MODELS / "bus_12m_diesel.toml"), "--payload-kg", "5000"]) == 0
    out = capsys.readouterr().out
    assert "payload 5000 kg" in out and "maker's data and local regulations" in out


def test_cli_envelope_errors_are_one_line(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    assert main(["envelope", str(MODELS / "car_petrol.toml"), "--payload-kg", "9000"]) == SpecError.exit_code
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "car_petrol.toml" in err
    bad = tmp_path / "bad.toml"
    bad.write_text('name = "x"\n', encoding="utf-8")
    assert main(["envelope", str(bad)]) == SpecError.exit_code
    assert "missing required key 'vehicle_class'" in capsys.readouterr().err
