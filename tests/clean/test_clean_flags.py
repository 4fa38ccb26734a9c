"""File flags: walking and aircraft logs (real files), speed unit mix-ups (synthetic), road cars."""

from __future__ import annotations

import numpy as np
import pytest
from clean_frames import batch, log_file, real_log, synthetic

from fleetfuel import synth
from fleetfuel.clean import CleanConfig, clean_batch
from fleetfuel.clean import flags as fl
from fleetfuel.ingest import IngestConfig, read_logs

CFG = CleanConfig()


def _flags(pattern: str) -> list[str]:
    path = real_log(pattern)
    account = clean_batch(read_logs([path], IngestConfig()), CFG).account
    assert account["error"].isna().all()
    return list(account["flags"].iloc[0])


@pytest.mark.real_logs
def test_hiking_track_flagged_walking_and_low_rate() -> None:
    # SOURCES.md: a hiking log, median about 3 km/h, 11 s sampling
    flags = _flags("gpxpy/korita-zbevnica.gpx")
    assert fl.FLAG_WALKING in flags and fl.FLAG_LOW_RATE in flags
    assert fl.FLAG_AIRCRAFT not in flags


@pytest.mark.real_logs
def test_avionics_log_flagged_aircraft() -> None:
    # SOURCES.md: light aircraft, take-off and climb at hundreds of ft/min (up to ~1000 ft/min)
    flags = _flags("gpsbabel/aircraft_avionics_log.csv")
    assert fl.FLAG_AIRCRAFT in flags and fl.FLAG_WALKING not in flags


@pytest.mark.real_logs
@pytest.mark.parametrize("pattern", ["gpsbabel/dg100.gpx", "gpxpy/around-visnjan-with-car.gpx",
                                     "gpsbabel/mtk_logger_m241.csv", "ndsbr/driver_C.csv", "rsk_ev/T3_*.csv"])
def test_road_vehicles_are_not_flagged(pattern: str) -> None:
    # SOURCES.md: cars (and a small electric quadricycle) on public roads, some climbing 300 m
    flags = _flags(pattern)
    for flag in (fl.FLAG_WALKING, fl.FLAG_AIRCRAFT, fl.FLAG_SPEED_UNIT_SUSPECT, fl.FLAG_SPEED_POSITION_MISMATCH):
        assert flag not in flags


@pytest.mark.parametrize("factor", [1.609344, 3.6])
def test_unit_mixup_flagged(factor: float) -> None:
    # synth unit mix-up over the whole log: km/h values read as mph (x 1.609344, NIST SP 811) or
    # as m/s (x 3.6); positions are right, so the ratio reported/derived gives it away
    route = synth.line_route(8_000.0, limit_kmh=50.0, lights_every_m=1_000.0)
    spec = synth.DefectSpec(unit_mixup_vehicles=("SYN-01",), unit_mixup_factor=factor, unit_mixup_share=1.0)
    _, frame, _ = synthetic(route, "van", seed=1, spec=spec)
    flags = clean_batch(batch(log_file(frame)), CFG).account["flags"].iloc[0]
    assert fl.FLAG_SPEED_UNIT_SUSPECT in flags


def test_honest_speed_not_flagged() -> None:
    route = synth.line_route(8_000.0, limit_kmh=50.0, lights_every_m=1_000.0)
    _, frame, _ = synthetic(route, "van", seed=1, spec=synth.DefectSpec.typical())
    assert clean_batch(batch(log_file(frame)), CFG).account["flags"].iloc[0] == []


def test_speed_verdict_by_hand() -> None:
    derived = np.full(100, 20.0)
    assert fl.speed_verdict(derived * 1.02, derived, CFG) == (None, pytest.approx(1.02))
    assert fl.speed_verdict(derived / 3.6, derived, CFG)[0] == fl.FLAG_SPEED_UNIT_SUSPECT  # m/s read as km/h
    assert fl.speed_verdict(derived * 1.3, derived, CFG)[0] == fl.FLAG_SPEED_POSITION_MISMATCH
    assert fl.speed_verdict(derived[:10], derived[:10], CFG) == (None, pytest.approx(np.nan, nan_ok=True))


def test_unit_ratios_from_nist_factors() -> None:
    # NIST SP 811: 1 mi = 1609.344 m, 1 nmi = 1852 m, 1 h = 3600 s
    for ratio in (3.6, 1.609344, 3600 / 1609.344, 1.852, 3.6 / 1.852, 1852 / 1609.344):
        assert min(abs(r / ratio - 1) for r in fl.UNIT_MIXUP_RATIOS) < 1e-12


def test_flag_functions_leave_inputs_alone() -> None:
    z = np.linspace(0, 600, 200)
    v = np.full(200, 45.0)
    seg = np.zeros(200, dtype=np.int64)
    copies = z.copy(), v.copy()
    assert fl.climbing_flight(z, v, seg, 1.0, CFG)  # 3 m/s up at 45 m/s for 200 s
    assert not fl.climbing_flight(z * 0.1, v, seg, 1.0, CFG)  # 0.3 m/s: a road climb
    assert not fl.is_walking(v, np.zeros(200, dtype=bool), 1.0, CFG)
    assert np.array_equal(z, copies[0]) and np.array_equal(v, copies[1])
