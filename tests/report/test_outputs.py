"""write_outputs: every file, all or nothing, deterministic tables, work folder cleaned up."""

from __future__ import annotations

import io
from pathlib import Path

import pandas as pd
import pytest

from fleetfuel.errors import OutputError
from fleetfuel.report import outputs

EXPECTED = {
    "route_forecast.csv",
    "route_forecast.parquet",
    "fleet_ranking.csv",
    "route_forecast.xlsx",
    "report.html",
    "plot_ranking.png",
    "plot_route_fuel.png",
    "plot_route_electricity.png",
    "plot_duty_mix.png",
    "plot_fuel_map.png",
}


def test_writes_every_output_and_cleans_the_work_folder(result, tmp_path: Path) -> None:
    out, work = tmp_path / "out", tmp_path / "out" / ".work"
    seen: list[tuple[int, int, str]] = []
    written = outputs.write_outputs(result, out, work, on_progress=lambda d, t, n: seen.append((d, t, n)))
    names = {p.name for p in written}
    assert EXPECTED <= names
    assert {n for n in names if n.startswith("plot_cycle_")} == {"plot_cycle_A__urban_.png", "plot_cycle_B__motorway_.png"}
    assert all(p.parent == out and p.stat().st_size > 0 for p in written)
    assert list(work.iterdir()) == []
    assert seen[-1][0] == seen[-1][1]  # the bar ends full
    assert [d for d, _, _ in seen] == sorted(d for d, _, _ in seen)
    table = pd.read_csv(io.BytesIO((out / "route_forecast.csv").read_bytes()))
    assert len(table) == len(result.route_forecast)


def test_outputs_are_byte_identical_on_a_rerun(result, tmp_path: Path) -> None:
    first = outputs.write_outputs(result, tmp_path / "a", tmp_path / "w")
    second = outputs.write_outputs(result, tmp_path / "b", tmp_path / "w")
    for a, b in zip(first, second, strict=True):
        if a.suffix != ".xlsx":  # a zip archive holds member times
            assert a.read_bytes() == b.read_bytes(), a.name


def test_plots_rendered_in_worker_processes_are_the_same_bytes(result, tmp_path: Path) -> None:
    # The jobs render the figures on the engine's workers (figures pickled there and back).
    from fleetfuel.engine.executors import ProcessEngine

    here = outputs.write_outputs(result, tmp_path / "a", tmp_path / "w")
    with ProcessEngine(2) as engine:
        there = outputs.write_outputs(result, tmp_path / "b", tmp_path / "w", map_figures=engine.figure_map())
        assert {r.stage for r in engine.records} == {"plots"}
    assert [p.name for p in here] == [p.name for p in there]
    for a, b in zip(here, there, strict=True):
        if a.suffix in (".png", ".html"):
            assert a.read_bytes() == b.read_bytes(), a.name


def test_failed_run_leaves_no_new_outputs(result, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    out = tmp_path / "out"
    outputs.write_outputs(result, out, tmp_path / "w")
    before = {p.name: p.read_bytes() for p in out.iterdir()}

    def broken(*args, **kwargs):
        raise RuntimeError("simulated failure while rendering the report")

    changed = result.route_forecast.assign(annual_km=result.route_forecast["annual_km"] * 2)
    import dataclasses

    monkeypatch.setattr(outputs, "report_html", broken)
    with pytest.raises(RuntimeError, match="simulated failure"):
        outputs.write_outputs(dataclasses.replace(result, route_forecast=changed), out, tmp_path / "w")
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before  # the earlier run's files, untouched
    assert list((tmp_path / "w").iterdir()) == []


def test_failed_first_run_leaves_output_folder_empty(result, tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setattr(outputs, "workbook_bytes", lambda *a: (_ for _ in ()).throw(RuntimeError("boom")))
    with pytest.raises(RuntimeError):
        outputs.write_outputs(result, tmp_path / "out", tmp_path / "out" / ".work")
    assert [p.name for p in (tmp_path / "out").iterdir()] == [".work"]


def test_output_folder_blocked_by_a_file_is_one_line_error(result, tmp_path: Path) -> None:
    blocker = tmp_path / "out"
    blocker.write_text("not a folder")
    with pytest.raises(OutputError, match="cannot create folder"):
        outputs.write_outputs(result, blocker, tmp_path / "w")


def test_result_without_optional_parts(result, tmp_path: Path) -> None:
    import dataclasses

    bare = dataclasses.replace(
        result, cycles_result=None, account=None, operating_points=None, duty_mix=pd.DataFrame(),
        route_best=pd.DataFrame(), savings=pd.DataFrame(), missions=pd.DataFrame(),
    )
    names = {p.name for p in outputs.write_outputs(bare, tmp_path / "o", tmp_path / "w")}
    assert names == EXPECTED - {"plot_duty_mix.png", "plot_fuel_map.png"}
    page = (tmp_path / "o" / "report.html").read_text(encoding="utf-8")
    assert "(no data-quality account in this result)" in page
