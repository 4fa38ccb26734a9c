"""Ingest profiles: TOML loading, strict keys, header autodetection (synonyms, case, units)."""

from __future__ import annotations

from pathlib import Path

import pytest

from fleetfuel import schema
from fleetfuel.errors import ProfileError
from fleetfuel.ingest import IngestConfig, read_csv_log
from fleetfuel.ingest.detect import normalise_header, repair_mojibake, resolve
from fleetfuel.ingest.profiles import bundled_profiles, detect_profile, load_profile

KMH_PROFILE = """
[time]
kind = "iso"
columns = [["Time"]]
[columns]
speed_m_s = { names = ["Speed"], unit = "km/h", required = true }
"""


def _write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def test_every_bundled_profile_loads_and_is_named_by_its_file() -> None:
    profiles = bundled_profiles()
    names = [p.name for p in profiles]
    assert "cycle_csv" in names and "canonical_csv" in names
    assert names == sorted(names)
    for profile in profiles:
        assert Path(profile.source).stem == profile.name
        assert profile.rules(schema.SPEED_M_S) or profile.rules(schema.LAT_DEG)


def test_load_by_name_and_by_path(tmp_path: Path) -> None:
    assert load_profile("cycle_csv").time.kind == "elapsed_s"
    path = _write(tmp_path / "my_layout.toml", KMH_PROFILE)
    profile = load_profile(str(path))
    assert profile.name == "my_layout"
    assert profile.column(schema.SPEED_M_S).unit == "km/h"


def test_unknown_name_lists_bundled() -> None:
    with pytest.raises(ProfileError, match="unknown ingest profile 'nope'.*cycle_csv"):
        load_profile("nope")


@pytest.mark.parametrize(
    ("snippet", "key"),
    [
        ("colour = 1\n", "'colour'"),
        ("[layout]\ndelimeter = ';'\n", "layout.'delimeter'"),
        ("[columns.lat_deg]\nnames = ['lat']\nunti = 'm'\n", "columns.lat_deg.'unti'"),
    ],
)
def test_unknown_key_is_one_line_naming_file_and_key(tmp_path: Path, snippet: str, key: str) -> None:
    text = KMH_PROFILE + snippet if not snippet.startswith("colour") else snippet + KMH_PROFILE
    path = _write(tmp_path / "bad.toml", text)
    with pytest.raises(ProfileError) as info:
        load_profile(path)
    message = str(info.value)
    assert "\n" not in message
    assert str(path) in message and key in message


def test_unknown_unit_rejected(tmp_path: Path) -> None:
    path = _write(tmp_path / "u.toml", KMH_PROFILE.replace('"km/h"', '"furlongs"'))
    with pytest.raises(
        ProfileError, match=r"u\.toml: columns\.speed_m_s\.unit: unknown speed unit 'furlongs'"
    ):
        load_profile(path)


def test_unknown_canonical_column_rejected(tmp_path: Path) -> None:
    path = _write(tmp_path / "c.toml", KMH_PROFILE + "colour_rgb = { names = ['c'] }\n")
    with pytest.raises(ProfileError, match="unknown key columns.'colour_rgb'"):
        load_profile(path)


def test_headers_case_insensitive_and_synonyms() -> None:
    profile = load_profile("generic_units_in_header")
    found = resolve(profile, ["TIMESTAMP", "LATITUDE", "Lng", "Speed [KM/H]"])
    assert found is not None
    assert found.columns[schema.SPEED_M_S][2].lower() == "km/h"
    assert found.columns[schema.LON_DEG][0] == "Lng"


def test_units_in_headers_choose_the_profile(tmp_path: Path) -> None:
    kmh = load_profile(_write(tmp_path / "kmh_layout.toml", KMH_PROFILE))
    mph = load_profile(_write(tmp_path / "mph_layout.toml", KMH_PROFILE.replace('"km/h"', '"mph"')))
    assert detect_profile(["time", "speed [km/h]"], (kmh, mph)).name == "kmh_layout"
    assert detect_profile(["Time", "Speed [mph]"], (kmh, mph)).name == "mph_layout"
    assert detect_profile(["Time", "Speed [m/s]"], (kmh, mph)) is None


def test_unit_from_header_converts(tmp_path: Path) -> None:
    # 36 km/h = 10 m/s and 36 mph = 16.09344 m/s (NIST SP 811: mile = 1609.344 m)
    a = _write(tmp_path / "a.csv", "time,speed [km/h],lat,lon\n2024-01-01T00:00:00Z,36,50,8\n")
    b = _write(tmp_path / "b.csv", "time,speed [mph],lat,lon\n2024-01-01T00:00:00Z,36,50,8\n")
    assert read_csv_log(a).samples[schema.SPEED_M_S].iloc[0] == pytest.approx(10.0, rel=1e-12)
    assert read_csv_log(b).samples[schema.SPEED_M_S].iloc[0] == pytest.approx(16.09344, rel=1e-12)


def test_mojibake_header_repaired() -> None:
    # "°" encoded as UTF-8 (C2 B0) then read as Latin-1 and encoded again gives "Â°"
    assert repair_mojibake("[Â°C]") == "[°C]"
    assert normalise_header("\ufeff  Ambient Air Temperature [Â°C] ") == "ambient air temperature [°c]"
    assert repair_mojibake("Überland") == "Überland"


def test_forced_profile_overrides_detection(tmp_path: Path) -> None:
    path = _write(tmp_path / "trip.csv", "time_s,speed_m_s\n0,1.0\n1,2.0\n")
    assert read_csv_log(path).profile == "cycle_csv"
    custom = _write(
        tmp_path / "elapsed.toml",
        '[time]\nkind = "elapsed_s"\ncolumns = [["time_s"]]\n'
        '[columns]\nspeed_m_s = { names = ["speed_m_s"], unit = "km/h" }\n',
    )
    forced = read_csv_log(path, IngestConfig(profile=str(custom)))
    assert forced.profile == "elapsed"
    assert forced.samples[schema.SPEED_M_S].tolist() == pytest.approx([1 / 3.6, 2 / 3.6])


def test_headerless_profile_detected_by_name_and_content(tmp_path: Path) -> None:
    line = "1740170756,A,46.840330,29.463088,32500,777,-65,5,44,NO1.MP4,0,0,0"
    profile = detect_profile(line.split(","), file_name="GPSData000007.txt", head=["$V02", line])
    assert profile is not None and profile.name == "headerless_dashcam_gps"
    assert detect_profile(line.split(","), file_name="other.txt", head=[line]) is None
