"""A day's route for each duty of the Quillmere fleet (parcel round, regional, trunk, bus, pool car).

Each builder takes a :class:`numpy.random.Generator` (the day's plan stream) and returns one
:class:`~fleetfuel.synth.routes.Route` from the depot back to the depot, with its planned stops.
Dwell times and stop counts are scenario data (typical of the trade; common practice, no source).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Final

import numpy as np

from fleetfuel.synth import routes as rt
from fleetfuel.synth import streets
from fleetfuel.synth.network import ORIGIN, TOWN_TERRAIN, TOWNS, quillmere_network
from fleetfuel.synth.routes import PlannedStop, Road, Route, assemble_route

DUTIES: Final = ("parcel_round", "regional", "trunk", "bus", "pool_car")

DISTRICTS: Final[dict[str, tuple[float, float, float, float]]] = {
    "north-east": (0.0, 3000.0, 0.0, 2250.0),
    "north-west": (-3000.0, 0.0, 0.0, 2250.0),
    "south-west": (-3000.0, 0.0, -2250.0, 0.0),
    "south-east": (0.0, 3000.0, -2250.0, 0.0),
}
"""Parcel districts of Quillmere (x0, x1, y0, y1 in the scenario plane). [m]"""

REGIONAL_VARIANTS: Final = ("loop_east", "loop_west", "pass_out_back")
CAR_VARIANTS: Final = ("eskerby", "brindlecross", "corvey", "town")
TOWN_EDGE_M: Final = 1800.0
"""Deliveries in a town lie within this distance of the road's town end. [m]"""


@lru_cache(maxsize=1)
def _depot_to_centre() -> Road:
    return streets.street_path("Depot to Quillmere centre", [TOWNS["Quillmere depot"], TOWNS["Quillmere"]], [True])


@lru_cache(maxsize=1)
def _centre_to_depot() -> Road:
    return streets.street_path("Quillmere centre to depot", [TOWNS["Quillmere"], TOWNS["Quillmere depot"]], [False])


def parcel_round(rng: np.random.Generator, district: str, n_drops: int) -> Route:
    """A van's parcel round through one district of Quillmere."""
    return streets.urban_round(rng, district=DISTRICTS[district], n_drops=n_drops,
                               name=f"Quillmere parcel round {district}")


def _drops_near(leg: int, road: Road, rng: np.random.Generator, n: int, *, at_end: bool, dwell_s: float) -> list[PlannedStop]:
    offsets = np.sort(rng.uniform(100.0, TOWN_EDGE_M, n))
    at = road.length_m - offsets if at_end else offsets
    return [PlannedStop(leg=leg, at_m=float(a), kind=rt.DELIVERY, dwell_s=dwell_s, engine_off=True) for a in at]


def regional(rng: np.random.Generator, variant: str, drops_per_town: int, dwell_s: float) -> Route:
    """Regional distribution over the Corvey pass: a loop Quillmere - Corvey Heights -
    Brindlecross (either way round) or out and back over the pass to Corvey Heights."""
    net = quillmere_network()
    if variant == "pass_out_back":
        legs = [_depot_to_centre(), net.road("q_ch"), net.road("q_ch", reverse=True), _centre_to_depot()]
        stops = _drops_near(1, legs[1], rng, 2 * drops_per_town, at_end=True, dwell_s=dwell_s)
        stops.append(PlannedStop(leg=2, at_m=300.0, kind=rt.BREAK, dwell_s=2700.0, engine_off=True))
    else:
        east = variant == "loop_east"
        roads = [net.road("q_ch"), net.road("ch_b"), net.road("b_q")] if east else [
            net.road("b_q", reverse=True), net.road("ch_b", reverse=True), net.road("q_ch", reverse=True)]
        legs = [_depot_to_centre(), *roads, _centre_to_depot()]
        stops = (_drops_near(1, legs[1], rng, drops_per_town, at_end=True, dwell_s=dwell_s)
                 + _drops_near(2, legs[2], rng, drops_per_town, at_end=True, dwell_s=dwell_s))
        stops.append(PlannedStop(leg=3, at_m=400.0, kind=rt.BREAK, dwell_s=2700.0, engine_off=True))
        village = legs[2].length_m * rng.uniform(0.3, 0.4)
        stops.append(PlannedStop(leg=2, at_m=float(village), kind=rt.DELIVERY, dwell_s=dwell_s, engine_off=True))
    name = f"Regional {variant.replace('_', ' ')}"
    return assemble_route(name, "regional", legs, stops, origin=ORIGIN, terrain=TOWN_TERRAIN, cache_key=name)


