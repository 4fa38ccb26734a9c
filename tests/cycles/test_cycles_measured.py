"""Measured driving (at the cycle step) versus splice pieces (at rest at both ends): a run cut
while moving counts in the type's SAFD and in the fuel check, and gives pieces that join at
splice levels, never a piece that starts or ends moving where it should be at rest."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from cycle_frames import frame, join

from fleetfuel import schema, segment
from fleetfuel.cycles import CyclesConfig, fuel_check, microtrip_consumption
from fleetfuel.cycles.pieces import (
    REST,
    build_pool,
    eligible_microtrips,
    measured_microtrips,
    pool_microtrips,
    safd_types,
    type_safd_counts,
)
from fleetfuel.segment.config import SegmentConfig

# Known truth by construction (our fixtures): vehicle A's log starts at 20 m/s on a cruise with a
# gentle 0.5 m/s wave (cut while moving, e.g. at a gap), brakes at 1 m/s^2 to rest; an hour later
# A drives a stop-to-stop run; vehicle B logs every 30 s, where acceleration is not observable
# (fleetfuel.segment.features: NaN beyond 2 * max_accel_step_s).
RAMP = np.arange(0.0, 20.0, 1.0)
CUT_WHILE_MOVING = np.r_[20.0 + 0.5 * np.sin(np.arange(900) / 30.0), RAMP[::-1], np.zeros(20)]
AT_REST = np.r_[np.zeros(20), RAMP, np.full(200, 20.0), RAMP[::-1], np.zeros(20)]
LOW_RATE = np.r_[np.zeros(3), np.full(20, 15.0), np.zeros(3)]


@pytest.fixture(scope="module")
def fleet() -> tuple[pd.DataFrame, pd.DataFrame, float]:
    raw = join(
        frame(CUT_WHILE_MOVING, vehicle="A"),
        frame(AT_REST, vehicle="A", start="2024-03-04T09:00:00Z"),
        frame(LOW_RATE, vehicle="B", step_s=30.0),
    )
    samples = segment.split_microtrips(raw)
    table = segment.microtrip_features(samples).sort_values(schema.MICROTRIP_ID).reset_index(drop=True)
    measured, step = measured_microtrips(table)
    eligible, _ = eligible_microtrips(table)
    table["type"] = pd.array(["T1"] * len(table), dtype="string")
    table["measured"] = measured.to_numpy()
    table["eligible"] = eligible.to_numpy()
    return samples, table, step


def test_a_run_cut_while_moving_is_measured_but_not_eligible(fleet) -> None:
    samples, table, step = fleet
    assert table[schema.VEHICLE_ID].tolist() == ["A", "A", "B"]
    assert table["measured"].tolist() == [True, True, False]
    assert table["eligible"].tolist() == [False, True, False]
    assert step == 1.0  # 1 s covers the most driving time
    first_speed = samples.loc[samples[schema.MICROTRIP_ID] == table[schema.MICROTRIP_ID].iloc[0], schema.SPEED_M_S]
    assert first_speed.iloc[0] > 19.0  # it does start moving


def test_pool_keeps_the_windows_and_tail_of_a_run_cut_while_moving(fleet) -> None:
    samples, table, step = fleet
    cfg = CyclesConfig(target_duration_s=600.0)  # runs over 300 s are cut into windows
    type_safd = type_safd_counts(samples, safd_types(table), cfg, SegmentConfig())
    pool = build_pool(samples, table.loc[pool_microtrips(table, cfg)], step, type_safd, cfg, SegmentConfig())
    pieces = pool.table
    cut = pieces.loc[pieces[schema.MICROTRIP_ID] == table[schema.MICROTRIP_ID].iloc[0]]
    assert "head" not in set(cut["kind"])  # its head would start moving
    assert (cut["kind"] == "window").sum() >= 2 and cut["kind"].iloc[-1] == "tail"
    # The kept pieces are contiguous and reach the micro-trip's last row.
    np.testing.assert_array_equal(cut["first_row"].to_numpy()[1:], cut["last_row"].to_numpy()[:-1] + 1)
    mt_rows = np.flatnonzero((samples[schema.MICROTRIP_ID] == table[schema.MICROTRIP_ID].iloc[0]).to_numpy(bool, na_value=False))
    assert cut["last_row"].iloc[-1] == mt_rows[-1] and cut["first_row"].iloc[0] > mt_rows[0]
    # No piece starts or ends moving where it should be at rest.
    v = samples[schema.SPEED_M_S].to_numpy(float)
    stop = SegmentConfig().stop_speed_m_s
    assert (v[pieces.loc[pieces["entry_level"] == REST, "first_row"]] < stop).all()
    assert (v[pieces.loc[pieces["exit_level"] == REST, "last_row"]] < stop).all()
    assert pool.sums.shape[0] == pool.safd.shape[0] == len(pieces)
    # The type's SAFD holds all its measured time, the run cut while moving included (the row
    # weights of fleetfuel.segment.kinematics add up to each micro-trip's duration).
    measured_s = table.loc[table["measured"], "duration_s"].sum()
    assert pool.type_safd["T1"].sum() == pytest.approx(measured_s, rel=1e-12)
    assert measured_s > table.loc[table["eligible"], "duration_s"].sum() + 900


def test_fuel_check_counts_measured_driving_by_hand() -> None:
    # Hand calculation: T1 at 0.1 L/km on the cycle. Measured: 1 km used 0.10 L, 2 km (cut while
    # moving) used 0.18 L; the low-rate 5 km is left out. On cycles 0.3 L against 0.28 L: +1/14.
    mts = pd.DataFrame({
        schema.MICROTRIP_ID: ["a", "b", "c"],
        "type": pd.array(["T1"] * 3, dtype="string"),
        "distance_m": [1000.0, 2000.0, 5000.0],
        "route": ["R1", "R1", "R1"],
        "measured": [True, True, False],
        "eligible": [True, False, False],
    })
    consumption = pd.Series({"a": 0.10, "b": 0.18})
    rates = pd.DataFrame({"distance_km": [5.0], "consumption": [0.5], "per_m": [1e-4]}, index=pd.Index(["T1"], name="type"))
    check = fuel_check(SimpleNamespace(microtrips=mts), consumption, rates, CyclesConfig()).set_index(["scope", "key"])
    fleet = check.loc[("fleet", "fleet")]
    assert fleet["microtrips"] == 2 and fleet["distance_km"] == pytest.approx(3.0)
    assert fleet["on_logs"] == pytest.approx(0.28) and fleet["on_cycles"] == pytest.approx(0.3)
    assert fleet["relative_error"] == pytest.approx(1 / 14)
    assert check.loc[("route", "R1"), "relative_error"] == pytest.approx(1 / 14)


def test_consumption_is_simulated_for_every_measured_microtrip(fleet) -> None:
    samples, table, _ = fleet

    def time_weight(time_s: np.ndarray, speed_m_s: np.ndarray, grade: np.ndarray) -> np.ndarray:
        # A "model" that uses one unit per second: each row's time weight (t[i+1] - t[i-1]) / 2,
        # half a step at a trip's ends (the discretisation of fleetfuel.segment.kinematics).
        return np.gradient(time_s) * np.r_[0.5, np.ones(time_s.size - 2), 0.5]

    used = microtrip_consumption(samples, table, time_weight)
    ids = table.loc[table["measured"], schema.MICROTRIP_ID].astype(str)
    assert list(used.index) == sorted(ids)
    durations = table.set_index(schema.MICROTRIP_ID)["duration_s"]
    np.testing.assert_allclose(used.to_numpy(), durations.reindex(used.index).to_numpy(), rtol=1e-12)
