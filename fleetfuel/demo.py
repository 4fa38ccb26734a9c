"""``fleetfuel demo``: the main job on the bundled sample fleet and catalogue, into an output folder.

Runs ``fleetfuel forecast`` on the invented Quillmere Haulage & Transit fleet in ``sample_logs/``
with the bundled spec catalogue (``models/``), and writes the tables, workbook, plots and
``report.html`` (plus the data-quality account) into ``./fleetfuel-demo/``.

The demo names the fleet's current spec per class (:data:`DEMO_CURRENT_SPEC`), so that the report
shows the saving of each alternative: the sample fleet runs diesel vans, 18 t rigid trucks,
40 t tractor units, diesel city buses and a petrol pool car (see ``sample_logs/README.md``).
It runs on every core the process may use (the ``processes`` engine, one worker per core; the
in-process engine on a one-core machine): the tables do not depend on the engine
(``tests/engine/``). Every other setting is the documented default of
:class:`fleetfuel.forecast.ForecastConfig`.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Final

from fleetfuel.engine.config import EngineConfig
from fleetfuel.engine.executors import make_engine

if TYPE_CHECKING:
    from fleetfuel.config import RunConfig

DEMO_CURRENT_SPEC: Final = {
    "van": "van_diesel",
    "rigid_truck": "rigid_18t_diesel_235kw",
    "tractor_trailer": "tractor_40t_diesel_axle264",
    "city_bus": "bus_12m_diesel",
    "car": "car_petrol",
}
"""Vehicle class -> the catalogue spec closest to what the sample fleet drives today."""
WORK_FOLDER: Final = ".work"
REPORT_FILE: Final = "report.html"


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system reports one)."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every system (macOS, Windows)
        return os.cpu_count() or 1


def demo_engine(cores: int | None = None) -> EngineConfig:
    """``cores`` worker processes (default :func:`usable_cores`); one core: in the main process."""
    cores = usable_cores() if cores is None else cores
    return EngineConfig(kind="processes", workers=cores) if cores > 1 else EngineConfig()


def demo_config(cores: int | None = None) -> RunConfig:
    """The run configuration of the demo: defaults plus the sample fleet's current specs, on
    :func:`demo_engine` of ``cores``."""
    from fleetfuel.config import RunConfig

    cfg = RunConfig()
    return dataclasses.replace(
        cfg, forecast=dataclasses.replace(cfg.forecast, current_spec=dict(DEMO_CURRENT_SPEC)), engine=demo_engine(cores)
    )


def run_demo(out: Path, *, progress: Callable[[int, int, str], None] | None = None) -> list[Path]:
    """Forecast the sample fleet into ``out`` (work folder ``out/.work``); the files written.

    ``report.html`` is among them (:data:`REPORT_FILE`), with ``data_quality.txt`` and
    ``data_quality.json`` (the ingest account).
    """
    # The engine first: its workers load fleetfuel while this process loads the pipeline (the
    # imports below take seconds), then they render the plots too.
    with make_engine(demo_engine()) as engine:
        from fleetfuel import pipeline
        from fleetfuel.report import quality
        from fleetfuel.report.files import write_text_atomic
        from fleetfuel.report.outputs import write_outputs
        from fleetfuel.resources import data_dir

        out = Path(out)
        work = out / WORK_FOLDER
        result = pipeline.forecast_paths([data_dir("sample_logs")], demo_config(), work_dir=work, progress=progress,
                                         engine=engine)
        written = write_outputs(result, out, work, on_progress=progress, map_figures=engine.figure_map())
    if result.account is not None:
        written += [
            write_text_atomic(out / "data_quality.txt", quality.account_text(result.account) + "\n"),
            write_text_atomic(out / "data_quality.json", quality.account_json(result.account) + "\n"),
        ]
    return written
