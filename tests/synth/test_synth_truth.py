"""The truth fuel model: its formula on worked examples, counters, and plausible consumption."""

from __future__ import annotations

import ast
from pathlib import Path

import numpy as np
import pytest

from fleetfuel import synth
from fleetfuel.synth import duties
from fleetfuel.synth.truth import TRUTH_MODELS

PACKAGE = Path(__file__).resolve().parents[2] / "fleetfuel" / "synth"


def test_wheel_power_worked_example() -> None:
    # Worked example of the documented formula, 40 t class parameters: 30 t at 20 m/s on a 2 %
    # grade, no acceleration: rolling + grade force 30000 * 9.80665 * ((0.005 + 0.00002 * 20)
    # cos(atan 0.02) + sin(atan 0.02)) = 7471.17 N; aero 0.5 * 1.225 (ISO 2533) * 5.6 * 20^3
    # = 27440 W; P = 20 * 7471.17 + 27440 = 176.863 kW.
    model = TRUTH_MODELS["tractor_40t"]
    power = model.wheel_power_kw(np.array([20.0]), np.array([0.0]), np.array([0.02]), np.array([30000.0]))
    assert power[0] == pytest.approx(176.8635, rel=1e-6)


def test_idle_rate_worked_example() -> None:
    # Van at standstill, engine on: 0.12 + 0.062 * 1.2 + 0.010 * 1.2^2 / 105 = 0.194537 g/s,
    # / 0.832 kg/L (diesel, JEC WTW v5) = 0.8418 L/h: a warm van idling with accessories
    # (0.6-1.0 L/h; common practice, no source).
    model = TRUTH_MODELS["van"]
    zero = np.zeros(1)
    rate = model.base_rate_g_s(zero, zero, zero, np.array([2500.0]), np.array([True]))
    assert rate[0] == pytest.approx(0.194537, rel=1e-5)
    assert rate[0] / model.fuel_density_kg_l * 3.6 == pytest.approx(0.8418, rel=1e-3)
    off = model.base_rate_g_s(zero, zero, zero, np.array([2500.0]), np.array([False]))
    assert off[0] == 0.0


def test_fuel_cut_off_on_overrun() -> None:
    model = TRUTH_MODELS["rigid_18t"]
    rate = model.base_rate_g_s(np.array([15.0, 2.0]), np.array([-1.0, -1.0]), np.zeros(2), np.full(2, 12000.0),
                               np.array([True, True]))
    assert rate[0] == 0.0  # braking at speed: injection cut
    assert rate[1] > 0.0   # below the cut-off speed the engine idles


def test_counter_is_quantised_floor_of_the_truth() -> None:
    step = 0.5
    start = 12345.25
    d = synth.drive(synth.line_route(10000, limit_kmh=80), "rigid_7t5", seed=2,
                    logger=synth.Logger(fuel_counter_step_l=step, fuel_counter_start_l=start))
    counter = d.frame.fuel_used_l.to_numpy()
    exact = start + d.truth.fuel_used_l.to_numpy()
    assert np.all(np.diff(counter) >= 0)
    assert np.all(counter <= exact + 1e-9) and np.all(counter > exact - step - 1e-9)
    assert np.allclose(counter / step, np.round(counter / step))


def test_cold_start_costs_extra() -> None:
    route = synth.line_route(8000, limit_kmh=60)
    cold = synth.drive(route, "car", seed=5, warm_since_s=0.0)
    warm = synth.drive(route, "car", seed=5, warm_since_s=-7200.0)
    assert cold.fuel_used_l > warm.fuel_used_l * 1.03


@pytest.mark.parametrize(
    ("cls", "build", "low", "high"),
    [
        # Ranges fleets report (common practice, no source; see fleetfuel/synth/truth.py):
        ("van", lambda rng: duties.parcel_round(rng, "north-west", 60), 9.0, 15.0),
        ("rigid_7t5", lambda rng: duties.regional(rng, "loop_west", 3, 600.0), 15.0, 22.0),
        ("tractor_40t", lambda rng: duties.trunk(rng), 26.0, 36.0),
        ("bus_12m", lambda rng: duties.bus(rng, 7), 38.0, 60.0),
        ("car", lambda rng: duties.pool_car(rng, "eskerby"), 5.0, 9.0),
    ],
)
def test_consumption_in_reported_ranges(cls: str, build, low: float, high: float) -> None:
    route = build(np.random.default_rng(4))
    d = synth.drive(route, cls, seed=4)
    per_100km = d.fuel_used_l / route.length_m * 1e5
    assert low <= per_100km <= high


def test_synth_never_imports_the_vehicle_model() -> None:
    for path in PACKAGE.glob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.module:
                assert not node.module.startswith("fleetfuel.simulate"), path
            if isinstance(node, ast.Import):
                assert not any(a.name.startswith("fleetfuel.simulate") for a in node.names), path
