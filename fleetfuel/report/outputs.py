"""Write every output of a forecast: tables, workbook, plots and the report, all or nothing.

Files are first written into a fresh staging folder inside the work folder; only when all of
them exist are they moved into the output folder (one atomic rename each). A failure before that
leaves the output folder as it was.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any, Final

from matplotlib.figure import Figure

from fleetfuel.errors import OutputError
from fleetfuel.report import plots
from fleetfuel.report.files import write_bytes_atomic
from fleetfuel.report.html import report_html
from fleetfuel.report.progress import ProgressCallback
from fleetfuel.report.tables import csv_bytes, fleet_ranking_table, parquet_bytes, route_forecast_table
from fleetfuel.report.view import ReportView, report_view
from fleetfuel.report.xlsx import workbook_bytes

FigureMap = Callable[[Callable[[Figure], bytes], list[Figure], list[str]], list[bytes]]
"""``fn(figures, names)``: ``[fn(f) for f in figures]``, e.g. on an engine's workers (figures pickle)."""

ROUTE_FORECAST_CSV: Final = "route_forecast.csv"
ROUTE_FORECAST_PARQUET: Final = "route_forecast.parquet"
FLEET_RANKING_CSV: Final = "fleet_ranking.csv"
ROUTE_FORECAST_XLSX: Final = "route_forecast.xlsx"
REPORT_HTML: Final = "report.html"
FILE_NAMES: Final = (
    ROUTE_FORECAST_CSV, ROUTE_FORECAST_PARQUET, FLEET_RANKING_CSV, ROUTE_FORECAST_XLSX, REPORT_HTML
)
PLOT_FILES: Final = {
    "ranking": "plot_ranking.png",
    "route_consumption": "plot_route_fuel.png",
    "route_electric": "plot_route_electricity.png",
    "duty_mix": "plot_duty_mix.png",
    "fuel_map": "plot_fuel_map.png",
}
"""Figure name -> PNG file name; representative cycles go to ``plot_cycle_<type>.png``."""


def _safe_name(text: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in text)


def figures(view: ReportView) -> dict[str, Figure]:
    """Every figure the data allows, by name (see :data:`PLOT_FILES`)."""
    out: dict[str, Figure] = {}
    if not view.fleet_ranking.empty:
        out["ranking"] = plots.ranking_bars(view.fleet_ranking, currency=view.currency)
    if not view.route_forecast.empty:
        out["route_consumption"] = plots.route_consumption_bars(view.route_forecast)
        kwh = view.route_forecast.get("kwh_per_100km")
        if kwh is not None and bool((kwh.fillna(0.0) > 0).any()):
            out["route_electric"] = plots.route_consumption_bars(view.route_forecast, column="kwh_per_100km")
    if not view.duty_mix.empty:
        out["duty_mix"] = plots.duty_mix_bars(view.duty_mix)
    points = view.operating_points
    if points is not None:
        spec = points.get("spec")
        out["fuel_map"] = plots.fuel_map_points(
            points["engine_speed_rpm"],
            points["torque_nm"],
            points["map_speed_rpm"],
            points["map_torque_nm"],
            points["map_fuel_g_s"],
            title=f"Operating points of {spec} on its fuel map" if spec else "",
        )
    for name, trace in view.cycle_traces.items():
        out[f"cycle_{name}"] = plots.cycle_trace_plot(
            trace["time_s"].to_numpy(), trace["speed_m_s"].to_numpy(), title=f"duty type {name}"
        )
    return out


def _constant(data: bytes) -> Callable[[], bytes]:
    return lambda: data


def _plot_file(name: str) -> str:
    return PLOT_FILES.get(name) or f"plot_{_safe_name(name)}.png"


def _render_here(fn: Callable[[Figure], bytes], figs: list[Figure], names: list[str]) -> list[bytes]:
    """:data:`FigureMap` in this process, one figure after the other."""
    return [fn(fig) for fig in figs]


