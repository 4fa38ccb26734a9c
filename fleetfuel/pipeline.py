"""Compose the stages into the jobs the CLI offers. Reads like the job; holds no physics.

Each job builds its stage configs, runs the stages in order and returns a frozen result.
"""

from __future__ import annotations

import dataclasses
import tempfile
from collections.abc import Callable, Iterator, Sequence
from contextlib import ExitStack, contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import pandas as pd

from fleetfuel import cycles, schema, segment
from fleetfuel.clean.vehicle import empty_clean_frame
from fleetfuel.config import RunConfig
from fleetfuel.engine.cycle_logs import WorkFolderCycleLogs
from fleetfuel.engine.executors import Engine, make_engine
from fleetfuel.engine.stream import (
    PreparedFleet,
    clean_columns,
    fleet_consumption,
    fleet_routes,
    prepare_fleet,
)
from fleetfuel.ingest.base import FileFailure
from fleetfuel.report import quality
from fleetfuel.simulate.reference import consumption_model


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


@contextmanager
def prepared(
    paths: Sequence[str | Path], cfg: RunConfig, work_dir: str | Path | None = None, engine: Engine | None = None
) -> Iterator[tuple[PreparedFleet, Engine]]:
    """Read, clean and segment ``paths`` partition by partition (:func:`fleetfuel.engine.prepare_fleet`);
    yields the prepared fleet and the engine, for later rounds of tasks.

    ``work_dir`` None: a temporary work folder, removed on exit. ``engine`` None: the engine
    ``cfg.engine`` names, started here and closed on exit.
    """
    with ExitStack() as stack:
        if work_dir is None:
            work_dir = stack.enter_context(tempfile.TemporaryDirectory(prefix="fleetfuel-work-"))
        if engine is None:
            engine = stack.enter_context(make_engine(cfg.engine))
        yield prepare_fleet(paths, cfg, work_dir, engine), engine


def _with_profile(cfg: RunConfig | None, profile: str | None) -> RunConfig:
    cfg = cfg or RunConfig()
    if profile is not None:
        cfg = dataclasses.replace(cfg, ingest=dataclasses.replace(cfg.ingest, profile=profile))
    return cfg


def inspect_paths(
    paths: Sequence[str | Path],
    cfg: RunConfig | None = None,
    *,
    profile: str | None = None,
    work_dir: str | Path | None = None,
    engine: Engine | None = None,
    keep_samples: bool = True,
) -> InspectResult:
    """Read, clean and account for every file under ``paths`` (files, folders, globs).

    Never raises for a bad input file: it appears in ``failures`` and in the account with its
    one-line error. ``keep_samples=False`` leaves the clean samples in the work folder only (an
    empty frame in the result): memory then stays bounded by one partition per worker.
    """
    cfg = _with_profile(cfg, profile)
    with prepared(paths, cfg, work_dir, engine) as (fleet, _):
        samples = clean_columns(fleet.samples()) if keep_samples else empty_clean_frame()
        return InspectResult(samples=samples, account=fleet.account, failures=fleet.failures)


STAGE_COLUMNS = (
    schema.VEHICLE_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.LAT_DEG, schema.LON_DEG, schema.ELEVATION_M,
    schema.GRADE, schema.DISTANCE_M, schema.ENGINE_SPEED_RPM, schema.IS_PARKED, schema.GAP_BREAK, schema.ROUTE,
    *schema.SEGMENT_ID_COLUMNS,
)
"""The clean columns route assignment, cycles and the forecast read (the rest, such as source
file and row, fuel signals and raw elevation, stay in the work folder: less memory in the main process)."""


ROUTE_COLUMNS = (schema.ROUTE, schema.ROUTE_SOURCE)
"""What route assignment adds to trips, samples and micro-trips."""


