"""ForecastConfig: the [forecast] table of the run TOML, validation, defaults."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pandas as pd
import pytest

from fleetfuel.config import RunConfig, load_run_config
from fleetfuel.errors import ConfigError
from fleetfuel.forecast import ForecastConfig, annual_figures
from fleetfuel.forecast.config import DEFAULT_FUEL_PRICE_PER_L
from fleetfuel.forecast.energy import RouteEnergy
from fleetfuel.forecast.result import assumption_list
from fleetfuel.forecast.run import _check_specs
from fleetfuel.resources import data_dir
from fleetfuel.simulate import load_catalogue, load_spec


def _toml(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "run.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_forecast_table_loads_with_sub_tables(tmp_path: Path) -> None:
    path = _toml(tmp_path, """
[forecast]
currency = "GBP"
operating_days_per_year = 240
electric_reserve_share = 0.25
[forecast.fuel_price_per_l]
diesel = 1.5
[forecast.payload_kg]
R03 = 6000
[forecast.current_spec]
van = "van_diesel"
[forecast.vehicle_class]
LORRY-7 = "rigid_truck"
""")
    cfg = load_run_config(path).forecast
    assert cfg.currency == "GBP"
    assert cfg.operating_days_per_year == 240.0  # TOML integer taken as a float
    assert cfg.payload_kg == {"R03": 6000}
    assert cfg.current_spec == {"van": "van_diesel"}
    assert cfg.vehicle_class == {"LORRY-7": "rigid_truck"}
    # a partial price table overrides the named fuel only; petrol keeps its documented default
    assert cfg.fuel_price_per_l == {"diesel": 1.5, "petrol": DEFAULT_FUEL_PRICE_PER_L["petrol"]}


def test_default_run_config_has_forecast_defaults() -> None:
    cfg = RunConfig().forecast
    assert cfg == ForecastConfig()
    assert cfg.operating_days_per_year == 250.0  # 5 d x 52 weeks less ~10 holidays (common practice, no source)
    assert cfg.electric_reserve_share == 0.2  # common practice, no source
    assert cfg.class_prefixes["VAN"] == "van"


@pytest.mark.parametrize(
    ("text", "needle"),
    [
        ("[forecast]\nbogus = 1\n", "unknown key 'bogus'"),
        ("[forecast]\noperating_days_per_year = 0\n", "operating_days_per_year"),
        ("[forecast]\noperating_days_per_year = 400\n", "at most 366"),
        ("[forecast]\nelectric_reserve_share = 1.5\n", "electric_reserve_share"),
        ("[forecast]\nelectricity_price_per_kwh = \"cheap\"\n", "electricity_price_per_kwh"),
        ("[forecast.fuel_price_per_l]\nkerosene = 1.0\n", "unknown fuel 'kerosene'"),
        ("[forecast.fuel_price_per_l]\ncng = 1.0\n", "use fuel_price_per_kg"),
        ("[forecast.ttw_co2_kg_per_kg]\nkerosene = 3.1\n", "unknown fuel 'kerosene'"),
        ("[forecast.ttw_co2_kg_per_kg]\ndiesel = -1\n", "ttw_co2_kg_per_kg.diesel"),
        ("[forecast.payload_kg]\nR01 = -5\n", "payload_kg.R01"),
        ("[forecast.current_spec]\nspaceship = \"x\"\n", "unknown vehicle class 'spaceship'"),
        ("[forecast.class_prefixes]\nVAN = \"lorry\"\n", "unknown vehicle class 'lorry'"),
        ("[forecast]\npayload_kg = 5\n", "expected a table"),
    ],
)
def test_bad_forecast_settings_are_one_line_config_errors(tmp_path: Path, text: str, needle: str) -> None:
    with pytest.raises(ConfigError) as info:
        load_run_config(_toml(tmp_path, text))
    assert needle in str(info.value)
    assert "\n" not in str(info.value)


def test_current_spec_must_exist_and_match_its_class() -> None:
    specs = load_catalogue()
    assert _check_specs(specs, ForecastConfig(current_spec={"van": "van_diesel"}))["van_diesel"].vehicle_class == "van"
    with pytest.raises(ConfigError, match="no spec 'van_hovercraft'"):
        _check_specs(specs, ForecastConfig(current_spec={"van": "van_hovercraft"}))
    with pytest.raises(ConfigError, match="is a tractor_trailer, not a van"):
        _check_specs(specs, ForecastConfig(current_spec={"van": "tractor_40t_electric"}))


def test_config_keeps_a_private_copy_of_tables() -> None:
    payload = {"R01": 500.0}
    cfg = ForecastConfig(payload_kg=payload)
    payload["R01"] = 9999.0
    assert cfg.payload_kg == {"R01": 500.0}


def test_readme_forecast_example_loads_with_real_keys(tmp_path: Path) -> None:
    # The README's example [forecast] table must use only keys that exist (unknown keys are rejected).
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    section = readme.split("## What the forecast writes", 1)[1].split("\n## ", 1)[0]
    example = section.split("```toml\n", 1)[1].split("```", 1)[0]
    cfg = load_run_config(_toml(tmp_path, example)).forecast
    assert cfg.operating_days_per_year == 240.0
    assert cfg.current_spec["van"] == "van_diesel"
    assert cfg.fuel_price_per_l["petrol"] == DEFAULT_FUEL_PRICE_PER_L["petrol"]  # not named: keeps its default
    _check_specs(load_catalogue(), cfg)  # the spec ids it names are in the bundled catalogue
    # the section names every key of [forecast], in the example or in the list of the other keys
    for f in dataclasses.fields(ForecastConfig):
        assert f.name in example or f"`{f.name}`" in section, f.name


def test_tank_to_wheel_factor_from_the_config(tmp_path: Path) -> None:
    # Default: EPA-420-F-18-008, 10.180 kg CO2 per US gallon of diesel (3.785411784 L, NIST SP 811)
    # at 0.832 kg/L = 3.232 kg CO2 per kg; a config entry replaces it for that fuel only.
    default = ForecastConfig().ttw_co2_kg_per_kg
    assert default["diesel"] == pytest.approx(10.180 / 3.785411784 / 0.832, rel=1e-3)
    cfg = load_run_config(_toml(tmp_path, "[forecast.ttw_co2_kg_per_kg]\ndiesel = 3.0\n")).forecast
    assert cfg.ttw_co2_kg_per_kg == {**default, "diesel": 3.0}
    spec = load_spec(data_dir("models") / "van_diesel.toml")
    energy = RouteEnergy(fuel_kg_per_km=0.1, fuel_l_per_km=0.1 / 0.832, grid_kwh_per_km=0.0, shortfall_share=0.0,
                         worst_shift_kwh=float("nan"), worst_shift_period="", simulated_on="cycles",
                         coverage_share=1.0, simulated_km=100.0)
    out = annual_figures(spec, energy, annual_km=1000.0, vehicles_in_service=1.0, cfg=cfg)
    assert out["co2_ttw_kg_per_year"] == pytest.approx(100.0 * 3.0, rel=1e-12)  # 100 kg of diesel x 3.0
    assert "config" in assumption_list(cfg, pd.DataFrame(columns=["fleet_operating_days", "payload_source"]), False,
                                       "models/")["CO2 tank to wheel, diesel"]
