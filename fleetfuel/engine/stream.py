"""Read, clean and segment a fleet partition by partition, on any engine, into the work folder.

:func:`prepare_fleet` runs three rounds of tasks (:mod:`fleetfuel.engine.tasks`): read every
input path, cut every vehicle into windows, clean and segment every window. Only facts come back
to the driver; the rows stay in the work folder's Parquet dataset, from where
:class:`PreparedFleet` reads them back (all of them, a few columns, or the feature and trip
tables only). The row account is built from the per-file facts and per-partition summaries.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from typing import Any, TypeVar

import pandas as pd

import fleetfuel
from fleetfuel import schema
from fleetfuel.clean.account import build_account
from fleetfuel.clean.vehicle import CLEAN_COLUMNS, empty_clean_frame
from fleetfuel.engine.executors import Engine, release_free_memory
from fleetfuel.engine.tasks import (
    CleanJob,
    ConsumptionJob,
    PathsJob,
    PlanJob,
    ReadJob,
    Window,
    clean_partition,
    partition_consumption,
    partition_path_cells,
    plan_vehicle,
    read_file,
)
from fleetfuel.engine.workdir import WorkFolder, file_fingerprint, read_frames, read_json, read_keyed_frames
from fleetfuel.ingest.base import FileFailure, LogBatch, LogFile, empty_dropped, empty_raw_frame
from fleetfuel.ingest.dispatch import expand_paths
from fleetfuel.ingest.profiles import load_profile

J = TypeVar("J")
R = TypeVar("R")
PARTITION_KEY = "partition"
"""Column of a micro-trip's partition key (:meth:`PreparedFleet.microtrip_partitions`)."""


@dataclass(frozen=True)
class PreparedFleet:
    """A fleet read, cleaned and segmented into the work folder.

    Attributes
    ----------
    work : WorkFolder
    account : DataFrame
        Row account, one row per input file (:data:`fleetfuel.clean.ACCOUNT_TABLE_COLUMNS`).
    failures : tuple of FileFailure
    partitions : tuple of Window
        In output order: vehicles sorted by id (no vehicle last), windows in time order.
    resumed : int
        Partitions a previous run had finished and this one kept.
    clean_rows : int
        Clean samples in all partitions.
    """

    work: WorkFolder
    account: pd.DataFrame
    failures: tuple[FileFailure, ...]
    partitions: tuple[Window, ...]
    resumed: int
    clean_rows: int

    def _paths(self, name: str) -> list[Path]:
        return [self.work.table(name, w.key) for w in self.partitions]

    def samples(self, columns: Sequence[str] | None = None) -> pd.DataFrame:
        """Clean, segmented samples of every partition (sorted by vehicle and time)."""
        frame = read_frames(self._paths("samples"), columns)
        if frame is None:
            empty = empty_clean_frame()
            for name in schema.SEGMENT_ID_COLUMNS:
                empty[name] = pd.Series([], dtype="string")
            return empty if columns is None else empty[list(columns)]
        return frame

    @cached_property
    def _keyed_features(self) -> pd.DataFrame:
        frame = read_keyed_frames({w.key: self.work.table("features", w.key) for w in self.partitions}, None,
                                  PARTITION_KEY)
        release_free_memory()  # the read's Arrow tables: the frame is a fraction of their peak
        return pd.DataFrame(columns=[PARTITION_KEY]) if frame is None else frame

    @cached_property
    def features(self) -> pd.DataFrame:
        """Micro-trip feature table of every partition (sorted by vehicle and start time)."""
        return self._keyed_features.drop(columns=[PARTITION_KEY])  # copy-on-write: the same columns

    def microtrip_partitions(self) -> pd.DataFrame:
        """``microtrip_id``, ``trip_id`` and the partition key (:data:`PARTITION_KEY`, categorical)
        of every micro-trip, in fleet order (columns shared with :attr:`features`)."""
        frame = self._keyed_features
        if frame.empty:
            return pd.DataFrame({c: pd.Series([], dtype="string") for c in (schema.MICROTRIP_ID, schema.TRIP_ID,
                                                                             PARTITION_KEY)})
        return frame[[schema.MICROTRIP_ID, schema.TRIP_ID, PARTITION_KEY]]

    @cached_property
    def trips(self) -> pd.DataFrame:
        """Trip table of every partition (sorted by vehicle and start time)."""
        frame = read_frames(self._paths("trips"))
        return pd.DataFrame() if frame is None else frame

    def tasks(self) -> pd.DataFrame:
        """The task log (stage, key, worker, seconds) of every run into this work folder."""
        return self.work.tasks()

    def partition_ids(self, table: str, column: str, wanted: set[str]) -> Iterator[tuple[str, tuple[str, ...]]]:
        """(partition key, its ids in ``wanted``) of each partition whose ``table``'s ``column``
        holds any, in fleet order."""
        for w in self.partitions:
            ids = read_frames([self.work.table(table, w.key)], (column,))
            mine = () if ids is None else tuple(i for i in ids[column].astype(str) if i in wanted)
            if mine:
                yield w.key, mine

    def run_round(self, engine: Engine, fn: Callable[[J], R], jobs: list[J], stage: str) -> list[R]:
        """``engine.map`` of ``fn`` over jobs (each with a partition ``key``), logged in the task log."""
        release_free_memory()  # what the main process's work before this round freed
        try:
            return engine.map(fn, jobs, [job.key for job in jobs], stage)  # type: ignore[attr-defined]
        finally:  # an interrupted round's finished tasks are in the log too
            self.work.log_tasks(engine.records)
            engine.records.clear()


