"""Parquet reader (canonical columns, profile-mapped columns, only needed columns) and path dispatch."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from fleetfuel import schema
from fleetfuel.ingest import IngestConfig, expand_paths, read_log, read_logs, read_parquet_log
from fleetfuel.ingest.dispatch import sniff_format

T0 = pd.Timestamp("2024-05-02T08:00:00Z")


def _canonical_table(n: int = 5, with_vehicle: bool = True) -> pa.Table:
    columns = {
        "time_utc": pa.array(pd.date_range(T0, periods=n, freq="1s")),
        "speed_m_s": np.arange(n, dtype=float),
        "lat_deg": np.full(n, 50.0),
        "lon_deg": np.full(n, 8.0),
        "unused_wide_column": [f"x{i}" for i in range(n)],
    }
    if with_vehicle:
        columns = {"vehicle_id": ["v1"] * (n - 1) + ["v2"], **columns}
    return pa.table(columns)


def test_canonical_parquet(tmp_path: Path) -> None:
    path = tmp_path / "fleet.parquet"
    pq.write_table(_canonical_table(), path, row_group_size=2)
    log = read_parquet_log(path)
    assert log.profile == "canonical_csv"
    assert log.rows_in == 5 == len(log.samples)
    assert log.samples[schema.VEHICLE_ID].tolist() == ["v1"] * 4 + ["v2"]
    assert log.samples[schema.TIME_UTC].iloc[4] == T0 + pd.Timedelta(seconds=4)
    assert log.samples[schema.SPEED_M_S].tolist() == [0.0, 1.0, 2.0, 3.0, 4.0]
    assert list(log.samples.columns) == list(schema.RAW_COLUMNS)


def test_canonical_parquet_without_vehicle_uses_file_stem(tmp_path: Path) -> None:
    path = tmp_path / "van_3.parquet"
    pq.write_table(_canonical_table(with_vehicle=False), path)
    assert read_log(path).samples[schema.VEHICLE_ID].unique().tolist() == ["van_3"]


def test_naive_parquet_timestamps_are_utc_by_canonical_name(tmp_path: Path) -> None:
    path = tmp_path / "naive.parquet"
    table = _canonical_table().set_column(
        1, "time_utc", pa.array(pd.date_range("2024-05-02 08:00", periods=5, freq="1s"))
    )
    pq.write_table(table, path)
    assert read_parquet_log(path).samples[schema.TIME_UTC].iloc[0] == T0


def test_profile_mapped_parquet_reads_only_needed_columns(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = tmp_path / "export.parquet"
    n = 4
    pq.write_table(
        pa.table(
            {
                "Time": [f"2024-05-02T08:00:0{i}+02:00" for i in range(n)],
                "Speed [mph]": [10.0, 20.0, 30.0, 40.0],
                "Latitude": np.full(n, 50.0),
                "Longitude": np.full(n, 8.0),
                "Notes": ["a"] * n,
            }
        ),
        path,
    )
    seen: list[list[str]] = []
    original = pq.ParquetFile.iter_batches

    def spy(self, *args, **kwargs):
        seen.append(list(kwargs.get("columns") or []))
        return original(self, *args, **kwargs)

    monkeypatch.setattr(pq.ParquetFile, "iter_batches", spy)
    log = read_parquet_log(path)
    assert log.profile == "generic_units_in_header"
    assert sorted(seen[0]) == ["Latitude", "Longitude", "Speed [mph]", "Time"]
    # NIST SP 811: 1 mph = 0.44704 m/s; +02:00 offset -> 06:00 UTC
    assert log.samples[schema.SPEED_M_S].tolist() == pytest.approx([4.4704, 8.9408, 13.4112, 17.8816])
    assert log.samples[schema.TIME_UTC].iloc[0] == pd.Timestamp("2024-05-02T06:00:00Z")


def test_parquet_forced_profile(tmp_path: Path) -> None:
    path = tmp_path / "cycle.parquet"
    pq.write_table(pa.table({"time_s": [0.0, 1.0], "speed_kmh": [0.0, 36.0]}), path)
    log = read_parquet_log(path, IngestConfig(profile="cycle_csv"))
    assert log.samples[schema.SPEED_M_S].tolist() == pytest.approx([0.0, 10.0])


def test_parquet_without_matching_columns_fails(tmp_path: Path) -> None:
    path = tmp_path / "other.parquet"
    pq.write_table(pa.table({"a": [1], "b": [2]}), path)
    failure = read_logs([path]).failures[0]
    assert "other.parquet" in failure.error and "'a', 'b'" in failure.error


def test_expand_paths_folders_globs_sorted(tmp_path: Path) -> None:
    (tmp_path / "b").mkdir()
    for name in ("b/2.csv", "a.csv", "b/1.gpx", "notes.md", ".hidden.csv", "c.parquet"):
        (tmp_path / name).write_text("x")
    found = expand_paths([tmp_path, tmp_path / "a.csv", str(tmp_path / "b" / "*.csv")])
    assert [p.relative_to(tmp_path).as_posix() for p in found] == ["a.csv", "b/1.gpx", "b/2.csv", "c.parquet"]
    missing = tmp_path / "nope.csv"
    assert expand_paths([missing]) == [missing]


def test_sniff_by_content_not_name(tmp_path: Path) -> None:
    hidden_parquet = tmp_path / "data.bin"
    pq.write_table(_canonical_table(), hidden_parquet)
    assert sniff_format(hidden_parquet) == "parquet"
    gpx = tmp_path / "track.xml"
    gpx.write_text('<?xml version="1.0"?><gpx version="1.1"></gpx>')
    assert sniff_format(gpx) == "gpx"
    assert read_log(hidden_parquet).rows_in == 5


def test_batch_sorted_and_mixed_formats(tmp_path: Path) -> None:
    pq.write_table(_canonical_table(), tmp_path / "b.parquet")
    (tmp_path / "a.csv").write_text("time_s,speed_m_s\n0,1\n1,2\n")
    (tmp_path / "c.json").write_text("{}")
    batch = read_logs([tmp_path])
    assert [f.path.name for f in batch.files] == ["a.csv", "b.parquet"]
    assert [f.path.name for f in batch.failures] == ["c.json"]