def _jobs(view: ReportView, step: Callable[[str], None], map_figures: FigureMap | None
          ) -> list[tuple[str, Callable[[], bytes]]]:
    figs = figures(view)
    names = list(figs)
    render = map_figures or _render_here
    pngs = dict(zip(names, render(plots.png_bytes, [figs[n] for n in names], names), strict=True))
    for name in names:
        step(name)
    route_table = route_forecast_table(view.route_forecast)
    ranking_table = fleet_ranking_table(view.fleet_ranking)
    jobs: list[tuple[str, Callable[[], bytes]]] = [
        (ROUTE_FORECAST_CSV, lambda: csv_bytes(route_table)),
        (ROUTE_FORECAST_PARQUET, lambda: parquet_bytes(route_table)),
        (FLEET_RANKING_CSV, lambda: csv_bytes(ranking_table)),
        (ROUTE_FORECAST_XLSX, lambda: workbook_bytes(view.route_forecast, view.fleet_ranking, view.assumptions)),
        (REPORT_HTML, lambda: report_html(view, pngs).encode("utf-8")),
    ]
    jobs += [(_plot_file(name), _constant(data)) for name, data in pngs.items()]
    return jobs


def _move(staged: list[Path], out_dir: Path) -> list[Path]:
    """Move staged files into ``out_dir`` (rename; copy through a temporary file across file systems)."""
    written = []
    for path in staged:
        target = out_dir / path.name
        try:
            os.replace(path, target)
        except OSError:
            write_bytes_atomic(target, path.read_bytes())
        written.append(target)
    return written


def write_outputs(
    result: Any, out_dir: Path, work_dir: Path, *, on_progress: ProgressCallback | None = None,
    map_figures: FigureMap | None = None,
) -> list[Path]:
    """Write every output of ``result`` into ``out_dir``; all of them or none.

    Parameters
    ----------
    result : ForecastResult
        The forecast (duck-typed, see :func:`fleetfuel.report.view.report_view`).
    out_dir : Path
        Output folder (created when missing).
    work_dir : Path
        Work folder for intermediate files (created when missing); a staging folder inside it is
        removed afterwards.
    on_progress : callable, optional
        ``on_progress(done, total, note)`` after each figure and file, e.g.
        :meth:`fleetfuel.report.progress.ProgressBar.update`.
    map_figures : callable, optional
        Where the figures are rendered to PNG (:data:`FigureMap`; the jobs pass an engine's
        ``map``, so the plots render side by side); default here, one after the other.

    Returns
    -------
    list of Path
        The files written, in writing order.

    Raises
    ------
    OutputError
        A folder cannot be created or a file cannot be written (one line naming the path).
    """
    out_dir, work_dir = Path(out_dir), Path(work_dir)
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        work_dir.mkdir(parents=True, exist_ok=True)
        stage = Path(tempfile.mkdtemp(prefix=".outputs-", dir=work_dir))
    except OSError as exc:
        raise OutputError(f"{exc.filename or out_dir}: cannot create folder ({exc.strerror or exc})") from None
    view = report_view(result)
    total = 2 * (len(view.cycle_traces) + len(PLOT_FILES)) + len(FILE_NAMES)  # upper bound; ends full
    done = 0

    def step(note: str) -> None:
        nonlocal done
        done += 1
        if on_progress is not None:
            on_progress(min(done, total), total, note)

    try:
        staged = []
        for name, build in _jobs(view, step, map_figures):
            path = stage / name
            try:
                path.write_bytes(build())
            except OSError as exc:
                raise OutputError(f"{path}: cannot write ({exc.strerror or exc})") from None
            staged.append(path)
            step(name)
        try:
            written = _move(staged, out_dir)
        except OSError as exc:
            raise OutputError(f"{exc.filename or out_dir}: cannot write ({exc.strerror or exc})") from None
        if on_progress is not None:
            on_progress(total, total, "done")
        return written
    finally:
        shutil.rmtree(stage, ignore_errors=True)
