"""Fuel maps and the Willans line: hand calculations, a reference interpolator, the generator."""

from __future__ import annotations

import importlib.util
import math
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator

from fleetfuel.constants import DIESEL, PETROL
from fleetfuel.errors import SpecError
from fleetfuel.simulate.fuelmap import (
    WillansLine,
    fuel_model,
    load_fuel_map,
    max_torque_nm,
    motoring_torque_nm,
)
from fleetfuel.simulate.spec import load_spec
from fleetfuel.simulate.spec_parts import Engine, Willans

REPO = Path(__file__).resolve().parents[2]
MODELS = REPO / "models"


def _write_map(path: Path, speeds: np.ndarray, torques: np.ndarray, fuel: np.ndarray) -> Path:
    rows = ["# test", "engine_speed_rpm,torque_nm,fuel_rate_g_s"]
    rows += [f"{float(s)!r},{float(t)!r},{float(fuel[i, j])!r}" for i, s in enumerate(speeds) for j, t in enumerate(torques)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_willans_line_hand_calculation() -> None:
    # Guzzella & Onder (2010) Sec. 2.3 with constant efficiency and friction (e1 = 0, no speed terms):
    # P_fuel = (T + T_f) * omega / e, T_f = p_me0 V_d / (4 pi) for a four-stroke engine.
    params = Willans(displacement_l=2.0, stroke_m=0.09, efficiency=(0.4, 0.0, 0.0),
                     efficiency_load_slope_per_bar=0.0, friction_mep_bar=(1.0, 0.0))
    line = WillansLine(params=params, lower_heating_value_j_kg=DIESEL.lower_heating_value_j_kg)
    friction_nm = 1e5 * 0.002 / (4 * math.pi)  # 15.915 N m
    omega = 2000 * 2 * math.pi / 60
    expected_g_s = (100 + friction_nm) * omega / 0.4 / 43.1e6 * 1000  # 1.4083 g/s
    assert line.fuel_rate_g_s(2000.0, 100.0) == pytest.approx(expected_g_s, rel=1e-12)
    assert line.friction_torque_nm(2000.0) == pytest.approx(friction_nm, rel=1e-12)
    # negative torque (overrun) is evaluated at zero torque: the caller applies fuel cut
    assert line.fuel_rate_g_s(2000.0, -50.0) == pytest.approx(line.fuel_rate_g_s(2000.0, 0.0))


def test_willans_line_solves_its_quadratic() -> None:
    # p_me = (e0 - e1 p_mf) p_mf - p_me0 must hold for the fuel mep the model returns.
    params = Willans(displacement_l=12.8, stroke_m=0.166, efficiency=(0.47, 0.012, -0.0009),
                     efficiency_load_slope_per_bar=0.0007, friction_mep_bar=(0.9, 0.012))
    line = WillansLine(params=params, lower_heating_value_j_kg=DIESEL.lower_heating_value_j_kg)
    n = np.array([800.0, 1200.0, 1800.0])
    torque = np.array([500.0, 2000.0, 1500.0])
    vd = 12.8e-3
    fuel_kg_s = line.fuel_rate_g_s(n, torque) / 1000
    pmf = fuel_kg_s * 43.1e6 / (vd * n / 120)  # Pa
    cm = 2 * 0.166 * n / 60
    e = 0.47 + 0.012 * cm - 0.0009 * cm**2 - 0.0007e-5 * pmf
    pme = torque * 4 * math.pi / vd
    np.testing.assert_allclose(e * pmf - (0.9 + 0.012 * cm**2) * 1e5, pme, rtol=1e-9)


def test_grid_matches_scipy_reference_interpolator(tmp_path: Path) -> None:
    # scipy RegularGridInterpolator (linear) as the reference for bilinear interpolation.
    rng = np.random.default_rng(7)
    speeds = np.linspace(600.0, 2200.0, 9)
    torques = np.linspace(0.0, 2400.0, 13)
    fuel = rng.uniform(0.3, 20.0, (9, 13))
    grid = load_fuel_map(_write_map(tmp_path / "m.csv", speeds, torques, fuel))
    reference = RegularGridInterpolator((speeds, torques), fuel)
    s = rng.uniform(600, 2200, (500, 12))
    t = rng.uniform(0, 2400, (500, 12))
    np.testing.assert_allclose(grid.fuel_rate_g_s(s, t), reference((s, t)), rtol=1e-12, atol=1e-12)
    # outside the grid the value is held at the edge (reference evaluated at the clipped point)
    np.testing.assert_allclose(grid.fuel_rate_g_s([400.0, 3000.0], [-100.0, 9999.0]),
                               reference(([600.0, 2200.0], [0.0, 2400.0])), rtol=1e-12)
    assert np.isnan(grid.fuel_rate_g_s(np.nan, 100.0))
    assert grid.fuel_rate_g_s(np.ones((3, 4)) * 1000, 100.0).shape == (3, 4)


def test_non_uniform_map_is_resampled_exactly_for_bilinear_data(tmp_path: Path) -> None:
    # f = a + b s + c t + d s t is reproduced exactly by any bilinear interpolation (math identity).
    speeds = np.array([600.0, 800.0, 1200.0, 2200.0])
    torques = np.array([0.0, 500.0, 2400.0])
    s, t = np.meshgrid(speeds, torques, indexing="ij")

    def f(x, y):
        return 0.2 + 1e-3 * x + 4e-3 * y + 2e-6 * x * y

    grid = load_fuel_map(_write_map(tmp_path / "nu.csv", speeds, torques, f(s, t)))
    assert np.allclose(np.diff(grid.speed_rpm), np.diff(grid.speed_rpm)[0])
    probe_s = np.array([650.0, 1000.0, 1999.0])
    probe_t = np.array([10.0, 1500.0, 2300.0])
    np.testing.assert_allclose(grid.fuel_rate_g_s(probe_s, probe_t), f(probe_s, probe_t), rtol=1e-10)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("speed,torque,fuel\n1,2,3\n", ["header"]),
        ("engine_speed_rpm,torque_nm,fuel_rate_g_s\n600,0,1\n600,10,x\n700,0,1\n700,10,1\n", ["row 2"]),
        ("engine_speed_rpm,torque_nm,fuel_rate_g_s\n600,0,1\n600,10,1\n700,0,1\n", ["full grid"]),
        ("engine_speed_rpm,torque_nm,fuel_rate_g_s\n600,0,1\n600,10,-1\n700,0,1\n700,10,1\n", ["fuel_rate_g_s >= 0"]),
        ("engine_speed_rpm,torque_nm,fuel_rate_g_s\n600,0,1\n600,0,1\n700,0,1\n700,10,1\n", ["duplicate"]),
    ],
)
def test_bad_fuel_map_one_line_error(tmp_path: Path, text: str, words: list[str]) -> None:
    path = tmp_path / "bad.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_fuel_map(path)
    assert str(info.value).startswith(str(path)) and "\n" not in str(info.value)
    for word in words:
        assert word in str(info.value)


