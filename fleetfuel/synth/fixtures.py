"""Test routes with known truth: a straight road, flat or with one hill, stops where asked.

These are for the tests of other stages (clean, segment, simulate): the elevation truth is
exact (the hill is exactly ``height_m`` high), positions lie on one geodesic-like straight line,
and every stop is where it was asked for.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fleetfuel.errors import ConfigError
from fleetfuel.synth import routes as rt
from fleetfuel.synth.network import ORIGIN
from fleetfuel.synth.routes import PlannedStop, Route, assemble_route, kmh, make_road
from fleetfuel.synth.terrain import ElevationProfile, profile_from_controls


@dataclass(frozen=True, slots=True, kw_only=True)
class Hill:
    """One hill on a test road.

    Attributes
    ----------
    start_m : float
        Distance where the climb starts. [m]
    climb_m : float
        Horizontal length of the climb. [m]
    height_m : float
        Height gained (negative: a valley). [m]
    descent_m : float
        Length of the way back down to the base; 0: the road stays on top. [m]
    """

    start_m: float
    climb_m: float
    height_m: float
    descent_m: float = 0.0


def _profile(length_m: float, base_m: float, hill: Hill | None) -> tuple[list[float], list[float]]:
    if hill is None:
        return [0.0, 1.0], [base_m, base_m]
    top = hill.start_m + hill.climb_m
    end = top + hill.descent_m
    if hill.start_m <= 0 or end >= length_m or hill.climb_m <= 0:
        raise ConfigError(f"hill {hill} must lie inside the road (0, {length_m}) m")
    s = [0.0, hill.start_m, top] + ([end] if hill.descent_m else []) + [length_m]
    z = [base_m, base_m, base_m + hill.height_m] + ([base_m] if hill.descent_m else []) + [
        base_m if hill.descent_m else base_m + hill.height_m]
    return [x / length_m for x in s], z


def line_route(
    length_m: float = 10_000.0,
    *,
    limit_kmh: float = 50.0,
    hill: Hill | None = None,
    base_elevation_m: float = 100.0,
    stops: Sequence[tuple[float, float, bool]] = (),
    lights_every_m: float = 0.0,
    heading_deg: float = 60.0,
    origin: tuple[float, float] = ORIGIN,
    name: str = "test line",
) -> Route:
    """A straight test road.

    Parameters
    ----------
    length_m : float
        Road length. [m]
    limit_kmh : float
        Speed limit along the whole road. [km/h]
    hill : Hill, optional
        One hill (or valley); None: flat at ``base_elevation_m``.
    base_elevation_m : float
        Elevation at the start. [m]
    stops : sequence of (at_m, dwell_s, engine_off)
        Planned stops (delivery kind) at distance ``at_m`` [m] for ``dwell_s`` [s].
    lights_every_m : float
        Traffic signals every so many metres (0: none). [m]
    heading_deg : float
        Direction of the road, clockwise from north. [deg]
    origin : (lat, lon)
        Start of the road. [deg]
    """
    heading = np.deg2rad(heading_deg)
    end = (length_m * np.sin(heading), length_m * np.cos(heading))
    lights = np.arange(lights_every_m, length_m, lights_every_m) / length_m if lights_every_m else np.zeros(0)
    road = make_road(
        name, [(0.0, 0.0), end], 0.0, origin, zones=[(0.0, kmh(limit_kmh))],
        features=[(float(x), rt.LIGHT) for x in lights], elevation_controls=_profile(length_m, base_elevation_m, hill),
    )
    # The geodesic length differs from the plane length by the projection's scale (< 1e-4):
    # put the hill where it was asked for in geodesic metres.
    assert road.elevation is not None
    shares, heights = _profile(road.length_m, base_elevation_m, hill)
    exact: ElevationProfile = profile_from_controls(road.length_m, np.asarray(shares) * road.length_m, heights)
    road = rt.Road(name=road.name, control_m=road.control_m, radius_m=road.radius_m, length_m=road.length_m,
                   zone_start_m=road.zone_start_m, zone_limit_m_s=road.zone_limit_m_s,
                   feature_at_m=road.feature_at_m, feature_kind=road.feature_kind, elevation=exact)
    planned = [PlannedStop(leg=0, at_m=float(a), kind=rt.DELIVERY, dwell_s=float(d), engine_off=bool(off))
               for a, d, off in stops]
    return assemble_route(name, "test", [road], planned, origin=origin)
