"""fleetfuel.synth: the one seeded synthetic-fleet generator.

Used by the sample fleet (``sample_logs/build_sample_fleet.py``), by test fixtures that need
traces with known truth, and by every benchmark. Vectorised numpy throughout (a 2 M-row 1 Hz
fleet takes a few seconds); seeded with :class:`numpy.random.SeedSequence`: same seed, same bytes.

Building blocks
---------------
Routes (what is driven):

- ``synth.line_route(length_m, limit_kmh=..., hill=Hill(...), stops=..., lights_every_m=...)``:
  a test road with known truth (flat, or one hill of given height; stops at given places).
- ``synth.quillmere_network()`` and the duty builders in :mod:`fleetfuel.synth.duties`
  (``parcel_round``, ``regional``, ``trunk``, ``bus``, ``pool_car``): the invented scenario.

Drives (how it is driven and logged):

- ``synth.drive(route, vehicle, seed=0, logger=Logger(...), rate_hz=None, start_utc=..., vehicle_id=...)
  -> DriveTruth``: ``.frame`` (canonical columns ``vehicle_id, time_utc, speed_m_s, lat_deg,
  lon_deg, elevation_m`` and, when the logger has them, ``fuel_used_l, fuel_rate_l_h,
  odometer_m``), ``.truth`` (row for row: ``time_s, distance_m, speed_m_s, accel_m_s2,
  elevation_m, grade, lat_deg, lon_deg, engine_on, stop_kind, mass_kg, fuel_used_l,
  fuel_rate_l_h``, exact and unquantised), ``.stops`` (realised stops with dwell and start time).
  The same seed gives the same trajectory at any logging rate (separate random streams).
- ``synth.VEHICLE_CLASSES``: ``van``, ``rigid_7t5``, ``rigid_18t``, ``tractor_40t``, ``bus_12m``,
  ``car`` (acceleration, braking, power and climbing envelopes).
- ``synth.TRUTH_MODELS``: the truth fuel model per class (:mod:`fleetfuel.synth.truth`,
  deliberately not fleetfuel's own vehicle model).

Defects (what real exports do to the data):

- ``synth.add_defects(frame, DefectSpec(...) or DefectSpec.typical(), seed) -> (frame, InjectedDefects)``:
  altitude noise (correlated, quantised, dropouts), position and speed noise, parked drift,
  spikes, a unit mix-up, gaps, duplicated rows and time stamps; the report gives every row
  position in the returned frame and ``source_index`` to align the truth.

Fleets:

- ``synth.fleet(n_vehicles=None, n_days=5, rate_hz=None, seed=0, with_truth=True) -> SyntheticFleet``
  (``.samples``, ``.truth``, ``.vehicles``, ``.days``): the Quillmere fleet's roster
  (:data:`ROSTER`, fourteen vehicles) for any number of vehicles and working days.

Exports (through ingest profiles, so every layout written can be read back):

- ``synth.write_export(frame, profile, path)``: CSV (optionally gzip) laid out by a
  :class:`fleetfuel.ingest.profiles.Profile`; ``synth.write_parquet(frame, profile, path)``;
  ``synth.write_gpx(frame, path)`` (GPX 1.1, speed in an extension).
"""

from __future__ import annotations

from fleetfuel.synth.defects import DefectSpec, InjectedDefects, add_defects
from fleetfuel.synth.drive import MOVING, TRUTH_COLUMNS, DriveTruth, Logger, drive
from fleetfuel.synth.fixtures import Hill, line_route
from fleetfuel.synth.fleet import ROSTER, SCENARIO_TIMEZONE, SyntheticFleet, VehiclePlan, fleet, roster
from fleetfuel.synth.network import COMPANY, quillmere_network
from fleetfuel.synth.routes import PlannedStop, Route
from fleetfuel.synth.speed import DriveConfig
from fleetfuel.synth.truth import TRUTH_MODELS, TruthFuelModel
from fleetfuel.synth.vehicles import VEHICLE_CLASSES, VehicleClass

__all__ = [
    "COMPANY", "MOVING", "ROSTER", "SCENARIO_TIMEZONE", "TRUTH_COLUMNS", "TRUTH_MODELS", "VEHICLE_CLASSES",
    "DefectSpec", "DriveConfig", "DriveTruth", "Hill", "InjectedDefects", "Logger", "PlannedStop", "Route",
    "SyntheticFleet", "TruthFuelModel", "VehicleClass", "VehiclePlan",
    "add_defects", "drive", "fleet", "line_route", "quillmere_network", "roster",
]
