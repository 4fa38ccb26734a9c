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
  :class:`fleetfuel.ingest.profiles.Profile` (any bundled layout the frame can fill);
  ``synth.write_parquet(frame, profile_or_None, path)``; ``synth.write_daily_files(frame, folder)``
  (one Parquet file per vehicle and day); ``synth.write_gpx(frame, path)``
  (GPX 1.1, speed in an extension). Demo layouts: ``depot_tracker_csv``, ``fleet_portal_csv``,
  ``event_logger_csv``, ``bus_parquet`` (top-level ``ingest/``).

Recipes for tests with known truth
----------------------------------
::

    route = synth.line_route(10_000, limit_kmh=80, hill=synth.Hill(start_m=2000, climb_m=3000, height_m=150),
                             stops=[(6000, 600, False)], lights_every_m=1500)
    d = synth.drive(route, "rigid_18t", seed=1, logger=synth.Logger(rate_hz=1.0, fuel_counter_step_l=0.1))
    frame, injected = synth.add_defects(d.frame, synth.DefectSpec(
        altitude_sigma_m=4, altitude_step_m=1,        # realistic GNSS altitude noise
        speed_spike_share=0.002, gaps_per_day=20,      # spikes and gaps, reported by row
        drift_min_stop_s=120), seed=1)                 # parked drift at the 10-minute stop
    truth = d.truth.iloc[injected.source_index]       # truth row for row with the damaged frame
    slow = synth.drive(route, "rigid_18t", seed=1, logger=synth.Logger(rate_hz=1 / 30, jitter_s=3))

``synth.DriveConfig(wobble=0, speed_factor_sigma=0, dwell_sigma=0)`` removes driver randomness
(speeds at the limit, dwell times as planned). An engine-off stop longer than
``DriveConfig.logger_sleep_after_s`` (300 s) ends logging until the engine starts again.
"""

from __future__ import annotations

from fleetfuel.synth.defects import DefectSpec, InjectedDefects, add_defects
from fleetfuel.synth.drive import MOVING, TRUTH_COLUMNS, DriveTruth, Logger, drive
from fleetfuel.synth.export import write_daily_files, write_export, write_gpx, write_parquet
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
    "write_daily_files", "write_export", "write_gpx", "write_parquet",
]
