"""Plane geometry of invented roads, and its mapping onto WGS-84 latitude and longitude.

Roads are drawn in a local plane (metres east and north of the scenario origin), their corners
rounded with circular arcs, then projected to latitude and longitude with an azimuthal
equidistant projection centred on the origin (PROJ ``aeqd``). Distances along a road are the
ellipsoidal geodesic lengths of its vertex-to-vertex edges (Karney 2013, via :class:`pyproj.Geod`),
so a position interpolated at distance ``s`` along the road is consistent with geodesic distances
measured between fixes.

References
----------
Karney, C. F. F. (2013). Algorithms for geodesics. Journal of Geodesy 87, 43-55.
Snyder, J. P. (1987). Map Projections: A Working Manual. USGS Professional Paper 1395, sect. 25.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Final

import numpy as np
import numpy.typing as npt
import pyproj

FloatArray = npt.NDArray[np.float64]

MAX_ARC_STEP_RAD: Final = np.deg2rad(4.0)
"""Largest heading change between two vertices of a rounded corner: keeps the chord of one
1 Hz step on a curve within 0.1 % of the arc (1 - cos(2 deg) = 6e-4)."""

MAX_EDGE_M: Final = 60.0
"""Straight edges are split so that no vertex-to-vertex edge is longer than this: linear
interpolation of latitude and longitude along an edge then stays within 1e-6 of the geodesic."""


@lru_cache(maxsize=8)
def _projection(lat0_deg: float, lon0_deg: float) -> pyproj.Proj:
    return pyproj.Proj(proj="aeqd", lat_0=lat0_deg, lon_0=lon0_deg, ellps="WGS84", units="m")


@lru_cache(maxsize=1)
def _geod() -> pyproj.Geod:
    return pyproj.Geod(ellps="WGS84")


def plane_to_latlon(
    x_m: FloatArray, y_m: FloatArray, origin_lat_deg: float, origin_lon_deg: float
) -> tuple[FloatArray, FloatArray]:
    """Latitude and longitude [deg] of plane points ``x_m`` east, ``y_m`` north of the origin [m]."""
    lon, lat = _projection(origin_lat_deg, origin_lon_deg)(np.asarray(x_m), np.asarray(y_m), inverse=True)
    return np.asarray(lat, dtype=np.float64), np.asarray(lon, dtype=np.float64)


def edge_lengths_m(lat_deg: FloatArray, lon_deg: FloatArray) -> FloatArray:
    """Geodesic length [m] of each edge of the polyline (WGS-84; Karney 2013)."""
    _, _, dist = _geod().inv(lon_deg[:-1], lat_deg[:-1], lon_deg[1:], lat_deg[1:])
    return np.asarray(dist, dtype=np.float64)


def round_corners(points_m: FloatArray, radius_m: FloatArray | float) -> tuple[FloatArray, npt.NDArray[np.int64]]:
    """Replace each interior corner of a plane polyline by a circular arc.

    Parameters
    ----------
    points_m : ndarray, shape (n, 2)
        Control polygon, east and north; consecutive repeats are allowed. [m]
    radius_m : float or ndarray, shape (n,)
        Arc radius at each vertex (ends ignored); clipped so that tangent points never pass the
        middle of the adjacent edges. A reversal (U-turn) gets radius zero. [m]

    Returns
    -------
    poly : ndarray, shape (m, 2)
        Polyline through the tangent points and arc vertices (heading steps at most
        :data:`MAX_ARC_STEP_RAD`). [m]
    vertex_index : ndarray of int, shape (n,)
        Index in ``poly`` of each control vertex's corner (the arc middle).

    Notes
    -----
    The loop runs over control vertices (tens to hundreds per road), never over samples.
    """
    pts = np.asarray(points_m, dtype=np.float64)
    n_in = len(pts)
    radius_all = np.broadcast_to(np.asarray(radius_m, dtype=np.float64), (n_in,))
    moved = np.r_[True, np.any(np.diff(pts, axis=0) != 0, axis=1)]
    kept_of = np.cumsum(moved) - 1
    pts = pts[moved]
    radius = radius_all[moved]
    n = len(pts)
    if n < 3:
        return pts, kept_of.astype(np.int64)
    edges = np.diff(pts, axis=0)
    lengths = np.hypot(edges[:, 0], edges[:, 1])
    heading = np.arctan2(edges[:, 1], edges[:, 0])
    out: list[FloatArray] = [pts[:1]]
    corner = np.zeros(n, dtype=np.int64)
    count = 1
    for i in range(1, n - 1):
        turn = (heading[i] - heading[i - 1] + np.pi) % (2 * np.pi) - np.pi
        half = abs(turn) / 2
        if abs(turn) < 1e-9 or np.pi / 2 - half < 1e-6:
            out.append(pts[i : i + 1])
            corner[i] = count
            count += 1
            continue
        tangent = min(radius[i] * np.tan(half), lengths[i - 1] / 2, lengths[i] / 2)
        r = tangent / np.tan(half)
        d_in = edges[i - 1] / lengths[i - 1]
        start = pts[i] - d_in * tangent
        left_in = np.array([-d_in[1], d_in[0]])
        side = np.sign(turn)
        centre = start + side * r * left_in
        steps = int(np.ceil(abs(turn) / MAX_ARC_STEP_RAD))
        h = heading[i - 1] + turn * np.linspace(0.0, 1.0, steps + 1)
        arc = centre - side * r * np.column_stack([-np.sin(h), np.cos(h)])
        out.append(arc)
        corner[i] = count + steps // 2
        count += len(arc)
    out.append(pts[-1:])
    corner[-1] = count
    poly = np.vstack(out)
    step_ok = np.r_[True, np.hypot(*np.diff(poly, axis=0).T) > 1e-6]
    new_index = np.cumsum(step_ok) - 1
    return poly[step_ok], new_index[corner][kept_of]


def densify(points_m: FloatArray, max_edge_m: float = MAX_EDGE_M) -> tuple[FloatArray, npt.NDArray[np.int64]]:
    """Split plane edges longer than ``max_edge_m`` into equal parts (vectorised).

    Returns the new polyline [m] and the new index of each old vertex.
    """
    pts = np.asarray(points_m, dtype=np.float64)
    edges = np.diff(pts, axis=0)
    lengths = np.hypot(edges[:, 0], edges[:, 1])
    parts = np.maximum(1, np.ceil(lengths / max_edge_m).astype(np.int64))
    edge_of = np.repeat(np.arange(len(edges)), parts)
    first = np.cumsum(parts) - parts
    frac = (np.arange(parts.sum()) - first[edge_of]) / parts[edge_of]
    inner = pts[edge_of] + edges[edge_of] * frac[:, None]
    return np.vstack([inner, pts[-1:]]), np.r_[first, parts.sum()].astype(np.int64)


def plane_curvature_1_m(points_m: FloatArray) -> FloatArray:
    """Unsigned curvature [1/m] at each vertex: heading change over the mean adjacent edge length."""
    pts = np.asarray(points_m, dtype=np.float64)
    edges = np.diff(pts, axis=0)
    lengths = np.hypot(edges[:, 0], edges[:, 1])
    heading = np.arctan2(edges[:, 1], edges[:, 0])
    turn = np.abs((np.diff(heading) + np.pi) % (2 * np.pi) - np.pi)
    mean_len = (lengths[:-1] + lengths[1:]) / 2
    inner = turn / np.maximum(mean_len, 1e-9)
    return np.r_[0.0, inner, 0.0]


@dataclass(frozen=True, slots=True, kw_only=True)
class Polyline:
    """A road's geometry: vertices in latitude/longitude with cumulative geodesic distance.

    Attributes
    ----------
    lat_deg, lon_deg : ndarray
        Vertices (WGS-84). [deg]
    s_m : ndarray
        Geodesic distance from the first vertex, non-decreasing. [m]
    curvature_1_m : ndarray
        Unsigned plane curvature at each vertex. [1/m]
    x_m, y_m : ndarray
        The vertices in the scenario plane, east and north of the origin. [m]
    """

    lat_deg: FloatArray
    lon_deg: FloatArray
    s_m: FloatArray
    curvature_1_m: FloatArray
    x_m: FloatArray
    y_m: FloatArray

    @property
    def length_m(self) -> float:
        """Total geodesic length. [m]"""
        return float(self.s_m[-1])

    def reversed(self) -> Polyline:
        """The same road driven the other way."""
        return Polyline(
            lat_deg=self.lat_deg[::-1].copy(),
            lon_deg=self.lon_deg[::-1].copy(),
            s_m=(self.s_m[-1] - self.s_m[::-1]).copy(),
            curvature_1_m=self.curvature_1_m[::-1].copy(),
            x_m=self.x_m[::-1].copy(),
            y_m=self.y_m[::-1].copy(),
        )


def polyline_from_plane(
    control_m: FloatArray, radius_m: FloatArray | float, origin_lat_deg: float, origin_lon_deg: float
) -> tuple[Polyline, FloatArray]:
    """Round the corners of a plane control polygon, densify it and project it to WGS-84.

    Returns the polyline and the distance along it of each control vertex's corner. [m]
    """
    rounded, corner = round_corners(control_m, radius_m)
    pts, moved_to = densify(rounded)
    lat, lon = plane_to_latlon(pts[:, 0], pts[:, 1], origin_lat_deg, origin_lon_deg)
    s = np.r_[0.0, np.cumsum(edge_lengths_m(lat, lon))]
    line = Polyline(lat_deg=lat, lon_deg=lon, s_m=s, curvature_1_m=plane_curvature_1_m(pts),
                    x_m=pts[:, 0].copy(), y_m=pts[:, 1].copy())
    return line, s[moved_to[corner]]
