"""Trips and operating periods of the clean frame (definitions in :mod:`fleetfuel.segment.labels`).

Operating periods are the partition unit of the later stages and of the Dask engine: every
function here gives the same result for a period's rows whether the period is processed alone or
together with others (its ids included).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.clean.geodesy import geodesic_distance_m
from fleetfuel.errors import InternalError
from fleetfuel.segment._frame import float_column, group_ends, group_starts, ordered, seconds
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.kinematics import row_kinematics
from fleetfuel.segment.labels import label_rows

TRIP_TABLE_COLUMNS = (
    schema.VEHICLE_ID,
    schema.PERIOD_ID,
    schema.TRIP_ID,
    "start_utc",
    "end_utc",
    "duration_s",
    "distance_m",
    "unlogged_m",
    "start_lat_deg",
    "start_lon_deg",
    "end_lat_deg",
    "end_lon_deg",
    "samples",
    schema.ROUTE,
)
"""Columns of :func:`trip_table`."""

PERIOD_TABLE_COLUMNS = (
    schema.VEHICLE_ID,
    schema.PERIOD_ID,
    "start_utc",
    "end_utc",
    "duration_s",
    "trips",
    "driven_s",
    "distance_m",
)
"""Columns of :func:`period_table`."""


def _with_labels(samples: pd.DataFrame, cfg: SegmentConfig | None, columns: tuple[str, ...]) -> pd.DataFrame:
    cfg = cfg or SegmentConfig()
    out = ordered(samples)
    labels = label_rows(out, cfg)
    for name in columns:
        out[name] = labels.column(name, out.index)
    return out


def operating_periods(samples: pd.DataFrame, cfg: SegmentConfig | None = None) -> pd.DataFrame:
    """A copy of ``samples`` with ``period_id``: each vehicle's driving between long rests.

    A rest is the time from one moving sample to the next of at least ``cfg.period_rest_s``
    (standstill and log absence alike), so a shift across midnight is one period.

    Parameters
    ----------
    samples : DataFrame
        Clean frame (see :mod:`fleetfuel.schema`).
    cfg : SegmentConfig, optional

    Returns
    -------
    DataFrame
        Sorted by vehicle and time; ``period_id`` (string, ``<vehicle_id>/P<UTC start>``),
        <NA> on the rest samples between periods. The input is not modified.
    """
    return _with_labels(samples, cfg, (schema.PERIOD_ID,))


def split_trips(samples: pd.DataFrame, cfg: SegmentConfig | None = None) -> pd.DataFrame:
    """A copy of ``samples`` with ``period_id`` and ``trip_id`` (<NA> between trips).

    Trips end at a key-off, a standstill of ``cfg.trip_break_s`` or more, and the clean stage's
    ``gap_break`` markers; see :mod:`fleetfuel.segment.labels`.
    """
    return _with_labels(samples, cfg, (schema.PERIOD_ID, schema.TRIP_ID))


_TRIP_TABLE_INPUTS = (
    schema.VEHICLE_ID,
    schema.TIME_UTC,
    schema.SPEED_M_S,
    schema.LAT_DEG,
    schema.LON_DEG,
    schema.ROUTE,
    schema.IS_PARKED,
    schema.GAP_BREAK,
    schema.ENGINE_SPEED_RPM,
    schema.PERIOD_ID,
    schema.TRIP_ID,
)


def _trip_rows(samples: pd.DataFrame, cfg: SegmentConfig | None) -> pd.DataFrame:
    """Rows in trips, with only the columns the trip table reads (cheap on wide frames)."""
    narrow = samples[[c for c in _TRIP_TABLE_INPUTS if c in samples.columns]]
    if schema.TRIP_ID in narrow.columns and schema.PERIOD_ID in narrow.columns:
        rows = ordered(narrow)
    else:
        rows = split_trips(narrow, cfg)
    return rows.loc[rows[schema.TRIP_ID].notna().to_numpy()]


def _route_mode(rows: pd.DataFrame) -> pd.Series:
    """Most frequent non-missing ``route`` of each trip (ties: alphabetical first)."""
    if schema.ROUTE not in rows.columns:
        return pd.Series(dtype="string")
    named = rows.loc[rows[schema.ROUTE].notna().to_numpy(), [schema.TRIP_ID, schema.ROUTE]]
    if named.empty:
        return pd.Series(dtype="string")
    counts = named.groupby([schema.TRIP_ID, schema.ROUTE], sort=True).size().rename("n").reset_index()
    counts = counts.sort_values(
        [schema.TRIP_ID, "n", schema.ROUTE], ascending=[True, False, True], kind="stable"
    )
    return counts.drop_duplicates(schema.TRIP_ID).set_index(schema.TRIP_ID)[schema.ROUTE].astype("string")


def trip_table(samples: pd.DataFrame, cfg: SegmentConfig | None = None) -> pd.DataFrame:
    """One row per trip: vehicle, ids, start and end (time, position), duration, distance.

    Parameters
    ----------
    samples : DataFrame
        Clean frame, with or without ``period_id``/``trip_id`` (computed when absent).
    cfg : SegmentConfig, optional

    Returns
    -------
    DataFrame
        :data:`TRIP_TABLE_COLUMNS`: ``duration_s`` [s] and ``distance_m`` [m] (trapezoidal
        integral of speed, :mod:`fleetfuel.segment.kinematics`), ``unlogged_m`` [m]
        (:func:`unlogged_distance_m`), first and last finite position [deg] (NaN without
        positions), ``samples`` (rows), ``route`` (the most frequent value of a
        ``route`` column in the trip, <NA> when none). Sorted by vehicle and start time.
    """
    cfg = cfg or SegmentConfig()
    rows = _trip_rows(samples, cfg)
    codes, trip_ids = pd.factorize(rows[schema.TRIP_ID])
    t = seconds(rows[schema.TIME_UTC])
    speed = float_column(rows, schema.SPEED_M_S)
    assert speed is not None
    kin = row_kinematics(t, speed, group_starts(codes), group_ends(codes), cfg)
    n = len(trip_ids)
    v = np.nan_to_num(speed, nan=0.0)
    if codes.size and not bool((np.diff(codes) >= 0).all()):  # rows come sorted: each trip is one block
        raise InternalError("trip_table: the rows of a trip are not contiguous after sorting")
    first = np.flatnonzero(np.r_[True, codes[1:] != codes[:-1]]) if codes.size else np.zeros(0, dtype=np.int64)
    last = np.r_[first[1:] - 1, codes.size - 1] if codes.size else first
    times = rows[schema.TIME_UTC]
    table = pd.DataFrame(
        {
            schema.VEHICLE_ID: rows[schema.VEHICLE_ID].iloc[first].to_numpy(),
            schema.PERIOD_ID: rows[schema.PERIOD_ID].iloc[first].to_numpy(),
            schema.TRIP_ID: pd.array(np.asarray(trip_ids, dtype=object), dtype="string"),
            "start_utc": times.iloc[first].to_numpy(),  # rows are in time order within a trip
            "end_utc": times.iloc[last].to_numpy(),
            "duration_s": np.bincount(codes, weights=kin.weight_s, minlength=n),
            "distance_m": np.bincount(codes, weights=kin.weight_s * v, minlength=n),
            "samples": np.bincount(codes, minlength=n).astype(np.int64),
        }
    )
    table["start_utc"] = pd.to_datetime(table["start_utc"], utc=True)
    table["end_utc"] = pd.to_datetime(table["end_utc"], utc=True)
    lat, lon = float_column(rows, schema.LAT_DEG), float_column(rows, schema.LON_DEG)
    for col in ("start_lat_deg", "start_lon_deg", "end_lat_deg", "end_lon_deg"):
        table[col] = np.nan
    if lat is not None and lon is not None and codes.size:
        index = np.arange(codes.size)
        fix = np.isfinite(lat) & np.isfinite(lon)
        next_fix = np.minimum.accumulate(np.where(fix, index, codes.size)[::-1])[::-1][first]
        prev_fix = np.maximum.accumulate(np.where(fix, index, -1))[last]
        has = next_fix <= last  # the trip has a fix
        for col, src, at in (("start_lat_deg", lat, next_fix), ("start_lon_deg", lon, next_fix),
                             ("end_lat_deg", lat, prev_fix), ("end_lon_deg", lon, prev_fix)):
            table[col] = np.where(has, src[np.clip(at, 0, codes.size - 1)], np.nan)
    table[schema.ROUTE] = table[schema.TRIP_ID].map(_route_mode(rows)).astype("string")
    table = table.sort_values([schema.VEHICLE_ID, "start_utc"], kind="stable").reset_index(drop=True)
    table["unlogged_m"] = unlogged_distance_m(table, cfg)
    return table[list(TRIP_TABLE_COLUMNS)]


def unlogged_distance_m(trips: pd.DataFrame, cfg: SegmentConfig | None = None) -> np.ndarray:
    """Distance a vehicle covered while its log was silent, charged to the trip after the silence.

    A long logging gap (a receiver outage, a logger reset) ends a trip like a stop does, but the
    vehicle drove on: the next trip starts elsewhere. The straight-line (geodesic) distance from
    the last fix of a trip to the first fix of the next trip of the same operating period counts
    when it is at least ``cfg.unlogged_min_m``; a stop leaves the two fixes at one place. A lower
    bound of the road distance (roads are longer than the straight line); nothing across a
    period boundary, since a rest of hours may or may not hide driving.

    Parameters
    ----------
    trips : DataFrame
        Trip table columns ``vehicle_id``, ``period_id``, start and end positions, sorted by
        vehicle and start time.
    cfg : SegmentConfig, optional

    Returns
    -------
    ndarray
        Per trip, the distance before it that no sample covers (0 for a period's first trip). [m]
    """
    cfg = cfg or SegmentConfig()
    n = len(trips)
    if n < 2:
        return np.zeros(n)
    vehicle = trips[schema.VEHICLE_ID].astype("string").fillna("").to_numpy(dtype=object)
    period = trips[schema.PERIOD_ID].astype("string").fillna("").to_numpy(dtype=object)
    same = np.r_[False, (vehicle[1:] == vehicle[:-1]) & (period[1:] == period[:-1])]
    jump = np.r_[np.nan, geodesic_distance_m(
        trips["end_lat_deg"].to_numpy(np.float64)[:-1], trips["end_lon_deg"].to_numpy(np.float64)[:-1],
        trips["start_lat_deg"].to_numpy(np.float64)[1:], trips["start_lon_deg"].to_numpy(np.float64)[1:],
    )]
    with np.errstate(invalid="ignore"):
        return np.where(same & (jump >= cfg.unlogged_min_m), jump, 0.0)


def period_table(samples: pd.DataFrame, cfg: SegmentConfig | None = None) -> pd.DataFrame:
    """One row per operating period: vehicle, id, start, end, trips, driven time and distance.

    Returns
    -------
    DataFrame
        :data:`PERIOD_TABLE_COLUMNS`: ``duration_s`` from first to last row [s], ``driven_s``
        the trips' total duration [s], ``distance_m`` their total distance [m].
    """
    trips = trip_table(samples, cfg)
    grouped = trips.groupby(schema.PERIOD_ID, sort=True)
    table = pd.DataFrame(
        {
            schema.VEHICLE_ID: grouped[schema.VEHICLE_ID].first(),
            "start_utc": grouped["start_utc"].min(),
            "end_utc": grouped["end_utc"].max(),
            "trips": grouped.size(),
            "driven_s": grouped["duration_s"].sum(),
            "distance_m": grouped["distance_m"].sum(),
        }
    ).reset_index()
    table["duration_s"] = (table["end_utc"] - table["start_utc"]) / pd.Timedelta(seconds=1)
    table = table[list(PERIOD_TABLE_COLUMNS)]
    return table.sort_values([schema.VEHICLE_ID, "start_utc"], kind="stable").reset_index(drop=True)
