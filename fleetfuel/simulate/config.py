"""Configuration of trace simulation: :class:`SimConfig` (frozen, validated, documented defaults).

Engine-speed thresholds of the shift strategy are given on the normalised engine speed
:math:`n^* = (n - n_{idle}) / (n_{rated} - n_{idle})`, the normalisation of the WLTP gear-shift procedure (UN GTR No. 15, Annex 2),
so one set of defaults serves a 6000 rpm petrol car and an 1800 rpm truck diesel alike. They move
with the load (wheel power over rated power, 0..1): light load shifts early, full load late, as
driver studies and automatic shift maps do (common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

from fleetfuel.constants import ADHESION_DRY_ASPHALT, ADHESION_WET_ASPHALT
from fleetfuel.errors import ConfigError

SHIFT_STRATEGIES: Final = ("rpm_window", "best_efficiency")
ADHESION_CASES: Final = {"dry": ADHESION_DRY_ASPHALT, "wet": ADHESION_WET_ASPHALT}


@dataclass(frozen=True, slots=True, kw_only=True)
class SimConfig:
    """How a trace is simulated; every default is documented.

    Attributes
    ----------
    shift_strategy : str
        ``"rpm_window"``: shift when the engine speed leaves a load-dependent window, with
        hysteresis and a minimum dwell; ``"best_efficiency"``: the feasible gear of lowest fuel
        rate, switched only when it saves more than ``best_efficiency_margin`` and after the dwell.
    min_gear_dwell_s : float
        Shortest time a gear is held before the strategy may leave it. [s] Default 3 s
        (common practice for automated gearboxes and calm drivers, no source). Only physical
        impossibility (over-speed, engine below idle) shifts earlier.
    upshift_speed_light, upshift_speed_full : float
        Normalised engine speed above which to upshift at zero and at full load. [1]
    downshift_speed_light, downshift_speed_full : float
        Normalised engine speed below which to downshift at zero and at full load. [1]
        The light-load value is the lowest driving speed of the WLTP gear-shift procedure,
        :math:`n_{idle} + 0.125 (n_{rated} - n_{idle})` (UN GTR No. 15, Annex 2, from memory).
    shift_landing_margin : float
        Hysteresis: a new gear must land at least this far (normalised speed) inside the window,
        so the next step does not shift back. [1]
    upshift_torque_reserve : float
        An upshift is taken only if the new gear carries the demand within this share of its
        full-load torque. [1]
    best_efficiency_margin : float
        Fuel-rate saving (share) needed to leave a feasible gear under ``best_efficiency``. [1]
    launch_speed : float
        Normalised engine speed held while the clutch slips at launch. [1]
    fuel_cut_speed : float
        Normalised engine speed above which fuel is cut on overrun (below it the engine idles). [1]
    engine_off_at_standstill : bool
        Stop-start: no idle fuel while stationary. Default off.
    adhesion : str
        ``"dry"`` or ``"wet"`` asphalt (coefficients in :mod:`fleetfuel.constants`).
    ambient_temp_c : float or None
        Air temperature. [degC] ``None``: the ISA temperature at the road's elevation.
    base_elevation_m : float
        Elevation of a trace that carries only grade (or nothing). [m] Default sea level.
    initial_soc : float or None
        Battery state of charge at the start (share of usable energy); ``None``: the spec's.
    regen_min_speed_m_s : float
        Below this speed the motor does not regenerate (friction brakes stop the vehicle). [m/s]
        Default 5 km/h (common practice, no source).
    chunk_steps : int
        Steps per block when evaluating all gears (bounds memory at ~10 arrays of
        ``chunk_steps * gears`` floats).
    """

    shift_strategy: str = "rpm_window"
    min_gear_dwell_s: float = 3.0
    upshift_speed_light: float = 0.30
    upshift_speed_full: float = 0.85
    downshift_speed_light: float = 0.125
    downshift_speed_full: float = 0.35
    shift_landing_margin: float = 0.10
    upshift_torque_reserve: float = 0.9
    best_efficiency_margin: float = 0.03
    launch_speed: float = 0.10
    fuel_cut_speed: float = 0.05
    engine_off_at_standstill: bool = False
    adhesion: str = "dry"
    ambient_temp_c: float | None = None
    base_elevation_m: float = 0.0
    initial_soc: float | None = None
    regen_min_speed_m_s: float = 5.0 / 3.6
    chunk_steps: int = 1 << 14

    def __post_init__(self) -> None:
        if self.shift_strategy not in SHIFT_STRATEGIES:
            raise ConfigError(f"unknown shift strategy {self.shift_strategy!r}; choose from {SHIFT_STRATEGIES}")
        if self.adhesion not in ADHESION_CASES:
            raise ConfigError(f"unknown adhesion case {self.adhesion!r}; choose from {tuple(ADHESION_CASES)}")
        shares = ("upshift_speed_light", "upshift_speed_full", "downshift_speed_light", "downshift_speed_full",
                  "shift_landing_margin", "upshift_torque_reserve", "best_efficiency_margin", "launch_speed",
                  "fuel_cut_speed")
        for name in shares:
            value = getattr(self, name)
            if not 0 <= value <= 1:
                raise ConfigError(f"simulate {name}: expected a share in [0, 1], found {value!r}")
        if not (self.downshift_speed_light < self.upshift_speed_light and self.downshift_speed_full < self.upshift_speed_full):
            raise ConfigError(
                "simulate shift window: downshift speeds must lie below upshift speeds, found "
                f"down {self.downshift_speed_light}/{self.downshift_speed_full}, up {self.upshift_speed_light}/{self.upshift_speed_full}"
            )
        if not self.min_gear_dwell_s >= 0:
            raise ConfigError(f"simulate min_gear_dwell_s: expected >= 0 s, found {self.min_gear_dwell_s!r}")
        if self.initial_soc is not None and not 0 <= self.initial_soc <= 1:
            raise ConfigError(f"simulate initial_soc: expected a share in [0, 1], found {self.initial_soc!r}")
        if not self.regen_min_speed_m_s >= 0:
            raise ConfigError(f"simulate regen_min_speed_m_s: expected >= 0 m/s, found {self.regen_min_speed_m_s!r}")
        if not self.chunk_steps >= 1:
            raise ConfigError(f"simulate chunk_steps: expected >= 1, found {self.chunk_steps!r}")

    @property
    def adhesion_coefficient(self) -> float:
        """Peak adhesion coefficient of the configured case. [1]"""
        return ADHESION_CASES[self.adhesion]
