"""Tyre designation -> diameter and rolling radius (ISO 4000 / ETRTO metric designation)."""

from __future__ import annotations

import math

import pytest

from fleetfuel.errors import SpecError
from fleetfuel.simulate.tyre import (
    ROLLING_CIRCUMFERENCE_PER_DIAMETER,
    parse_tyre,
    tyre_diameter_m,
    tyre_rolling_radius_m,
)


@pytest.mark.parametrize(
    ("designation", "diameter_mm"),
    [
        # ISO/ETRTO formula: rim [in] * 25.4 + 2 * width [mm] * aspect; worked by hand:
        ("315/70R22.5", 1012.5),  # 571.5 + 2 * 220.5
        ("205/55R16", 631.9),  # 406.4 + 2 * 112.75
        ("275/70R22.5", 956.5),  # 571.5 + 2 * 192.5
        ("215/75R17.5", 767.0),  # 444.5 + 2 * 161.25
    ],
)
def test_diameter_iso_formula(designation: str, diameter_mm: float) -> None:
    assert tyre_diameter_m(designation) * 1000 == pytest.approx(diameter_mm, abs=1e-9)


@pytest.mark.parametrize("text", ["315/70 R22.5 154/150L", "205/55ZR16 91W", "P205/55R16", " 205 / 55 R 16 "])
def test_service_description_and_spacing_accepted(text: str) -> None:
    size = parse_tyre(text)
    assert size.width_mm in (315.0, 205.0)


def test_rolling_radius_is_etrto_circumference_factor() -> None:
    # ETRTO practice: dynamic rolling circumference ~ 3.05 x overall diameter (from memory), so the
    # dynamic radius of 315/70R22.5 is 3.05 * 1.0125 / (2 pi) = 0.49149 m.
    assert tyre_rolling_radius_m("315/70R22.5") == pytest.approx(3.05 * 1.0125 / (2 * math.pi), rel=1e-12)
    # common practice, no source: the loaded dynamic radius is 2-5 % below the unloaded radius
    ratio = ROLLING_CIRCUMFERENCE_PER_DIAMETER / math.pi
    assert 0.95 <= ratio <= 0.98


@pytest.mark.parametrize("bad", ["315-70-22.5", "", "R22.5", "315/70R", "315/70R22.55", "big tyre", "31/70R22.5"])
def test_malformed_designation_is_one_line_error(bad: str) -> None:
    with pytest.raises(SpecError) as info:
        parse_tyre(bad)
    message = str(info.value)
    assert "\n" not in message
    assert repr(bad) in message
    assert "315/70R22.5" in message  # the expected form


def test_non_string_refused() -> None:
    with pytest.raises(SpecError):
        parse_tyre(315)  # type: ignore[arg-type]
