"""CSV reader: encodings, delimiters, decimal comma, gzip and zip, cell rules, vehicle ids, optional signals."""

from __future__ import annotations

import gzip
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fleetfuel import schema
from fleetfuel.ingest import IngestConfig, read_csv_log, read_log, read_logs
from fleetfuel.ingest.base import empty_raw_frame

ROWS = [("2024-05-02T08:00:00Z", "36.0", "50.1", "8.6"), ("2024-05-02T08:00:01Z", "72.0", "50.2", "8.7")]
# 36 km/h = 10 m/s, 72 km/h = 20 m/s (SI: 1 km/h = 1000/3600 m/s)
EXPECTED_SPEED = [10.0, 20.0]


def _text(delimiter: str = ",", decimal: str = ".") -> str:
    head = delimiter.join(["time", "speed [km/h]", "lat", "lon"])
    body = [delimiter.join(v.replace(".", decimal) for v in row) for row in ROWS]
    return "\n".join([head, *body]) + "\n"


def _check(log, rows: int = 2) -> None:
    assert log.rows_in == rows == len(log.samples) + len(log.dropped)
    assert log.samples[schema.SPEED_M_S].tolist() == pytest.approx(EXPECTED_SPEED)
    assert log.samples[schema.LAT_DEG].tolist() == pytest.approx([50.1, 50.2])


@pytest.mark.parametrize("encoding", ["utf-8", "utf-8-sig", "utf-16", "utf-16-le", "utf-16-be", "cp1252"])
def test_encodings(tmp_path: Path, encoding: str) -> None:
    # utf-16 writes a BOM; utf-16-le/-be have none and are found by the NUL-byte pattern
    path = tmp_path / "log.csv"
    path.write_bytes(_text().replace("time", "time").encode(encoding))
    _check(read_csv_log(path))


def test_cp1252_text_cells(tmp_path: Path) -> None:
    path = tmp_path / "cp.csv"
    path.write_bytes(
        "time,speed [km/h],lat,lon,route\n2024-05-02T08:00:00Z,36,50,8,Straße Süd\n".encode("cp1252")
    )
    profile = tmp_path / "r.toml"
    profile.write_text(
        '[time]\nkind = "iso"\ncolumns = [["time"]]\n[columns]\n'
        'speed_m_s = { names = ["speed"], unit = "header" }\nroute = { names = ["route"] }\n'
    )
    log = read_csv_log(path, IngestConfig(profile=str(profile)))
    assert log.samples[schema.ROUTE].tolist() == ["Straße Süd"]


@pytest.mark.parametrize(
    ("delimiter", "decimal"), [(",", "."), (";", "."), ("\t", "."), (";", ","), ("|", ".")]
)
def test_delimiters_sniffed(tmp_path: Path, delimiter: str, decimal: str) -> None:
    path = tmp_path / "log.csv"
    path.write_text(_text(delimiter, decimal))
    if decimal == ",":
        profile = tmp_path / "comma.toml"
        profile.write_text(
            '[layout]\ndecimal = ","\n[time]\nkind = "iso"\ncolumns = [["time"]]\n[columns]\n'
            'speed_m_s = { names = ["speed"], unit = "header" }\nlat_deg = { names = ["lat"] }\n'
            'lon_deg = { names = ["lon"] }\n'
        )
        _check(read_csv_log(path, IngestConfig(profile=str(profile))))
    else:
        _check(read_csv_log(path))


def test_crlf_and_blank_lines(tmp_path: Path) -> None:
    path = tmp_path / "crlf.csv"
    path.write_bytes(_text().replace("\n", "\r\n\r\n").encode())
    _check(read_csv_log(path))


def test_gzip(tmp_path: Path) -> None:
    path = tmp_path / "log.csv.gz"
    path.write_bytes(gzip.compress(_text().encode()))
    log = read_log(path)
    _check(log)
    assert log.samples[schema.VEHICLE_ID].iloc[0] == "log"  # stem without .csv.gz


def test_zip_members_are_files_of_their_own(tmp_path: Path) -> None:
    path = tmp_path / "export.zip"
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr("b_truck.csv", _text())
        archive.writestr("sub/a_van.csv", _text(";"))
        archive.writestr("readme.md", "not a log")
    batch = read_logs([path])
    assert [str(f.path) for f in batch.files] == [f"{path}!b_truck.csv", f"{path}!sub/a_van.csv"]
    assert not batch.failures
    for log in batch.files:
        _check(log)
    assert sorted(batch.files[i].samples[schema.VEHICLE_ID].iloc[0] for i in range(2)) == ["a_van", "b_truck"]
    assert batch.files[0].samples[schema.SOURCE_FILE].iloc[0] == f"{path}!b_truck.csv"
    single = read_log(Path(f"{path}!sub/a_van.csv"))
    _check(single)


