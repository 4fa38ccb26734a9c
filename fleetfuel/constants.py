"""Physical constants and fuel properties: the one home for them, each with its source.

Model code holds no bare numeric literals beyond 0, 1, 1/2 and exponents; every other number
is named here (or is documented default data in a stage's config dataclass).
Values marked "from memory" were not re-read from the source while writing; check before citing.
Sections are owned by the stage that uses them; add to your section, do not re-define.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

from fleetfuel.units import US_GALLON_L

# --- Gravity and the standard atmosphere --------------------------------------------------
STANDARD_GRAVITY_M_S2: Final = 9.80665  # CGPM 1901 (3rd CGPM), exact
ISA_SEA_LEVEL_PRESSURE_PA: Final = 101325.0  # ISO 2533:1975, exact by definition
ISA_SEA_LEVEL_TEMPERATURE_K: Final = 288.15  # ISO 2533:1975, 15 degC
ISA_SEA_LEVEL_DENSITY_KG_M3: Final = 1.225  # ISO 2533:1975, at 15 degC and 101325 Pa
ISA_TROPOSPHERE_LAPSE_K_M: Final = 0.0065  # ISO 2533:1975, 0 to 11 km geopotential
DRY_AIR_GAS_CONSTANT_J_KG_K: Final = 287.05287  # ISO 2533:1975 (R* / M for dry air)
CELSIUS_ZERO_K: Final = 273.15  # SI Brochure, 9th ed. (2019), definition of degC
ISA_EARTH_RADIUS_M: Final = 6356766.0  # ISO 2533:1975, nominal radius for geopotential altitude
ISA_TROPOPAUSE_GEOPOTENTIAL_M: Final = 11000.0  # ISO 2533:1975, top of the troposphere layer

# --- The WGS-84 ellipsoid -------------------------------------------------------------------
WGS84_SEMI_MAJOR_AXIS_M: Final = 6378137.0  # NIMA TR8350.2 (WGS 84), 3rd ed., defining parameter
WGS84_FLATTENING: Final = 1.0 / 298.257223563  # NIMA TR8350.2 (WGS 84), defining parameter
WGS84_MEAN_RADIUS_M: Final = 6371008.8  # IUGG mean radius R1 = (2a + b) / 3 of WGS 84 (Moritz 2000)

# --- Tyre-road adhesion (peak coefficients) ---------------------------------------------------
# Wong, Theory of Ground Vehicles, 4th ed. (2008), Table 1.3 (from memory): asphalt and concrete,
# peak 0.8-0.9 dry, 0.5-0.7 wet. We take the low end of each range, the cautious reading.
ADHESION_DRY_ASPHALT: Final = 0.8
ADHESION_WET_ASPHALT: Final = 0.5


# --- Fuels ------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True, kw_only=True)
class FuelProperties:
    """Properties of one fuel at 15 degC.

    Attributes
    ----------
    name : str
        Key used in spec files (``diesel``, ``petrol``, ``cng``).
    density_kg_l : float
        Density. [kg/L] (NaN-free; gaseous fuels carry a nominal value for reporting only)
    lower_heating_value_j_kg : float
        Lower (net) heating value. [J/kg]
    co2_kg_per_kg : float
        Tank-to-wheel CO2 per mass of fuel burnt. [kg/kg]
    liquid : bool
        True when the fuel is sold by the litre (reported in L), False when by the kg.
    source : str
        Where the numbers come from.
    """

    name: str
    density_kg_l: float
    lower_heating_value_j_kg: float
    co2_kg_per_kg: float
    liquid: bool
    source: str

    @property
    def co2_kg_per_l(self) -> float:
        """Tank-to-wheel CO2 per litre. [kg/L]"""
        return self.co2_kg_per_kg * self.density_kg_l


# EPA, "Greenhouse Gas Emissions from a Typical Passenger Vehicle" (EPA-420-F-18-008, 2018):
# 8,887 g CO2 per US gallon of gasoline and 10,180 g per US gallon of diesel (tank to wheel).
EPA_PETROL_CO2_KG_PER_L: Final = 8.887 / US_GALLON_L  # = 2.3477 kg/L
EPA_DIESEL_CO2_KG_PER_L: Final = 10.180 / US_GALLON_L  # = 2.6893 kg/L

# Densities and heating values: JEC Well-to-Wheels report v5 (2020), Appendix "fuel properties"
# (from memory): diesel 832 kg/m3 and 43.1 MJ/kg; petrol 743 kg/m3 and 43.2 MJ/kg;
# CNG (EU mix) 45.1 MJ/kg with 2.54 kg CO2/kg.
DIESEL: Final = FuelProperties(
    name="diesel",
    density_kg_l=0.832,
    lower_heating_value_j_kg=43.1e6,
    co2_kg_per_kg=EPA_DIESEL_CO2_KG_PER_L / 0.832,
    liquid=True,
    source="density and LHV: JEC WTW v5 (2020, from memory); CO2: EPA-420-F-18-008 (10,180 g/US gal)",
)
PETROL: Final = FuelProperties(
    name="petrol",
    density_kg_l=0.743,
    lower_heating_value_j_kg=43.2e6,
    co2_kg_per_kg=EPA_PETROL_CO2_KG_PER_L / 0.743,
    liquid=True,
    source="density and LHV: JEC WTW v5 (2020, from memory); CO2: EPA-420-F-18-008 (8,887 g/US gal)",
)
CNG: Final = FuelProperties(
    name="cng",
    density_kg_l=0.0008,  # gas at 15 degC, 1 atm, nominal; CNG is reported in kg, never in litres
    lower_heating_value_j_kg=45.1e6,
    co2_kg_per_kg=2.54,
    liquid=False,
    source="JEC WTW v5 (2020), CNG EU mix (from memory)",
)
FUELS: Final[dict[str, FuelProperties]] = {f.name: f for f in (DIESEL, PETROL, CNG)}

# --- Energy units -----------------------------------------------------------------------------
JOULES_PER_KWH: Final = 3.6e6  # SI Brochure: 1 kWh = 3.6 MJ, exact
