"""The committed sample fleet: every file reads back, the truth tables match the files."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema
from fleetfuel.ingest import IngestConfig, expand_paths, read_log

SAMPLE = Path(__file__).resolve().parents[2] / "sample_logs"
LIMIT_BYTES = 20_000_000  # the committed sample fleet stays under about 20 MB


def _truth() -> pd.DataFrame:
    path = SAMPLE / "TRUTH.tab"
    if not path.is_file():
        pytest.skip("sample_logs/TRUTH.tab not built (python sample_logs/build_sample_fleet.py)")
    return pd.read_csv(path, sep="\t")


def test_size_and_files() -> None:
    truth = _truth()
    logs = expand_paths([SAMPLE])
    assert sum(p.stat().st_size for p in logs) < LIMIT_BYTES
    assert {str(p.relative_to(SAMPLE)) for p in logs} == set(truth.file)
    assert len(truth.vehicle_id.unique()) == 14
    assert set(truth.layout) == {"depot_tracker_csv", "fleet_portal_csv", "phone_gpx", "bus_parquet", "event_logger_csv"}


@pytest.mark.slow
def test_every_file_reads_with_its_layout_and_rows_add_up() -> None:
    truth = _truth()
    defects = pd.read_csv(SAMPLE / "DEFECTS.tab", sep="\t")
    for rel, group in truth.groupby("file"):
        log = read_log(SAMPLE / rel, IngestConfig())
        expected = "gpx" if group.layout.iloc[0] == "phone_gpx" else group.layout.iloc[0]
        assert log.profile == expected, rel
        assert set(log.samples[schema.VEHICLE_ID]) == set(group.vehicle_id), rel
        # rows in the file = generated - removed by gaps + inserted duplicates
        mine = defects[defects.file == rel]
        removed = sum(int(re.match(r"(\d+) rows removed", d).group(1)) for d in mine[mine.defect == "gap"].detail)
        inserted = int(mine.defect.isin(["duplicate_row", "duplicate_time"]).sum())
        assert log.rows_in == group.rows_generated.sum() - removed + inserted, rel


def test_defect_rows_point_at_the_defects_in_the_tracker_file() -> None:
    _truth()
    defects = pd.read_csv(SAMPLE / "DEFECTS.tab", sep="\t")
    rel = "depot_tracker_week.csv.gz"
    samples = read_log(SAMPLE / rel, IngestConfig()).samples
    mine = defects[defects.file == rel]
    dup = mine[mine.defect == "duplicate_row"].first_row.to_numpy()
    assert len(dup) > 0
    # an exact copy sits right after its original, even in a file sorted by time across vehicles
    cols = [schema.VEHICLE_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.LAT_DEG, schema.LON_DEG]
    pd.testing.assert_frame_equal(samples.iloc[dup][cols].reset_index(drop=True),
                                  samples.iloc[dup - 1][cols].reset_index(drop=True))
    mix = mine[mine.defect == "unit_mixup"]
    assert list(mix.vehicle_id) == ["VAN-03"]
    drift = mine[mine.defect == "parked_drift"].iloc[0]
    rows = samples.iloc[int(drift.first_row): int(drift.last_row) + 1]
    rows = rows[rows[schema.VEHICLE_ID] == drift.vehicle_id]
    assert np.all(rows[schema.SPEED_M_S] < 5.0) and rows[schema.SPEED_M_S].mean() > 0.05
