"""Time parsing: ISO 8601 with and without offsets, epoch s/ms, local times across DST changes.

Reference for every expected instant: Python's ``datetime`` and the IANA tz database through
``zoneinfo`` (independent of pyarrow and pandas, which the readers use).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema
from fleetfuel.ingest import IngestConfig, read_csv_log

BERLIN = ZoneInfo("Europe/Berlin")


def _csv(tmp_path: Path, times: list[str], name: str = "log.csv") -> Path:
    path = tmp_path / name
    lines = ["time,speed [km/h]"] + [f"{t},36" for t in times]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _utc(log) -> list[datetime]:
    return [t.to_pydatetime() for t in log.samples[schema.TIME_UTC]]


@pytest.mark.parametrize(
    "text",
    [
        "2024-06-01T12:00:00+02:00",
        "2024-06-01T12:00:00+0200",
        "2024-06-01 12:00:00+0200",
        "2024-06-01 12:00:00 +02:00",
        "2024-06-01T10:00:00Z",
        "2024-06-01T10:00:00.000Z",
        "2024-06-01T07:00:00-03:00",
    ],
)
def test_iso_with_offset(tmp_path: Path, text: str) -> None:
    # ISO 8601-1:2019 offsets; reference: datetime(2024, 6, 1, 10, tzinfo=UTC)
    log = read_csv_log(_csv(tmp_path, [text]))
    assert _utc(log) == [datetime(2024, 6, 1, 10, 0, tzinfo=UTC)]


def test_iso_mixed_offsets_and_fractions_in_one_column(tmp_path: Path) -> None:
    texts = [
        "2024-06-01T12:00:00.250+0200",
        "2024-06-01T10:00:01Z",
        "2024-06-01 12:00:02+02:00",
        "2024-06-01T12:00:03",
    ]
    log = read_csv_log(_csv(tmp_path, texts), IngestConfig(timezone="Europe/Berlin"))
    expected = [datetime.fromisoformat(t.replace(" ", "T")) for t in texts[:3]]
    expected.append(datetime(2024, 6, 1, 12, 0, 3, tzinfo=BERLIN))  # naive: the configured zone (CEST)
    assert _utc(log) == [e.astimezone(UTC) for e in expected]


def test_naive_iso_uses_configured_zone(tmp_path: Path) -> None:
    log = read_csv_log(_csv(tmp_path, ["2024-01-15T08:30:00"]), IngestConfig(timezone="America/New_York"))
    assert _utc(log) == [datetime(2024, 1, 15, 8, 30, tzinfo=ZoneInfo("America/New_York")).astimezone(UTC)]


def test_unparseable_and_missing_times_are_accounted(tmp_path: Path) -> None:
    log = read_csv_log(_csv(tmp_path, ["2024-06-01T10:00:00Z", "yesterday", "", "2024-13-45T99:00:00Z"]))
    assert log.rows_in == 4 and len(log.samples) == 1
    assert dict(zip(log.dropped["source_row"], log.dropped["reason"], strict=True)) == {
        1: schema.DROP_TIME_UNPARSEABLE,
        2: schema.DROP_TIME_MISSING,
        3: schema.DROP_TIME_UNPARSEABLE,
    }


@pytest.mark.parametrize(("unit", "scale"), [("epoch_s", 1), ("epoch_ms", 1000)])
def test_epoch(tmp_path: Path, unit: str, scale: int) -> None:
    profile = tmp_path / "ep.toml"
    profile.write_text(
        f'[time]\nkind = "{unit}"\ncolumns = [["t"]]\n[columns]\nspeed_m_s = {{ names = ["v"], unit = "m/s" }}\n'
    )
    path = tmp_path / "e.csv"
    path.write_text(f"t,v\n{1740170756 * scale},1\n{1740170757 * scale + (scale // 2)},2\n")
    log = read_csv_log(path, IngestConfig(profile=str(profile)))
    # reference: datetime.fromtimestamp (POSIX time, UTC)
    first = datetime.fromtimestamp(1740170756, tz=UTC)
    second = first + timedelta(seconds=1, milliseconds=500 if scale == 1000 else 0)
    assert _utc(log) == [first, second]


def _wall_clock(instants: pd.DatetimeIndex, zone: ZoneInfo) -> list[str]:
    """What a logger in local time writes: the wall-clock time of each instant (zoneinfo)."""
    return [t.to_pydatetime().astimezone(zone).strftime("%Y-%m-%d %H:%M:%S") for t in instants]


def test_dst_fall_back_hour_survives_at_1_hz(tmp_path: Path) -> None:
    # Europe/Berlin left CEST at 2023-10-29 01:00 UTC: wall clock 03:00 CEST -> 02:00 CET (IANA tzdata),
    # so 02:00:00-02:59:59 is written twice. Every instant must come back, none merged.
    instants = pd.date_range("2023-10-28T23:30:00Z", "2023-10-29T01:30:00Z", freq="1s")
    log = read_csv_log(_csv(tmp_path, _wall_clock(instants, BERLIN)), IngestConfig(timezone="Europe/Berlin"))
    assert log.rows_in == len(instants) == len(log.samples)
    np.testing.assert_array_equal(log.samples[schema.TIME_UTC].to_numpy(), instants.to_numpy())
    assert log.samples[schema.TIME_UTC].is_unique


def test_dst_fall_back_sparse_samples(tmp_path: Path) -> None:
    # Every 20 min across the repeated hour: 01:40, 02:00, 02:20, 02:40 (CEST), 02:00, 02:20, 02:40 (CET), 03:00
    instants = pd.date_range("2023-10-28T23:40:00Z", "2023-10-29T02:00:00Z", freq="20min")
    walls = _wall_clock(instants, BERLIN)
    assert walls.count("2023-10-29 02:20:00") == 2
    log = read_csv_log(_csv(tmp_path, walls), IngestConfig(timezone="Europe/Berlin"))
    np.testing.assert_array_equal(log.samples[schema.TIME_UTC].to_numpy(), instants.to_numpy())


def test_dst_fall_back_two_vehicles_interleaved(tmp_path: Path) -> None:
    # rows of two vehicles interleaved; each vehicle's own row order tells the two passes apart
    instants = pd.date_range("2023-10-29T00:50:00Z", "2023-10-29T01:10:00Z", freq="5min")
    walls = _wall_clock(instants, BERLIN)
    lines = ["vehicle,time,speed [km/h]"] + [f"{v},{w},10" for w in walls for v in ("a", "b")]
    path = tmp_path / "two.csv"
    path.write_text("\n".join(lines) + "\n")
    profile = tmp_path / "veh.toml"
    profile.write_text(
        '[time]\nkind = "iso"\ncolumns = [["time"]]\n[vehicle]\nsource = "column"\n'
        'column = "vehicle"\n[columns]\nspeed_m_s = { names = ["speed"], unit = "km/h" }\n'
    )
    log = read_csv_log(path, IngestConfig(profile=str(profile), timezone="Europe/Berlin"))
    for vehicle in ("a", "b"):
        got = log.samples.loc[log.samples[schema.VEHICLE_ID] == vehicle, schema.TIME_UTC].to_numpy()
        np.testing.assert_array_equal(got, instants.to_numpy())


def test_dst_spring_forward(tmp_path: Path) -> None:
    # Europe/Berlin entered CEST at 2024-03-31 01:00 UTC: wall clock 02:00 CET -> 03:00 CEST (IANA tzdata);
    # 02:30 local does not exist on that day and is dropped, the times around the gap convert exactly.
    instants = pd.date_range("2024-03-31T00:30:00Z", "2024-03-31T01:30:00Z", freq="1min")
    walls = _wall_clock(instants, BERLIN)
    assert "2024-03-31 01:59:00" in walls and "2024-03-31 03:00:00" in walls
    log = read_csv_log(
        _csv(tmp_path, [*walls, "2024-03-31 02:30:00"]), IngestConfig(timezone="Europe/Berlin")
    )
    np.testing.assert_array_equal(log.samples[schema.TIME_UTC].to_numpy(), instants.to_numpy())
    assert log.dropped["reason"].tolist() == [schema.DROP_TIME_IMPLAUSIBLE]
    assert log.dropped["source_row"].tolist() == [len(walls)]


def test_time_of_day_date_from_file_name_rolls_over_midnight(tmp_path: Path) -> None:
    path = tmp_path / "2018-03-21_route_normal.csv"
    path.write_text("Time,Vehicle Speed Sensor [km/h]\n23:59:59.500,10\n00:00:00.400,11\n")
    log = read_csv_log(path)
    assert log.profile == "obd_app_export"
    assert _utc(log) == [
        datetime(2018, 3, 21, 23, 59, 59, 500000, tzinfo=UTC),
        datetime(2018, 3, 22, 0, 0, 0, 400000, tzinfo=UTC),
    ]


def test_implausible_years_dropped(tmp_path: Path) -> None:
    log = read_csv_log(
        _csv(tmp_path, ["1970-01-01T00:00:00Z", "2024-01-01T00:00:00Z", "2206-01-01T00:00:00Z"])
    )
    assert log.dropped.set_index("source_row")["reason"].to_dict() == {
        0: schema.DROP_TIME_IMPLAUSIBLE,
        2: schema.DROP_TIME_IMPLAUSIBLE,
    }
