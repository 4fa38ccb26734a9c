"""Routes file (CSV or TOML): content read alike, bad entries refused with file and line named."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from fleetfuel.errors import ConfigError
from fleetfuel.segment import load_routes_file

CSV = """vehicle_id,route,start,end,payload_kg,planned_annual_km
V01,Harbour shuttle,,,18000,90000
V02,North loop,2024-03-01T00:00:00Z,2024-04-01T00:00:00+02:00,,
V02,South loop,2024-04-01T00:00:00,,,
"""
TOML = """
[[route]]
vehicle_id = "V01"
route = "Harbour shuttle"
payload_kg = 18000
planned_annual_km = 90000

[[route]]
vehicle_id = "V02"
route = "North loop"
start = 2024-03-01T00:00:00Z
end = "2024-04-01T00:00:00+02:00"

[[route]]
vehicle_id = "V02"
route = "South loop"
start = 2024-04-01T00:00:00
"""


def _write(tmp_path, name: str, text: str):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_csv_and_toml_read_alike(tmp_path) -> None:
    a = load_routes_file(_write(tmp_path, "r.csv", CSV)).drop(columns="where")
    b = load_routes_file(_write(tmp_path, "r.toml", TOML)).drop(columns="where")
    pd.testing.assert_frame_equal(a, b)
    assert a["payload_kg"].iloc[0] == 18000.0 and np.isnan(a["payload_kg"].iloc[1])
    # ISO 8601 offsets: 2024-04-01T00:00+02:00 is 2024-03-31T22:00Z; no offset is read as UTC.
    assert a["end_utc"].iloc[1] == pd.Timestamp("2024-03-31T22:00:00Z")
    assert a["start_utc"].iloc[2] == pd.Timestamp("2024-04-01T00:00:00Z")
    assert pd.isna(a["start_utc"].iloc[0]) and pd.isna(a["end_utc"].iloc[2])


@pytest.mark.parametrize(
    ("name", "text", "message"),
    [
        ("r.csv", "vehicle_id,route,colour\nV1,A,red\n", r"r.csv: unknown column 'colour'"),
        ("r.csv", "vehicle_id,start\nV1,2024-01-01\n", r"missing column 'route'"),
        ("r.csv", "vehicle_id,route,start\nV1,A,yesterday\n", r"r.csv line 2: start must be an ISO 8601"),
        ("r.csv", "vehicle_id,route,payload_kg\nV1,A,-5\n", r"line 2: payload_kg must be a number >= 0"),
        ("r.csv", "vehicle_id,route,start,end\nV1,A,2024-02-01,2024-01-01\n", r"start must be before end"),
        ("r.csv", "vehicle_id,route\nV1,A,extra\n", r"line 2: expected 2 cells, found 3"),
        (
            "r.toml",
            "[[route]]\nvehicle_id = 'V1'\nroute = 'A'\npayload = 3\n",
            r"entry 1: unknown key 'payload'",
        ),
        ("r.toml", "title = 'x'\n", r"unknown key 'title'"),
        ("r.toml", "[[route]]\nvehicle_id = 'V1'\n", r"entry 1: route must be a non-empty text"),
        ("r.toml", "[[route\n", r"not valid TOML"),
        ("r.json", "{}", r"must be .csv or .toml"),
        (
            "r.csv",
            "vehicle_id,route,start,end\nV1,A,2024-01-01,2024-02-01\nV1,B,2024-01-15,\n",
            r"line 3: time window overlaps .*line 2 for vehicle 'V1'",
        ),
        (
            "r.csv",
            "vehicle_id,route\nV1,A\nV1,B\n",
            r"line 3: second entry without start/end for vehicle 'V1'",
        ),
        (
            "r.csv",
            "vehicle_id,route,payload_kg\nV1,A,100\nV2,A,200\n",
            r"line 3: payload_kg of route 'A' disagrees with .*line 2",
        ),
    ],
)
def test_bad_routes_files_are_refused_naming_the_place(tmp_path, name: str, text: str, message: str) -> None:
    with pytest.raises(ConfigError, match=message):
        load_routes_file(_write(tmp_path, name, text))


def test_missing_routes_file_is_a_config_error(tmp_path) -> None:
    with pytest.raises(ConfigError, match="cannot read routes file"):
        load_routes_file(tmp_path / "absent.csv")


def test_open_ended_windows_overlap_when_they_should(tmp_path) -> None:
    # [2024-03-01, open) and [2024-05-01, 2024-06-01) overlap; [.., 2024-03-01) and [2024-03-01, ..) do not
    # (windows are half-open: a trip starting at the boundary belongs to the later one).
    good = "vehicle_id,route,start,end\nV1,A,,2024-03-01T00:00:00Z\nV1,B,2024-03-01T00:00:00Z,\n"
    assert len(load_routes_file(_write(tmp_path, "g.csv", good))) == 2
    bad = "vehicle_id,route,start,end\nV1,A,2024-03-01T00:00:00Z,\nV1,B,2024-05-01T00:00:00Z,2024-06-01T00:00:00Z\n"
    with pytest.raises(ConfigError, match="overlaps"):
        load_routes_file(_write(tmp_path, "b.csv", bad))