def _segmented(fleet: PreparedFleet, engine: Engine, cfg: RunConfig, routes_file: str | Path | None
               ) -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Trips with routes, the route table and the micro-trip features with routes, of a prepared
    fleet (routes from the trip tables and per-partition path tasks: no samples in this process)."""
    if fleet.trips.empty:  # no driving: no trip to route
        trips = pd.DataFrame({name: pd.Series([], dtype="string") for name in (schema.TRIP_ID, *ROUTE_COLUMNS)})
        return trips, pd.DataFrame(columns=list(segment.ROUTE_TABLE_COLUMNS)), fleet.features
    trips, routes = fleet_routes(fleet, engine, cfg.segment, routes_file)
    features = fleet.features
    if len(features):
        by_trip = trips.set_index(trips[schema.TRIP_ID].astype(str))
        features = features.assign(**{
            name: features[schema.TRIP_ID].astype(str).map(by_trip[name]).astype("string") for name in ROUTE_COLUMNS
        })
        head = [schema.VEHICLE_ID, schema.PERIOD_ID, schema.TRIP_ID, schema.MICROTRIP_ID, "start_utc", "end_utc",
                *ROUTE_COLUMNS]
        features = features[head + [c for c in features.columns if c not in head]]
    return trips, routes, features


@dataclass(frozen=True, slots=True)
class CyclesResult:
    """Duty-cycle types, representative cycles and their fuel check for a set of paths.

    Attributes
    ----------
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

    account: pd.DataFrame
    failures: tuple[FileFailure, ...]
    routes: pd.DataFrame
    cycles: cycles.CycleSet
    fuel_check: pd.DataFrame
    holdout: pd.DataFrame
    reference_spec: str
    unit: str