def trunk(rng: np.random.Generator, unload_s: float = 3600.0) -> Route:
    """Motorway trunk: depot -> Dunhallow Port (unload with the engine off) -> depot.

    ``rng`` is unused: the route is fixed (the drive varies the unloading time)."""
    del rng
    net = quillmere_network()
    legs = [net.road("depot_j"), net.road("motorway"), net.road("port"),
            net.road("port", reverse=True), net.road("motorway", reverse=True), net.road("depot_j", reverse=True)]
    stops = [PlannedStop(leg=2, at_m=legs[2].length_m, kind=rt.DELIVERY, dwell_s=unload_s, engine_off=True),
             PlannedStop(leg=0, at_m=0.0, kind=rt.DEPOT, dwell_s=600.0)]
    name = "Trunk Quillmere - Dunhallow Port"
    return assemble_route(name, "trunk", legs, stops, origin=ORIGIN, terrain=TOWN_TERRAIN, cache_key=name)


def bus(rng: np.random.Generator, n_round_trips: int) -> Route:
    """A city-bus shift on Line 1 (``rng`` is unused: the line is fixed; dwell varies in the drive)."""
    del rng
    return streets.bus_shift(n_round_trips)


def pool_car(rng: np.random.Generator, variant: str) -> Route:
    """A pool-car day: a visit to Eskerby, Brindlecross or Corvey Heights, or errands in town."""
    net = quillmere_network()
    meeting_s = float(rng.uniform(3600.0, 7200.0))
    if variant == "town":
        points = [TOWNS["Quillmere depot"]]
        for _ in range(3):
            points.append((float(np.rint(rng.uniform(-2500, 2500) / streets.BLOCK_X_M) * streets.BLOCK_X_M),
                           float(np.rint(rng.uniform(-2000, 2000) / streets.BLOCK_Y_M) * streets.BLOCK_Y_M)))
        points.append(TOWNS["Quillmere depot"])
        road = streets.street_path("Town errands", points, [bool(b) for b in rng.integers(0, 2, len(points) - 1)])
        share = np.cumsum(np.abs(np.diff(np.asarray(points), axis=0)).sum(axis=1))
        at = share[:-1] / share[-1] * road.length_m
        stops = [PlannedStop(leg=0, at_m=float(a), kind=rt.BREAK, dwell_s=float(rng.uniform(900, 2400)), engine_off=True)
                 for a in at]
        return assemble_route("Town errands", "car_trip", [road], stops, origin=ORIGIN, terrain=TOWN_TERRAIN)
    key, reverse = {"eskerby": ("q_esk", False), "brindlecross": ("b_q", True), "corvey": ("q_ch", False)}[variant]
    out = net.road(key, reverse=reverse)
    legs = [_depot_to_centre(), out, out.reversed(), _centre_to_depot()]
    meeting = PlannedStop(leg=2, at_m=0.0, kind=rt.BREAK, dwell_s=meeting_s, engine_off=True)
    name = f"Pool car to {variant.capitalize()}"
    return assemble_route(name, "car_trip", legs, [meeting], origin=ORIGIN, terrain=TOWN_TERRAIN, cache_key=name)
