"""The invented road network of the Quillmere scenario (no real place is meant).

Quillmere Haulage & Transit runs its depot on the industrial estate of Quillmere. Around it:
Corvey Heights over the Corvey pass (a 360 m climb over about 7 km), Brindlecross down the
Corvey valley, the valley road back to Quillmere along the river, Eskerby over the Esker ridge,
and the motorway down to Dunhallow Port (about 170 km). Quillmere's streets are a grid with main
streets every fifth line (50 km/h, signals where two main streets cross) and 30 km/h side
streets (give way where they meet a main street); see :mod:`fleetfuel.synth.streets`.

Coordinates: the scenario plane is centred on Quillmere at :data:`ORIGIN` (47.6 N, 7.9 W), a
point of the open Atlantic chosen on purpose so that no real place is implied. All numbers
below are scenario data (invented), not model constants.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.synth import routes as rt
from fleetfuel.synth.routes import Road, kmh, make_road
from fleetfuel.synth.terrain import TerrainField

FloatArray = npt.NDArray[np.float64]

ORIGIN: Final = (47.6, -7.9)
"""Latitude and longitude of Quillmere's centre (plane origin). [deg]"""

COMPANY: Final = "Quillmere Haulage & Transit"

TOWN_TERRAIN: Final = TerrainField(
    base_m=58.0,
    bump_x_m=(1600.0, -1800.0, 2600.0),
    bump_y_m=(1700.0, -600.0, -1900.0),
    bump_height_m=(24.0, -11.0, 9.0),
    bump_radius_m=(700.0, 900.0, 500.0),
    tilt_x=0.0015,
    tilt_y=0.0008,
)
"""Quillmere's terrain: Quill Rise (+24 m) north-east, the river hollow west, a knoll south-east."""

TOWNS: Final[dict[str, tuple[float, float]]] = {
    "Quillmere": (0.0, 0.0),
    "Quillmere depot": (1200.0, -1500.0),
    "Corvey Heights": (26000.0, 21000.0),
    "Brindlecross": (41000.0, -4000.0),
    "Eskerby": (-17000.0, 14000.0),
    "Quillmere motorway junction": (-2600.0, -5200.0),
    "Dunhallow junction": (-112000.0, -118000.0),
    "Dunhallow Port": (-115500.0, -121500.0),
}
"""Town centres and junctions in the scenario plane, east and north of Quillmere. [m]"""

URBAN: Final = kmh(50)
RURAL: Final = kmh(80)
PASS: Final = kmh(70)
MOTORWAY: Final = kmh(120)
ROADWORKS: Final = kmh(80)


@dataclass(frozen=True, slots=True, kw_only=True)
class Network:
    """The scenario's intercity roads, by key, plus the town terrain field."""

    roads: dict[str, Road]
    terrain: TerrainField
    origin: tuple[float, float] = ORIGIN

    def road(self, key: str, reverse: bool = False) -> Road:
        """Road ``key`` (``q_ch``, ``ch_b``, ``b_q``, ``q_esk``, ``depot_j``, ``motorway``, ``port``)."""
        road = self.roads[key]
        return road.reversed() if reverse else road


def _shares(control: FloatArray) -> FloatArray:
    step = np.hypot(*np.diff(control, axis=0).T)
    return np.r_[0.0, np.cumsum(step)] / step.sum()


def _wiggle(a: tuple[float, float], b: tuple[float, float], n: int, amplitude_m: float, seed: int) -> FloatArray:
    """Control points from ``a`` to ``b`` with a smooth random sideways wander (ends fixed). [m]"""
    rng = np.random.default_rng(seed)
    f = np.linspace(0.0, 1.0, n + 1)
    pa, pb = np.asarray(a), np.asarray(b)
    along = pb - pa
    normal = np.array([-along[1], along[0]]) / np.hypot(*along)
    offsets = amplitude_m * np.sin(np.pi * f) * rng.uniform(-1.0, 1.0, n + 1)
    return pa + f[:, None] * along + offsets[:, None] * normal


def _z(x: float, y: float) -> float:
    return float(TOWN_TERRAIN.at(x, y))


