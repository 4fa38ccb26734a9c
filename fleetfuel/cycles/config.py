"""Configuration of the cycles stage: :class:`CyclesConfig`.

Every option of the clustering, the representative-cycle assembly, the SAFD and the validation,
with its default and the default's source (or ``common practice, no source``) beside it. Fields
are flat scalars so that a ``[cycles]`` table of a run TOML maps onto them key by key
(:mod:`fleetfuel.config`). Sources marked "from memory" were not re-read while writing.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from datetime import date
from typing import Final

from fleetfuel.errors import ConfigError
from fleetfuel.segment.config import KMH_M_S, SECONDS_PER_MINUTE
from fleetfuel.units import SECONDS_PER_HOUR

CLUSTER_WEIGHTS: Final = ("distance", "time", "none")
"""What each micro-trip weighs in the clustering: its distance, its duration, or one each."""

_STRING_FIELDS: Final = ("cluster_weight", "reference_spec", "holdout_day")
_INT_FIELDS: Final = (
    "seed",
    "min_types",
    "max_types",
    "silhouette_sample",
    "fit_sample",
    "kmeans_n_init",
    "candidates",
    "splice_levels",
    "rounds",
    "swap_passes",
)
_SHARE_FIELDS: Final = (
    "silhouette_tolerance",
    "pca_variance",
    "min_type_share",
    "duration_tolerance",
    "max_piece_share",
    "stat_tolerance",
    "fuel_tolerance_fleet",
    "fuel_tolerance_route",
    "holdout_tolerance",
)


def _is_iso_date(text: str) -> bool:
    try:
        date.fromisoformat(text)
    except ValueError:
        return False
    return len(text) == len("YYYY-MM-DD")


def _check_field(name: str, value: object) -> None:
    """One field's type and range (see :class:`CyclesConfig`)."""
    if name in _STRING_FIELDS:
        if not isinstance(value, str) or not value:
            raise ConfigError(f"cycles.{name}: expected a non-empty string, found {value!r}")
        return
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigError(f"cycles.{name}: expected a number, found {value!r}")
    if name in _INT_FIELDS and not isinstance(value, int):
        raise ConfigError(f"cycles.{name}: expected an integer, found {value!r}")
    if name == "seed":
        if value < 0:
            raise ConfigError(f"cycles.seed: must be >= 0, found {value}")
    elif not value > 0 and name != "silhouette_tolerance":
        raise ConfigError(f"cycles.{name}: must be > 0, found {value!r}")
    if name in _SHARE_FIELDS and not 0 <= value <= 1:
        raise ConfigError(f"cycles.{name}: must be a share in [0, 1], found {value!r}")