def fingerprint(paths: Sequence[Path], settings: Sequence[Any]) -> dict[str, Any]:
    """What a resumed run must share with the run it resumes: inputs, settings and version."""
    return {"version": fleetfuel.__version__, "inputs": file_fingerprint(paths), "settings": [repr(s) for s in settings]}


def _read_round(files: list[Path], cfg: Any, work: WorkFolder, engine: Engine, keep: bool) -> list[dict[str, Any]]:
    todo = [n for n in range(len(files)) if not (keep and work.raw(n, ".json").is_file())]
    jobs = [ReadJob(str(files[n]), n, cfg.ingest, str(work.root)) for n in todo]
    engine.map(read_file, jobs, [f"{n:06d}" for n in todo], "read")
    return [read_json(work.raw(n, ".json")) for n in range(len(files))]


def _log_files(facts: list[dict[str, Any]]) -> tuple[list[dict[str, Any]], list[FileFailure]]:
    files = sorted((f for fact in facts for f in fact["files"]), key=lambda f: f["path"])
    failures = sorted((FileFailure(Path(f["path"]), f["error"]) for fact in facts for f in fact["failures"]),
                      key=lambda f: str(f.path))
    return files, failures


def _plan_round(files: list[dict[str, Any]], cfg: Any, engine: Engine) -> list[Window]:
    holders: dict[str | None, list[str]] = {}
    for f in files:  # batch order
        for vehicle, rows in f["vehicles"]:
            if rows:
                holders.setdefault(vehicle, []).append(f["raw"])
    vehicles = sorted(v for v in holders if v is not None) + ([None] if None in holders else [])
    jobs = [PlanJob(v, tuple(holders[v]), cfg.segment.period_rest_s, cfg.segment.stop_speed_m_s) for v in vehicles]
    plans = engine.map(plan_vehicle, jobs, [str(v) for v in vehicles], "plan")
    return [w for plan in plans for w in plan]


def _batch_facts(files: list[dict[str, Any]], failures: list[FileFailure]) -> LogBatch:
    """A :class:`LogBatch` of the read files' account facts (rows stay in the work folder)."""
    # one pair of empty frames shared by every file (a pair each: 24 kB, 82 MiB for 3534 files, measured)
    logs, no_samples, no_drops = [], empty_raw_frame(), empty_dropped()
    for f in files:
        dropped = read_frames([Path(f["dropped"])])
        logs.append(LogFile(path=Path(f["path"]), samples=no_samples, rows_in=int(f["rows_in"]),
                            dropped=no_drops if dropped is None else dropped, profile=f["profile"],
                            flags=tuple(f["flags"])))
    return LogBatch(files=tuple(logs), failures=tuple(failures))


