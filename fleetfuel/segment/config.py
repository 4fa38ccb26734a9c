"""Configuration of the segment stage: :class:`SegmentConfig`.

Every threshold of trips, operating periods, micro-trips, their features and route discovery,
with its default and the default's source (or ``common practice, no source``) beside it. Fields
are flat scalars so that a ``[segment]`` table of a run TOML maps onto them key by key
(:mod:`fleetfuel.config`). Sources marked "from memory" were not re-read while writing.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Final

from fleetfuel.errors import ConfigError
from fleetfuel.units import SECONDS_PER_HOUR

KMH_M_S: Final = 1000.0 / SECONDS_PER_HOUR
"""One km/h in m/s (exact, from the definitions of km and h)."""
SECONDS_PER_MINUTE: Final = 60.0  # definition of the minute
METRES_PER_KM: Final = 1000.0  # definition of the kilometre

_BOOL_FIELDS: Final = ("direction_agnostic",)
ROUTE_UNITS: Final = ("period", "trip")
"""What route discovery clusters: operating periods (a vehicle's duty) or single trips."""


@dataclass(frozen=True, slots=True, kw_only=True)
class SegmentConfig:
    """Options of the segment stage (all SI; each default's source in the comment beside it).

    Attributes
    ----------
    stop_speed_m_s : float
        A sample slower than this (or flagged ``is_parked``) is stopped; at or above it, moving.
        [m/s]
    mode_accel_m_s2 : float
        Driving-mode split: acceleration above ``+mode_accel_m_s2``, deceleration below
        ``-mode_accel_m_s2``, cruise in between (moving samples only). [m/s^2]
    rpa_min_accel_m_s2 : float
        Only samples accelerating faster than this count in the relative positive
        acceleration (RPA). [m/s^2]
    max_accel_step_s : float
        Accelerations are not observable (NaN, and so are the acceleration statistics of the
        micro-trip) where the central difference spans more than twice this. [s]
    trip_break_s : float
        A standstill (or a log absence) lasting at least this between two moving samples ends
        a trip. [s]
    key_off_engine_speed_rpm : float
        Engine speed below this (where the log carries engine speed) is engine off. [rpm]
    key_off_min_s : float
        Engine off for at least this much of a standstill is a key-off: it ends the trip even
        when the standstill is shorter than ``trip_break_s``. [s]
    unlogged_min_m : float
        Between two trips of one operating period, a straight-line jump from the one's last fix
        to the other's first of at least this is distance driven while the log was silent
        (:func:`fleetfuel.segment.trips.unlogged_distance_m`). [m]
    period_rest_s : float
        A rest (standstill or log absence) lasting at least this between two moving samples
        ends an operating period. [s]
    place_radius_m : float
        Route discovery: journey end points closer than this (great-circle distance) are one place
        (DBSCAN ``eps``). [m]
    place_min_samples : int
        Route discovery: DBSCAN ``min_samples`` of the end-point clustering (end points that are
        noise become places of their own). [1]
    path_cell_m : float
        Route discovery: side of the grid cells of the path overlap. [m]
    path_heading_sectors : int
        Route discovery: heading sectors of the path overlap (of 360 degrees; of 180 degrees when
        ``direction_agnostic``). [1]
    path_min_overlap : float
        Route discovery: journeys between the same places whose (cell, heading) sets overlap by at
        least this Jaccard index are one route. [1]
    path_min_length_ratio : float
        Route discovery: ... and the shorter of which is at least this share of the longer's
        distance. [1]
    direction_agnostic : bool
        Route discovery: A->B and B->A are one route (a loop and its reverse too).
    route_unit : str
        Route discovery clusters journeys: ``"period"`` (all trips of an operating period
        together) or ``"trip"`` (:data:`ROUTE_UNITS`).
    """

    # --- stops and driving modes -----------------------------------------------------------------
    # Below ~1 km/h a vehicle is stopped: the idle criterion of micro-trip studies (common practice;
    # no primary source re-checked).
    stop_speed_m_s: float = 1.0 * KMH_M_S
    # +-1 km/h per second (0.278 m/s^2) separates acceleration, cruise and deceleration: a split used
    # in micro-trip cycle studies (common practice; primary source not re-checked). Tong, Hung &
    # Cheung (1999) and Hung et al. (2007) use +-0.1 m/s^2 (from memory, check before citing):
    # set 0.1 to follow them.
    mode_accel_m_s2: float = 1.0 * KMH_M_S
    # Commission Regulation (EU) 2017/1151, Annex IIIA, Appendix 7a: positive acceleration is
    # "acceleration greater than 0.1 m/s2" in the RPA.
    rpa_min_accel_m_s2: float = 0.1
    # 1 Hz logs give a central difference over 2 s; beyond 5 s steps accelerations are mostly
    # unobserved (common practice, no source).
    max_accel_step_s: float = 5.0

    # --- trips and operating periods ---------------------------------------------------------------
    # Five minutes parked ends a trip: longer than a red phase or a queue, the order of a delivery
    # stop (common practice, no source).
    trip_break_s: float = 5.0 * SECONDS_PER_MINUTE
    # Below any engine's idle speed (diesel idle is 500-800 rpm; common practice, no source).
    key_off_engine_speed_rpm: float = 300.0
    # Stop-start systems switch engines off at lights; a signal cycle lasts up to about 2 min
    # (common practice, no source), so only longer engine-off standstills are a key-off.
    key_off_min_s: float = 2.0 * SECONDS_PER_MINUTE
    # Four hours separates shifts: longer than the breaks within a driver's day (45 min after
    # 4.5 h driving, split daily rest of 3 h + 9 h) and shorter than the reduced daily rest of 9 h,
    # Regulation (EC) No 561/2006, Articles 4, 7 and 8 (from memory). Not a calendar day: a night
    # shift stays whole.
    period_rest_s: float = 4.0 * SECONDS_PER_HOUR
    # Well beyond the position error of two fixes at one parking place (tens of metres with urban
    # multipath), well below what a minute's outage at road speed covers (common practice, no source).
    unlogged_min_m: float = 100.0

    # --- route discovery --------------------------------------------------------------------------
    # A depot yard or customer site spans a few hundred metres (common practice, no source).
    place_radius_m: float = 300.0
    place_min_samples: int = 1  # every end point is a core point: single linkage at eps
    # Path overlap: 1 km cells with 4 directed heading sectors; one route from a Jaccard overlap of
    # 0.4 between journeys whose distances differ by no more than 0.6 (shorter / longer). Calibrated
    # on the synthetic fleet (fleetfuel.synth, 14 vehicles, seeds 0-6, 2-5 days): day-to-day varying
    # parcel rounds of one district reach >= 0.33 with their nearest other day, different duties
    # <= 0.33 (a bus line through a district: a subset of the round's cells, which the length ratio
    # separates, 110 km vs 50 km). Seeds 0-9 and the bundled sample fleet (defects, through ingest and
    # clean): no discovered route mixes two duties; >= 96 % of duty-days join their duty's route.
    # Our choice, no outside source.
    path_cell_m: float = 1000.0
    path_heading_sectors: int = 4
    path_min_overlap: float = 0.4
    path_min_length_ratio: float = 0.6
    # Direction matters by default: a loop driven the other way round, or B->A against A->B, climbs
    # elsewhere and burns different fuel (our choice, documented). Out-and-back duties are one
    # journey with the default period unit anyway.
    direction_agnostic: bool = False
    # A fleet's route is a duty (depot round, trunk run and back): trips are legs of it, cut at
    # deliveries and breaks (our choice, documented in fleetfuel.segment.discovery).
    route_unit: str = "period"

    def __post_init__(self) -> None:
        for f in fields(self):
            _check_field(f.name, getattr(self, f.name))
        if self.period_rest_s < self.trip_break_s:
            raise ConfigError(
                f"segment.period_rest_s ({self.period_rest_s} s) must be at least "
                f"segment.trip_break_s ({self.trip_break_s} s): a period boundary is a trip boundary"
            )


_INT_FIELDS: Final = ("place_min_samples", "path_heading_sectors")
_SHARE_FIELDS: Final = ("path_min_overlap", "path_min_length_ratio")


def _check_field(name: str, value: object) -> None:
    """Type and range of one :class:`SegmentConfig` field (ConfigError naming it otherwise)."""
    if name == "route_unit":
        if value not in ROUTE_UNITS:
            raise ConfigError(f"segment.route_unit: choose from {ROUTE_UNITS}, found {value!r}")
        return
    if name in _BOOL_FIELDS:
        if not isinstance(value, bool):
            raise ConfigError(f"segment.{name}: expected true or false, found {value!r}")
        return
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigError(f"segment.{name}: expected a number, found {value!r}")
    if name in _INT_FIELDS and not isinstance(value, int):
        raise ConfigError(f"segment.{name}: expected an integer, found {value!r}")
    if not value > 0:
        raise ConfigError(f"segment.{name}: must be > 0, found {value!r}")
    if name in _SHARE_FIELDS and not value <= 1:
        raise ConfigError(f"segment.{name}: must be in (0, 1], found {value!r}")
