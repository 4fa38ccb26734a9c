"""Compose the stages into the jobs the CLI offers. Reads like the job; holds no physics.

Each job builds its stage configs, runs the stages in order and returns a frozen result.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from fleetfuel import clean, cycles, ingest, segment
from fleetfuel.config import RunConfig
from fleetfuel.ingest.base import FileFailure
from fleetfuel.report import quality


@dataclass(frozen=True, slots=True)
class InspectResult:
    """Ingest and clean of a set of paths: the clean samples and the per-file row account."""

    samples: pd.DataFrame
    account: pd.DataFrame
    failures: tuple[FileFailure, ...]

    @property
    def usable_files(self) -> int:
        """Files that were read and kept at least one row."""
        return quality.usable_files(self.account)


def inspect_paths(
    paths: Sequence[str | Path], cfg: RunConfig | None = None, *, profile: str | None = None
) -> InspectResult:
    """Read, clean and account for every file under ``paths`` (files, folders, globs).

    Never raises for a bad input file: it appears in ``failures`` and in the account with its
    one-line error.
    """
    cfg = cfg or RunConfig()
    if profile is not None:
        cfg = dataclasses.replace(cfg, ingest=dataclasses.replace(cfg.ingest, profile=profile))
    batch = ingest.read_logs(paths, cfg.ingest)
    cleaned = clean.clean_batch(batch, cfg.clean)
    return InspectResult(samples=cleaned.samples, account=cleaned.account, failures=batch.failures)


@dataclass(frozen=True, slots=True)
class CyclesResult:
    """Duty-cycle types, representative cycles and their fuel check for a set of paths.

    Attributes
    ----------
    samples : DataFrame
        The segmented clean frame, with routes.
    account : DataFrame
        Per-file row account (as ``inspect``).
    failures : tuple of FileFailure
    routes : DataFrame
        Route table (:data:`fleetfuel.segment.ROUTE_TABLE_COLUMNS`).
    cycles : CycleSet
        Types, weights, cycles and their acceptance tables (:func:`fleetfuel.cycles.build_cycles`).
    fuel_check : DataFrame
        :data:`fleetfuel.cycles.CHECK_COLUMNS`, fleet, route and type rows.
    holdout : DataFrame
        The held-out day's check (empty when there is one day only).
    reference_spec : str
        Name of the spec simulated.
    unit : str
        Unit of the consumption figures (``L``, ``kg`` or ``kWh``).
    """

    samples: pd.DataFrame
    account: pd.DataFrame
    failures: tuple[FileFailure, ...]
    routes: pd.DataFrame
    cycles: cycles.CycleSet
    fuel_check: pd.DataFrame
    holdout: pd.DataFrame
    reference_spec: str
    unit: str


def _reference_model(name: str, sim_cfg: object) -> tuple[str, str, cycles.FuelModel]:
    """The catalogue spec ``name`` (file stem of models/ or a TOML path) as a per-row consumption model."""
    from fleetfuel.errors import ConfigError
    from fleetfuel.resources import data_dir
    from fleetfuel.simulate import load_spec, simulate_trace

    path = Path(name)
    if path.suffix != ".toml":
        path = data_dir("models") / f"{name}.toml"
    if not path.is_file():
        known = sorted(p.stem for p in data_dir("models").glob("*.toml"))
        raise ConfigError(f"cycles.reference_spec: no spec {name!r}; choose a TOML path or one of {known}")
    spec = load_spec(path)
    fuel = spec.fuel
    unit = "kWh" if fuel is None else ("L" if fuel.liquid else "kg")
    joules_per_kwh = 3.6e6  # SI Brochure: 1 kWh = 3.6 MJ, exact
    grams_per_kg = 1000.0

    def model(time_s, speed_m_s, grade):  # type: ignore[no-untyped-def]
        run = simulate_trace(time_s, speed_m_s, grade, spec, cfg=sim_cfg)  # type: ignore[arg-type]
        if fuel is None:
            return run.steps.battery_power_w * run.weight_s / joules_per_kwh
        kg = run.steps.fuel_rate_g_s * run.weight_s / grams_per_kg
        return kg / fuel.density_kg_l if fuel.liquid else kg

    return spec.name, unit, model


def cycles_paths(
    paths: Sequence[str | Path],
    cfg: RunConfig | None = None,
    *,
    cycles_cfg: cycles.CyclesConfig | None = None,
    profile: str | None = None,
    routes_file: str | Path | None = None,
) -> CyclesResult:
    """Read, clean and segment the logs; build duty-cycle types and their cycles; check their fuel.

    Raises
    ------
    CycleError
        Too little driving to form cycles (one line).
    ConfigError
        Unknown reference spec.
    """
    from fleetfuel.errors import CycleError

    cfg = cfg or RunConfig()
    # RunConfig gains a ``cycles`` section when the lead adds it; until then the defaults apply.
    cycles_cfg = cycles_cfg or getattr(cfg, "cycles", None) or cycles.CyclesConfig()
    inspected = inspect_paths(paths, cfg, profile=profile)
    if inspected.samples.empty:
        raise CycleError(f"too little driving to form cycles: no usable samples in {', '.join(map(str, paths))}")
    samples = segment.split_microtrips(inspected.samples, cfg.segment)
    samples, routes = segment.assign_routes(samples, None, cfg.segment, routes_file)
    features = segment.microtrip_features(samples, cfg.segment)
    if features.empty:
        raise CycleError(f"too little driving to form cycles: no micro-trip in {', '.join(map(str, paths))}")
    built = cycles.build_cycles(samples, features, cycles_cfg, cfg.segment)
    spec_name, unit, model = _reference_model(cycles_cfg.reference_spec, cfg.simulate)
    consumption = cycles.microtrip_consumption(samples, built.microtrips, model)
    rates = cycles.cycle_rates(built.cycles, model)
    return CyclesResult(
        samples=samples,
        account=inspected.account,
        failures=inspected.failures,
        routes=routes,
        cycles=built,
        fuel_check=cycles.fuel_check(built, consumption, rates, cycles_cfg),
        holdout=cycles.holdout_check(samples, built, consumption, model, cycles_cfg, cfg.segment),
        reference_spec=spec_name,
        unit=unit,
    )
