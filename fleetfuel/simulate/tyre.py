"""Tyre size designation -> overall diameter and dynamic rolling radius.

The ISO 4000 / ETRTO metric designation ``WWW/AARDD.D`` gives the section width ``W`` [mm],
the aspect ratio ``A`` [%] (section height over width) and the rim diameter ``D`` [in]:
overall (unloaded) diameter = ``D * 25.4 + 2 * W * A / 100`` [mm].

The dynamic rolling radius (distance travelled per wheel revolution / 2 pi) is smaller than the
unloaded radius because the loaded tyre deflects. The ETRTO Standards Manual sizes a radial tyre's
dynamic rolling circumference at about 3.05 times its overall diameter (from memory), i.e. the
dynamic radius is about 0.971 of the unloaded radius; see :data:`ROLLING_CIRCUMFERENCE_PER_DIAMETER`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Final

from fleetfuel.errors import SpecError
from fleetfuel.units import INCH_M

# ETRTO Standards Manual, general information on radial tyres: dynamic rolling circumference
# ~= 3.05 x overall diameter (from memory; the manual's per-size tables vary about +/-1 %).
ROLLING_CIRCUMFERENCE_PER_DIAMETER: Final = 3.05
MM_M: Final = 0.001

_DESIGNATION = re.compile(
    r"""^\s*(?:P|LT)?\s*
    (?P<width>\d{3})\s*/\s*(?P<aspect>\d{2,3})\s*
    (?:Z?R|-|B|D)\s*
    (?P<rim>\d{2}(?:\.\d)?)
    (?:\s+\S.*)?\s*$""",
    re.IGNORECASE | re.VERBOSE,
)


@dataclass(frozen=True, slots=True, kw_only=True)
class TyreSize:
    """A parsed metric tyre size.

    Attributes
    ----------
    width_mm : float
        Nominal section width. [mm]
    aspect_ratio : float
        Section height over width. [1]
    rim_diameter_in : float
        Nominal rim diameter. [in]
    """

    width_mm: float
    aspect_ratio: float
    rim_diameter_in: float

    @property
    def diameter_m(self) -> float:
        """Overall unloaded diameter, rim plus two section heights. [m]"""
        return self.rim_diameter_in * INCH_M + 2 * self.width_mm * self.aspect_ratio * MM_M

    @property
    def rolling_radius_m(self) -> float:
        """Dynamic rolling radius, ``3.05 * diameter / (2 pi)`` (ETRTO practice). [m]"""
        return ROLLING_CIRCUMFERENCE_PER_DIAMETER * self.diameter_m / (2 * math.pi)


def parse_tyre(designation: str) -> TyreSize:
    """Parse ``"315/70R22.5"`` (an optional load index and speed symbol may follow).

    Raises
    ------
    SpecError
        When the text is not a metric ``width/aspect R rim`` designation.
    """
    match = _DESIGNATION.match(designation) if isinstance(designation, str) else None
    if match is None:
        raise SpecError(
            f"tyre designation must look like '315/70R22.5' (width mm / aspect % R rim in), found {designation!r}"
        )
    return TyreSize(
        width_mm=float(match["width"]),
        aspect_ratio=float(match["aspect"]) / 100,
        rim_diameter_in=float(match["rim"]),
    )


def tyre_diameter_m(designation: str) -> float:
    """Overall unloaded diameter of a tyre size designation. [m]"""
    return parse_tyre(designation).diameter_m


def tyre_rolling_radius_m(designation: str) -> float:
    """Dynamic rolling radius of a tyre size designation. [m]"""
    return parse_tyre(designation).rolling_radius_m
