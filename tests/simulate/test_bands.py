"""Consumption bands of the frozen catalogue (models/) on named cycles and payloads.

The specs were frozen from published typical ranges before any comparison (see each TOML); a spec
is never tuned to land in its band. A band the catalogue misses is marked ``xfail(strict=True)``
with the value found, so the miss stays visible and the marker must go once it passes.
Payloads are each spec's default ``payload_kg`` (named in every test id).
"""

from __future__ import annotations

import pytest
from simtraces import bus_stop_pattern, motorway_trace, reference_cycle, spec

from fleetfuel.simulate import simulate_trace


def totals(stem: str, trace: tuple) -> tuple:
    t, v, *grade = trace
    s = spec(stem)
    result = simulate_trace(t, v, grade[0] if grade else None, s)
    return s, result.totals


@pytest.mark.parametrize("stem", ["tractor_40t_diesel_axle264", "tractor_40t_diesel_axle308"])
def test_tractor_trailer_diesel_motorway_vs_icct_long_haul(stem: str) -> None:
    # Cycle: 100 km at a steady 85 km/h over +/-1 % rolling grades (simtraces.motorway_trace);
    # payload 19.3 t (the EU long-haul reference payload, spec default).
    # Band: EU long-haul tractor-trailers 29.9-32.6 L/100 km (ICCT 2018, as given in the brief).
    s, t = totals(stem, motorway_trace())
    assert s.body.payload_kg == 19300
    assert 29.9 <= t.fuel_l_per_100km <= 32.6, t.fuel_l_per_100km


def test_urban_van_diesel_on_udds() -> None:
    # Cycle: EPA UDDS; payload 700 kg (spec default). Band 8-12 L/100 km (common practice, no source)
    cycle = reference_cycle("udds")
    s, t = totals("van_diesel", (cycle.time_s, cycle.speed_m_s))
    assert s.body.payload_kg == 700
    assert 8.0 <= t.fuel_l_per_100km <= 12.0, t.fuel_l_per_100km


def test_urban_van_electric_on_udds() -> None:
    # Cycle: EPA UDDS; payload 700 kg (spec default). Band 0.20-0.35 kWh/km at the battery terminals
    # (common practice, no source); the grid figure adds charging losses and must exceed it.
    cycle = reference_cycle("udds")
    s, t = totals("van_electric", (cycle.time_s, cycle.speed_m_s))
    assert s.body.payload_kg == 700
    assert 0.20 <= t.energy_kwh_per_km <= 0.35, t.energy_kwh_per_km
    assert t.grid_kwh > t.battery_kwh


@pytest.mark.xfail(strict=True, reason="catalogue misses the band: 34.3 L/100 km found (frozen spec, not tuned); "
                   "torque-converter losses and HVAC are not modelled")
def test_city_bus_diesel_on_a_stop_every_400_m() -> None:
    # Cycle: stop every 400 m, 40 km/h, 1.0 m/s^2, 20 s dwell (simtraces.bus_stop_pattern, sources
    # there); payload 1700 kg = 25 passengers (spec default). Band ~35-55 L/100 km (Vepsalainen et al.
    # 2018 and common practice)
    s, t = totals("bus_12m_diesel", bus_stop_pattern())
    assert s.body.payload_kg == 1700
    assert 35.0 <= t.fuel_l_per_100km <= 55.0, t.fuel_l_per_100km


def test_city_bus_electric_on_a_stop_every_400_m() -> None:
    # Same cycle and payload; band 0.8-1.5 kWh/km (Vepsalainen et al. 2018; common practice)
    s, t = totals("bus_12m_electric", bus_stop_pattern())
    assert s.body.payload_kg == 1700
    assert 0.8 <= t.energy_kwh_per_km <= 1.5, t.energy_kwh_per_km


@pytest.mark.parametrize(
    "cycle_stem",
    [
        "udds",
        pytest.param("hwfet", marks=pytest.mark.xfail(
            strict=True, reason="catalogue misses the band: 4.74 L/100 km found on HWFET (frozen spec, not tuned)")),
    ],
)
def test_compact_petrol_car_on_epa_cycles(cycle_stem: str) -> None:
    # Cycles: EPA UDDS and HWFET; payload 150 kg (driver and luggage, spec default).
    # Band 5-9 L/100 km (common practice, no source)
    cycle = reference_cycle(cycle_stem)
    s, t = totals("car_petrol", (cycle.time_s, cycle.speed_m_s))
    assert s.body.payload_kg == 150
    assert 5.0 <= t.fuel_l_per_100km <= 9.0, t.fuel_l_per_100km
