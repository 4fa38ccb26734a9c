"""The ``cycles`` verb end to end in process, too-little-driving messages, and real logs."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from cycle_frames import frame

from fleetfuel import pipeline, segment
from fleetfuel.cli import main
from fleetfuel.cycles import CyclesConfig, build_cycles
from fleetfuel.errors import CycleError, FleetFuelError
from fleetfuel.resources import data_dir

REAL = Path(__file__).resolve().parents[2].parent / "shared" / "real_logs"
# Keys the issue fixes for `fleetfuel cycles --json` (kept exactly: other tools read them).
TYPE_KEYS = {"label", "microtrips", "distance_share", "time_share", "mean_speed_kmh", "cycle_file",
             "stat_errors", "safd_difference"}
ROUTE_KEYS = {"route", "trips", "distance_km"}
CHECK_KEYS = {"reference_spec", "on_cycles", "on_logs", "relative_error"}


@pytest.fixture(scope="module")
def car_logs() -> Path:
    folder = data_dir("sample_logs") / "phone_gpx"
    if not any(folder.rglob("*.gpx")):
        pytest.skip("sample fleet not built")
    return folder


def test_cycles_verb_writes_files_and_json(car_logs: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "out"
    assert main(["cycles", str(car_logs), "--out", str(out), "--json", "--holdout-day", "none"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["types"] and summary["routes"]
    for entry in summary["types"]:
        assert TYPE_KEYS <= set(entry)
        assert (out / entry["cycle_file"]).is_file()
        assert (out / f"safd_{entry['type']}.png").is_file()
    assert all(ROUTE_KEYS <= set(r) for r in summary["routes"])
    assert CHECK_KEYS <= set(summary["fuel_check"])
    assert summary["fuel_check"]["holdout"] is None
    header = (out / summary["types"][0]["cycle_file"]).read_text().splitlines()[0]
    assert header == "time_s,speed_m_s,grade"
    for name in ("types.csv", "routes.csv", "route_type_mix.csv", "weights.csv", "acceptance.csv",
                 "feature_scatter.png", "route_ends.png", "summary.json"):
        assert (out / name).is_file(), name
    assert json.loads((out / "summary.json").read_text()) == summary


def test_low_rate_only_logs_exit_with_one_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # TRK-02 logs every 30 s (sample_logs/README.md): typed, but no cycle can be cut from it.
    path = data_dir("sample_logs") / "event_logger_TRK-02.csv"
    if not path.is_file():
        pytest.skip("sample fleet not built")
    assert main(["cycles", str(path), "--out", str(tmp_path)]) == CycleError.exit_code
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("fleetfuel: too little driving to form cycles")


def test_bad_option_is_a_config_error(car_logs: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["cycles", str(car_logs), "--out", str(tmp_path), "--min-types", "5", "--max-types", "3"]) == 2
    assert "cycles.max_types" in capsys.readouterr().err


@pytest.mark.parametrize("seconds", [30, 300])
def test_short_logs_give_a_clear_cycle_error(seconds: int) -> None:
    v = np.r_[np.zeros(5), np.full(seconds, 8.0), np.zeros(5)]
    samples = segment.split_microtrips(frame(v))
    with pytest.raises(CycleError, match="^too little driving to form cycles: found 1 micro-trips"):
        build_cycles(samples, segment.microtrip_features(samples), CyclesConfig())


@pytest.mark.real_logs
@pytest.mark.slow
@pytest.mark.skipif(not REAL.is_dir(), reason="../shared/real_logs not present")
def test_real_logs_run_through_without_traceback() -> None:
    # Third-party logs (../shared/real_logs/SOURCES.md): each gives cycles or a one-line
    # FleetFuelError; short logs say "too little driving to form cycles".
    files = sorted(p for p in REAL.glob("*/*") if p.suffix.lower() != ".md")
    assert files
    outcomes = {}
    for path in files:
        try:
            result = pipeline.cycles_paths([path], cycles_cfg=CyclesConfig(holdout_day="none"))
        except FleetFuelError as exc:
            message = str(exc)
            assert "\n" not in message
            outcomes[path.name] = message
        else:
            assert len(result.cycles.cycles) >= 1
            assert result.cycles.acceptance["type"].nunique() == len(result.cycles.cycles)
            outcomes[path.name] = "cycles"
    assert "cycles" in outcomes.values()  # the longer drives (e.g. the ndsbr naturalistic sample) give cycles
    assert any(m.startswith("too little driving to form cycles") for m in outcomes.values())
