"""Real third-party CSV logs (../shared/real_logs, see its SOURCES.md): every road-vehicle CSV ingests,
its row account matches an independent line count, and spot values match the raw file text."""

from __future__ import annotations

import csv
from datetime import UTC, datetime
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema
from fleetfuel.ingest import read_csv_log, read_logs

REAL = Path(__file__).resolve().parents[2].parent / "shared" / "real_logs"
pytestmark = [
    pytest.mark.real_logs,
    pytest.mark.skipif(not REAL.is_dir(), reason="../shared/real_logs not present"),
]

MPH_M_S = 1609.344 / 3600.0  # NIST SP 811 B.8, mile = 1609.344 m exactly
FOOT_M = 0.3048  # NIST SP 811 B.8, exact


def _text_logs() -> list[Path]:
    if not REAL.is_dir():
        return []
    return sorted([*REAL.glob("*/*.csv"), *REAL.glob("*/GPSData*.txt")])


def _data_lines(path: Path) -> int:
    """Independent count: non-blank lines, less the header, '#' comment lines and '$V' drive separators."""
    lines = [ln for ln in path.read_bytes().decode("utf-8", errors="replace").splitlines() if ln.strip()]
    comments = sum(ln.lstrip().startswith(("#", "$V")) for ln in lines)
    headerless = path.name.startswith("GPSData")
    return len(lines) - comments - (0 if headerless else 1)


@pytest.mark.parametrize("path", _text_logs(), ids=lambda p: p.name)
def test_every_text_log_ingests_with_full_row_account(path: Path) -> None:
    log = read_csv_log(path)
    assert log.rows_in == _data_lines(path)
    assert log.rows_in == len(log.samples) + len(log.dropped)
    assert set(log.dropped["reason"]) <= set(schema.DROP_REASONS)
    rows = np.sort(
        np.concatenate([log.samples[schema.SOURCE_ROW].to_numpy(), log.dropped["source_row"].to_numpy()])
    )
    np.testing.assert_array_equal(rows, np.arange(log.rows_in))
    assert len(log.samples) > 0.9 * log.rows_in


def test_folder_batch_refuses_json_and_reads_the_rest() -> None:
    batch = read_logs([REAL])
    refused = {f.path.name: f.error for f in batch.failures}
    assert set(refused) == {p.name for p in REAL.glob("*/*.json")}
    assert all("JSON" in msg and "\n" not in msg for msg in refused.values())
    assert [str(f.path) for f in batch.files] == sorted(str(f.path) for f in batch.files)


def _raw_rows(path: Path, delimiter: str) -> list[dict[str, str]]:
    with path.open(encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle, delimiter=delimiter))


def test_naturalistic_first_rows_against_raw_text() -> None:
    # ndsbr naturalistic driving sample, driver A: semicolon, decimal comma, mph, altitude feet x 1000
    path = REAL / "ndsbr" / "driver_A.csv"
    raw = _raw_rows(path, ";")[:3]
    log = read_csv_log(path)
    assert log.profile == "semicolon_mph_naturalistic"
    for i, row in enumerate(raw):
        got = log.samples.iloc[i]
        assert got[schema.LAT_DEG] == float(row["LAT"].replace(",", "."))
        assert got[schema.LON_DEG] == float(row["LONG"].replace(",", "."))
        assert got[schema.SPEED_M_S] == pytest.approx(
            float(row["SPD_MPH"].replace(",", ".")) * MPH_M_S, rel=1e-12
        )
        assert got[schema.ELEVATION_M] == pytest.approx(float(row["ALTITUDE_FT"]) / 1000 * FOOT_M, rel=1e-12)
        assert got[schema.VEHICLE_ID] == row["DRIVER"]
        # the column named 03:00:00 is UTC; PR is local time in Curitiba (IANA America/Sao_Paulo, UTC-3 in 2019)
        day = datetime.strptime(row["DAY"], "%d/%m/%Y")
        local = datetime.strptime(row["PR"], "%H:%M:%S").replace(year=day.year, month=day.month, day=day.day)
        expected = local.replace(tzinfo=ZoneInfo("America/Sao_Paulo")).astimezone(UTC)
        assert got[schema.TIME_UTC].to_pydatetime() == expected
    assert raw[2]["SPD_MPH"] == "0,1"
    assert log.samples[schema.SPEED_M_S].iloc[2] == pytest.approx(
        0.1 * 0.44704
    )  # NIST SP 811: 1 mph = 0.44704 m/s


def test_naturalistic_trip_without_altitude_keeps_positions() -> None:
    # SOURCES.md: driver B trip 13 has empty ALTITUDE_FT but filled lat/lon and speed
    path = REAL / "ndsbr" / "driver_B.csv"
    raw = _raw_rows(path, ";")
    empty_alt = [i for i, r in enumerate(raw) if r["ALTITUDE_FT"] in ("", "NPI")]
    log = read_csv_log(path)
    assert len(empty_alt) >= 3000
    assert log.samples.set_index(schema.SOURCE_ROW).loc[empty_alt, schema.ELEVATION_M].isna().all()
    assert len(log.dropped) == 0


