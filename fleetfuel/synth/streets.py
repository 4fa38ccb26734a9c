"""Quillmere's street grid: parcel-van rounds and the city bus line (invented).

Streets run east-west every :data:`BLOCK_Y_M` and north-south every :data:`BLOCK_X_M`; every
:data:`MAIN_EVERY`-th line is a main street (50 km/h), the others are 30 km/h side streets.
Where two main streets cross there are traffic signals; where a side street meets a main street
the side street gives way. Street elevation comes from the town terrain field, so a street has
the same height whichever way it is driven.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import lru_cache
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.synth import routes as rt
from fleetfuel.synth.network import ORIGIN, TOWN_TERRAIN, TOWNS
from fleetfuel.synth.routes import PlannedStop, Road, Route, assemble_route, kmh, make_road

FloatArray = npt.NDArray[np.float64]

BLOCK_X_M: Final = 200.0
BLOCK_Y_M: Final = 150.0
MAIN_EVERY: Final = 5
EXTENT_X_M: Final = 3000.0
EXTENT_Y_M: Final = 2250.0
STREET_RADIUS_M: Final = 9.0
MAIN_STREET: Final = kmh(50)
SIDE_STREET: Final = kmh(30)
DEPOT: Final = TOWNS["Quillmere depot"]

BUS_LINE_NODES: Final = ((3000.0, -750.0), (1000.0, -750.0), (1000.0, 750.0), (-3000.0, 750.0))
"""Line 1 from Eastgate terminal to Westfield terminal along main streets. [m]"""
BUS_STOP_SPACING_M: Final = (300.0, 500.0)
"""Range of distances between bus stops. [m]"""


def _is_main(coord: FloatArray | float, block_m: float) -> npt.NDArray[np.bool_]:
    k = np.rint(np.asarray(coord) / block_m).astype(np.int64)
    return np.asarray(k % MAIN_EVERY == 0)


def manhattan(a: Sequence[float], b: Sequence[float], x_first: bool) -> FloatArray:
    """Grid path from ``a`` to ``b``: one leg along x and one along y (a corner between). [m]"""
    corner = (b[0], a[1]) if x_first else (a[0], b[1])
    return np.array([a, corner, b], dtype=np.float64)


def _leg_data(nodes: FloatArray) -> tuple[list[tuple[float, float]], list[tuple[float, int]]]:
    """Zones (share, limit) per leg and features (share, kind) at crossings and turns."""
    step = np.diff(nodes, axis=0)
    length = np.hypot(*step.T)
    share0 = np.r_[0.0, np.cumsum(length)] / length.sum()
    along_x = np.abs(step[:, 0]) > 0
    # main street? a leg along x lies on the east-west street y = const, and vice versa
    on_main = np.where(along_x, _is_main(nodes[:-1, 1], BLOCK_Y_M), _is_main(nodes[:-1, 0], BLOCK_X_M))
    zones = [(float(share0[i]), MAIN_STREET if on_main[i] else SIDE_STREET) for i in range(len(step))]
    features: list[tuple[float, int]] = []
    total = length.sum()
    for i in range(len(step)):  # legs of a street path: tens to hundreds, never samples
        a, b = nodes[i], nodes[i + 1]
        axis, block = (0, BLOCK_X_M) if along_x[i] else (1, BLOCK_Y_M)
        lo, hi = sorted((a[axis], b[axis]))
        lines = np.arange(np.ceil(lo / block + 1e-9), np.floor(hi / block - 1e-9) + 1) * block
        if i + 1 < len(step) and along_x[i + 1] != along_x[i]:
            lines = np.r_[lines, b[axis]]  # the turn at the leg's end is a junction too
        crossing_main = _is_main(lines, block)
        kind = np.where(crossing_main & on_main[i], rt.LIGHT, np.where(crossing_main, rt.GIVE_WAY, 0))
        at = share0[i] + np.abs(lines - a[axis]) / total
        features += [(float(s), int(k)) for s, k in zip(at, kind, strict=True) if k]
    return zones, features


def street_road(name: str, nodes: FloatArray) -> tuple[Road, FloatArray]:
    """A :class:`Road` along grid nodes (consecutive nodes share x or y), and each node's distance. [m]"""
    nodes = np.asarray(nodes, dtype=np.float64)
    keep = np.r_[True, np.any(np.diff(nodes, axis=0) != 0, axis=1)]
    nodes = nodes[keep]
    zones, features = _leg_data(nodes)
    road = make_road(name, nodes, STREET_RADIUS_M, ORIGIN, zones=zones, features=features)
    node_s = np.cumsum(keep) - 1
    share = np.r_[0.0, np.cumsum(np.hypot(*np.diff(nodes, axis=0).T))]
    return road, (share / share[-1] * road.length_m)[node_s]


def _clip_to_grid(x: float, y: float, box: tuple[float, float, float, float]) -> tuple[float, float]:
    x = float(np.clip(x, box[0], box[1]))
    y = float(np.clip(y, box[2], box[3]))
    return float(np.rint(x / BLOCK_X_M) * BLOCK_X_M), float(np.rint(y / BLOCK_Y_M) * BLOCK_Y_M)


