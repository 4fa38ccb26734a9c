"""`fleetfuel demo`: the main job on the bundled sample fleet into one folder, printing where the report is.

The forecast itself is replaced by the hand-made result of report_fixture.py (the real run on the
sample fleet is tested end to end in tests/forecast/test_forecast_fleet.py); this checks the
verb's contract: inputs, configuration, folders, files and what it prints.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from report_fixture import make_result

from fleetfuel import pipeline
from fleetfuel.cli import main
from fleetfuel.demo import DEMO_CURRENT_SPEC
from fleetfuel.resources import data_dir


def test_demo_writes_everything_into_its_folder_and_prints_the_report(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    calls = []

    def fake_forecast(paths, cfg, **kwargs):  # type: ignore[no-untyped-def]
        calls.append((list(paths), cfg, kwargs))
        return make_result()

    monkeypatch.setattr(pipeline, "forecast_paths", fake_forecast)
    monkeypatch.chdir(tmp_path)
    assert main(["demo", "--quiet"]) == 0
    out = tmp_path / "fleetfuel-demo"  # the default folder, relative to where it runs
    (paths, cfg, kwargs) = calls[0]
    assert paths == [data_dir("sample_logs")]
    assert cfg.forecast.current_spec == DEMO_CURRENT_SPEC  # the saving against today's fleet is shown
    assert Path(kwargs["work_dir"]).resolve() == (out / ".work").resolve()  # hidden, inside the output folder
    for name in ("route_forecast.csv", "route_forecast.parquet", "fleet_ranking.csv", "route_forecast.xlsx",
                 "report.html", "plot_ranking.png", "data_quality.txt", "data_quality.json"):
        assert (out / name).is_file(), name
    printed = capsys.readouterr().out
    assert f"report: {(out / 'report.html').resolve()}" in printed.splitlines()