def _pass_road(origin: tuple[float, float]) -> Road:
    """Quillmere -> Corvey Heights over the Corvey pass: 95 m -> 455 m in about 7 km."""
    q, ch = TOWNS["Quillmere"], TOWNS["Corvey Heights"]
    approach = _wiggle(q, (8600.0, 5400.0), 6, 400.0, seed=11)
    climb = np.array([
        [8600.0, 5400.0], [9300.0, 6300.0], [9000.0, 6900.0], [9800.0, 7300.0], [9700.0, 8000.0],
        [10500.0, 8300.0], [10500.0, 9000.0], [11300.0, 9200.0], [11500.0, 9900.0], [12300.0, 10100.0],
    ])
    descent = _wiggle((12300.0, 10100.0), (16500.0, 13200.0), 4, 300.0, seed=12)
    plateau = _wiggle((16500.0, 13200.0), ch, 6, 500.0, seed=13)
    control = np.vstack([approach, climb[1:], descent[1:], plateau[1:]])
    i_climb = len(approach) - 1
    i_top = i_climb + len(climb) - 1
    i_plateau = i_top + len(descent) - 1
    share = _shares(control)
    radius = np.full(len(control), 350.0)
    radius[i_climb:i_top + 1] = 45.0  # hairpins on the pass
    z_q = _z(*q)
    length = np.hypot(*np.diff(control, axis=0).T).sum()
    urban_end = 2500.0 / length
    ch_urban = 1 - 2000.0 / length
    return make_road(
        "Corvey pass road", control, radius, origin,
        zones=[(0.0, URBAN), (urban_end, RURAL), (share[i_climb], PASS), (share[i_plateau], RURAL), (ch_urban, URBAN)],
        features=[(0.05, rt.LIGHT), (urban_end, rt.ROUNDABOUT), (0.5 * (share[i_plateau] + 1), rt.GIVE_WAY),
                  (ch_urban, rt.ROUNDABOUT), (0.985, rt.LIGHT)],
        elevation_controls=(
            [0.0, share[i_climb], share[i_top], share[i_plateau], 1.0],
            [z_q, 95.0, 455.0, 300.0, 310.0],
        ),
        undulation_m=4.0, undulation_wavelengths_m=(1700.0, 3100.0), seed=14,
    )


def _country_road(
    name: str, a: str, b: str, origin: tuple[float, float], *, n: int, amplitude_m: float, seed: int,
    heights: list[float], villages: tuple[float, ...], urban_start_m: float, urban_end_m: float,
    undulation_m: float, z_a: float | None = None, z_b: float | None = None,
) -> Road:
    control = _wiggle(TOWNS[a], TOWNS[b], n, amplitude_m, seed)
    length = np.hypot(*np.diff(control, axis=0).T).sum()
    zones: list[tuple[float, float]] = [(0.0, URBAN), (urban_start_m / length, RURAL)]
    features: list[tuple[float, int]] = [(0.3 * urban_start_m / length, rt.LIGHT), (urban_start_m / length, rt.ROUNDABOUT)]
    village_m = 900.0
    for centre in villages:
        zones += [(centre - village_m / 2 / length, URBAN), (centre + village_m / 2 / length, RURAL)]
        features.append((centre, rt.GIVE_WAY))
    zones.append((1 - urban_end_m / length, URBAN))
    features += [(1 - urban_end_m / length, rt.ROUNDABOUT), (1 - 0.3 * urban_end_m / length, rt.LIGHT)]
    z = list(heights)
    z[0] = z[0] if z_a is None else z_a
    z[-1] = z[-1] if z_b is None else z_b
    return make_road(
        name, control, 400.0, origin, zones=zones, features=features,
        elevation_controls=(list(np.linspace(0.0, 1.0, len(z))), z),
        undulation_m=undulation_m, undulation_wavelengths_m=(900.0, 2300.0, 4100.0), seed=seed + 1,
    )