def urban_round(
    rng: np.random.Generator,
    *,
    district: tuple[float, float, float, float],
    n_drops: int,
    drop_dwell_s: float = 110.0,
    engine_off_share: float = 0.6,
    break_s: float = 1800.0,
    name: str = "Quillmere parcel round",
) -> Route:
    """A parcel-van round from the depot through ``district`` (x0, x1, y0, y1 [m]) and back.

    Drops are a random walk of one to three blocks between grid nodes; the van stops at each
    for about ``drop_dwell_s`` (engine off at a share ``engine_off_share`` of them) and takes one
    break with the engine off half way.
    """
    x, y = _clip_to_grid((district[0] + district[1]) / 2, (district[2] + district[3]) / 2, district)
    drops = []
    for _ in range(n_drops):  # one iteration per drop (tens), not per sample
        while True:
            nx, ny = _clip_to_grid(x + rng.integers(-3, 4) * BLOCK_X_M, y + rng.integers(-3, 4) * BLOCK_Y_M, district)
            if (nx, ny) != (x, y):
                break
        x, y = nx, ny
        drops.append((x, y))
    points = [DEPOT, *drops, DEPOT]
    nodes = [np.asarray([DEPOT])]
    waypoint = [0]
    for a, b in zip(points[:-1], points[1:], strict=True):
        nodes.append(manhattan(a, b, bool(rng.integers(2)))[1:])
        waypoint.append(waypoint[-1] + 2)
    road, node_s = street_road(name, np.vstack(nodes))
    drop_s = node_s[np.asarray(waypoint[1:-1])]
    off = rng.uniform(size=n_drops) < engine_off_share
    stops = [PlannedStop(leg=0, at_m=float(s), kind=rt.DELIVERY, dwell_s=drop_dwell_s, engine_off=bool(o))
             for s, o in zip(drop_s, off, strict=True)]
    half = n_drops // 2
    stops[half] = PlannedStop(leg=0, at_m=float(drop_s[half]), kind=rt.BREAK, dwell_s=break_s, engine_off=True)
    return assemble_route(name, "urban_round", [road], stops, origin=ORIGIN, terrain=TOWN_TERRAIN)


@lru_cache(maxsize=1)
def bus_line_road() -> tuple[Road, FloatArray]:
    """Line 1 (Eastgate -> Westfield) and its stop positions (fixed for the network). [m]"""
    road, _ = street_road("Line 1", np.asarray(BUS_LINE_NODES))
    rng = np.random.default_rng(81)
    gaps = rng.uniform(*BUS_STOP_SPACING_M, int(road.length_m / BUS_STOP_SPACING_M[0]) + 1)
    at = np.cumsum(gaps)
    return road, at[at < road.length_m - BUS_STOP_SPACING_M[0] / 2]


def bus_shift(
    n_round_trips: int, *, layover_s: float = 300.0, break_s: float = 1800.0, stop_dwell_s: float = 20.0
) -> Route:
    """A bus shift: depot -> Eastgate, ``n_round_trips`` of Line 1 out and back, -> depot.

    Layovers (engine idling) at both terminals; one break with the engine off at Westfield
    after half the trips.
    """
    line, stop_at = bus_line_road()
    back = line.reversed()
    east = BUS_LINE_NODES[0]
    out_road, _ = street_road("Depot to Eastgate", manhattan(DEPOT, east, x_first=True))
    in_road, _ = street_road("Eastgate to depot", manhattan(east, DEPOT, x_first=False))
    legs: list[Road] = [out_road]
    stops: list[PlannedStop] = []
    for trip in range(n_round_trips):
        for road, positions in ((line, stop_at), (back, line.length_m - stop_at[::-1])):
            legs.append(road)
            leg = len(legs) - 1
            stops += [PlannedStop(leg=leg, at_m=float(s), kind=rt.BUS_STOP, dwell_s=stop_dwell_s) for s in positions]
            at_west = road is line
            dwell = break_s if (at_west and trip == n_round_trips // 2 - 1) else layover_s
            kind = rt.BREAK if dwell == break_s else rt.TERMINAL
            stops.append(PlannedStop(leg=leg, at_m=road.length_m, kind=kind, dwell_s=dwell, engine_off=kind == rt.BREAK))
    legs.append(in_road)
    return assemble_route("Line 1 shift", "bus_line", legs, stops, origin=ORIGIN, terrain=TOWN_TERRAIN,
                          cache_key=f"Line 1 shift x{n_round_trips}")


def street_path(name: str, points: Sequence[Sequence[float]], x_first: Sequence[bool]) -> Road:
    """A road through grid ``points`` joined by :func:`manhattan` paths (``x_first`` per hop)."""
    nodes = [np.asarray([points[0]], dtype=np.float64)]
    for a, b, xf in zip(points[:-1], points[1:], x_first, strict=True):
        nodes.append(manhattan(a, b, xf)[1:])
    road, _ = street_road(name, np.vstack(nodes))
    return road
