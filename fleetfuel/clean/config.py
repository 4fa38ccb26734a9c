"""Configuration of the clean stage: :class:`CleanConfig`.

Every threshold of the stage, with a default that suits 1 Hz truck and van telematics and its
source (or ``common practice, no source``) beside it. Fields are flat scalars so that a
``[clean]`` table of a run TOML maps onto them key by key (:mod:`fleetfuel.config`).
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Final

from fleetfuel.constants import ADHESION_DRY_ASPHALT, STANDARD_GRAVITY_M_S2
from fleetfuel.errors import ConfigError
from fleetfuel.units import SECONDS_PER_HOUR

KMH_M_S: Final = 1000.0 / SECONDS_PER_HOUR
"""One km/h in m/s (exact, from the definitions of km and h)."""


@dataclass(frozen=True, slots=True, kw_only=True)
class CleanConfig:
    """Options of the clean stage (all SI; each default's source in the comment beside it).

    Attributes
    ----------
    step_s : float
        Uniform time step of the clean frame. [s]
    gap_break_s : float
        Gaps longer than this are breaks (never interpolated across). [s]
    gap_break_intervals : float
        ... or longer than this many logging intervals, whichever is longer. [1]
    low_rate_interval_s : float
        Logs whose median interval is at least this are ``low_rate``: resampled at their own
        (rounded) interval, accelerations reported as not observable (NaN). [s]
    speed_ceiling_m_s : float
        Reported speeds above this (or below 0) are ``speed_impossible``. [m/s]
    accel_limit_m_s2 : float
        Speed gains faster than this (per step of at least ``step_s``) are impossible. [m/s^2]
    brake_limit_m_s2 : float
        Speed losses faster than this are impossible. [m/s^2]
    spike_max_s : float
        Longest run of samples removed as one spike (speed or position outlier). [s]
    position_jump_factor : float
        Implied speed above ``position_jump_factor * speed_ceiling_m_s`` is a position jump. [1]
    position_noise_m : float
        Horizontal position error allowed on top of the jump speed. [m]
    standstill_speed_m_s : float
        Speeds below this are standstill (speed set to 0, position held). [m/s]
    creep_speed_m_s : float
        Runs of speeds below this are examined for parked drift. [m/s]
    creep_window_s : float
        ... speeds averaged over this window first. [s]
    parked_window_s : float
        Shortest such run that can be parked drift. [s]
    drift_progress_share : float
        A run whose straight-line progress is below this share of the distance its speeds claim
        is parked drift (:mod:`fleetfuel.clean.parked`). [1]
    drift_radius_m : float
        ... if its fixes also stay within this distance of their median. [m]
    reconcile_min_speed_m_s : float
        Reported vs position speeds are compared only on samples faster than this. [m/s]
    reconcile_min_samples : int
        Fewest such samples for a verdict on a file. [1]
    reconcile_tolerance : float
        Median ratio reported/position outside ``1 +- tolerance``: ``speed_position_mismatch``. [1]
    unit_ratio_tolerance : float
        Median ratio within this relative distance of a unit factor (1.609, 3.6, ...):
        ``speed_unit_suspect``; also the tolerance of a mix-up block's ratio (:mod:`fleetfuel.clean.mixup`). [1]
    unit_block_min_ratio : float
        Only unit factors at least this far from 1 (either way) are undone in a block of a file:
        ``speed_unit_corrected``. [1]
    walking_speed_max_m_s : float
        Files whose moving speed stays below this at the 95th percentile are walking. [m/s]
    walking_min_moving_s : float
        ... once they hold at least this much moving time. [s]
    aircraft_climb_rate_m_s : float
        Sustained vertical speed above this while faster than ``aircraft_min_speed_m_s`` is
        flight. [m/s]
    aircraft_min_speed_m_s : float
        Ground speed of that test. [m/s]
    aircraft_min_duration_s : float
        Shortest climb that counts as flight. [s]
    aircraft_rate_window_s : float
        Vertical speed is taken over this window (of the time-median elevation). [s]
    aircraft_fast_share : float
        Share of a file's speeds above the position-jump speed that marks an aircraft. [1]
    max_road_elevation_m : float
        Elevations above this are out of reach of roads (aircraft flag). [m]
    grade_step_m : float
        Distance grid of the elevation filter. [m]
    elevation_outlier_window_m : float
        Window of the running median that elevation outliers are judged against. [m]
    elevation_outlier_m : float
        Elevations further than this from that median are outliers (refilled). [m]
    grade_despike_m : float
        Width of the running median over distance (removes short glitches and spikes). [m]
    grade_penalty_m3 : float
        Weight of the l1 penalty on grade changes in the trend filter
        (:mod:`fleetfuel.clean.elevation`). Larger: flatter. [m^3]
    grade_window_m : float
        Grade is the mean grade of the smoothed profile over this window. [m]
    grade_limit : float
        Grades beyond +- this are clipped (and counted). [1]
    """

    # --- time base ---------------------------------------------------------------------------
    step_s: float = 1.0  # 1 Hz is the common telematics rate (common practice, no source)
    gap_break_s: float = 60.0  # a minute without data ends a stretch (common practice, no source)
    gap_break_intervals: float = 10.0  # ten missed samples (common practice, no source)
    low_rate_interval_s: float = 10.0  # event/low-rate loggers send every 10-60 s (common practice, no source)

    # --- physically impossible samples ----------------------------------------------------------
    # 250 km/h: most fast cars are electronically limited there; trucks (N2/N3) are limited to
    # 90 km/h in the EU (Directive 92/6/EEC as amended by 2002/85/EC, from memory).
    speed_ceiling_m_s: float = 250.0 * KMH_M_S
    # 4 m/s^2 (0.4 g) is 0-100 km/h in 7 s: beyond any truck or van and most fleet cars
    # (common practice, no source).
    accel_limit_m_s2: float = 4.0
    # Braking is bounded by tyre-road peak adhesion on dry asphalt, 0.8 g
    # (constants.ADHESION_DRY_ASPHALT: Wong, Theory of Ground Vehicles, 4th ed., Table 1.3, from memory).
    brake_limit_m_s2: float = ADHESION_DRY_ASPHALT * STANDARD_GRAVITY_M_S2
    spike_max_s: float = 10.0  # glitches last a few samples (common practice, no source)
    position_jump_factor: float = 1.5  # common practice, no source
    # Consumer GNSS horizontal error is a few metres (95 %) in the open; 20 m covers urban
    # multipath (common practice, no source).
    position_noise_m: float = 20.0

    # --- standstill and parked drift -------------------------------------------------------------
    standstill_speed_m_s: float = 0.5  # below typical GNSS speed noise (common practice, no source)
    creep_speed_m_s: float = 3.0  # above GNSS drift speeds at standstill (common practice, no source)
    creep_window_s: float = 10.0  # common practice, no source
    parked_window_s: float = 60.0  # common practice, no source
    drift_progress_share: float = 0.5  # common practice, no source
    # Parked GNSS drift wanders a few tens of metres at most (common practice, no source).
    drift_radius_m: float = 50.0

    # --- reported vs position speed ---------------------------------------------------------------
    reconcile_min_speed_m_s: float = 5.0  # common practice, no source
    reconcile_min_samples: int = 60  # a minute at 1 Hz (common practice, no source)
    reconcile_tolerance: float = 0.15  # common practice, no source
    unit_ratio_tolerance: float = 0.05  # common practice, no source
    # 1.3 keeps mph vs knots (1.151) out: a poor position track can disagree that much with a good
    # speed signal; km/h vs mph (1.609) and beyond cannot be GNSS error (common practice, no source).
    unit_block_min_ratio: float = 1.3

    # --- not a road vehicle -----------------------------------------------------------------------
    # Walking speed is about 1.2-1.5 m/s (Highway Capacity Manual, pedestrian chapter, from memory);
    # 2.5 m/s (9 km/h) leaves room for GNSS noise and brisk walking.
    walking_speed_max_m_s: float = 2.5
    walking_min_moving_s: float = 600.0  # common practice, no source
    # 2.5 m/s (~500 ft/min) at >= 25 m/s is a grade of 10 % at 90 km/h, beyond road design limits
    # for fast roads (about 6 %; AASHTO Green Book, from memory); light aircraft climb at 500-1000 ft/min.
    aircraft_climb_rate_m_s: float = 2.5
    aircraft_min_speed_m_s: float = 25.0
    aircraft_min_duration_s: float = 30.0  # common practice, no source
    aircraft_rate_window_s: float = 20.0  # common practice, no source
    aircraft_fast_share: float = 0.1  # common practice, no source
    max_road_elevation_m: float = 6000.0  # the highest motorable roads reach about 5.8 km (from memory)

    # --- elevation and grade ----------------------------------------------------------------------
    grade_step_m: float = 20.0  # finer than any grade change a vehicle feels (common practice, no source)
    elevation_outlier_window_m: float = 1000.0  # common practice, no source
    # Within a 1 km window a road deviates from its running median by at most grade * 250 m
    # (25 m at 10 %, at a summit); 50 m covers grades up to 20 % (common practice, no source).
    elevation_outlier_m: float = 50.0
    grade_despike_m: float = 150.0  # longer than altitude glitches at road speed (common practice, no source)
    # Chosen on the synthetic generator's GNSS altitude error (4 m, 60 s correlation, 1 m steps):
    # flat roads stay under 1 m/km of climb (0.43-0.69 m/km over 12 drives), an exact 60 m hill
    # over 1.5 km keeps 98 % of its height, 30 m over 1 km 71 %; 1e6 keeps more of small hills
    # (79 %) but lets 0.86 m/km through; 2e6 the reverse (65 %, 0.62 m/km). Measured in
    # tests/clean/test_clean_elevation.py; no outside source.
    grade_penalty_m3: float = 1.5e6
    grade_window_m: float = 60.0  # about a truck's wheelbase plus length (common practice, no source)
    # Steepest public streets are about 0.35; design limits of main roads 0.06-0.12 (AASHTO Green Book,
    # from memory); smoothed grades beyond 0.25 are noise.
    grade_limit: float = 0.25

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise ConfigError(f"clean.{f.name}: expected a number, found {value!r}")
            if not value > 0:
                raise ConfigError(f"clean.{f.name}: must be > 0, found {value!r}")
        if self.gap_break_s < 2 * self.step_s:
            raise ConfigError(
                f"clean.gap_break_s must be at least 2 * step_s = {2 * self.step_s} s, found {self.gap_break_s}"
            )
        if self.low_rate_interval_s <= self.step_s:
            raise ConfigError(
                f"clean.low_rate_interval_s must exceed step_s = {self.step_s} s, found {self.low_rate_interval_s}"
            )
        shares = ("reconcile_tolerance", "unit_ratio_tolerance", "aircraft_fast_share", "grade_limit",
                  "drift_progress_share")
        for name in shares:
            if not getattr(self, name) < 1:
                raise ConfigError(f"clean.{name}: must be < 1, found {getattr(self, name)!r}")
