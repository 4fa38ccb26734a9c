r"""Automatic route discovery: cluster journeys by their end places and by the path between them.

A *journey* is one trip (``cfg.route_unit = "trip"``) or all trips of one operating period
(``"period"``, the default: a vehicle's duty, e.g. a delivery round from the depot back to it, is
what a fleet calls a route; trips cut at delivery stops or breaks are legs of it).

1. **Places.** All journey end points (starts and ends), snapped to cells a tenth of the place
   radius across (one weighted point per cell, so memory does not grow with the square of the
   journeys that start at one depot), are clustered with scikit-learn's DBSCAN on the
   great-circle (haversine) distance, latitudes and longitudes in radians, ``eps`` =
   ``cfg.place_radius_m`` / mean Earth radius. Noise points become places of their own.
2. **End-place pairs.** Each journey joins the group of its (start place, end place). By default
   the pair is ordered and headings count in full: A->B and B->A, or a loop and its reverse,
   climb in different places and are different routes. With ``cfg.direction_agnostic`` the pair
   is unordered and headings count modulo 180 degrees, so they are one route.
3. **Paths.** Within a group, journeys whose paths overlap are one route: the Jaccard overlap of
   the grid cells they drive through, each with its heading sector, is at least
   ``cfg.path_min_overlap`` (:mod:`fleetfuel.segment.paths`; single linkage, i.e. DBSCAN with
   ``min_samples = 1``) and the shorter is at least ``cfg.path_min_length_ratio`` of the longer.
4. **Names.** Routes are named ``R01``, ``R02``, ... by decreasing number of journeys, then
   decreasing distance, then earliest first journey (deterministic; names already taken are
   skipped), and described by the coordinates of their two end places (end A: where the route's
   earliest journey starts).

References
----------
Ester, M., Kriegel, H.-P., Sander, J. & Xu, X. (1996). A density-based algorithm for discovering
    clusters in large spatial databases with noise. Proc. KDD-96, 226-231.
scikit-learn, ``sklearn.cluster.DBSCAN`` (metric ``"haversine"`` expects [lat, lon] in radians).
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from pandas.api.types import union_categoricals

from fleetfuel import schema
from fleetfuel.constants import WGS84_MEAN_RADIUS_M
from fleetfuel.segment._frame import FloatArray, IntArray, float_column
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.paths import journey_cells, overlap_clusters, plane_origin, token_matrix

DISCOVERED_COLUMNS = (
    schema.ROUTE,
    "end_a_lat_deg",
    "end_a_lon_deg",
    "end_b_lat_deg",
    "end_b_lon_deg",
    "description",
)
"""Columns of the route table :func:`discover_routes` returns."""
PLACE_SNAP_PER_RADIUS: Final = 10
"""End points are snapped to cells of the place radius over this before DBSCAN (see :func:`_places`)."""


def _places(lat_deg: FloatArray, lon_deg: FloatArray, cfg: SegmentConfig) -> IntArray:
    """Place label of each point (0..P-1 in order of first appearance; noise: own places).

    Points are first snapped to cells of ``cfg.place_radius_m / PLACE_SNAP_PER_RADIUS`` (one per
    occupied cell, weighted by its points), so a depot that thousands of journeys start from is a
    few points for DBSCAN, not thousands: its neighbour lists would grow with the square of the
    journeys. Snapping moves a point by at most half a cell's diagonal, 0.071 of the radius.
    """
    # Imported here: scikit-learn takes over a second to load, and the engine's workers, which
    # import this module to segment their partitions, never cluster places (measured 1.5 s).
    from sklearn.cluster import DBSCAN

    step = cfg.place_radius_m / PLACE_SNAP_PER_RADIUS / WGS84_MEAN_RADIUS_M  # [rad]
    lat = np.radians(np.asarray(lat_deg, dtype=np.float64))
    lon = np.radians(np.asarray(lon_deg, dtype=np.float64))
    row = np.floor(lat / step)
    # the same east-west width in metres on every row (the cosine kept off zero at the poles)
    lon_step = step / np.maximum(np.cos((row + 0.5) * step), 1e-6)
    col = np.floor(lon / lon_step)
    cells, first, point_cell = np.unique(np.column_stack([row, col]), axis=0, return_index=True, return_inverse=True)
    point_cell = point_cell.ravel()
    weight = np.bincount(point_cell, minlength=len(cells)).astype(np.float64)
    cell_lat = (cells[:, 0] + 0.5) * step
    cell_lon = (cells[:, 1] + 0.5) * lon_step[first]  # a cell's row gives its width
    model = DBSCAN(
        eps=cfg.place_radius_m / WGS84_MEAN_RADIUS_M,
        min_samples=cfg.place_min_samples,
        metric="haversine",
        algorithm="ball_tree",
    )
    labels = model.fit_predict(np.column_stack([cell_lat, cell_lon]), sample_weight=weight).astype(np.int64)[point_cell]
    noise = labels < 0
    labels[noise] = labels.max(initial=-1) + 1 + np.arange(int(noise.sum()))
    codes, _ = pd.factorize(labels)
    return codes.astype(np.int64)


def _names(count: int, taken: Collection[str]) -> list[str]:
    width = max(2, len(str(count + len(taken))))
    names: list[str] = []
    k = 0
    while len(names) < count:
        k += 1
        name = f"R{k:0{width}d}"
        if name not in taken:
            names.append(name)
    return names


def _journeys(trips: pd.DataFrame, unit: str) -> pd.DataFrame:
    """Trips, or the trips of each operating period joined (first start, last end), as journeys."""
    cols = ["start_lat_deg", "start_lon_deg", "end_lat_deg", "end_lon_deg"]
    ordered_trips = trips.sort_values([schema.VEHICLE_ID, "start_utc", schema.TRIP_ID], kind="stable")
    if unit == "trip":
        table = ordered_trips.assign(journey=ordered_trips[schema.TRIP_ID].astype(str))
    else:
        grouped = ordered_trips.groupby(ordered_trips[schema.PERIOD_ID].astype(str), sort=False)
        table = pd.DataFrame(
            {
                schema.VEHICLE_ID: grouped[schema.VEHICLE_ID].first(),
                "start_utc": grouped["start_utc"].min(),
                "distance_m": grouped["distance_m"].sum(),
                "start_lat_deg": grouped["start_lat_deg"].first(),
                "start_lon_deg": grouped["start_lon_deg"].first(),
                "end_lat_deg": grouped["end_lat_deg"].last(),
                "end_lon_deg": grouped["end_lon_deg"].last(),
            }
        )
        table = table.rename_axis("journey").reset_index()
    usable = np.isfinite(table[cols].to_numpy(np.float64)).all(axis=1)
    keep = ["journey", schema.VEHICLE_ID, "start_utc", "distance_m", *cols]
    return table.loc[usable, keep].reset_index(drop=True)


CELL_COLUMNS = ("journey", "cell_x", "cell_y", "sector")
"""Columns of a path-cell table (:func:`path_cells`): journey key and token."""


def journey_key(cfg: SegmentConfig) -> str:
    """The id column that names a journey: ``trip_id``, or ``period_id`` (``cfg.route_unit``)."""
    return schema.TRIP_ID if cfg.route_unit == "trip" else schema.PERIOD_ID


def discovery_origin(trips: pd.DataFrame, cfg: SegmentConfig) -> tuple[float, float]:
    """Origin of the fleet's plane (:func:`fleetfuel.segment.paths.plane_origin`) from the end
    points of the journeys of ``trips`` (the trips to cluster): the same for every partition."""
    usable = _journeys(trips, cfg.route_unit)
    lat = np.r_[usable["start_lat_deg"].to_numpy(np.float64), usable["end_lat_deg"].to_numpy(np.float64)]
    lon = np.r_[usable["start_lon_deg"].to_numpy(np.float64), usable["end_lon_deg"].to_numpy(np.float64)]
    return plane_origin(lat, lon)


def path_cells(samples: pd.DataFrame, trip_ids: Collection[str], origin: tuple[float, float],
               cfg: SegmentConfig) -> pd.DataFrame:
    """:data:`CELL_COLUMNS` of the journeys formed by the trips ``trip_ids`` in ``samples``.

    Works on any set of whole journeys (a partition holds whole operating periods), so the fleet's
    table is the concatenation of its partitions' tables. Rows without a position are skipped.
    """
    key = journey_key(cfg)
    narrow = samples[list(dict.fromkeys([schema.TRIP_ID, key, schema.LAT_DEG, schema.LON_DEG]))]
    rows = narrow.loc[narrow[schema.TRIP_ID].isin(set(trip_ids)).to_numpy()]
    rows = rows.loc[np.isfinite(float_column(rows, schema.LAT_DEG)) & np.isfinite(float_column(rows, schema.LON_DEG))]
    codes, names = pd.factorize(rows[key].astype(str))
    order = np.argsort(codes, kind="stable")
    journey, cells = journey_cells(rows.iloc[order], codes[order].astype(np.int64), len(names), origin, cfg)
    return pd.DataFrame({"journey": pd.Categorical.from_codes(journey, categories=pd.Index(names, dtype="string")),
                         **{name: cells[:, k].astype(np.int32) for k, name in enumerate(CELL_COLUMNS[1:])}})


def concat_cells(parts: Sequence[pd.DataFrame]) -> pd.DataFrame:
    """Path-cell tables (:func:`path_cells`, e.g. one per partition) as one, in the given order.

    The journey column stays categorical (a code per row, each name once): a fleet's table has
    a row per journey and cell, so a text per row would take several times the memory.
    """
    found = [p for p in parts if len(p)]
    if not found:
        return pd.DataFrame({"journey": pd.Categorical([], categories=pd.Index([], dtype="string")),
                             **{name: np.zeros(0, dtype=np.int32) for name in CELL_COLUMNS[1:]}})
    journey = union_categoricals([pd.Categorical(p["journey"]) for p in found])
    return pd.DataFrame({"journey": journey,
                         **{name: np.concatenate([p[name].to_numpy(np.int32) for p in found]) for name in CELL_COLUMNS[1:]}})


def _journey_numbers(journey: pd.Series, index: pd.Series) -> npt.NDArray[np.float64]:
    """Number of each cell row's journey in ``index`` (name -> number; NaN: not a usable
    journey), looked up once per name when the column is categorical."""
    if isinstance(journey.dtype, pd.CategoricalDtype):
        per_name = index.reindex(journey.cat.categories.astype(str)).to_numpy(np.float64)
        codes = journey.cat.codes.to_numpy()
        return np.where(codes >= 0, per_name[np.maximum(codes, 0)], np.nan)
    return index.reindex(journey.astype(str).to_numpy()).to_numpy(np.float64)


def discover_routes(
    trips: pd.DataFrame, samples: pd.DataFrame | None, cfg: SegmentConfig | None = None, taken: Collection[str] = (),
    cells: pd.DataFrame | None = None,
) -> tuple[pd.Series, pd.DataFrame]:
    """Cluster journeys into routes by end places and path similarity (see the module docstring).

    A journey is a trip, or (``cfg.route_unit == "period"``, the default) the trips of one
    operating period taken together: a vehicle's duty from its first start to its last stop.

    Parameters
    ----------
    trips : DataFrame
        Trip table (:func:`fleetfuel.segment.trip_table`) of the trips to cluster; journeys without
        a start and end position are left out.
    samples : DataFrame or None
        Samples with ``trip_id``, ``period_id``, ``lat_deg``, ``lon_deg`` (rows of other trips are
        ignored); None when ``cells`` is given.
    cfg : SegmentConfig, optional
    taken : collection of str
        Route names already in use (from a route column or routes file): not given out.
    cells : DataFrame, optional
        The journeys' path cells (:func:`path_cells` of ``trips`` with :func:`discovery_origin`,
        e.g. computed partition by partition); computed from ``samples`` when None.

    Returns
    -------
    routes : Series
        Route name of each trip of a clustered journey, indexed by ``trip_id``.
    table : DataFrame
        :data:`DISCOVERED_COLUMNS`, one row per route: end places' mean coordinates [deg] and a
        text description.
    """
    cfg = cfg or SegmentConfig()
    usable = _journeys(trips, cfg.route_unit)
    if usable.empty:
        return pd.Series(dtype="string", name=schema.ROUTE), pd.DataFrame(columns=list(DISCOVERED_COLUMNS))
    n = len(usable)
    lat = np.r_[usable["start_lat_deg"].to_numpy(np.float64), usable["end_lat_deg"].to_numpy(np.float64)]
    lon = np.r_[usable["start_lon_deg"].to_numpy(np.float64), usable["end_lon_deg"].to_numpy(np.float64)]
    place = _places(lat, lon, cfg)
    centre = pd.DataFrame({"lat": lat, "lon": lon}).groupby(place).mean().to_numpy()
    a, b = place[:n], place[n:]
    lo, hi = (np.minimum(a, b), np.maximum(a, b)) if cfg.direction_agnostic else (a, b)

    key = journey_key(cfg)
    if cells is None:
        if samples is None:
            raise ValueError("discover_routes needs samples or cells")
        cells = path_cells(samples, trips[schema.TRIP_ID].astype(str), discovery_origin(trips, cfg), cfg)
    index = pd.Series(np.arange(n), index=usable["journey"].astype(str).to_numpy())
    number = _journey_numbers(cells["journey"], index)
    usable_rows = np.isfinite(number)
    tokens = token_matrix(number[usable_rows].astype(np.int64),
                          cells[list(CELL_COLUMNS[1:])].to_numpy(np.int64)[usable_rows], n)
    length = usable["distance_m"].to_numpy(np.float64)
    cluster = overlap_clusters(tokens, lo * (place.max() + 1) + hi, length, cfg)

    info = pd.DataFrame(
        {
            "cluster": cluster,
            "distance_m": usable["distance_m"].to_numpy(),
            "start_utc": usable["start_utc"].to_numpy(),
            "journey": usable["journey"].to_numpy(),
            "a": a,
            "b": b,
        }
    )
    summary = info.groupby("cluster").agg(
        journeys=("journey", "size"),
        distance_m=("distance_m", "sum"),
        first=("start_utc", "min"),
        first_id=("journey", "min"),
    )
    summary = summary.sort_values(
        ["journeys", "distance_m", "first", "first_id"], ascending=[False, False, True, True], kind="stable"
    )
    summary[schema.ROUTE] = _names(len(summary), set(taken))
    earliest = (
        info.sort_values(["start_utc", "journey"], kind="stable")
        .drop_duplicates("cluster")
        .set_index("cluster")
    )
    end_a = earliest.loc[summary.index, "a"].to_numpy()
    end_b = earliest.loc[summary.index, "b"].to_numpy()
    table = pd.DataFrame(
        {
            schema.ROUTE: summary[schema.ROUTE].to_numpy(),
            "end_a_lat_deg": centre[end_a, 0],
            "end_a_lon_deg": centre[end_a, 1],
            "end_b_lat_deg": centre[end_b, 0],
            "end_b_lon_deg": centre[end_b, 1],
        }
    )
    table["description"] = [describe_ends(*row) for row in table[list(DISCOVERED_COLUMNS[1:5])].to_numpy()]
    journey_route = pd.Series(
        summary[schema.ROUTE].reindex(cluster).to_numpy(), index=info["journey"].to_numpy()
    )
    trip_keys = trips[key].astype(str)
    routes = pd.Series(
        trip_keys.map(journey_route).to_numpy(),
        index=trips[schema.TRIP_ID].to_numpy(),
        dtype="string",
        name=schema.ROUTE,
    ).dropna()
    routes.index.name = schema.TRIP_ID
    return routes, table.sort_values(schema.ROUTE, kind="stable").reset_index(drop=True)


def _coord(value: float, positive: str, negative: str) -> str:
    return f"{abs(value):.4f}{positive if value >= 0 else negative}"


def describe_ends(a_lat: float, a_lon: float, b_lat: float, b_lon: float) -> str:
    """Text of a route's end places, e.g. ``"52.0000N 5.0000E - 52.1000N 5.2000E"`` (loop: one place)."""
    if not np.all(np.isfinite([a_lat, a_lon, b_lat, b_lon])):
        return "no positions"
    a = f"{_coord(a_lat, 'N', 'S')} {_coord(a_lon, 'E', 'W')}"
    b = f"{_coord(b_lat, 'N', 'S')} {_coord(b_lon, 'E', 'W')}"
    return f"loop at {a}" if a == b else f"{a} - {b}"
