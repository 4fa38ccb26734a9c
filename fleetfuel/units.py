"""Unit table: every unit fleetfuel reads, with its exact factor to SI.

Conversion happens once, at ingest (:func:`to_si`); nothing downstream sees km/h, mph or feet.
Factors are exact definitions from NIST Special Publication 811 (2008), Appendix B, unless noted.
Each unit maps ``value_si = value * factor + offset`` (only temperatures have an offset).

Quantities and their SI target:

========== ============ ============================
quantity   SI unit      canonical column suffix
========== ============ ============================
speed      m/s          ``_m_s``
length     m            ``_m``
volume     L            ``_l`` (litre: SI-accepted)
mass       kg           ``_kg``
fuel_rate  L/h          ``_l_h``
temperature degC        ``_c`` (Celsius: SI-derived)
fraction   1            share 0..1
rotation   rpm          ``_rpm`` (trade unit, named)
========== ============ ============================
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt

from fleetfuel.errors import ProfileError

# Exact definitions (NIST SP 811, Appendix B.8 and B.9).
INTERNATIONAL_FOOT_M: Final = 0.3048
INCH_M: Final = 0.0254
INTERNATIONAL_MILE_M: Final = 1609.344
NAUTICAL_MILE_M: Final = 1852.0
US_GALLON_L: Final = 3.785411784
IMPERIAL_GALLON_L: Final = 4.54609
POUND_KG: Final = 0.45359237
SECONDS_PER_HOUR: Final = 3600.0
BAR_PA: Final = 1.0e5  # NIST SP 811, Appendix B.8: 1 bar = 100 kPa, exact


@dataclass(frozen=True, slots=True)
class Unit:
    """One unit of one quantity: ``si = value * factor + offset``."""

    quantity: str
    symbol: str
    factor: float
    offset: float = 0.0


_TABLE: Final[tuple[tuple[Unit, tuple[str, ...]], ...]] = (
    (Unit("speed", "m/s", 1.0), ("m/s", "mps", "ms", "m s-1", "meter/second", "metre/second")),
    (Unit("speed", "km/h", 1000.0 / SECONDS_PER_HOUR), ("km/h", "kmh", "kph", "km/hr", "kmph", "km h-1")),
    (Unit("speed", "mph", INTERNATIONAL_MILE_M / SECONDS_PER_HOUR), ("mph", "mi/h", "miles/hour", "mile/h")),
    (Unit("speed", "kn", NAUTICAL_MILE_M / SECONDS_PER_HOUR), ("kn", "knot", "knots", "kt", "kts")),
    (Unit("speed", "cm/s", 0.01), ("cm/s",)),
    (Unit("length", "m", 1.0), ("m", "meter", "metre", "meters", "metres")),
    (Unit("length", "km", 1000.0), ("km", "kilometer", "kilometre", "kilometers", "kilometres")),
    (Unit("length", "ft", INTERNATIONAL_FOOT_M), ("ft", "feet", "foot")),
    (Unit("length", "mi", INTERNATIONAL_MILE_M), ("mi", "mile", "miles")),
    (Unit("volume", "L", 1.0), ("l", "litre", "liter", "litres", "liters")),
    (Unit("volume", "mL", 0.001), ("ml",)),
    (Unit("volume", "gal", US_GALLON_L), ("gal", "usgal", "us gal", "gallon", "gallons")),
    (Unit("volume", "imp gal", IMPERIAL_GALLON_L), ("imp gal", "impgal", "uk gal")),
    (Unit("mass", "kg", 1.0), ("kg",)),
    (Unit("mass", "g", 0.001), ("g",)),
    (Unit("mass", "lb", POUND_KG), ("lb", "lbs")),
    (Unit("fuel_rate", "L/h", 1.0), ("l/h", "l/hr", "lph")),
    (Unit("fuel_rate", "gal/h", US_GALLON_L), ("gal/h", "gph", "gal/hr")),
    (Unit("fuel_rate", "mL/s", 0.001 * SECONDS_PER_HOUR), ("ml/s",)),
    (Unit("temperature", "degC", 1.0), ("degc", "°c", "c", "celsius", "deg c")),
    (Unit("temperature", "degF", 5.0 / 9.0, -32.0 * 5.0 / 9.0), ("degf", "°f", "f", "fahrenheit")),
    (Unit("temperature", "K", 1.0, -273.15), ("k", "kelvin")),
    (Unit("fraction", "1", 1.0), ("1", "fraction", "share")),
    (Unit("fraction", "%", 0.01), ("%", "pct", "percent")),
    (Unit("rotation", "rpm", 1.0), ("rpm", "1/min", "min-1", "r/min")),
)

UNITS: Final[dict[tuple[str, str], Unit]] = {
    (unit.quantity, alias): unit for unit, aliases in _TABLE for alias in aliases
}
"""(quantity, lower-case alias) -> Unit."""

QUANTITIES: Final = tuple(dict.fromkeys(unit.quantity for unit, _ in _TABLE))

_HEADER_UNIT = re.compile(r"[\[(]\s*([^\])]+?)\s*[\])]\s*$")


def _normalise(symbol: str) -> str:
    return " ".join(symbol.strip().lower().replace("Â", "").split())


def lookup(quantity: str, symbol: str) -> Unit:
    """The :class:`Unit` for ``symbol`` (case-insensitive, common aliases) of ``quantity``.

    Raises
    ------
    ProfileError
        Unknown quantity or unit, naming what was found and what is known.
    """
    if quantity not in QUANTITIES:
        raise ProfileError(f"unknown quantity {quantity!r}; known: {', '.join(QUANTITIES)}")
    unit = UNITS.get((quantity, _normalise(symbol)))
    if unit is None:
        known = sorted({u.symbol for (q, _), u in UNITS.items() if q == quantity})
        raise ProfileError(f"unknown {quantity} unit {symbol!r}; known: {', '.join(known)}")
    return unit


def unit_from_header(header: str) -> str | None:
    """The unit written in a column header, e.g. ``"Speed [km/h]"`` -> ``"km/h"``, else None."""
    match = _HEADER_UNIT.search(header)
    return match.group(1) if match else None


def to_si(values: npt.ArrayLike, quantity: str, symbol: str) -> npt.NDArray[np.float64]:
    """Convert ``values`` in unit ``symbol`` of ``quantity`` to the SI unit of the table.

    Parameters
    ----------
    values : array_like
        Numbers in the given unit. [symbol]
    quantity : str
        One of :data:`QUANTITIES`.
    symbol : str
        The unit, e.g. ``"mph"``, ``"ft"``, ``"km/h"``.

    Returns
    -------
    ndarray
        The values in the quantity's SI (or SI-accepted) unit, float64.
    """
    unit = lookup(quantity, symbol)
    out = np.asarray(values, dtype=np.float64) * unit.factor
    if unit.offset:
        out = out + unit.offset
    return out
