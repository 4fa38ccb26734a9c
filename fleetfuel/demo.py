"""``fleetfuel demo``: the main job on the bundled sample fleet, written to an output folder.

Runs every stage built so far on the invented Quillmere Haulage & Transit fleet in
``sample_logs/``: today ingest and clean, writing the per-file data-quality account.
"""

from __future__ import annotations

from pathlib import Path

from fleetfuel import pipeline
from fleetfuel.report import quality
from fleetfuel.report.files import write_text_atomic
from fleetfuel.resources import data_dir


def run_demo(out: Path) -> list[Path]:
    """Ingest and clean the sample fleet; write the data-quality table (text and JSON) to ``out``."""
    result = pipeline.inspect_paths([data_dir("sample_logs")])
    return [
        write_text_atomic(out / "data_quality.txt", quality.account_text(result.account) + "\n"),
        write_text_atomic(out / "data_quality.json", quality.account_json(result.account) + "\n"),
    ]