def cycles_paths(
    paths: Sequence[str | Path],
    cfg: RunConfig | None = None,
    *,
    cycles_cfg: cycles.CyclesConfig | None = None,
    profile: str | None = None,
    routes_file: str | Path | None = None,
    work_dir: str | Path | None = None,
    engine: Engine | None = None,
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

    cfg = _with_profile(cfg, profile)
    cycles_cfg = cycles_cfg or cfg.cycles
    with prepared(paths, cfg, work_dir, engine) as (fleet, running):
        if not fleet.clean_rows:
            why = f" ({fleet.failures[0].path}: {fleet.failures[0].error})" if fleet.failures else ""
            raise CycleError(f"too little driving to form cycles: no usable samples in {', '.join(map(str, paths))}{why}")
        if fleet.features.empty:
            raise CycleError(f"too little driving to form cycles: no micro-trip in {', '.join(map(str, paths))}")
        _, routes, features = _segmented(fleet, running, cfg, routes_file)
        account, failures = fleet.account, fleet.failures
        logs = WorkFolderCycleLogs(fleet, running)
        built = cycles.build_cycles(logs, features, cycles_cfg, cfg.segment)
        spec_name, unit, model = consumption_model(cycles_cfg.reference_spec, cfg.simulate)
        consumption = fleet_consumption(fleet, running, built.microtrips, cycles_cfg.reference_spec, cfg.simulate)
        holdout = cycles.holdout_check(logs, built, consumption, model, cycles_cfg, cfg.segment)
    rates = cycles.cycle_rates(built.cycles, model)
    return CyclesResult(
        account=account,
        failures=failures,
        routes=routes,
        cycles=built,
        fuel_check=cycles.fuel_check(built, consumption, rates, cycles_cfg),
        holdout=holdout,
        reference_spec=spec_name,
        unit=unit,
    )



if TYPE_CHECKING:  # the forecast stage is imported when its job runs (keeps the other verbs fast)
    from fleetfuel.forecast import ForecastResult, Progress
    from fleetfuel.forecast.logs import RouteLogs

WORK_TABLES = ("routes", "missions", "route_forecast")
"""Intermediate tables the forecast job leaves in the work folder (Parquet), besides micro-trips and cycles."""
FORECAST_STAGES = ("reading and cleaning logs", "trips, routes and micro-trips", "duty types and cycles")


@dataclass(frozen=True, slots=True)
class ForecastInputs:
    """What the forecast stage reads: the earlier stages' results for a set of paths.

    Attributes
    ----------
    samples : DataFrame or None
        Segmented clean frame with routes (:func:`forecast_inputs`); None where the forecast reads
        each route's logs from the work folder instead (:func:`forecast_paths`).
    account : DataFrame
        Per-file row account.
    failures : tuple of FileFailure
    routes : DataFrame
        Route table (:data:`fleetfuel.segment.ROUTE_TABLE_COLUMNS`).
    microtrips : DataFrame
        Micro-trip feature table (typed in ``cycles.microtrips`` when there are cycles).
    cycles : CycleSet or None
        Duty types and cycles; None when there was too little driving to form them.
    """

    samples: pd.DataFrame | None
    account: pd.DataFrame
    failures: tuple[FileFailure, ...]
    routes: pd.DataFrame
    microtrips: pd.DataFrame
    cycles: cycles.CycleSet | None


def forecast_inputs(
    paths: Sequence[str | Path],
    cfg: RunConfig | None = None,
    *,
    profile: str | None = None,
    routes_file: str | Path | None = None,
    progress: Progress | None = None,
    work_dir: str | Path | None = None,
    engine: Engine | None = None,
) -> ForecastInputs:
    """Read, clean and segment the logs, assign routes and build the duty types and cycles.

    Raises
    ------
    InputDataError
        No usable samples in any input file.
    """
    cfg = _with_profile(cfg, profile)
    step = _stage_steps(progress)
    step(0)
    with prepared(paths, cfg, work_dir, engine) as (fleet, running):
        inputs, trips = _inputs_of(fleet, running, paths, cfg, routes_file, step)
        samples = segment.with_routes(fleet.samples(STAGE_COLUMNS), trips)
        return dataclasses.replace(inputs, samples=samples)


def _stage_steps(progress: Progress | None) -> Callable[[int], None]:
    """``step(done)``: report the earlier stages (:data:`FORECAST_STAGES`) done to ``progress``."""
    def step(done: int) -> None:
        if progress is not None:
            progress(done, len(FORECAST_STAGES), FORECAST_STAGES[min(done, len(FORECAST_STAGES) - 1)])

    return step


def _inputs_of(fleet: PreparedFleet, engine: Engine, paths: Sequence[str | Path], cfg: RunConfig,
               routes_file: str | Path | None, step: Callable[[int], None]) -> tuple[ForecastInputs, pd.DataFrame]:
    """:func:`forecast_inputs` of a prepared fleet, without samples, and the trips with routes."""
    from fleetfuel.errors import CycleError, InputDataError

    if not fleet.clean_rows:
        raise InputDataError(f"no usable samples in {', '.join(map(str, paths))}: every file failed or was empty")
    step(1)
    trips, routes, features = _segmented(fleet, engine, cfg, routes_file)
    step(2)
    try:
        built: cycles.CycleSet | None = cycles.build_cycles(WorkFolderCycleLogs(fleet, engine), features, cfg.cycles,
                                                            cfg.segment)
    except CycleError:  # too little driving for duty types: every route is simulated on its own logs
        built = None
    inputs = ForecastInputs(samples=None, account=fleet.account, failures=fleet.failures, routes=routes,
                            microtrips=features, cycles=built)
    return inputs, trips


def trip_routes(trips: pd.DataFrame) -> pd.Series:
    """Trip id -> route of a trip table with routes."""
    return pd.Series(trips[schema.ROUTE].astype("string").to_numpy(), index=trips[schema.TRIP_ID].astype(str).to_numpy())


def _write_work(work_dir: Path, result: ForecastResult, microtrips: pd.DataFrame) -> None:
    """Intermediate data of a forecast run in ``work_dir`` (Parquet, atomic): tables, micro-trips, cycles."""
    from fleetfuel.engine.workdir import write_frame

    def put(name: str, frame: pd.DataFrame) -> None:
        write_frame(work_dir / f"{name}.parquet", frame)

    for name in WORK_TABLES:
        put(name, getattr(result, name))
    put("microtrips", microtrips)
    for name, trace in (result.cycles.cycles if result.cycles is not None else {}).items():
        put(f"cycle_{name}", trace)


def run_forecast(
    inputs: ForecastInputs,
    cfg: RunConfig | None = None,
    *,
    full: bool = False,
    work_dir: str | Path | None = None,
    progress: Progress | None = None,
    logs: RouteLogs | None = None,
) -> ForecastResult:
    """The forecast stage on prepared inputs (:func:`forecast_inputs`), with the catalogue of ``cfg.forecast``.

    ``logs`` reads each route's logs where they are (the work folder, route by route, on an engine);
    None reads them from ``inputs.samples``. Both give the same numbers.
    """
    from fleetfuel import forecast
    from fleetfuel.resources import data_dir
    from fleetfuel.simulate import load_catalogue

    cfg = cfg or RunConfig()
    catalogue = cfg.forecast.catalogue
    result = forecast.forecast_fleet(
        inputs.samples if logs is None else logs, inputs.routes, inputs.cycles, load_catalogue(catalogue), cfg.forecast,
        microtrips=inputs.microtrips, full=full, sim_cfg=cfg.simulate, account=inputs.account, progress=progress,
        catalogue=str(catalogue) if catalogue else str(data_dir("models")),
    )
    result = dataclasses.replace(result, failures=tuple((str(f.path), str(f.error)) for f in inputs.failures))
    if work_dir is not None:
        _write_work(Path(work_dir), result, inputs.microtrips if inputs.cycles is None else inputs.cycles.microtrips)
    return result


def forecast_paths(
    paths: Sequence[str | Path],
    cfg: RunConfig | None = None,
    *,
    full: bool = False,
    profile: str | None = None,
    routes_file: str | Path | None = None,
    work_dir: str | Path | None = None,
    progress: Progress | None = None,
    engine: Engine | None = None,
) -> ForecastResult:
    """The main job: read, clean, segment, cluster and forecast every route x competing spec.

    Parameters
    ----------
    paths : sequence of path
        Log files, folders (recursive) or globs.
    cfg : RunConfig, optional
        Stage configs; ``cfg.forecast`` holds prices, payloads, classes, current specs, catalogue.
    full : bool
        Simulate every route on its own logs instead of the representative cycles.
    profile : str, optional
        Force an ingest profile.
    routes_file : path, optional
        Routes file (vehicle and time -> route, payload, planned annual km).
    work_dir : path, optional
        Folder for intermediate data (route table, missions, micro-trips, cycles as Parquet).
    progress : callable, optional
        ``progress(done, total, note)``, e.g. :meth:`fleetfuel.report.progress.ProgressBar.update`.

    Returns
    -------
    fleetfuel.forecast.ForecastResult

    Raises
    ------
    InputDataError
        No usable samples in any input file.
    ConfigError
        Bad forecast settings (unclassified vehicles, unknown current spec, ...).
    """
    from fleetfuel.engine.executors import release_free_memory
    from fleetfuel.engine.routes import WorkFolderLogs

    cfg = _with_profile(cfg, profile)
    step = _stage_steps(progress)
    step(0)
    with prepared(paths, cfg, work_dir, engine) as (fleet, running):
        inputs, trips = _inputs_of(fleet, running, paths, cfg, routes_file, step)
        release_free_memory()  # what routes, duty types and cycles freed, before the forecast's own work
        logs = WorkFolderLogs(fleet, trip_routes(trips), running)
        return run_forecast(inputs, cfg, full=full, work_dir=work_dir, progress=progress, logs=logs)
