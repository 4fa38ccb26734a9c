"""Unit factors against the exact definitions of NIST Special Publication 811 (2008), Appendix B."""

from __future__ import annotations

import numpy as np
import pytest

from fleetfuel import units
from fleetfuel.errors import ProfileError


@pytest.mark.parametrize(
    ("quantity", "symbol", "si_per_unit"),
    [
        ("length", "mi", 1609.344),  # NIST SP 811 B.8: mile (international) = 1.609344 E+03 m, exact
        ("length", "ft", 0.3048),  # NIST SP 811 B.8: foot (international) = 3.048 E-01 m, exact
        ("speed", "mph", 1609.344 / 3600.0),  # NIST SP 811 B.8: mile per hour = 4.4704 E-01 m/s, exact
        ("speed", "kn", 1852.0 / 3600.0),  # NIST SP 811 B.8: knot = 1852/3600 m/s, exact
        ("speed", "km/h", 1000.0 / 3600.0),  # SI: 1 km/h = 1000 m / 3600 s
        ("speed", "cm/s", 0.01),  # SI prefix centi
        ("volume", "gal", 3.785411784),  # NIST SP 811 B.8: gallon (U.S.) = 3.785 411 784 E-03 m^3, exact
        ("mass", "lb", 0.45359237),  # NIST SP 811 B.8: pound (avoirdupois) = 4.535 9237 E-01 kg, exact
    ],
)
def test_factor_is_nist_exact(quantity: str, symbol: str, si_per_unit: float) -> None:
    assert units.lookup(quantity, symbol).factor == pytest.approx(si_per_unit, rel=1e-15)


def test_mph_is_0_44704_exactly() -> None:
    # NIST SP 811 B.8 lists mile per hour = 4.4704 E-01 m/s (exact)
    assert units.to_si([1.0], "speed", "mph")[0] == pytest.approx(0.44704, rel=1e-15)


def test_fahrenheit_to_celsius() -> None:
    # NIST SP 811 B.9: t/degC = (t/degF - 32) / 1.8; water freezes at 32 degF and boils at 212 degF
    np.testing.assert_allclose(
        units.to_si([32.0, 212.0, -40.0], "temperature", "degF"), [0.0, 100.0, -40.0], atol=1e-12
    )


def test_percent_share() -> None:
    assert units.to_si([50.0], "fraction", "%")[0] == pytest.approx(0.5)  # definition of per cent


@pytest.mark.parametrize("header", ["Speed [km/h]", "Vehicle Speed Sensor [km/h]", "speed (km/h)"])
def test_unit_from_header(header: str) -> None:
    assert units.unit_from_header(header) == "km/h"


def test_aliases_case_insensitive() -> None:
    assert units.lookup("speed", "KM/H") == units.lookup("speed", "kph") == units.lookup("speed", "km/h")


def test_unknown_unit_names_known_ones() -> None:
    with pytest.raises(ProfileError, match="unknown speed unit 'furlong/fortnight'"):
        units.lookup("speed", "furlong/fortnight")
