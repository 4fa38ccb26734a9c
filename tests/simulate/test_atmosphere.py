"""ISA air density, temperature and pressure against ISO 2533 and the ambiance reference library."""

from __future__ import annotations

import numpy as np
import pytest
from ambiance import Atmosphere

from fleetfuel.errors import InputDataError
from fleetfuel.simulate.atmosphere import (
    air_density_kg_m3,
    geopotential_altitude_m,
    isa_pressure_pa,
    isa_temperature_k,
)

# Road elevations from below sea level (Dead Sea shore, about -430 m) to the highest passes (~5000 m).
ELEVATIONS_M = np.array([-430.0, 0.0, 250.0, 1000.0, 2000.0, 3000.0, 4500.0, 5000.0])


def test_sea_level_density_is_iso_2533() -> None:
    # ISO 2533:1975: 1.225 kg/m^3 at 15 degC and 101325 Pa (tabulated to 4 significant figures)
    assert float(air_density_kg_m3(0.0)) == pytest.approx(1.225, abs=5e-4)
    assert float(isa_temperature_k(0.0)) == pytest.approx(288.15, abs=1e-12)
    assert float(isa_pressure_pa(0.0)) == pytest.approx(101325.0, abs=1e-9)


def test_density_matches_ambiance_at_road_altitudes() -> None:
    # ambiance (PyPI) implements the ICAO standard atmosphere (= ISO 2533 below 32 km); it takes
    # geometric altitude, as we do.
    reference = Atmosphere(ELEVATIONS_M)
    assert air_density_kg_m3(ELEVATIONS_M) == pytest.approx(reference.density, rel=1e-6)
    assert isa_temperature_k(ELEVATIONS_M) == pytest.approx(reference.temperature, rel=1e-9)
    assert isa_pressure_pa(ELEVATIONS_M) == pytest.approx(reference.pressure, rel=1e-6)


@pytest.mark.parametrize(("elevation_m", "table_kg_m3"), [(1000.0, 1.1117), (2000.0, 1.0066), (3000.0, 0.9093)])
def test_density_matches_standard_atmosphere_table(elevation_m: float, table_kg_m3: float) -> None:
    # ISO 2533 / ICAO standard-atmosphere table, density to 4 decimals (values from memory,
    # confirmed by ambiance above)
    assert float(air_density_kg_m3(elevation_m)) == pytest.approx(table_kg_m3, abs=1e-4)


def test_geopotential_altitude() -> None:
    # ISO 2533 section 2.4: H = r z / (r + z), r = 6356766 m; at 3000 m geometric, H = 2998.585 m
    assert float(geopotential_altitude_m(3000.0)) == pytest.approx(6356766.0 * 3000 / (6356766.0 + 3000), rel=1e-12)
    assert float(geopotential_altitude_m(3000.0)) == pytest.approx(2998.585, abs=1e-3)


def test_ambient_temperature_ideal_gas_hand_calculation() -> None:
    # rho = p / (R T) with p = 101325 Pa (ISA sea level) and T = 25 degC = 298.15 K,
    # R = 287.05287 J/(kg K) (ISO 2533): 101325 / (287.05287 * 298.15) = 1.18391 kg/m^3
    assert float(air_density_kg_m3(0.0, 25.0)) == pytest.approx(101325 / (287.05287 * 298.15), rel=1e-12)
    assert float(air_density_kg_m3(0.0, 25.0)) == pytest.approx(1.1839, abs=1e-4)
    cold, warm = air_density_kg_m3(np.array([0.0, 0.0]), np.array([-20.0, 35.0]))
    assert cold > warm


def test_arrays_in_are_not_changed() -> None:
    z = ELEVATIONS_M.copy()
    temp = np.full(z.size, 10.0)
    air_density_kg_m3(z, temp)
    assert np.array_equal(z, ELEVATIONS_M) and np.all(temp == 10.0)


def test_out_of_range_is_refused_with_a_message() -> None:
    with pytest.raises(InputDataError, match="elevation_m: expected below the tropopause"):
        air_density_kg_m3(12000.0)
    with pytest.raises(InputDataError, match="ambient_temp_c"):
        air_density_kg_m3(0.0, -300.0)
