"""Canonical column names of the frames passed between stages.

Every reader returns the *raw canonical frame*; the clean stage returns the *clean frame*.
Names carry their unit (SI, or SI-accepted with the unit named). Nothing outside the readers
knows an export's own column names or units.

Raw canonical frame (one row per parsed input row; a reader fills what the file carries):

=================== ========================= ==============================================
column              dtype                     meaning
=================== ========================= ==============================================
``vehicle_id``      string                    vehicle the sample belongs to
``time_utc``        datetime64[ns, UTC]       sample time
``speed_m_s``       float64                   reported speed over ground [m/s] (NaN: absent)
``lat_deg``         float64                   WGS-84 latitude [deg]
``lon_deg``         float64                   WGS-84 longitude [deg]
``elevation_m``     float64                   elevation above the geoid or ellipsoid [m]
``fuel_used_l``     float64                   cumulative fuel counter [L] (optional)
``fuel_rate_l_h``   float64                   fuel rate [L/h] (optional)
``odometer_m``      float64                   odometer [m] (optional)
``engine_speed_rpm`` float64                  engine speed [rpm] (optional)
``ambient_temp_c``  float64                   ambient temperature [degC] (optional)
``soc``             float64                   battery state of charge, share 0..1 (optional)
``route``           string                    route name when the export carries one (optional)
``source_file``     string                    path of the input file, as given
``source_row``      int64                     0-based data row (or GPX point) in that file
=================== ========================= ==============================================

The clean frame adds (uniform time step per vehicle; see ``fleetfuel.clean``):

=================== ========================= ==============================================
``is_interpolated`` bool                      sample made by resampling, not an input row
``gap_break``       bool                      first sample after a long gap (trip boundary hint)
``is_parked``       bool                      standstill (parked drift forced to zero speed)
``distance_m``      float64                   cumulative distance along the vehicle's log [m]
``accel_m_s2``      float64                   longitudinal acceleration [m/s^2]
``elevation_raw_m`` float64                   elevation as read, before smoothing [m]
``grade``           float64                   road grade, rise over run [1]
=================== ========================= ==============================================

The segment stage adds (see ``fleetfuel.segment``; <NA> outside a period, trip or micro-trip):

=================== ========================= ==============================================
``period_id``       string                    operating period, ``<vehicle_id>/P<start UTC>``
``trip_id``         string                    trip, ``<period_id>/T0001`` (numbered in the period)
``microtrip_id``    string                    micro-trip, ``<period_id>/M0001``
``route_source``    string                    where ``route`` came from (:data:`ROUTE_SOURCES`)
=================== ========================= ==============================================

Interpolated samples carry ``source_row == -1``.
The row-account table (one row per input file) has :data:`ACCOUNT_COLUMNS`.
"""

from __future__ import annotations

from typing import Final

VEHICLE_ID: Final = "vehicle_id"
TIME_UTC: Final = "time_utc"
SPEED_M_S: Final = "speed_m_s"
LAT_DEG: Final = "lat_deg"
LON_DEG: Final = "lon_deg"
ELEVATION_M: Final = "elevation_m"
FUEL_USED_L: Final = "fuel_used_l"
FUEL_RATE_L_H: Final = "fuel_rate_l_h"
ODOMETER_M: Final = "odometer_m"
ENGINE_SPEED_RPM: Final = "engine_speed_rpm"
AMBIENT_TEMP_C: Final = "ambient_temp_c"
SOC: Final = "soc"
ROUTE: Final = "route"
SOURCE_FILE: Final = "source_file"
SOURCE_ROW: Final = "source_row"

IS_INTERPOLATED: Final = "is_interpolated"
GAP_BREAK: Final = "gap_break"
IS_PARKED: Final = "is_parked"
DISTANCE_M: Final = "distance_m"
ACCEL_M_S2: Final = "accel_m_s2"
ELEVATION_RAW_M: Final = "elevation_raw_m"
GRADE: Final = "grade"