def test_ev_logger_corrupted_dates_dropped() -> None:
    # RSK EV dataset T1: 34 rows with corrupted dates (day 0, wrong year) among MM/DD/YYYY dates
    path = REAL / "rsk_ev" / "T1_06_30_2021_1.csv"
    raw = _raw_rows(path, ",")

    def bad(text: str) -> bool:
        try:
            datetime.strptime(text, "%m/%d/%Y")
        except ValueError:
            return True
        return False

    expected = [i for i, r in enumerate(raw) if bad(r["Date"])]
    log = read_csv_log(path)
    assert len(expected) == 34
    assert log.dropped["source_row"].tolist() == expected
    assert set(log.dropped["reason"]) == {schema.DROP_TIME_UNPARSEABLE}
    assert log.samples[schema.SOC].iloc[0] == pytest.approx(float(raw[0]["Soc"]) / 100)
    assert log.samples[schema.SPEED_M_S].max() == pytest.approx(
        max(float(r["Speed"]) for i, r in enumerate(raw) if i not in set(expected)) / 3.6
    )


def test_obd_app_export_date_from_name_and_speed() -> None:
    # KIT OBD-II dataset: time of day only, date in the file name, speed column [km/h]
    for path in sorted((REAL / "kit_obd2").glob("*.csv")):
        raw = _raw_rows(path, ",")
        key = next(k for k in raw[0] if k.startswith("Vehicle Speed Sensor"))
        no_speed = [i for i, r in enumerate(raw) if r[key] == ""]
        log = read_csv_log(path)
        assert log.dropped["source_row"].tolist() == no_speed
        first = raw[no_speed[-1] + 1]
        date = path.name[:10]
        expected = pd.Timestamp(f"{date}T{first['Time']}Z")
        assert log.samples[schema.TIME_UTC].iloc[0] == expected
        assert log.samples[schema.SPEED_M_S].max() == pytest.approx(
            max(float(r[key]) for r in raw if r[key]) / 3.6
        )
        assert log.samples[schema.TIME_UTC].is_monotonic_increasing


def test_dashcam_log_junk_records_and_cm_per_s() -> None:
    # gpsbabel dash-camera reference log: Unix time, speed in cm/s, two junk records with time 0
    path = REAL / "gpsbabel" / "GPSData000001-A810-Doriel.txt"
    records = [ln.split(",") for ln in path.read_text().splitlines() if ln and not ln.startswith("$V")]
    log = read_csv_log(path)
    junk = [i for i, r in enumerate(records) if r[0] == "0"]
    assert len(junk) == 2
    assert log.dropped.set_index("source_row")["reason"].to_dict() == {
        i: schema.DROP_TIME_IMPLAUSIBLE for i in junk
    }
    assert log.samples[schema.SPEED_M_S].iloc[0] == pytest.approx(int(records[0][5]) / 100)
    assert log.samples[schema.TIME_UTC].iloc[0] == pd.Timestamp(
        datetime.fromtimestamp(int(records[0][0]), tz=UTC)
    )


def test_aircraft_log_read_and_flagged() -> None:
    # gpsbabel avionics reference log: knots and feet; flagged so the clean stage can refuse it
    path = REAL / "gpsbabel" / "aircraft_avionics_log.csv"
    log = read_csv_log(path)
    assert "not_road_vehicle_aircraft" in log.flags
    lines = [ln for ln in path.read_text().splitlines() if ln.strip() and not ln.startswith("#")]
    header = [h.strip() for h in lines[0].split(",")]
    first = dict(zip(header, (v.strip() for v in lines[1].split(",")), strict=True))
    assert log.samples[schema.SPEED_M_S].iloc[0] == pytest.approx(float(first["GndSpd"]) * 1852 / 3600)
    assert log.samples[schema.ELEVATION_M].iloc[0] == pytest.approx(float(first["AltMSL"]) * FOOT_M)
    assert log.samples[schema.FUEL_RATE_L_H].iloc[0] == pytest.approx(float(first["E1 FFlow"]) * 3.785411784)


def test_units_in_cells_logger_against_raw() -> None:
    path = REAL / "gpsbabel" / "mtk_logger_m241.csv"
    raw = _raw_rows(path, ",")
    log = read_csv_log(path)
    heights = [float(r["HEIGHT"].split()[0]) for r in raw]
    np.testing.assert_allclose(log.samples[schema.ELEVATION_M], heights)
    assert log.samples[schema.LAT_DEG].iloc[0] == float(raw[0]["LATITUDE"])  # hemisphere N
