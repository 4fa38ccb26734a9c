"""ForecastConfig: the [forecast] table of the run TOML, validation, defaults."""

from __future__ import annotations

from pathlib import Path

import pytest

from fleetfuel.config import RunConfig, load_run_config
from fleetfuel.errors import ConfigError
from fleetfuel.forecast import ForecastConfig
from fleetfuel.forecast.config import DEFAULT_FUEL_PRICE_PER_L
from fleetfuel.forecast.run import _check_specs
from fleetfuel.simulate import load_catalogue


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