SIGNAL_COLUMNS: Final = (SPEED_M_S, LAT_DEG, LON_DEG, ELEVATION_M)
"""Motion signals; a file needs speed or positions."""

OPTIONAL_COLUMNS: Final = (FUEL_USED_L, FUEL_RATE_L_H, ODOMETER_M, ENGINE_SPEED_RPM, AMBIENT_TEMP_C, SOC, ROUTE)
"""Kept when a file carries them (all float64 except ``route``, a string)."""

STRING_COLUMNS: Final = (VEHICLE_ID, ROUTE, SOURCE_FILE)
"""Columns of string dtype in the raw canonical frame."""

RAW_COLUMNS: Final = (VEHICLE_ID, TIME_UTC, *SIGNAL_COLUMNS, *OPTIONAL_COLUMNS, SOURCE_FILE, SOURCE_ROW)
"""Column order of the raw canonical frame."""

CLEAN_EXTRA_COLUMNS: Final = (IS_INTERPOLATED, GAP_BREAK, IS_PARKED, DISTANCE_M, ACCEL_M_S2, ELEVATION_RAW_M, GRADE)

PERIOD_ID: Final = "period_id"
TRIP_ID: Final = "trip_id"
MICROTRIP_ID: Final = "microtrip_id"
ROUTE_SOURCE: Final = "route_source"
SEGMENT_ID_COLUMNS: Final = (PERIOD_ID, TRIP_ID, MICROTRIP_ID)
ROUTE_SOURCES: Final = ("column", "file", "discovered", "per_vehicle")
"""Where a trip's route came from, in order of precedence (see ``fleetfuel.segment.routes``)."""

ACCOUNT_COLUMNS: Final = (
    "path",
    "vehicle_ids",
    "rows_in",
    "rows_kept",
    "rows_interpolated",
    "dropped",
    "error",
)
"""Row-account keys per file: ``rows_in == rows_kept + sum(dropped.values())`` always."""

# Drop reasons: one vocabulary, so tallies from every step add up in one table.
DROP_TIME_UNPARSEABLE: Final = "time_unparseable"
DROP_TIME_MISSING: Final = "time_missing"  # no time at all (e.g. a GPX track logged without fixes' times)
DROP_TIME_IMPLAUSIBLE: Final = "time_implausible"  # outside IngestConfig's plausible window
DROP_NO_SIGNAL: Final = "no_speed_or_position"
DROP_ROW_MALFORMED: Final = "row_malformed"  # CSV row with the wrong number of fields (e.g. cut mid-row)
DROP_DUPLICATE_ROW: Final = "duplicate_row"
DROP_DUPLICATE_TIME: Final = "duplicate_time"
DROP_SPEED_IMPOSSIBLE: Final = "speed_impossible"
DROP_ACCEL_IMPOSSIBLE: Final = "accel_impossible"
DROP_POSITION_JUMP: Final = "position_jump"
DROP_POSITION_INVALID: Final = "position_invalid"
DROP_POSITION_STALE: Final = "position_stale"  # a carried-forward fix, and the row has no speed
DROP_VEHICLE_UNKNOWN: Final = "vehicle_id_missing"
DROP_REASONS: Final = (
    DROP_TIME_UNPARSEABLE,
    DROP_TIME_MISSING,
    DROP_TIME_IMPLAUSIBLE,
    DROP_NO_SIGNAL,
    DROP_ROW_MALFORMED,
    DROP_DUPLICATE_ROW,
    DROP_DUPLICATE_TIME,
    DROP_SPEED_IMPOSSIBLE,
    DROP_ACCEL_IMPOSSIBLE,
    DROP_POSITION_JUMP,
    DROP_POSITION_INVALID,
    DROP_POSITION_STALE,
    DROP_VEHICLE_UNKNOWN,
)
"""Every reason a row may be dropped. Add new reasons here, nowhere else."""
