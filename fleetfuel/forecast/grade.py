r"""Steepest sustained grade of each route, from the clean frame's smoothed elevation.

Definition: the *sustained grade* at a point of a trip is the mean grade of the next
:math:`W` metres of road driven, :math:`(z(s + W) - z(s)) / W`, with :math:`s` the distance along
the trip and :math:`z` the clean stage's smoothed elevation (``elevation_m``, the same profile its
``grade`` comes from); :math:`W` is ``ForecastConfig.grade_window_m`` (500 m by default). A
route's *steepest sustained grade* is the largest value over every point of every trip of the
route whose window ends inside the same trip: climbs only (direction of travel), so a descent
does not count. Trips shorter than the window, and routes without elevation, give NaN.

Each trip on its own distance axis: one ``searchsorted`` finds each window's end and one
``interp`` its elevation; a route's value is the largest of its trips', so it is the same whether
the route's trips are read at once or partition by partition.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from fleetfuel import schema


def sustained_grades(samples: pd.DataFrame, window_m: float) -> pd.Series:
    """Steepest sustained uphill grade of each route (definition in the module docstring).

    Parameters
    ----------
    samples : DataFrame
        Segmented clean frame with ``route``, ``trip_id``, ``distance_m`` [m] and ``elevation_m`` [m].
    window_m : float
        Road length of the window. [m]

    Returns
    -------
    Series
        Route -> grade, rise over run [1] (NaN: no trip with elevation as long as the window).
        The input is not modified.
    """
    needed = (schema.ROUTE, schema.TRIP_ID, schema.DISTANCE_M, schema.ELEVATION_M)
    if any(c not in samples.columns for c in needed):
        return pd.Series(dtype=np.float64, name="steepest_grade")
    keep = (
        samples[schema.TRIP_ID].notna().to_numpy()
        & samples[schema.ROUTE].notna().to_numpy()
        & np.isfinite(samples[schema.ELEVATION_M].to_numpy(dtype=np.float64, na_value=np.nan))
        & np.isfinite(samples[schema.DISTANCE_M].to_numpy(dtype=np.float64, na_value=np.nan))
    )
    rows = samples.loc[keep, [schema.ROUTE, schema.TRIP_ID, schema.DISTANCE_M, schema.ELEVATION_M]]
    routes = sorted(samples[schema.ROUTE].dropna().astype(str).unique())
    out = pd.Series(np.nan, index=pd.Index(routes, name=schema.ROUTE), name="steepest_grade")
    route_of = rows[schema.ROUTE].astype(str).to_numpy()
    for route in routes:  # one route at a time: its grade never depends on which other routes are read
        mine = route_of == route
        if mine.any():
            out[route] = _steepest(rows[schema.TRIP_ID].to_numpy()[mine],
                                   rows[schema.DISTANCE_M].to_numpy(dtype=np.float64)[mine],
                                   rows[schema.ELEVATION_M].to_numpy(dtype=np.float64)[mine], window_m)
    return out


def _steepest(trip_ids: np.ndarray, distance_m: np.ndarray, elevation_m: np.ndarray, window_m: float) -> float:
    """Steepest grade over ``window_m`` of road within one trip, of one route's rows (time order). [1]

    Each trip is computed on its own distance axis, so a route's value is the largest of its
    trips' values whichever other trips are read with them (a route's trips read partition by
    partition give the same number as all at once).
    """
    codes, _ = pd.factorize(trip_ids)
    order = np.argsort(codes, kind="stable")  # rows stay in time order within a trip
    bounds = np.flatnonzero(np.diff(codes[order])) + 1
    best = float("nan")
    for idx in np.split(order, bounds):
        best = float(np.fmax(best, _trip_steepest(distance_m[idx], elevation_m[idx], window_m)))
    return best


def _trip_steepest(distance_m: np.ndarray, elevation_m: np.ndarray, window_m: float) -> float:
    """Steepest grade over ``window_m`` of road of one trip's rows (time order); NaN if shorter. [1]"""
    axis = np.maximum.accumulate(distance_m - distance_m.min())  # never backwards
    end = axis + window_m
    j = np.minimum(np.searchsorted(axis, end), axis.size - 1)
    inside = axis[j] >= end
    if not inside.any():
        return float("nan")
    rise = np.interp(end[inside], axis, elevation_m) - elevation_m[inside]
    return float(np.max(rise / window_m))