@dataclass(frozen=True, slots=True, kw_only=True)
class CyclesConfig:
    """Options of the cycles stage (all SI; each default's source in the comment beside it).

    Attributes
    ----------
    seed : int
        Seed of every random draw (k-means starts, silhouette subsample, cycle candidates).
    min_types, max_types : int
        Range of the number of duty-cycle types tried. [1]
    silhouette_sample : int
        Size of the seeded, weight-proportional subsample the silhouette is computed on. [1]
    fit_sample : int
        Most micro-trips the types are fitted on: a bigger fleet's fit takes a seeded uniform draw
        of this many (each keeping its weight), and every micro-trip is then typed by the fitted
        model. Bounds the fit's memory and time whatever the fleet size. [1]
    silhouette_tolerance : float
        The number of types is the largest one whose silhouette is within this share of the
        best silhouette in the range (finer types predict routes better; see
        :mod:`fleetfuel.cycles.cluster`). 0 takes the best silhouette. [1]
    cluster_weight : str
        What each micro-trip weighs in the fit (:data:`CLUSTER_WEIGHTS`).
    pca_variance : float
        Share of the scaled features' variance the PCA step keeps; 1 keeps every component. [1]
    kmeans_n_init : int
        k-means restarts per number of types (best inertia kept). [1]
    min_fit_duration_s : float
        Micro-trips shorter than this do not take part in the fit (creeping, noise); they are
        still given the nearest type. [s]
    min_type_share : float
        A number of types is admissible only if every type holds at least this share of the fit
        weight. [1]
    target_duration_s : float
        Duration of each representative cycle. [s]
    duration_tolerance : float
        A cycle's duration may differ from the target by at most this share. [1]
    max_piece_share : float
        Micro-trips longer than ``max_piece_share * target_duration_s`` are cut into a head,
        windows and a tail at points of equal speed (:mod:`fleetfuel.cycles.pieces`). [1]
    window_s : float
        Shortest window a long micro-trip is cut into. [s]
    pool_max_s : float
        Most driving of one type its pieces are cut from; a type with more gets a seeded draw of
        its micro-trips up to this (bounds the main process's memory on big fleets). [s]
    splice_tolerance_m_s : float
        Cut points of long micro-trips lie within this of a splice level. [m/s]
    splice_levels : int
        Splice levels per type (quantiles of its long micro-trips' moving speeds). [1]
    candidates : int
        Random micro-trip combinations scored at once per round. [1]
    rounds : int
        Rounds of random candidates (the best candidate over all rounds is kept). [1]
    swap_passes : int
        Most passes of the exchange search that improves the best candidate. [1]
    safd_speed_bin_m_s, safd_accel_bin_m_s2 : float
        Bin widths of the speed-acceleration frequency distribution. [m/s, m/s^2]
    safd_max_speed_m_s, safd_max_accel_m_s2 : float
        Speeds above and accelerations beyond +- these fall in the edge bins. [m/s, m/s^2]
    safd_weight : float
        Weight of the SAFD difference against the statistics' error in the score. [1]
    stat_tolerance : float
        Goal for each statistic's relative error of a cycle against its type. [1]
    floor_share, floor_stops_per_km, floor_grade, floor_climb_m_per_km : float
        Absolute floors: a statistic passes when its error is within ``stat_tolerance`` of the
        target or within the floor, whichever is larger (idle share on motorways, climb on flat
        land; the climb floor also serves the net climb). [1, 1/km, 1, m/km]
    reference_spec : str
        Catalogue spec for the fuel check: a file stem of ``models/`` or a path to a TOML file.
    fuel_tolerance_fleet, fuel_tolerance_route, holdout_tolerance : float
        Goals of the fuel check fleet-wide, per route and on the held-out day. [1]
    holdout_day : str
        Day held out for the prediction check: ``"last"`` (the last UTC date with driving),
        ``"none"``, or an ISO date ``YYYY-MM-DD``.
    """

    seed: int = 0
    # --- clustering ----------------------------------------------------------------------------
    min_types: int = 2
    max_types: int = 8  # a fleet manager reads a handful of duty types (common practice, no source)
    silhouette_sample: int = 4000  # the silhouette is O(n^2): 4000 points keep it about a second
    # 50,000 micro-trips are a few weeks of a 20-vehicle fleet; a uniform draw that size puts a
    # type of 1 % share (min_type_share) at 500 +- 22 micro-trips (binomial standard deviation),
    # and the fit of 382,479 generated micro-trips took about 2 s and under 100 MiB, silhouette
    # included (measured). Our choice, no source.
    fit_sample: int = 50_000
    # Rousseeuw (1987) silhouette picks the best-separated partition, often the coarsest; we take
    # the finest within 10 % of the best (our choice, documented in fleetfuel.cycles.cluster).
    silhouette_tolerance: float = 0.1
    # Fuel follows distance: weighting by distance keeps long rural and motorway micro-trips from
    # being outnumbered by short urban ones (our choice, documented).
    cluster_weight: str = "distance"
    pca_variance: float = 0.95  # common practice, no source
    kmeans_n_init: int = 10  # scikit-learn's former default (from memory)
    min_fit_duration_s: float = 10.0  # common practice, no source
    min_type_share: float = 0.01  # common practice, no source

    # --- representative cycles --------------------------------------------------------------------
    # Micro-trip cycles are typically 10-30 min long (Tong, Hung & Cheung 1999; Hung et al. 2007;
    # from memory); 20 min is the middle.
    target_duration_s: float = 20.0 * SECONDS_PER_MINUTE
    duration_tolerance: float = 0.05  # common practice, no source
    max_piece_share: float = 0.5  # our choice: at least two pieces per cycle
    # A minute: long enough to hold a speed change, short enough to give the search many pieces
    # (measured on the synthetic fleet: 60 s halves the worst statistic error of 120 s; no source).
    window_s: float = 1.0 * SECONDS_PER_MINUTE
    # 20 h is 60 cycles' worth of driving per type; its rows take about 10 MB in the main process
    # at 1 Hz (measured: 25,202 pool rows held 3.5 MiB). Our choice, no source.
    pool_max_s: float = 20.0 * SECONDS_PER_HOUR
    # A 0.2 m/s step at a splice is within 1 Hz GNSS speed noise (common practice, no source).
    splice_tolerance_m_s: float = 0.2
    splice_levels: int = 4  # our choice: quintile boundaries of the moving speeds
    candidates: int = 2000  # common practice, no source (500 was tried: a type's fuel check fell to -5.2 %)
    rounds: int = 20  # restarts of the exchange search (measured: 20 rounds take one to two seconds a type)
    swap_passes: int = 60  # common practice, no source

    # --- speed-acceleration frequency distribution ---------------------------------------------------
    safd_speed_bin_m_s: float = 5.0 * KMH_M_S  # common practice, no source
    safd_accel_bin_m_s2: float = 0.25  # common practice, no source
    safd_max_speed_m_s: float = 140.0 * KMH_M_S  # above every legal road limit (common practice, no source)
    safd_max_accel_m_s2: float = 3.0  # beyond road vehicles' usual range (common practice, no source)
    safd_weight: float = 1.0  # common practice, no source

    # --- validation -------------------------------------------------------------------------------
    # 5 % per statistic is the usual acceptance goal of micro-trip cycles (Hung et al. 2007, from
    # memory); the floors judge near-zero statistics on an absolute scale instead.
    stat_tolerance: float = 0.05
    floor_share: float = 0.01  # one percentage point of time (common practice, no source)
    floor_stops_per_km: float = 0.05  # one stop in 20 km (common practice, no source)
    # 0.25 m of climb per km is worth about 0.7 % of a 3.5 t van's urban fuel (m g h over the
    # wheel work; our estimate): the floors of grade, climb and net climb (climb minus descent).
    floor_grade: float = 0.00025
    floor_climb_m_per_km: float = 0.25
    reference_spec: str = "van_diesel"  # the catalogue's van follows every road speed of the sample fleet
    fuel_tolerance_fleet: float = 0.02  # issue 4 goal
    fuel_tolerance_route: float = 0.05  # issue 4 goal
    holdout_tolerance: float = 0.05  # issue 4 goal
    holdout_day: str = "last"

    def __post_init__(self) -> None:
        for f in fields(self):
            _check_field(f.name, getattr(self, f.name))
        if self.holdout_day not in ("last", "none") and not _is_iso_date(self.holdout_day):
            raise ConfigError(f"cycles.holdout_day: expected last, none or YYYY-MM-DD, found {self.holdout_day!r}")
        if self.min_types < 2:
            raise ConfigError(f"cycles.min_types: must be at least 2, found {self.min_types}")
        if self.max_types < self.min_types:
            raise ConfigError(
                f"cycles.max_types ({self.max_types}) must be at least cycles.min_types ({self.min_types})"
            )
        if self.cluster_weight not in CLUSTER_WEIGHTS:
            raise ConfigError(
                f"cycles.cluster_weight: unknown {self.cluster_weight!r}; choose from {CLUSTER_WEIGHTS}"
            )
        if self.window_s * 2 > self.target_duration_s:
            raise ConfigError(
                f"cycles.window_s ({self.window_s} s) must be at most half of cycles.target_duration_s "
                f"({self.target_duration_s} s)"
            )
