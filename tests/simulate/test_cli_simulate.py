"""`fleetfuel simulate` end to end, in process, on tiny cycle files written by the tests."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
from simtraces import MODELS

from fleetfuel.cli import build_parser, main

JSON_KEYS = {"duration_s", "distance_km", "wheel_energy_kwh", "fuel_l", "fuel_kg", "fuel_l_per_100km", "battery_kwh",
             "grid_kwh", "co2_kg", "shortfall_s", "max_speed_deficit_kmh", "gear_changes"}


def write_cycle(path: Path, header: str, rows: np.ndarray) -> Path:
    lines = [header] + [",".join(f"{x:g}" for x in row) for row in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def ramp_rows(extra: np.ndarray | None = None) -> np.ndarray:
    """0 -> 72 km/h in 20 s, 60 s cruise, 20 s to rest: 101 rows at 1 Hz (time_s, speed_kmh[, extra])."""
    t = np.arange(101.0)
    kmh = np.minimum.reduce([3.6 * t, np.full(t.size, 72.0), 3.6 * (100 - t)])
    cols = [t, kmh] if extra is None else [t, kmh, extra]
    return np.column_stack(cols)


def run_json(capsys: pytest.CaptureFixture[str], argv: list[str]) -> dict:
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_json_totals_for_a_diesel_van(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    cycle = write_cycle(tmp_path / "ramp.csv", "time_s,speed_kmh", ramp_rows())
    out = run_json(capsys, ["simulate", "--cycle", str(cycle), "--spec", str(MODELS / "van_diesel.toml"), "--json"])
    assert JSON_KEYS <= set(out)
    assert out["duration_s"] == 100.0
    assert out["distance_km"] == pytest.approx(1.6, rel=1e-12)  # 20 m/s for 60 s plus two 200 m ramps
    assert out["fuel_l"] > 0 and out["battery_kwh"] == 0.0 and out["shortfall_s"] == 0.0
    assert out["co2_kg"] == pytest.approx(out["fuel_l"] * 2.689, rel=1e-3)  # EPA 10,180 g per US gal diesel
    assert out["grade_source"] == "flat" and out["payload_kg"] == 700.0


def test_payload_flag_and_electric_spec(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    cycle = write_cycle(tmp_path / "ramp.csv", "time_s,speed_kmh", ramp_rows())
    spec_path = str(MODELS / "van_electric.toml")
    light = run_json(capsys, ["simulate", "--cycle", str(cycle), "--spec", spec_path, "--json", "--payload-kg", "0"])
    heavy = run_json(capsys, ["simulate", "--cycle", str(cycle), "--spec", spec_path, "--json", "--payload-kg", "1000"])
    assert light["payload_kg"] == 0.0 and heavy["payload_kg"] == 1000.0
    assert heavy["battery_kwh"] > light["battery_kwh"] > 0
    assert heavy["grid_kwh"] > heavy["battery_kwh"]  # charger and charging losses
    assert light["fuel_kg"] == 0.0 and light["gear_changes"] == 0


def test_grade_column_and_elevation_column(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    spec_path = str(MODELS / "rigid_18t_diesel_170kw.toml")
    flat = write_cycle(tmp_path / "flat.csv", "time_s,speed_kmh", ramp_rows())
    uphill = write_cycle(tmp_path / "up.csv", "time_s,speed_kmh,grade", ramp_rows(np.full(101, 0.03)))
    # elevation rising 3 m per 100 m of road, m/s speed column this time
    rows = ramp_rows()
    distance = np.concatenate(([0.0], np.cumsum((rows[1:, 1] + rows[:-1, 1]) / 2 / 3.6)))
    climb = np.column_stack([rows[:, 0], rows[:, 1] / 3.6, 200 + 0.03 * distance])
    hill = write_cycle(tmp_path / "hill.csv", "time_s,speed_m_s,elevation_m", climb)
    base = run_json(capsys, ["simulate", "--cycle", str(flat), "--spec", spec_path, "--json"])
    graded = run_json(capsys, ["simulate", "--cycle", str(uphill), "--spec", spec_path, "--json"])
    from_elevation = run_json(capsys, ["simulate", "--cycle", str(hill), "--spec", spec_path, "--json"])
    assert graded["grade_source"] == "grade" and from_elevation["grade_source"] == "elevation"
    assert graded["fuel_l"] > 1.3 * base["fuel_l"]
    # the clean stage's grade routine smooths the ends of the climb: same order as the given grade
    assert from_elevation["wheel_energy_kwh"] == pytest.approx(graded["wheel_energy_kwh"], rel=0.25)


def test_text_output_names_spec_and_shortfall(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    cycle = write_cycle(tmp_path / "fast.csv", "time_s,speed_kmh", ramp_rows() * [1, 1.6])  # up to 115 km/h
    assert main(["simulate", "--cycle", str(cycle), "--spec", str(MODELS / "tractor_40t_diesel_axle264.toml")]) == 0
    text = capsys.readouterr().out
    assert "Tractor-trailer 40 t" in text and "SHORTFALL" in text and "km/h" in text


@pytest.mark.parametrize(
    ("content", "code", "message"),
    [
        ("time_s,speed_kmh\n0,0\n1,abc\n2,5\n", 3, "row 1"),
        ("time_s,colour\n0,red\n", 3, "--cycle FILE reads a CSV with columns time_s and speed_m_s or speed_kmh"),
        ("t,v\n0,1\n1,2\n", 3, "found columns ['t', 'v']"),
    ],
)
def test_bad_cycle_files_give_one_line_errors(tmp_path: Path, capsys: pytest.CaptureFixture[str], content: str,
                                              code: int, message: str) -> None:
    cycle = tmp_path / "bad.csv"
    cycle.write_text(content, encoding="utf-8")
    assert main(["simulate", "--cycle", str(cycle), "--spec", str(MODELS / "van_diesel.toml")]) == code
    err = capsys.readouterr().err
    assert err.startswith("fleetfuel: ") and err.count("\n") == 1 and message in err and "bad.csv" in err
    # every option the message names is one the simulate verb has (it has no --profile)
    assert "--profile" not in err
    verbs = next(a for a in build_parser()._subparsers._group_actions if a.dest == "verb").choices
    simulate_options = {o for action in verbs["simulate"]._actions for o in action.option_strings}
    assert set(re.findall(r"--[a-z-]+", err)) <= simulate_options


def test_bad_spec_and_excess_payload(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    cycle = write_cycle(tmp_path / "ramp.csv", "time_s,speed_kmh", ramp_rows())
    bad_spec = tmp_path / "bad.toml"
    bad_spec.write_text((MODELS / "van_diesel.toml").read_text(encoding="utf-8").replace("[body]", "[body]\ncolour = 1"),
                        encoding="utf-8")
    assert main(["simulate", "--cycle", str(cycle), "--spec", str(bad_spec)]) == 5  # SpecError
    assert "colour" in capsys.readouterr().err
    assert main(["simulate", "--cycle", str(cycle), "--spec", str(MODELS / "van_diesel.toml"), "--payload-kg", "5000"]) == 5
    assert "max_gross_mass_kg" in capsys.readouterr().err