def prepare_fleet(paths: Sequence[str | Path], cfg: Any, work_dir: str | Path, engine: Engine) -> PreparedFleet:
    """Read, clean and segment every log under ``paths`` into ``work_dir`` with ``engine``.

    Parameters
    ----------
    paths : sequence of path
        Log files, folders (recursive) or globs.
    cfg : RunConfig
        ``ingest``, ``clean`` and ``segment`` settings; ``engine.resume`` keeps finished partitions.
    work_dir : path
        The work folder (created; its datasets replaced unless resuming the same run).
    engine : Engine
        Where the tasks run.

    Raises
    ------
    ProfileError
        A forced profile that is unknown or malformed (the one error that stops the batch).
    OutputError
        The work folder cannot be written.
    """
    if cfg.ingest.profile:
        load_profile(cfg.ingest.profile)
    files = expand_paths(paths)
    work = WorkFolder(Path(work_dir))
    keep = work.begin(fingerprint(files, (cfg.ingest, cfg.clean, cfg.segment)), cfg.engine.resume)
    facts = _read_round(files, cfg, work, engine, keep)
    logs, failures = _log_files(facts)
    windows = _plan_round(logs, cfg, engine)
    todo = [w for w in windows if not (keep and work.done(w.key).is_file())]
    jobs = [CleanJob(w, cfg.clean, cfg.segment, str(work.root)) for w in todo]
    try:
        engine.map(clean_partition, jobs, [w.key for w in todo], "clean")
    finally:  # an interrupted run's finished tasks are in the log too
        work.log_tasks(engine.records)
        engine.records.clear()
    summary = read_frames([work.table("summary", w.key) for w in windows])
    dropped = read_frames([work.table("dropped", w.key) for w in windows], (schema.SOURCE_FILE, "reason"))
    account = build_account(
        _batch_facts(logs, failures),
        pd.DataFrame() if summary is None else summary,
        pd.DataFrame(columns=[schema.SOURCE_FILE, "reason"]) if dropped is None else dropped,
    )
    rows = sum(int(read_json(work.done(w.key))["samples"]) for w in windows)
    return PreparedFleet(work=work, account=account, failures=tuple(failures), partitions=tuple(windows),
                         resumed=len(windows) - len(todo), clean_rows=rows)


def clean_columns(frame: pd.DataFrame) -> pd.DataFrame:
    """``frame`` restricted to the clean frame's columns (segment ids dropped)."""
    return frame[list(CLEAN_COLUMNS)]



def fleet_consumption(fleet: PreparedFleet, engine: Engine, microtrips: pd.DataFrame, spec: str, sim: Any) -> pd.Series:
    """:func:`fleetfuel.cycles.microtrip_consumption` of the whole fleet, partition by partition.

    ``microtrips`` is :attr:`fleetfuel.cycles.CycleSet.microtrips` (its ``measured`` rows are
    simulated); the result is indexed by ``microtrip_id``, sorted.
    """
    flag = "measured" if "measured" in microtrips.columns else "eligible"
    wanted = set(microtrips.loc[microtrips[flag].to_numpy(dtype=bool), schema.MICROTRIP_ID].astype(str))
    jobs = [ConsumptionJob(key, str(fleet.work.root), spec, sim, mine)
            for key, mine in fleet.partition_ids("features", schema.MICROTRIP_ID, wanted)]
    parts = fleet.run_round(engine, partition_consumption, jobs, "fuel check")
    found = [p for p in parts if len(p)]
    out = pd.concat(found) if found else pd.Series(dtype="float64")
    return out.reindex(sorted(wanted), fill_value=0.0)


def fleet_routes(fleet: PreparedFleet, engine: Engine, segment_cfg: Any, routes_file: Any = None
                 ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Routes of the fleet's trips and the route table (:func:`fleetfuel.segment.assign_routes`'s
    rules), from the trip tables and the path cells of each partition's journeys (one task each).

    Returns
    -------
    trips : DataFrame
        The trip table with ``route`` and ``route_source``.
    route_table : DataFrame
        :data:`fleetfuel.segment.ROUTE_TABLE_COLUMNS`.
    """
    from fleetfuel.segment import discovery, routes

    rules = routes.load_rules(routes_file)
    trips = fleet.trips
    given, _ = routes.given_routes(trips, rules)
    open_trips = trips.loc[given.isna().to_numpy()]
    origin = discovery.discovery_origin(open_trips, segment_cfg)
    wanted = set(open_trips[schema.TRIP_ID].astype(str))
    jobs = [PathsJob(key, str(fleet.work.root), mine, origin, segment_cfg)
            for key, mine in fleet.partition_ids("trips", schema.TRIP_ID, wanted)]
    parts = fleet.run_round(engine, partition_path_cells, jobs, "route paths")
    cells = discovery.concat_cells(parts)
    del parts
    routed, ends = routes.trip_routes(trips, None, segment_cfg, rules, cells=cells)
    del cells
    release_free_memory()
    return routed, routes.route_table(routed, ends, rules)
