"""Generate the catalogue's fuel maps (``fuel_maps/*.csv``) from an extended Willans line.

Run from the repository root: ``python models/make_fuel_maps.py``. Deterministic: the same
parameters write byte-identical files, so a diff shows any change.

Method
------
Guzzella & Onder, Introduction to Modeling and Control of Internal Combustion Engine Systems,
2nd ed., Springer (2010), Sec. 2.3: brake mean effective pressure
``p_me = e(c_m, p_mf) * p_mf - p_me0(c_m)``, efficiency ``e = e00 + e01 c_m + e02 c_m^2 - e1 p_mf``,
friction ``p_me0 = f0 + f2 c_m^2``, mean piston speed ``c_m = 2 S n / 60``. The same evaluator as
the simulator's (``fleetfuel.simulate.fuelmap.WillansLine``) samples a grid of engine speed (idle to
cut-off) x torque (0 to 5 % above peak torque); the simulator interpolates bilinearly between points.

Parameter choices (our own, invented engines; sources give typical ranges, not these values):
- Peak brake thermal efficiency of current heavy-duty diesels 44-46 % (ICCT white paper, Delgado,
  Rodriguez & Muncrief 2017, "Fuel efficiency technology in European heavy-duty vehicles: baseline
  and potential for the 2020-2030 time frame", from memory); light-duty diesels about 40 % and
  turbocharged petrol engines about 36 % (Heywood, Internal Combustion Engine Fundamentals, 1988,
  Ch. 15 and later reviews; from memory).
- Friction mean effective pressure about 1-2.5 bar, rising with the square of piston speed
  (Heywood 1988, Sec. 13.6, Fig. 13-9; from memory).
- Mean piston speeds at rated speed 10-12 m/s for truck diesels, 11-15 m/s for car engines
  (Heywood 1988, Sec. 2.2; from memory).
Generated efficiencies are printed (peak brake efficiency, best BSFC) for review; they are a check
of the engine parameters only, done before and independently of any vehicle band comparison.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from fleetfuel.constants import FUELS  # noqa: E402
from fleetfuel.simulate.fuelmap import FUEL_MAP_COLUMNS, WillansLine  # noqa: E402
from fleetfuel.simulate.spec_parts import Willans  # noqa: E402

OUT = Path(__file__).resolve().parent / "fuel_maps"
SPEED_POINTS = 12
TORQUE_POINTS = 12
TORQUE_HEADROOM = 1.05  # grid reaches 5 % above peak torque
DECIMALS = 4


@dataclass(frozen=True)
class MapRecipe:
    """One invented engine: grid bounds and Willans parameters."""

    name: str
    fuel: str
    idle_speed_rpm: float
    max_speed_rpm: float
    peak_torque_nm: float
    willans: Willans
    note: str


RECIPES = (
    MapRecipe(
        name="diesel_2l0_105kw", fuel="diesel", idle_speed_rpm=800, max_speed_rpm=4400, peak_torque_nm=340,
        willans=Willans(displacement_l=2.0, stroke_m=0.090, efficiency=(0.39, 0.012, -0.0008),
                        efficiency_load_slope_per_bar=0.0004, friction_mep_bar=(1.0, 0.010)),
        note="4-cylinder light-duty diesel for vans",
    ),
    MapRecipe(
        name="diesel_4l5_150kw", fuel="diesel", idle_speed_rpm=700, max_speed_rpm=2800, peak_torque_nm=750,
        willans=Willans(displacement_l=4.5, stroke_m=0.125, efficiency=(0.44, 0.012, -0.0009),
                        efficiency_load_slope_per_bar=0.0006, friction_mep_bar=(0.9, 0.012)),
        note="4-cylinder medium-duty diesel for 7.5 t rigids",
    ),
    MapRecipe(
        name="diesel_5l1_170kw", fuel="diesel", idle_speed_rpm=650, max_speed_rpm=2600, peak_torque_nm=900,
        willans=Willans(displacement_l=5.1, stroke_m=0.135, efficiency=(0.45, 0.012, -0.0009),
                        efficiency_load_slope_per_bar=0.0006, friction_mep_bar=(0.9, 0.012)),
        note="4-cylinder medium-duty diesel for 18 t rigids (smaller option)",
    ),
    MapRecipe(
        name="diesel_7l7_235kw", fuel="diesel", idle_speed_rpm=600, max_speed_rpm=2500, peak_torque_nm=1200,
        willans=Willans(displacement_l=7.7, stroke_m=0.135, efficiency=(0.46, 0.012, -0.0009),
                        efficiency_load_slope_per_bar=0.0007, friction_mep_bar=(0.9, 0.012)),
        note="6-cylinder heavy-duty diesel for 18 t rigids and 12 m buses",
    ),
    MapRecipe(
        name="diesel_12l8_330kw", fuel="diesel", idle_speed_rpm=600, max_speed_rpm=2200, peak_torque_nm=2300,
        willans=Willans(displacement_l=12.8, stroke_m=0.166, efficiency=(0.47, 0.012, -0.0009),
                        efficiency_load_slope_per_bar=0.0007, friction_mep_bar=(0.9, 0.012)),
        note="6-cylinder heavy-duty diesel for 40 t tractors",
    ),
)


def make_grid(recipe: MapRecipe) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Speed axis [rpm], torque axis [N m] and fuel rate grid [g/s] of one recipe."""
    line = WillansLine(params=recipe.willans, lower_heating_value_j_kg=FUELS[recipe.fuel].lower_heating_value_j_kg)
    speed = np.linspace(recipe.idle_speed_rpm, recipe.max_speed_rpm, SPEED_POINTS)
    torque = np.linspace(0.0, round(recipe.peak_torque_nm * TORQUE_HEADROOM), TORQUE_POINTS)
    s, t = np.meshgrid(speed, torque, indexing="ij")
    return speed, torque, line.fuel_rate_g_s(s, t)


