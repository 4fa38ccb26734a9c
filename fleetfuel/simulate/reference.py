"""A catalogue spec as a per-sample consumption function (the cycles stage's fuel check model).

:func:`consumption_model` turns a spec name (a ``models/`` file stem) or a TOML path into
``model(time_s, speed_m_s, grade) -> consumption per sample``: litres of liquid fuel, kilograms
of gas, or kWh out of the battery, one vectorised simulation per call.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np

from fleetfuel.constants import JOULES_PER_KWH
from fleetfuel.errors import ConfigError
from fleetfuel.resources import data_dir
from fleetfuel.simulate.config import SimConfig
from fleetfuel.simulate.spec import load_spec
from fleetfuel.simulate.trace import G_PER_KG, simulate_trace

ConsumptionModel = Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray]


def spec_path(name: str) -> Path:
    """The TOML file of spec ``name`` (a ``models/`` file stem, or a path ending in ``.toml``).

    Raises
    ------
    ConfigError
        No such spec (the message lists the catalogue's names).
    """
    path = Path(name)
    if path.suffix != ".toml":
        path = data_dir("models") / f"{name}.toml"
    if not path.is_file():
        known = sorted(p.stem for p in data_dir("models").glob("*.toml"))
        raise ConfigError(f"cycles.reference_spec: no spec {name!r}; choose a TOML path or one of {known}")
    return path


def consumption_model(name: str, sim_cfg: SimConfig) -> tuple[str, str, ConsumptionModel]:
    """(spec name, unit ``L`` / ``kg`` / ``kWh``, model) of the catalogue spec ``name``."""
    spec = load_spec(spec_path(name))
    fuel = spec.fuel
    unit = "kWh" if fuel is None else ("L" if fuel.liquid else "kg")

    def model(time_s: np.ndarray, speed_m_s: np.ndarray, grade: np.ndarray) -> np.ndarray:
        run = simulate_trace(time_s, speed_m_s, grade, spec, cfg=sim_cfg)
        if fuel is None:
            return run.steps.battery_power_w * run.weight_s / JOULES_PER_KWH
        kg = run.steps.fuel_rate_g_s * run.weight_s / G_PER_KG
        return kg / fuel.density_kg_l if fuel.liquid else kg

    return spec.name, unit, model
