"""Air density for the aerodynamic road load, from the ISO 2533 standard atmosphere.

Reference conditions: the ISA at mean sea level, 15 degC (288.15 K), 101325 Pa, dry air,
1.225 kg/m^3 (ISO 2533:1975). Pressure follows the ISA troposphere (constant lapse rate
0.0065 K/m) from the road's elevation; temperature is the ISA temperature at that elevation
unless an ambient temperature is given, in which case the density is that of dry air at the
ISA pressure and the given temperature (ideal gas). Humidity is neglected (moist air is
slightly lighter; under 1 % at 25 degC and 60 % relative humidity).

References
----------
ISO 2533:1975, Standard Atmosphere (identical to the ICAO standard atmosphere up to 32 km).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from fleetfuel.constants import (
    CELSIUS_ZERO_K,
    DRY_AIR_GAS_CONSTANT_J_KG_K,
    ISA_EARTH_RADIUS_M,
    ISA_SEA_LEVEL_PRESSURE_PA,
    ISA_SEA_LEVEL_TEMPERATURE_K,
    ISA_TROPOPAUSE_GEOPOTENTIAL_M,
    ISA_TROPOSPHERE_LAPSE_K_M,
    STANDARD_GRAVITY_M_S2,
)
from fleetfuel.errors import InputDataError

FloatArray = npt.NDArray[np.float64]

_PRESSURE_EXPONENT = STANDARD_GRAVITY_M_S2 / (ISA_TROPOSPHERE_LAPSE_K_M * DRY_AIR_GAS_CONSTANT_J_KG_K)


def geopotential_altitude_m(elevation_m: npt.ArrayLike) -> FloatArray:
    r"""Geopotential altitude :math:`H = r z / (r + z)` of a geometric elevation.

    Parameters
    ----------
    elevation_m : array_like
        Geometric elevation above mean sea level. [m]

    Returns
    -------
    ndarray
        Geopotential altitude. [m] (about 1.4 m below ``elevation_m`` at 3000 m)

    References
    ----------
    ISO 2533:1975, section 2.4, with the nominal radius r = 6356766 m.
    """
    z = np.asarray(elevation_m, dtype=np.float64)
    return ISA_EARTH_RADIUS_M * z / (ISA_EARTH_RADIUS_M + z)


def _check_troposphere(h_m: FloatArray) -> None:
    if h_m.size and not np.all(h_m < ISA_TROPOPAUSE_GEOPOTENTIAL_M):
        worst = float(np.nanmax(h_m))
        raise InputDataError(
            f"elevation_m: expected below the tropopause ({ISA_TROPOPAUSE_GEOPOTENTIAL_M:.0f} m), found {worst:.0f} m"
        )


def isa_temperature_k(elevation_m: npt.ArrayLike) -> FloatArray:
    r"""ISA temperature :math:`T = T_0 - L H` in the troposphere.

    Parameters
    ----------
    elevation_m : array_like
        Geometric elevation above mean sea level, below 11 km. [m]

    Returns
    -------
    ndarray
        Air temperature. [K]
    """
    h = geopotential_altitude_m(elevation_m)
    _check_troposphere(h)
    return ISA_SEA_LEVEL_TEMPERATURE_K - ISA_TROPOSPHERE_LAPSE_K_M * h


def isa_pressure_pa(elevation_m: npt.ArrayLike) -> FloatArray:
    r"""ISA static pressure :math:`p = p_0 (T / T_0)^{g_0 / (L R)}` in the troposphere.

    Parameters
    ----------
    elevation_m : array_like
        Geometric elevation above mean sea level, below 11 km. [m]

    Returns
    -------
    ndarray
        Static pressure. [Pa]
    """
    ratio = isa_temperature_k(elevation_m) / ISA_SEA_LEVEL_TEMPERATURE_K
    return ISA_SEA_LEVEL_PRESSURE_PA * ratio**_PRESSURE_EXPONENT


def air_density_kg_m3(elevation_m: npt.ArrayLike, ambient_temp_c: npt.ArrayLike | None = None) -> FloatArray:
    r"""Dry-air density :math:`\rho = p / (R T)` at a road elevation.

    Parameters
    ----------
    elevation_m : array_like
        Geometric elevation above mean sea level, below 11 km. [m]
    ambient_temp_c : array_like or None
        Actual air temperature. [degC] ``None`` takes the ISA temperature at the elevation.

    Returns
    -------
    ndarray
        Air density. [kg/m^3] (1.225 at sea level with the ISA temperature, ISO 2533)

    Notes
    -----
    With ``ambient_temp_c`` the pressure is still the ISA pressure at the elevation: weather
    (pressure systems) changes it by a few percent, which this model neglects.
    """
    pressure_pa = isa_pressure_pa(elevation_m)
    if ambient_temp_c is None:
        temperature_k = isa_temperature_k(elevation_m)
    else:
        temperature_k = np.asarray(ambient_temp_c, dtype=np.float64) + CELSIUS_ZERO_K
        if temperature_k.size and not np.all(temperature_k > 0):
            raise InputDataError(f"ambient_temp_c: expected above -273.15 degC, found {np.nanmin(temperature_k) - CELSIUS_ZERO_K}")
    return pressure_pa / (DRY_AIR_GAS_CONSTANT_J_KG_K * temperature_k)