def render(recipe: MapRecipe) -> str:
    """CSV text of one map, comment header first."""
    speed, torque, fuel = make_grid(recipe)
    w = recipe.willans
    lines = [
        f"# fuel map {recipe.name}: {recipe.note} ({recipe.fuel}); generated by models/make_fuel_maps.py, do not edit",
        "# method: extended Willans line, Guzzella & Onder (2010) Sec. 2.3; "
        f"Vd {w.displacement_l} L, stroke {w.stroke_m} m, e0 {w.efficiency}, e1 {w.efficiency_load_slope_per_bar}/bar, "
        f"friction {w.friction_mep_bar} bar",
        ",".join(FUEL_MAP_COLUMNS),
    ]
    for i, n in enumerate(speed):
        for j, tq in enumerate(torque):
            lines.append(f"{n:.0f},{tq:.0f},{fuel[i, j]:.{DECIMALS}f}")
    return "\n".join(lines) + "\n"


def summary(recipe: MapRecipe) -> str:
    """Peak brake efficiency and best BSFC of a recipe, for review."""
    speed, torque, fuel = make_grid(recipe)
    s, t = np.meshgrid(speed, torque, indexing="ij")
    power_w = s * 2 * np.pi / 60 * t
    with np.errstate(divide="ignore", invalid="ignore"):
        eff = power_w / (fuel / 1000 * FUELS[recipe.fuel].lower_heating_value_j_kg)
    eff = np.where(t <= recipe.peak_torque_nm, eff, np.nan)
    k = np.nanargmax(eff)
    bsfc = 3.6e6 / FUELS[recipe.fuel].lower_heating_value_j_kg / eff.flat[k] * 1000
    idle = fuel[0, 0] * 3.6 / FUELS[recipe.fuel].density_kg_l
    return (f"{recipe.name}: peak brake efficiency {eff.flat[k]:.3f} at {s.flat[k]:.0f} rpm {t.flat[k]:.0f} N m "
            f"(BSFC {bsfc:.0f} g/kWh); idle fuel {idle:.2f} L/h")


def main() -> None:
    OUT.mkdir(exist_ok=True)
    for recipe in RECIPES:
        (OUT / f"{recipe.name}.csv").write_text(render(recipe), encoding="utf-8", newline="\n")
        print(summary(recipe))


if __name__ == "__main__":
    main()