def _motorway(origin: tuple[float, float]) -> Road:
    """Quillmere junction -> Dunhallow junction: about 160 km, a 95 m rise at km 50-56, the
    Dunhallow escarpment (100 m down over 5 km) near km 120."""
    control = _wiggle(TOWNS["Quillmere motorway junction"], TOWNS["Dunhallow junction"], 16, 3500.0, seed=31)
    length = np.hypot(*np.diff(control, axis=0).T).sum()
    km = 1000.0 / length
    zones = [(0.0, kmh(60)), (1.5 * km, MOTORWAY), (80 * km, ROADWORKS), (83.5 * km, MOTORWAY),
             (1 - 1.5 * km, kmh(60))]
    elevation = (
        [0.0, 20 * km, 50 * km, 56 * km, 75 * km, 118 * km, 123 * km, 1.0],
        [_z_junction(), 75.0, 70.0, 165.0, 120.0, 125.0, 25.0, 15.0],
    )
    return make_road(
        "Dunhallow motorway", control, 2500.0, origin, zones=zones, features=[(1 - 0.2 * km, rt.ROUNDABOUT)],
        elevation_controls=elevation, undulation_m=3.0, undulation_wavelengths_m=(2500.0, 6000.0), seed=32,
    )


def _z_junction() -> float:
    return 62.0


def _depot_link(origin: tuple[float, float]) -> Road:
    d, j = TOWNS["Quillmere depot"], TOWNS["Quillmere motorway junction"]
    control = _wiggle(d, j, 4, 250.0, seed=21)
    return make_road(
        "Depot link road", control, 150.0, origin,
        zones=[(0.0, URBAN), (0.15, RURAL), (0.9, kmh(60))],
        features=[(0.15, rt.ROUNDABOUT), (0.55, rt.ROUNDABOUT), (0.97, rt.ROUNDABOUT)],
        elevation_controls=([0.0, 0.5, 1.0], [_z(*d), 66.0, _z_junction()]), seed=22,
    )


def _port_access(origin: tuple[float, float]) -> Road:
    control = np.array([TOWNS["Dunhallow junction"], (-113600.0, -119200.0), (-114200.0, -120600.0),
                        TOWNS["Dunhallow Port"]])
    return make_road(
        "Port access road", control, 60.0, origin, zones=[(0.0, URBAN), (0.85, kmh(30))],
        features=[(0.25, rt.ROUNDABOUT), (0.6, rt.LIGHT), (0.85, rt.GIVE_WAY)],
        elevation_controls=([0.0, 1.0], [15.0, 4.0]), seed=41,
    )


@lru_cache(maxsize=1)
def quillmere_network() -> Network:
    """The scenario's intercity roads (built once; deterministic)."""
    origin = ORIGIN
    z_q = _z(*TOWNS["Quillmere"])
    roads = {
        "q_ch": _pass_road(origin),
        "ch_b": _country_road(
            "Corvey valley road", "Corvey Heights", "Brindlecross", origin, n=7, amplitude_m=1500.0, seed=51,
            heights=[310.0, 280.0, 240.0, 200.0, 185.0, 150.0, 140.0], villages=(0.35, 0.7),
            urban_start_m=1800.0, urban_end_m=2000.0, undulation_m=8.0,
        ),
        "b_q": _country_road(
            "River road", "Brindlecross", "Quillmere", origin, n=9, amplitude_m=2500.0, seed=61,
            heights=[140.0, 120.0, 105.0, 95.0, 80.0, 70.0, 60.0], villages=(0.3, 0.62, 0.85),
            urban_start_m=2000.0, urban_end_m=2500.0, undulation_m=2.5, z_b=z_q,
        ),
        "q_esk": _country_road(
            "Esker ridge road", "Quillmere", "Eskerby", origin, n=6, amplitude_m=1500.0, seed=71,
            heights=[z_q, 95.0, 140.0, 105.0, 150.0, 110.0, 95.0], villages=(0.45,),
            urban_start_m=2500.0, urban_end_m=1500.0, undulation_m=5.0,
        ),
        "depot_j": _depot_link(origin),
        "motorway": _motorway(origin),
        "port": _port_access(origin),
    }
    return Network(roads=roads, terrain=TOWN_TERRAIN, origin=origin)
