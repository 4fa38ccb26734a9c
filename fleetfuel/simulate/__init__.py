"""simulate stage: vehicle specs, road load, driveline and shifting, combustion, electric, envelope.

Library in brief::

    from fleetfuel.simulate import SimConfig, load_spec, read_cycle, simulate_trace
    spec = load_spec("models/van_diesel.toml")
    cycle = read_cycle("udds.csv")        # time_s, speed_kmh (ingest reader, profile cycle_csv)
    result = simulate_trace(cycle.time_s, cycle.speed_m_s, cycle.grade, spec, payload_kg=500, cfg=SimConfig())
    result.totals.fuel_l_per_100km, result.steps.gear, result.short
"""

from __future__ import annotations

from fleetfuel.simulate.atmosphere import air_density_kg_m3, isa_pressure_pa, isa_temperature_k
from fleetfuel.simulate.config import ADHESION_CASES, SHIFT_STRATEGIES, SimConfig
from fleetfuel.simulate.cycle import Cycle, read_cycle
from fleetfuel.simulate.roadload import RoadLoad, road_load, trace_kinematics, traction_limit_n
from fleetfuel.simulate.spec import VehicleSpec, load_catalogue, load_spec
from fleetfuel.simulate.trace import SimResult, SimTotals, reach_speed_m_s, simulate_trace

__all__ = [
    "ADHESION_CASES", "SHIFT_STRATEGIES", "Cycle", "RoadLoad", "SimConfig", "SimResult", "SimTotals", "VehicleSpec",
    "air_density_kg_m3", "isa_pressure_pa", "isa_temperature_k", "load_catalogue", "load_spec", "read_cycle",
    "reach_speed_m_s", "road_load", "simulate_trace", "trace_kinematics", "traction_limit_n",
]
