"""Statistics of the standard cycles in ../shared/reference_cycles, read with the ingest reader
(profile cycle_csv) and run through simulate_trace, against the published figures.

Published figures (as listed in reference_cycles/SOURCES.md): EPA UDDS (40 CFR Part 86, App. I),
EPA HWFET (40 CFR Part 600, App. I), EPA US06 (40 CFR Part 86, App. I), UN GTR No. 15 WLTC class 3b.
A figure passes when our value, rounded to the decimals it is published with, equals it.
"""

from __future__ import annotations

import pytest
from simtraces import reference_cycle, shared_folder, spec

from fleetfuel.simulate import simulate_trace

MILE_KM = 1.609344  # NIST SP 811, exact

# stem -> (duration s, distance, mean speed, max speed, unit of the last three, decimals of each)
PUBLISHED = {
    "udds": (1369, 7.45, 19.59, 56.7, "mi", (2, 2, 1)),
    "hwfet": (765, 10.26, 48.3, 59.9, "mi", (2, 1, 1)),
    "us06": (596, 8.01, 48.37, 80.3, "mi", (2, 2, 1)),
    "wltc_class3b": (1800, 23.266, 46.53, 131.3, "km", (3, 2, 1)),
}


def test_every_cycle_file_has_published_figures() -> None:
    stems = {p.stem for p in shared_folder("reference_cycles").glob("*.csv")}
    assert stems, "no *.csv cycles found"
    assert stems <= set(PUBLISHED), f"no published figures here for {sorted(stems - set(PUBLISHED))}"


@pytest.mark.parametrize("stem", sorted(PUBLISHED))
def test_cycle_statistics_match_published_figures(stem: str) -> None:
    cycle = reference_cycle(stem)
    duration, distance, mean, top, unit, (d_dist, d_mean, d_top) = PUBLISHED[stem]
    totals = simulate_trace(cycle.time_s, cycle.speed_m_s, cycle.grade, spec("car_petrol")).totals
    per_unit = MILE_KM if unit == "mi" else 1.0
    assert cycle.grade_source == "flat"
    assert totals.duration_s == duration
    assert round(totals.distance_km / per_unit, d_dist) == pytest.approx(distance, abs=1e-9)
    assert round(totals.mean_speed_kmh / per_unit, d_mean) == pytest.approx(mean, abs=1e-9)
    assert round(totals.max_speed_kmh / per_unit, d_top) == pytest.approx(top, abs=1e-9)
