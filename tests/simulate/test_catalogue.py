"""The bundled catalogue (models/): coverage, sanity of every spec, sources commented."""

from __future__ import annotations

import re
from collections import defaultdict
from pathlib import Path

import pytest

from fleetfuel.resources import data_dir
from fleetfuel.simulate.envelope import performance_envelope
from fleetfuel.simulate.spec import VehicleSpec, load_catalogue

MODELS = Path(__file__).resolve().parents[2] / "models"


@pytest.fixture(scope="module")
def catalogue() -> tuple[VehicleSpec, ...]:
    return load_catalogue()


def test_default_folder_is_bundled_models(catalogue: tuple[VehicleSpec, ...]) -> None:
    assert data_dir("models").resolve() == MODELS.resolve()
    assert len(catalogue) >= 12
    assert len({s.name for s in catalogue}) == len(catalogue)


def test_required_specs_present(catalogue: tuple[VehicleSpec, ...]) -> None:
    kinds = defaultdict(list)
    for spec in catalogue:
        kinds[(spec.vehicle_class, spec.powertrain)].append(spec)
    assert kinds[("van", "combustion")] and kinds[("van", "electric")]
    rigid_diesel = kinds[("rigid_truck", "combustion")]
    assert any(s.body.max_gross_mass_kg <= 7500 for s in rigid_diesel)
    rigid_18 = [s for s in rigid_diesel if s.body.max_gross_mass_kg == 18000]
    assert len(rigid_18) >= 2
    assert len({(s.rated_power_w, s.driveline.final_drive_ratio) for s in rigid_18}) >= 2
    assert any(s.body.max_gross_mass_kg == 18000 for s in kinds[("rigid_truck", "electric")])
    tractors = kinds[("tractor_trailer", "combustion")]
    assert len({s.driveline.final_drive_ratio for s in tractors}) >= 2  # two axle ratios
    assert all(s.body.max_gross_mass_kg == 40000 for s in tractors + kinds[("tractor_trailer", "electric")])
    assert kinds[("tractor_trailer", "electric")]
    assert kinds[("city_bus", "combustion")] and kinds[("city_bus", "electric")]
    cars = kinds[("car", "combustion")]
    assert cars and all(s.fuel is not None and s.fuel.name == "petrol" for s in cars)
    assert kinds[("car", "electric")]
    assert any(len(s.driveline.gear_ratios) == 12 for s in catalogue)  # the benchmark's 12-gear spec


def test_electric_specs_carry_their_battery(catalogue: tuple[VehicleSpec, ...]) -> None:
    # Battery mass counted in curb mass: at equal gross mass the electric spec carries less payload.
    by_class = defaultdict(lambda: defaultdict(list))
    for spec in catalogue:
        by_class[spec.vehicle_class][spec.powertrain].append(spec)
    for vehicle_class, groups in by_class.items():
        for electric in groups["electric"]:
            assert electric.battery is not None
            for combustion in groups["combustion"]:
                if combustion.body.max_gross_mass_kg != electric.body.max_gross_mass_kg:
                    continue
                assert electric.max_payload_kg < combustion.max_payload_kg, (vehicle_class, electric.name)
                assert electric.body.curb_mass_kg > combustion.body.curb_mass_kg


def test_every_spec_is_sane(catalogue: tuple[VehicleSpec, ...]) -> None:
    for spec in catalogue:
        assert spec.test_mass_kg() <= spec.body.max_gross_mass_kg
        # common practice, no source: drag areas of road vehicles 0.5-7 m^2
        assert 0.5 <= spec.drag_area_m2 <= 7.0, spec.name
        # specific power: > 5 kW/t at gross mass for every class (common practice, no source)
        assert spec.rated_power_w / spec.body.max_gross_mass_kg > 5.0, spec.name
        if spec.battery is not None:
            # pack-level specific energy 80-250 Wh/kg (ICCT reports 2019-2023, from memory)
            assert 80 <= spec.battery.usable_kwh * 1000 / spec.battery.mass_kg <= 250, spec.name


def test_envelopes_plausible(catalogue: tuple[VehicleSpec, ...]) -> None:
    for spec in catalogue:
        env = performance_envelope(spec)
        assert env.top_speed_kmh >= 80.0, spec.name  # every spec can keep up with regional traffic
        assert env.accel_0_50_s is not None and env.accel_0_50_s > 0
        if spec.vehicle_class in ("tractor_trailer", "rigid_truck"):
            # Regulation (EU) No 1230/2012: towing vehicles must move off on a 12 % gradient (from memory)
            assert env.startability_pct >= 12.0, spec.name


def test_spec_files_comment_their_sources() -> None:
    files = sorted(MODELS.glob("*.toml"))
    assert len(files) >= 12
    for path in files:
        text = path.read_text(encoding="utf-8")
        assert "Sources" in text, path.name
        assert "frozen" in text, path.name
        assert re.search(r"\((19|20)\d\d\)|\b(19|20)\d\d\b", text), path.name  # cites dated publications
        assert MODELS.resolve().parent.parent.as_posix() not in text  # no absolute path of this checkout


def test_fuel_maps_referenced_exist_inside_models(catalogue: tuple[VehicleSpec, ...]) -> None:
    maps = {p.resolve() for p in (MODELS / "fuel_maps").glob("*.csv")}
    used = {s.engine.fuel_map_path for s in catalogue if s.engine is not None and s.engine.fuel_map_path}
    assert used and used <= maps
    assert any(s.engine is not None and s.engine.willans is not None for s in catalogue)  # both fuel models used