def test_placeholders_become_nan(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text(
        "time,speed [km/h],lat,lon\n2024-05-02T08:00:00Z,nan,50,8\n2024-05-02T08:00:01Z,,50,8\n"
        "2024-05-02T08:00:02Z,N/A,50,8\n2024-05-02T08:00:03Z,fast,50,8\n2024-05-02T08:00:04Z,36,50,8\n"
    )
    log = read_csv_log(path)
    assert log.rows_in == 5 == len(log.samples)
    speed = log.samples[schema.SPEED_M_S].to_numpy()
    assert np.isnan(speed[:4]).all() and speed[4] == pytest.approx(10.0)


def test_row_without_speed_or_position_dropped(tmp_path: Path) -> None:
    path = tmp_path / "n.csv"
    path.write_text(
        "time,speed [km/h],lat,lon\n2024-05-02T08:00:00Z,,,\n2024-05-02T08:00:01Z,,50,\n"
        "2024-05-02T08:00:02Z,,50,8\n"
    )
    log = read_csv_log(path)
    assert log.dropped.set_index("source_row")["reason"].to_dict() == {
        0: schema.DROP_NO_SIGNAL,
        1: schema.DROP_NO_SIGNAL,
    }
    assert log.samples[schema.SOURCE_ROW].tolist() == [2]


def test_truncated_last_row_dropped_malformed(tmp_path: Path) -> None:
    path = tmp_path / "cut.csv"
    path.write_text(_text() + "\n2024-05-02T08:00:02Z,90,50.3,8.8\n2024-05-02T08:00:03Z,9")
    log = read_csv_log(path)
    assert log.rows_in == 4 == len(log.samples) + len(log.dropped)
    assert log.dropped.to_dict("list") == {"source_row": [3], "reason": [schema.DROP_ROW_MALFORMED]}
    assert log.samples[schema.SOURCE_ROW].tolist() == [0, 1, 2]


def test_units_in_cells_and_hemisphere_letters(tmp_path: Path) -> None:
    path = tmp_path / "logger.csv"
    path.write_text(
        "INDEX,RCR,DATE,TIME,VALID,LATITUDE,N/S,LONGITUDE,E/W,HEIGHT,SPEED,\n"
        "1,B,2008/05/04,12:52:47.500,SPS,41.805592,S,12.679832,W,374.812 m,36.0 km/h,\n"
    )
    log = read_csv_log(path)
    assert log.profile == "units_in_cells_logger"
    row = log.samples.iloc[0]
    assert (row[schema.LAT_DEG], row[schema.LON_DEG]) == (-41.805592, -12.679832)
    assert row[schema.ELEVATION_M] == pytest.approx(374.812)
    assert row[schema.SPEED_M_S] == pytest.approx(10.0)
    assert row[schema.TIME_UTC] == pd.Timestamp("2008-05-04T12:52:47.5Z")


def test_cycle_csv_with_grade(tmp_path: Path) -> None:
    path = tmp_path / "hill_cycle.csv"
    path.write_text("time_s,speed_kmh,grade\n0,0,0.01\n1,3.6,0.02\n2,7.2,-0.03\n")
    log = read_csv_log(path)
    assert log.profile == "cycle_csv"
    assert log.samples[schema.VEHICLE_ID].unique().tolist() == ["hill_cycle"]
    assert log.samples[schema.SPEED_M_S].tolist() == pytest.approx([0.0, 1.0, 2.0])
    assert log.samples[schema.GRADE].tolist() == pytest.approx([0.01, 0.02, -0.03])
    assert log.samples[schema.TIME_UTC].iloc[2] == pd.Timestamp("1970-01-01T00:00:02Z")
    assert list(log.samples.columns) == [*schema.RAW_COLUMNS, schema.GRADE]


def test_cycle_csv_without_grade_has_canonical_columns_only(tmp_path: Path) -> None:
    path = tmp_path / "flat.csv"
    path.write_text("time_s,speed_m_s\n0,0\n1,1.5\n")
    samples = read_csv_log(path).samples
    assert list(samples.columns) == list(schema.RAW_COLUMNS)
    template = empty_raw_frame()
    for name in (schema.TIME_UTC, schema.SPEED_M_S, schema.SOURCE_ROW, schema.VEHICLE_ID):
        assert samples[name].dtype == template[name].dtype


def test_many_vehicles_in_one_file_and_optional_signals(tmp_path: Path) -> None:
    path = tmp_path / "fleet.csv"
    path.write_text(
        "vehicle_id,time_utc,speed_m_s,fuel_used_l,fuel_rate_l_h,odometer_m,engine_speed_rpm,ambient_temp_c,soc\n"
        "t1,2024-05-02T08:00:00Z,5,10.5,12,1000,1500,21,0.8\n"
        " t2 ,2024-05-02T08:00:00Z,6,20.5,13,2000,1600,22,0.7\n"
        ",2024-05-02T08:00:01Z,6,20.5,13,2000,1600,22,0.7\n"
    )
    log = read_csv_log(path)
    assert log.profile == "canonical_csv"
    assert log.samples[schema.VEHICLE_ID].tolist() == ["t1", "t2"]
    assert log.samples[schema.FUEL_USED_L].tolist() == [10.5, 20.5]
    assert log.samples[schema.SOC].tolist() == [0.8, 0.7]
    assert log.samples[schema.ENGINE_SPEED_RPM].tolist() == [1500.0, 1600.0]
    assert log.dropped.to_dict("list") == {"source_row": [2], "reason": [schema.DROP_VEHICLE_UNKNOWN]}


@pytest.mark.parametrize(
    ("rule", "value", "expected"),
    [
        ("stem", "", "truck_07_monday"),
        ("folder", "", "depot_north"),
        ("fixed", "T-1", "T-1"),
        ("name_regex", r"truck_(?P<id>\d+)", "07"),
    ],
)
def test_vehicle_id_rules(tmp_path: Path, rule: str, value: str, expected: str) -> None:
    folder = tmp_path / "depot_north"
    folder.mkdir()
    path = folder / "truck_07_monday.csv"
    path.write_text(_text())
    log = read_csv_log(path, IngestConfig(vehicle_id_rule=rule, vehicle_id_value=value))
    assert log.samples[schema.VEHICLE_ID].unique().tolist() == [expected]


def test_profile_vehicle_from_file_name(tmp_path: Path) -> None:
    profile = tmp_path / "named.toml"
    profile.write_text(
        '[time]\nkind = "iso"\ncolumns = [["time"]]\n[vehicle]\nsource = "name_regex"\n'
        'pattern = "unit-(?P<id>[A-Z0-9]+)"\n[columns]\nspeed_m_s = { names = ["speed"], unit = "header" }\n'
    )
    path = tmp_path / "export_unit-X42_may.csv"
    path.write_text(_text())
    log = read_csv_log(path, IngestConfig(profile=str(profile)))
    assert log.samples[schema.VEHICLE_ID].unique().tolist() == ["X42"]


def test_input_file_not_modified_and_source_file_as_given(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text(_text())
    before = path.read_bytes()
    log = read_csv_log(str(path))
    assert path.read_bytes() == before
    assert log.samples[schema.SOURCE_FILE].unique().tolist() == [str(path)]


def test_legacy_code_page_after_the_sniffed_head(tmp_path: Path) -> None:
    # the first 64 KiB are ASCII; a cp1252 "é" (0xE9, invalid as UTF-8) comes later
    lines = ["time,speed [km/h],lat,lon,route"]
    lines += [f"2024-05-02T08:{i // 60 % 60:02d}:{i % 60:02d}Z,36,50,8,ring" for i in range(2000)]
    lines.append("2024-05-02T09:00:00Z,36,50,8,Vallée")
    path = tmp_path / "legacy.csv"
    path.write_bytes("\n".join(lines).encode("cp1252"))
    profile = tmp_path / "r.toml"
    profile.write_text(
        '[time]\nkind = "iso"\ncolumns = [["time"]]\n[columns]\n'
        'speed_m_s = { names = ["speed"], unit = "header" }\nroute = { names = ["route"] }\n'
    )
    log = read_csv_log(path, IngestConfig(profile=str(profile)))
    assert log.rows_in == 2001
    assert log.samples[schema.ROUTE].iloc[-1] == "Vallée"
