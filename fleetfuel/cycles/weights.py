"""Weights of the duty-cycle types: share of distance and of time, per vehicle, route and fleet.

Shares come from the micro-trip table (every micro-trip with a type, low-rate logs included):
the share of distance of type :math:`k` in a group is the distance of the group's micro-trips of
type :math:`k` over the group's distance; likewise for time (duration, preceding idle included).
"""

from __future__ import annotations

from typing import Final

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.segment.config import METRES_PER_KM
from fleetfuel.units import SECONDS_PER_HOUR

LEVELS: Final = ("fleet", "route", "vehicle")
WEIGHT_COLUMNS: Final = ("level", "key", "type", "microtrips", "distance_km", "time_h", "distance_share", "time_share")
"""Columns of :func:`type_weights` (km and h for people; shares in [0, 1])."""
FLEET_KEY: Final = "fleet"


def type_weights(microtrips: pd.DataFrame, types: list[str]) -> pd.DataFrame:
    """Share of distance and time of each type, fleet-wide, per route and per vehicle.

    Parameters
    ----------
    microtrips : DataFrame
        One row per micro-trip with ``type``, ``distance_m`` [m], ``duration_s`` [s],
        ``vehicle_id`` and (optional) ``route``. Rows without a type are left out.
    types : list of str
        Every type, so that a group lacking a type gets a zero row for it.

    Returns
    -------
    DataFrame
        :data:`WEIGHT_COLUMNS`, sorted by level (fleet, route, vehicle), key and type.
    """
    rows = microtrips.loc[microtrips["type"].notna().to_numpy()]
    keys = {"fleet": pd.Series(FLEET_KEY, index=rows.index), "vehicle": rows[schema.VEHICLE_ID].astype(str)}
    if schema.ROUTE in rows.columns:
        keys["route"] = rows[schema.ROUTE].astype("string").fillna("(none)").astype(str)
    frames = []
    for level in LEVELS:
        if level not in keys:
            continue
        frame = pd.DataFrame(
            {
                "key": keys[level].to_numpy(),
                "type": rows["type"].astype(str).to_numpy(),
                "distance_m": rows["distance_m"].to_numpy(dtype=np.float64, na_value=0.0),
                "duration_s": rows["duration_s"].to_numpy(dtype=np.float64, na_value=0.0),
            }
        )
        grid = pd.MultiIndex.from_product([sorted(frame["key"].unique()), types], names=["key", "type"])
        summed = frame.groupby(["key", "type"], sort=True).agg(
            microtrips=("distance_m", "size"), distance_m=("distance_m", "sum"), duration_s=("duration_s", "sum")
        )
        summed = summed.reindex(grid, fill_value=0).reset_index()
        by_key = summed.groupby("key", sort=False)
        dist_total = by_key["distance_m"].transform("sum")
        time_total = by_key["duration_s"].transform("sum")
        summed["distance_share"] = np.where(dist_total > 0, summed["distance_m"] / dist_total.where(dist_total > 0, 1), 0.0)
        summed["time_share"] = np.where(time_total > 0, summed["duration_s"] / time_total.where(time_total > 0, 1), 0.0)
        summed["distance_km"] = summed["distance_m"] / METRES_PER_KM
        summed["time_h"] = summed["duration_s"] / SECONDS_PER_HOUR
        summed["level"] = level
        frames.append(summed[list(WEIGHT_COLUMNS)])
    out = pd.concat(frames, ignore_index=True)
    out["microtrips"] = out["microtrips"].astype(np.int64)
    return out


def route_type_mix(weights: pd.DataFrame) -> pd.DataFrame:
    """Per-route share of distance of each type: one row per route, one column per type. [1]"""
    routes = weights.loc[weights["level"] == "route"]
    mix = routes.pivot(index="key", columns="type", values="distance_share")
    mix.index.name = schema.ROUTE
    mix.columns.name = None
    return mix.add_prefix("distance_share_").reset_index()
