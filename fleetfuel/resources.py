"""Find the bundled data folders (``ingest/``, ``models/``, ``sample_logs/``).

In an installed wheel they live in ``fleetfuel/_data/<name>`` (mapped there by the build
backend, see ``pyproject.toml``); in a source checkout or an editable install they are the
top-level folders of the repository.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path
from typing import Final

from fleetfuel.errors import FleetFuelError

DATA_FOLDERS: Final = ("ingest", "models", "sample_logs")


def data_dir(name: str) -> Path:
    """Path of the bundled data folder ``name`` (one of :data:`DATA_FOLDERS`)."""
    if name not in DATA_FOLDERS:
        raise ValueError(f"unknown data folder {name!r}; choose from {DATA_FOLDERS}")
    packaged = resources.files("fleetfuel") / "_data" / name
    if packaged.is_dir():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parent.parent / name
    if checkout.is_dir():
        return checkout
    raise FleetFuelError(f"bundled data folder {name!r} not found (looked in {packaged} and {checkout})")
