"""Roads and routes: geometry, speed limits, junction features, planned stops and true elevation.

A :class:`Road` is drawn once in the scenario plane (a control polygon with a corner radius at
each vertex) and carries its speed-limit zones, junction features and elevation in its own
distance coordinate. A :class:`Route` is a chain of roads (each possibly driven backwards) with
the stops a vehicle plans on it (deliveries, bus stops, breaks); :func:`assemble_route` rounds
the corners of the whole chain at once (so joins are smooth), projects it to WGS-84 and maps every
road-local quantity onto the route's distance.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.synth.geometry import Polyline, polyline_from_plane
from fleetfuel.synth.terrain import ElevationProfile, TerrainField, profile_from_controls, profile_from_field

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

# Junction features (road furniture): what a driver meets at a point of the road.
LIGHT: Final = 1
"""Signalised junction: a stop when red."""
GIVE_WAY: Final = 2
"""Unsignalised junction on a minor arm: a short stop or a slow crawl."""
ROUNDABOUT: Final = 3
"""Roundabout: a slow pass, sometimes a stop."""
FEATURE_NAMES: Final = {LIGHT: "traffic_light", GIVE_WAY: "give_way", ROUNDABOUT: "roundabout"}

# Planned stops: where the vehicle's job makes it stand.
DELIVERY: Final = 11
BUS_STOP: Final = 12
TERMINAL: Final = 13
BREAK: Final = 14
DEPOT: Final = 15
STOP_NAMES: Final = {DELIVERY: "delivery", BUS_STOP: "bus_stop", TERMINAL: "terminal", BREAK: "break", DEPOT: "depot"}


def kmh(value_kmh: float) -> float:
    """A signposted speed given in km/h, in m/s (NIST SP 811: 1 km/h = 1/3.6 m/s)."""
    return value_kmh / 3.6


@dataclass(frozen=True, slots=True, kw_only=True)
class Road:
    """One road of the invented network, in its own distance coordinate.

    Attributes
    ----------
    name : str
        Road name (invented).
    control_m : ndarray, shape (n, 2)
        Control polygon in the scenario plane, east and north. [m]
    radius_m : ndarray, shape (n,)
        Corner radius at each control vertex. [m]
    length_m : float
        Geodesic length of the road drawn alone (its own corners rounded). [m]
    zone_start_m, zone_limit_m_s : ndarray
        Speed-limit zones: zone ``i`` starts at ``zone_start_m[i]`` (first 0). [m], [m/s]
    feature_at_m, feature_kind : ndarray
        Junction features (:data:`LIGHT`, :data:`GIVE_WAY`, :data:`ROUNDABOUT`). [m], [code]
    elevation : ElevationProfile or None
        True elevation along the road; None: sampled from the town terrain field.
    """

    name: str
    control_m: FloatArray
    radius_m: FloatArray
    length_m: float
    zone_start_m: FloatArray
    zone_limit_m_s: FloatArray
    feature_at_m: FloatArray = field(default_factory=lambda: np.zeros(0))
    feature_kind: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    elevation: ElevationProfile | None = None

    def reversed(self) -> Road:
        """The same road driven the other way (zones, features and elevation mirrored)."""
        length = self.length_m
        return Road(
            name=f"{self.name} (back)",
            control_m=self.control_m[::-1].copy(),
            radius_m=self.radius_m[::-1].copy(),
            length_m=length,
            zone_start_m=np.r_[0.0, length - self.zone_start_m[:0:-1]],
            zone_limit_m_s=self.zone_limit_m_s[::-1].copy(),
            feature_at_m=(length - self.feature_at_m)[::-1].copy(),
            feature_kind=self.feature_kind[::-1].copy(),
            elevation=None if self.elevation is None else self.elevation.reversed(),
        )


def make_road(
    name: str,
    control_m: npt.ArrayLike,
    radius_m: npt.ArrayLike | float,
    origin: tuple[float, float],
    zones: Sequence[tuple[float, float]],
    *,
    features: Sequence[tuple[float, int]] = (),
    elevation_controls: tuple[Sequence[float], Sequence[float]] | None = None,
    undulation_m: float = 0.0,
    undulation_wavelengths_m: tuple[float, ...] = (),
    seed: int = 0,
) -> Road:
    """Build a :class:`Road` from its control polygon.

    Parameters
    ----------
    zones : sequence of (start, limit)
        Zone starts as a share of the road length (first 0) and limits. [1], [m/s]
    features : sequence of (at, kind)
        Features at a share of the road length. [1], [code]
    elevation_controls : (shares, elevations) or None
        Control points of the elevation profile: shares of the length (0 to 1) and elevations [m];
        None: the road lies in a town and samples the terrain field.
    """
    control = np.asarray(control_m, dtype=np.float64)
    radius = np.broadcast_to(np.asarray(radius_m, dtype=np.float64), (len(control),)).copy()
    line, _ = polyline_from_plane(control, radius, *origin)
    length = line.length_m
    elevation = None
    if elevation_controls is not None:
        shares, heights = elevation_controls
        elevation = profile_from_controls(
            length, np.asarray(shares) * length, heights, undulation_m=undulation_m,
            undulation_wavelengths_m=undulation_wavelengths_m, seed=seed,
        )
    starts, limits = zip(*zones, strict=True)
    at = np.asarray([f[0] for f in features], dtype=np.float64) * length
    kinds = np.asarray([f[1] for f in features], dtype=np.int64)
    order = np.argsort(at, kind="stable")
    return Road(
        name=name, control_m=control, radius_m=radius, length_m=length,
        zone_start_m=np.asarray(starts, dtype=np.float64) * length, zone_limit_m_s=np.asarray(limits, dtype=np.float64),
        feature_at_m=at[order], feature_kind=kinds[order], elevation=elevation,
    )


@dataclass(frozen=True, slots=True, kw_only=True)
class PlannedStop:
    """A stop the vehicle's job plans: on leg ``leg`` at ``at_m`` of that road (local distance).

    Attributes
    ----------
    leg : int
        Index of the leg in the route.
    at_m : float
        Position along that leg's road. [m]
    kind : int
        :data:`DELIVERY`, :data:`BUS_STOP`, :data:`TERMINAL`, :data:`BREAK` or :data:`DEPOT`.
    dwell_s : float
        Planned standing time (the drive may vary it). [s]
    engine_off : bool
        The engine is switched off while standing.
    """

    leg: int
    at_m: float
    kind: int
    dwell_s: float
    engine_off: bool = False


@dataclass(frozen=True, slots=True, kw_only=True)
class Route:
    """A drivable route: geometry, limits, features, planned stops and true elevation.

    Attributes
    ----------
    name, kind : str
        Route name and kind (``urban_round``, ``regional``, ``trunk``, ``bus_line``, ``car_trip``, ``test``).
    line : Polyline
        Geometry with geodesic distance ``line.s_m``. [deg], [m]
    elevation : ElevationProfile
        True elevation along the route. [m]
    limit_start_m, limit_m_s : ndarray
        Speed-limit zones along the route. [m], [m/s]
    feature_at_m, feature_kind : ndarray
        Junction features along the route. [m], [code]
    stop_at_m, stop_kind, stop_dwell_s, stop_engine_off : ndarray
        Planned stops (sorted by position). [m], [code], [s], [bool]
    """

    name: str
    kind: str
    line: Polyline
    elevation: ElevationProfile
    limit_start_m: FloatArray
    limit_m_s: FloatArray
    feature_at_m: FloatArray
    feature_kind: IntArray
    stop_at_m: FloatArray
    stop_kind: IntArray
    stop_dwell_s: FloatArray
    stop_engine_off: npt.NDArray[np.bool_]

    @property
    def length_m(self) -> float:
        """Route length. [m]"""
        return self.line.length_m

    def limit_at(self, s_m: npt.ArrayLike) -> FloatArray:
        """Speed limit at distances ``s_m``. [m/s]"""
        idx = np.clip(np.searchsorted(self.limit_start_m, s_m, side="right") - 1, 0, len(self.limit_m_s) - 1)
        return self.limit_m_s[idx]


def _concat_profiles(parts: list[ElevationProfile], starts: FloatArray) -> ElevationProfile:
    s = [parts[0].s_m + starts[0]]
    z = [parts[0].z_m]
    for part, start in zip(parts[1:], starts[1:], strict=True):
        s.append(part.s_m[1:] + start)
        z.append(part.z_m[1:])
    s_all = np.concatenate(s)
    keep = np.r_[True, np.diff(s_all) > 0]
    return ElevationProfile(s_m=s_all[keep], z_m=np.concatenate(z)[keep])


_GEOMETRY_CACHE: dict[tuple, tuple[Polyline, FloatArray, FloatArray, ElevationProfile]] = {}
_GEOMETRY_CACHE_SIZE: Final = 64


def _geometry(
    legs: Sequence[Road], origin: tuple[float, float], terrain: TerrainField | None, join_radius_m: float
) -> tuple[Polyline, FloatArray, FloatArray, ElevationProfile]:
    """Polyline, leg bounds, leg spans and elevation of a chain of roads."""
    controls: list[FloatArray] = []
    radii: list[FloatArray] = []
    first_index = [0]
    for i, road in enumerate(legs):
        c, r = road.control_m, road.radius_m.copy()
        if i:
            c, r = c[1:], r[1:]
        if i < len(legs) - 1:
            r[-1] = join_radius_m
        controls.append(c)
        radii.append(r)
        first_index.append(first_index[-1] + len(c))
    line, control_s = polyline_from_plane(np.vstack(controls), np.concatenate(radii), *origin)
    bounds = control_s[np.r_[0, np.asarray(first_index[1:]) - 1]]
    span = np.diff(bounds)
    profiles = []
    for i, road in enumerate(legs):
        if road.elevation is not None:
            profiles.append(road.elevation.stretched(span[i]))
        elif terrain is not None:
            profiles.append(profile_from_field(terrain, line.x_m, line.y_m, line.s_m, bounds[i], bounds[i + 1]))
        else:
            raise ValueError(f"road {road.name!r} has no elevation and no terrain field was given")
    return line, bounds, span, _concat_profiles(profiles, bounds[:-1]).uniform()


def assemble_route(
    name: str,
    kind: str,
    legs: Sequence[Road],
    stops: Sequence[PlannedStop],
    *,
    origin: tuple[float, float],
    terrain: TerrainField | None = None,
    join_radius_m: float = 12.0,
    cache_key: str | None = None,
) -> Route:
    """Chain roads into one :class:`Route` (consecutive legs must meet end to start).

    Road-local positions (zones, features, stops, elevation) are mapped linearly from each road's
    own length onto its span of the route, which differs by the few metres that rounding the
    joins cuts off.

    Parameters
    ----------
    join_radius_m : float
        Corner radius where two legs meet. [m]
    terrain : TerrainField or None
        Field for legs without their own elevation profile (town streets).
    cache_key : str, optional
        Name of a fixed chain of roads (the same legs every time, e.g. a bus line or the trunk
        route): its geometry is built once and reused; stops may differ between calls.
    """
    key = None if cache_key is None else (cache_key, origin, join_radius_m, len(legs))
    if key is not None and key in _GEOMETRY_CACHE:
        line, bounds, span, elevation = _GEOMETRY_CACHE[key]
    else:
        line, bounds, span, elevation = _geometry(legs, origin, terrain, join_radius_m)
        if key is not None:
            if len(_GEOMETRY_CACHE) >= _GEOMETRY_CACHE_SIZE:
                _GEOMETRY_CACHE.pop(next(iter(_GEOMETRY_CACHE)))
            _GEOMETRY_CACHE[key] = (line, bounds, span, elevation)
    scale = np.asarray([s / road.length_m for s, road in zip(span, legs, strict=True)])

    def to_route(leg: npt.ArrayLike, at_m: npt.ArrayLike) -> FloatArray:
        leg_arr = np.asarray(leg, dtype=np.int64)
        return bounds[leg_arr] + np.asarray(at_m, dtype=np.float64) * scale[leg_arr]


    zone_leg = np.concatenate([np.full(len(r.zone_start_m), i) for i, r in enumerate(legs)])
    zone_start = to_route(zone_leg, np.concatenate([r.zone_start_m for r in legs]))
    zone_limit = np.concatenate([r.zone_limit_m_s for r in legs])
    feat_leg = np.concatenate([np.full(len(r.feature_at_m), i) for i, r in enumerate(legs)])
    feat_at = to_route(feat_leg, np.concatenate([r.feature_at_m for r in legs]))
    feat_kind = np.concatenate([r.feature_kind for r in legs])
    stop_at = to_route([s.leg for s in stops], [s.at_m for s in stops]) if stops else np.zeros(0)
    order = np.argsort(stop_at, kind="stable")
    return Route(
        name=name, kind=kind, line=line, elevation=elevation,
        limit_start_m=np.r_[0.0, zone_start[1:]], limit_m_s=zone_limit,
        feature_at_m=feat_at, feature_kind=feat_kind,
        stop_at_m=stop_at[order],
        stop_kind=np.asarray([s.kind for s in stops], dtype=np.int64)[order],
        stop_dwell_s=np.asarray([s.dwell_s for s in stops], dtype=np.float64)[order],
        stop_engine_off=np.asarray([s.engine_off for s in stops], dtype=bool)[order],
    )
