"""Injected defects: the report matches what is in the frame."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic

from fleetfuel import schema, synth
from fleetfuel.synth import duties


@pytest.fixture(scope="module")
def clean() -> tuple[pd.DataFrame, pd.DataFrame]:
    rng = np.random.default_rng(2)
    route = duties.parcel_round(rng, "south-east", 40)
    drives = [synth.drive(route, "van", seed=s, vehicle_id=f"V{s}") for s in (1, 2)]
    frame = pd.concat([d.frame for d in drives], ignore_index=True)
    truth = pd.concat([d.truth for d in drives], ignore_index=True)
    return frame, truth


SPEC = synth.DefectSpec.typical(speed_spike_share=0.003, position_spike_share=0.003, gaps_per_day=12.0,
                                unit_mixup_vehicles=("V2",), duplicate_share=0.004, duplicate_time_share=0.003)


def test_same_seed_same_bytes_and_input_untouched(clean: tuple[pd.DataFrame, pd.DataFrame]) -> None:
    frame, _ = clean
    before = frame.copy()
    a, ia = synth.add_defects(frame, SPEC, seed=3)
    b, ib = synth.add_defects(frame, SPEC, seed=3)
    pd.testing.assert_frame_equal(a, b)
    assert np.array_equal(ia.source_index, ib.source_index)
    pd.testing.assert_frame_equal(frame, before)
    c, _ = synth.add_defects(frame, SPEC, seed=4)
    assert not a.equals(c)


def test_report_matches_frame(clean: tuple[pd.DataFrame, pd.DataFrame]) -> None:
    frame, truth = clean
    out, inj = synth.add_defects(frame, SPEC, seed=3)
    aligned = truth.iloc[inj.source_index].reset_index(drop=True)
    assert len(inj.source_index) == len(out)
    assert np.array_equal(out[schema.VEHICLE_ID].to_numpy(), frame[schema.VEHICLE_ID].to_numpy()[inj.source_index])
    # speed spikes: at least the smallest spike above the truth (noise is 0.1 m/s)
    assert len(inj.speed_spike_rows) > 0
    excess = out.speed_m_s.to_numpy()[inj.speed_spike_rows] - aligned.speed_m_s.to_numpy()[inj.speed_spike_rows]
    mixed = np.zeros(len(out), dtype=bool)
    for _, m in inj.unit_mixup.iterrows():
        mixed[m.first_row:m.last_row + 1] = True
    assert np.all(excess[~mixed[inj.speed_spike_rows]] >= SPEC.speed_spike_m_s[0] - 0.5)
    # position spikes: the fix is at least the smallest jump away from the true position
    rows = inj.position_spike_rows
    assert len(rows) > 0
    jump = [Geodesic.WGS84.Inverse(out.lat_deg[r], out.lon_deg[r], aligned.lat_deg[r], aligned.lon_deg[r])["s12"] for r in rows]
    assert min(jump) >= SPEC.position_jump_m[0] - 20  # minus the position noise (2.5 m sigma)
    # elsewhere, fixes stay within metres of the truth (outside drift)
    drift = np.zeros(len(out), dtype=bool)
    for _, d in inj.drift.iterrows():
        drift[d.first_row:d.last_row + 1] = True
    assert len(inj.drift) > 0
    # exact duplicates equal the row before; repeated stamps share the previous row's time
    dup = inj.duplicate_rows
    assert len(dup) > 0
    pd.testing.assert_frame_equal(out.iloc[dup].reset_index(drop=True), out.iloc[dup - 1].reset_index(drop=True))
    same = inj.duplicate_time_rows
    assert len(same) > 0
    assert np.array_equal(out.time_utc.to_numpy()[same], out.time_utc.to_numpy()[same - 1])
    assert not out.iloc[same].reset_index(drop=True).equals(out.iloc[same - 1].reset_index(drop=True))
    # no other repeated time stamps
    ids = out[schema.VEHICLE_ID].to_numpy()
    repeat = np.flatnonzero((np.diff(pd.DatetimeIndex(out.time_utc).asi8) == 0) & (ids[1:] == ids[:-1])) + 1
    assert np.array_equal(np.sort(repeat), np.sort(np.r_[dup, same]))
    # parked drift: the truth stands still, the report speed moves a little
    assert np.all(aligned.speed_m_s[drift] == 0)
    assert out.speed_m_s[drift].mean() > 0.1
    # gaps: the time jump before next_row covers the removed rows
    assert len(inj.gaps) > 0
    t = pd.DatetimeIndex(out.time_utc).asi8 / 1e9
    for _, g in inj.gaps.iterrows():
        if g.next_row > 0 and ids[g.next_row] == ids[g.next_row - 1]:
            assert t[g.next_row] - t[g.next_row - 1] >= (g.end_utc - g.start_utc).total_seconds()
    # altitude: dropouts are NaN, the rest whole metres with a few metres of correlated error
    elev = out.elevation_m.to_numpy()
    assert np.all(np.isnan(elev[inj.altitude_dropout_rows]))
    assert np.count_nonzero(np.isnan(elev)) == len(inj.altitude_dropout_rows)
    ok = ~np.isnan(elev)
    assert np.all(elev[ok] == np.round(elev[ok]))
    err = inj.elevation_error_m[ok]
    assert np.allclose(err, elev[ok] - aligned.elevation_m.to_numpy()[ok])
    assert 2.0 < np.std(err) < 7.0  # 4 m sigma over a few correlation times, plus 1 m quantisation
    # unit mix-up: one block of V2, speeds times the factor (speed noise aside)
    assert list(inj.unit_mixup.vehicle_id) == ["V2"]
    m = inj.unit_mixup.iloc[0]
    block = slice(int(m.first_row), int(m.last_row) + 1)
    moving = (aligned.speed_m_s[block] > 3) & ~drift[block]
    ratio = out.speed_m_s[block][moving] / aligned.speed_m_s[block][moving]
    assert np.median(ratio) == pytest.approx(SPEC.unit_mixup_factor, rel=0.01)


def test_no_defects_by_default(clean: tuple[pd.DataFrame, pd.DataFrame]) -> None:
    frame, _ = clean
    out, inj = synth.add_defects(frame, synth.DefectSpec(), seed=1)
    pd.testing.assert_frame_equal(out, frame)
    assert np.array_equal(inj.source_index, np.arange(len(frame)))
    assert inj.gaps.empty and inj.drift.empty and len(inj.speed_spike_rows) == 0


def test_vehicle_defects_do_not_depend_on_other_vehicles(clean: tuple[pd.DataFrame, pd.DataFrame]) -> None:
    frame, _ = clean
    both, _ = synth.add_defects(frame, SPEC, seed=5)
    alone, _ = synth.add_defects(frame[frame[schema.VEHICLE_ID] == "V2"], SPEC, seed=5)
    pd.testing.assert_frame_equal(both[both[schema.VEHICLE_ID] == "V2"].reset_index(drop=True), alone)
