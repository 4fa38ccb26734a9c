"""``fleetfuel demo``: the main job on the bundled sample fleet and catalogue, into an output folder.

Runs ``fleetfuel forecast`` on the invented Quillmere Haulage & Transit fleet in ``sample_logs/``
with the bundled spec catalogue (``models/``), and writes the tables, workbook, plots and
``report.html`` (plus the data-quality account) into ``./fleetfuel-demo/``.

The demo names the fleet's current spec per class (:data:`DEMO_CURRENT_SPEC`), so that the report
shows the saving of each alternative: the sample fleet runs diesel vans, 18 t rigid trucks,
40 t tractor units, diesel city buses and a petrol pool car (see ``sample_logs/README.md``).
Every other setting is the documented default of :class:`fleetfuel.forecast.ForecastConfig`.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from pathlib import Path
from typing import Final

from fleetfuel import pipeline
from fleetfuel.config import RunConfig
from fleetfuel.report import quality
from fleetfuel.report.files import write_text_atomic
from fleetfuel.resources import data_dir

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


def demo_config() -> RunConfig:
    """The run configuration of the demo: defaults plus the sample fleet's current specs."""
    cfg = RunConfig()
    return dataclasses.replace(cfg, forecast=dataclasses.replace(cfg.forecast, current_spec=dict(DEMO_CURRENT_SPEC)))


def run_demo(out: Path, *, progress: Callable[[int, int, str], None] | None = None) -> list[Path]:
    """Forecast the sample fleet into ``out`` (work folder ``out/.work``); the files written.

    ``report.html`` is among them (:data:`REPORT_FILE`), with ``data_quality.txt`` and
    ``data_quality.json`` (the ingest account).
    """
    from fleetfuel.report.outputs import write_outputs

    out = Path(out)
    work = out / WORK_FOLDER
    result = pipeline.forecast_paths([data_dir("sample_logs")], demo_config(), work_dir=work, progress=progress)
    written = write_outputs(result, out, work, on_progress=progress)
    if result.account is not None:
        written += [
            write_text_atomic(out / "data_quality.txt", quality.account_text(result.account) + "\n"),
            write_text_atomic(out / "data_quality.json", quality.account_json(result.account) + "\n"),
        ]
    return written