def test_full_load_and_motoring_torque() -> None:
    engine = Engine(fuel="diesel", rated_power_kw=330.0, rated_speed_rpm=1800.0, idle_speed_rpm=600.0,
                    max_speed_rpm=2200.0, full_load_torque=((600.0, 1200.0), (1000.0, 2300.0), (1400.0, 2300.0),
                                                            (1800.0, 1751.0), (2200.0, 0.0)),
                    fuel_map_path=Path("unused.csv"), motoring_torque_share=0.1)
    # linear between the curve's points (hand): 800 rpm -> 1750 N m, 2000 rpm -> 875.5 N m
    np.testing.assert_allclose(max_torque_nm(engine, [500.0, 800.0, 1200.0, 2000.0, 2300.0]),
                               [1200.0, 1750.0, 2300.0, 875.5, 0.0])
    assert max_torque_nm(engine, np.full((4, 12), 1200.0)).shape == (4, 12)
    np.testing.assert_allclose(motoring_torque_nm(engine, [1000.0, 1500.0]), [-230.0, -230.0])


def test_willans_spec_motoring_torque_is_friction() -> None:
    spec = load_spec(MODELS / "car_petrol.toml")
    assert spec.engine is not None
    line = fuel_model(spec.engine)
    assert isinstance(line, WillansLine)
    np.testing.assert_allclose(motoring_torque_nm(spec.engine, [2000.0]), -line.friction_torque_nm([2000.0]))
    # petrol at 2000 rpm, 50 N m: brake efficiency within 0.2-0.35 at part load (Heywood 1988 Ch. 15, from memory)
    power_w = 50 * 2000 * 2 * math.pi / 60
    eff = power_w / (float(line.fuel_rate_g_s(2000.0, 50.0)) / 1000 * PETROL.lower_heating_value_j_kg)
    assert 0.20 < eff < 0.35


def _generator():
    spec = importlib.util.spec_from_file_location("make_fuel_maps", MODELS / "make_fuel_maps.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules.setdefault("make_fuel_maps", module)  # dataclasses look their module up
    spec.loader.exec_module(module)
    return module


def test_committed_maps_equal_generator_output() -> None:
    gen = _generator()
    assert len(gen.RECIPES) >= 4
    for recipe in gen.RECIPES:
        committed = (MODELS / "fuel_maps" / f"{recipe.name}.csv").read_text(encoding="utf-8")
        assert committed == gen.render(recipe), recipe.name
        assert len(committed) < 4000  # small files


def test_generated_engines_peak_efficiency_in_published_ranges() -> None:
    # Peak brake thermal efficiency: heavy-duty diesels 0.42-0.47 (ICCT 2017 EU baseline, from memory),
    # light-duty diesels 0.36-0.42 (Heywood 1988 and later reviews, from memory).
    gen = _generator()
    for recipe in gen.RECIPES:
        speed, torque, fuel = gen.make_grid(recipe)
        s, t = np.meshgrid(speed, torque, indexing="ij")
        eff = (s * 2 * np.pi / 60 * t) / (fuel / 1000 * DIESEL.lower_heating_value_j_kg)
        peak = float(np.max(np.where(t <= recipe.peak_torque_nm, eff, 0)))
        low, high = (0.36, 0.42) if recipe.willans.displacement_l < 3 else (0.42, 0.47)
        assert low <= peak <= high, (recipe.name, peak)


def test_scalar_in_scalar_out() -> None:
    spec = load_spec(MODELS / "tractor_40t_diesel_axle264.toml")
    assert spec.engine is not None
    assert fuel_model(spec.engine).fuel_rate_g_s(1200.0, 1000.0).shape == ()
    assert fuel_model(spec.engine).fuel_rate_g_s([1200.0], 1000.0).shape == (1,)
