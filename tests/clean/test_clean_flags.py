"""File flags: walking and aircraft logs (real files), speed unit mix-ups found and undone (synthetic), road cars."""

from __future__ import annotations

import numpy as np
import numpy.typing as npt
import pandas as pd
import pytest
from clean_frames import batch, log_file, real_log, synthetic

from fleetfuel import schema, synth
from fleetfuel.clean import CleanConfig, clean_batch
from fleetfuel.clean import flags as fl
from fleetfuel.clean.mixup import unit_block_divisors
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
    for flag in (fl.FLAG_WALKING, fl.FLAG_AIRCRAFT, fl.FLAG_SPEED_UNIT_SUSPECT, fl.FLAG_SPEED_UNIT_CORRECTED,
                 fl.FLAG_SPEED_POSITION_MISMATCH):
        assert flag not in flags


def _speed_error(truth: synth.DriveTruth, clean: pd.DataFrame) -> npt.NDArray[np.float64]:
    """Clean minus true speed at the clean samples' times (truth interpolated). [m/s]"""
    t_true = (truth.frame[schema.TIME_UTC] - truth.frame[schema.TIME_UTC].iloc[0]).dt.total_seconds().to_numpy()
    t = (clean[schema.TIME_UTC] - truth.frame[schema.TIME_UTC].iloc[0]).dt.total_seconds().to_numpy()
    return clean[schema.SPEED_M_S].to_numpy(dtype=np.float64) - np.interp(t, t_true, truth.frame[schema.SPEED_M_S].to_numpy())


@pytest.mark.parametrize("factor", [1.609344, 3.6, 1 / 1.609344])
def test_whole_log_unit_mixup_corrected(factor: float) -> None:
    # synth unit mix-up over the whole log: km/h values read as mph (x 1.609344, NIST SP 811),
    # as m/s (x 3.6) or mph read as km/h; positions are right, so the ratio reported/derived
    # gives it away and the factor is undone: the clean speed is the true one again
    route = synth.line_route(8_000.0, limit_kmh=50.0, lights_every_m=1_000.0)
    spec = synth.DefectSpec(unit_mixup_vehicles=("SYN-01",), unit_mixup_factor=factor, unit_mixup_share=1.0)
    truth, frame, _ = synthetic(route, "van", seed=1, spec=spec)
    result = clean_batch(batch(log_file(frame)), CFG)
    assert list(result.account["flags"].iloc[0]) == [fl.FLAG_SPEED_UNIT_CORRECTED]
    error = _speed_error(truth, result.samples)
    assert np.median(np.abs(error)) < 0.1  # the generator's speed noise is 0.1 m/s at most
    assert result.samples[schema.DISTANCE_M].max() == pytest.approx(truth.distance_m, rel=0.01)


def test_unit_mixup_block_corrected_only_inside() -> None:
    # a block of 10 % of a 40 km drive with km/h values written as mph (x 1.609344, NIST SP 811):
    # the block is found to within a few samples and undone; the rest of the log is left alone
    route = synth.line_route(40_000.0, limit_kmh=80.0, lights_every_m=4_000.0)
    spec = synth.DefectSpec(unit_mixup_vehicles=("SYN-01",), unit_mixup_factor=1.609344, unit_mixup_share=0.1)
    truth, frame, injected = synthetic(route, "van", seed=3, spec=spec)
    block = injected.unit_mixup.iloc[0]
    result = clean_batch(batch(log_file(frame)), CFG)
    assert fl.FLAG_SPEED_UNIT_CORRECTED in result.account["flags"].iloc[0]
    error = np.abs(_speed_error(truth, result.samples))
    rows = result.samples[schema.SOURCE_ROW].to_numpy()
    inside = (rows >= block.first_row) & (rows <= block.last_row)
    assert inside.sum() > 200
    assert np.median(error[inside]) < 0.1
    assert np.quantile(error, 0.99) < 1.0  # no stretch left x 1.6 (that would be metres per second off)
    assert result.samples[schema.DISTANCE_M].max() == pytest.approx(truth.distance_m, rel=0.01)


def test_weak_unit_factor_flagged_not_corrected() -> None:
    # knots read as mph (x 1.151, NIST SP 811) is within what a poor track can disagree with a good
    # speed signal: the whole-file verdict flags it, nothing is divided
    route = synth.line_route(8_000.0, limit_kmh=50.0, lights_every_m=1_000.0)
    spec = synth.DefectSpec(unit_mixup_vehicles=("SYN-01",), unit_mixup_factor=1852 / 1609.344, unit_mixup_share=1.0)
    _, frame, _ = synthetic(route, "van", seed=1, spec=spec)
    result = clean_batch(batch(log_file(frame)), CFG)
    assert list(result.account["flags"].iloc[0]) == [fl.FLAG_SPEED_UNIT_SUSPECT]


def test_unit_block_edges_by_hand() -> None:
    # arrays with a known block: divisors exactly the factor on [1000, 1500), 1 elsewhere
    rng = np.random.default_rng(1)
    derived = 10 + 5 * np.sin(np.arange(5_000) / 200) + rng.normal(0, 0.3, 5_000)
    reported = derived + rng.normal(0, 0.1, 5_000)
    reported[1_000:1_500] *= 1.609344
    divisor = unit_block_divisors(reported, derived, CFG)
    assert np.flatnonzero(divisor != 1).tolist() == list(range(1_000, 1_500))
    assert divisor[1_200] == pytest.approx(1.609344, rel=1e-12)
    short = derived.copy()
    short[1_000:1_040] *= 1.609344  # 40 samples: shorter than a verdict's minute
    assert (unit_block_divisors(short, derived, CFG) == 1).all()
    assert (unit_block_divisors(derived, np.full(5_000, np.nan), CFG) == 1).all()  # no positions, no change


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
