"""The tree shows the pipeline: a stage imports only from earlier stages and shared modules."""

from __future__ import annotations

import ast
import tomllib
from pathlib import Path

import pytest

from fleetfuel.resources import DATA_FOLDERS, data_dir

PACKAGE = Path(__file__).resolve().parents[1] / "fleetfuel"
# Pipeline order (common practice for this project; STYLE section 1). synth is a generator used
# by tests, the demo and benchmarks: it may read ingest profiles to write exports, nothing later.
STAGES = ("ingest", "clean", "segment", "cycles", "simulate", "forecast", "report", "engine")
ALLOWED_EXTRA = {"simulate": {"ingest", "clean"}, "synth": {"ingest"}}
SHARED = {"schema", "units", "constants", "errors", "resources", "__init__"}
COMPOSERS = {"config", "pipeline", "cli", "demo", "__main__"}


def _imported_fleetfuel_modules(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.startswith("fleetfuel")}
        elif isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("fleetfuel"):
            found.add(node.module)
            if node.module == "fleetfuel":
                found |= {f"fleetfuel.{a.name}" for a in node.names}
    return {name.split(".")[1] for name in found if name.count(".") >= 1}


def _module_files() -> list[Path]:
    return sorted(p for p in PACKAGE.rglob("*.py") if "_data" not in p.parts)


@pytest.mark.parametrize("path", _module_files(), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_stage_imports_only_earlier_stages(path: Path) -> None:
    rel = path.relative_to(PACKAGE)
    imported = _imported_fleetfuel_modules(path)
    if len(rel.parts) == 1:
        owner = rel.stem
        if owner in COMPOSERS:
            return
        assert owner in SHARED, f"unexpected top-level module {rel}"
        stages = imported & (set(STAGES) | {"synth"})
        assert not stages, f"shared module {rel} imports stages {sorted(stages)}"
        return
    owner = rel.parts[0]
    if owner == "synth":
        allowed = SHARED | {"synth"} | ALLOWED_EXTRA["synth"]
    else:
        assert owner in STAGES, f"{rel}: package {owner!r} is not a pipeline stage"
        earlier = set(STAGES[: STAGES.index(owner) + 1])
        allowed = SHARED | earlier | ALLOWED_EXTRA.get(owner, set())
    bad = imported - allowed
    assert not bad, f"{rel} (stage {owner}) imports later or unknown modules {sorted(bad)}"


def test_wheel_maps_every_data_folder() -> None:
    # The build backend must carry each bundled folder into the wheel (pyproject force-include).
    pyproject = tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text(encoding="utf-8"))
    mapped = pyproject["tool"]["hatch"]["build"]["targets"]["wheel"]["force-include"]
    assert {src: dst for src, dst in mapped.items()} == {f: f"fleetfuel/_data/{f}" for f in DATA_FOLDERS}


@pytest.mark.parametrize("name", DATA_FOLDERS)
def test_data_dir_finds_bundled_folder(name: str) -> None:
    assert data_dir(name).is_dir()
