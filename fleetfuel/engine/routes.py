"""The forecast's route logs read from the work folder, partition by partition: :class:`WorkFolderLogs`.

:class:`fleetfuel.forecast.logs.RouteLogs` asks for each route's steepest sustained grade and for
the energy of specs simulated on the route's own logs. Both are computed where the rows are: one
task per partition (:func:`partition_grades`, :func:`partition_runs`) reads its trips of the
routes asked for (a few columns, rows filtered by trip id in pyarrow), and returns a grade per
route or one row per shift and cell. The main process combines them: the largest grade, the shifts'
runs summed in period order (:func:`fleetfuel.forecast.energy.energy_of_runs`). A task holds one
partition, never a whole route, and the answers equal the in-memory ones of
:class:`fleetfuel.forecast.logs.FrameLogs` (a trip's grade and a shift's run depend on their own
rows only).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TypeVar

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.engine.executors import Engine
from fleetfuel.engine.stream import PreparedFleet
from fleetfuel.engine.workdir import WorkFolder, read_frames, read_trip_rows
from fleetfuel.forecast.energy import RUN_COLUMNS, RouteEnergy, energy_of_runs, shift_runs, shift_traces
from fleetfuel.forecast.grade import sustained_grades
from fleetfuel.forecast.logs import LogCell
from fleetfuel.simulate import SimConfig, VehicleSpec

ROUTE_COLUMNS = (schema.PERIOD_ID, schema.TRIP_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.GRADE,
                 schema.ELEVATION_M, schema.DISTANCE_M)
"""The columns a route task reads (what grades and shift traces use)."""
R = TypeVar("R")


@dataclass(frozen=True, slots=True)
class PartitionRoutesJob:
    """Partition ``key`` of the work folder ``work``: its trips of each route asked for.

    ``routes`` pairs each route with its trip ids here. ``window_m`` is the grade window [m]
    (:func:`partition_grades`); ``cells`` the (cell number, route, spec, payload [kg]) to simulate
    and ``sim`` their settings (:func:`partition_runs`).
    """

    key: str
    work: str
    routes: tuple[tuple[str, tuple[str, ...]], ...]
    window_m: float = 0.0
    cells: tuple[tuple[int, str, VehicleSpec, float], ...] = ()
    sim: SimConfig | None = None


def partition_samples(job: PartitionRoutesJob) -> pd.DataFrame:
    """The partition's rows of the job's trips (:data:`ROUTE_COLUMNS`), with their ``route``."""
    route_of = {trip: route for route, trips in job.routes for trip in trips}
    frame = read_trip_rows(WorkFolder(Path(job.work)).table("samples", job.key), ROUTE_COLUMNS, route_of)
    if frame is None:  # no row of these trips (cannot happen for trips read from this partition)
        frame = pd.DataFrame({name: pd.Series([], dtype="float64") for name in ROUTE_COLUMNS}).astype(
            {schema.PERIOD_ID: "string", schema.TRIP_ID: "string"})
        frame[schema.TIME_UTC] = pd.to_datetime(frame[schema.TIME_UTC], utc=True)
    frame[schema.ROUTE] = frame[schema.TRIP_ID].astype(str).map(route_of).astype("string")
    return frame


def partition_grades(job: PartitionRoutesJob) -> dict[str, float]:
    """Steepest sustained grade of each route on this partition's trips (NaN: none long enough). [1]"""
    grades = sustained_grades(partition_samples(job), job.window_m)
    return {str(route): float(value) for route, value in grades.items()}


def partition_runs(job: PartitionRoutesJob) -> list[tuple[int, pd.DataFrame]]:
    """:func:`fleetfuel.forecast.energy.shift_runs` of each of the job's cells on this partition's shifts."""
    samples = partition_samples(job)
    sim = job.sim or SimConfig()
    traces = {route: shift_traces(samples, route) for route in {cell[1] for cell in job.cells}}
    return [(number, shift_runs(traces[route], spec, payload, sim)) for number, route, spec, payload in job.cells]


class WorkFolderLogs:
    """:class:`fleetfuel.forecast.logs.RouteLogs` answered by tasks over the work folder.

    Parameters
    ----------
    fleet : PreparedFleet
        The prepared fleet (its partitions' samples and trip tables).
    trip_routes : Series
        Trip id -> route (the segment stage's assignment).
    engine : Engine
        Where the tasks run; their records go to the fleet's task log.
    """

    def __init__(self, fleet: PreparedFleet, trip_routes: pd.Series, engine: Engine) -> None:
        self.fleet, self.engine = fleet, engine
        self._parts: list[tuple[str, dict[str, tuple[str, ...]]]] = []
        for w in fleet.partitions:  # fleet order: vehicles sorted, windows in time order
            ids = read_frames([fleet.work.table("trips", w.key)], (schema.TRIP_ID,))
            if ids is None:
                continue
            trip_ids = ids[schema.TRIP_ID].astype(str)
            by_route = {str(route): tuple(mine) for route, mine in trip_ids.groupby(trip_ids.map(trip_routes), sort=True)}
            if by_route:  # trips without a route dropped
                self._parts.append((w.key, by_route))

    def _jobs(self, routes: set[str], **extra: object) -> list[PartitionRoutesJob]:
        jobs = []
        for key, by_route in self._parts:
            mine = tuple((r, t) for r, t in by_route.items() if r in routes)
            if mine:
                jobs.append(PartitionRoutesJob(key, str(self.fleet.work.root), mine, **extra))  # type: ignore[arg-type]
        return jobs

    def _map(self, fn: Callable[[PartitionRoutesJob], R], jobs: list[PartitionRoutesJob], stage: str) -> list[R]:
        return self.fleet.run_round(self.engine, fn, jobs, stage)

    def steepest_grades(self, routes: Sequence[str], window_m: float) -> pd.Series:
        best = dict.fromkeys(routes, float("nan"))
        for grades in self._map(partition_grades, self._jobs(set(routes), window_m=window_m), "route grade"):
            for route, value in grades.items():
                best[route] = float(np.fmax(best[route], value))  # the largest of the partitions' values
        return pd.Series(list(best.values()), index=pd.Index(list(routes), name=schema.ROUTE), dtype="float64",
                         name="steepest_grade")

    def log_energies(self, cells: Sequence[LogCell], sim_cfg: SimConfig) -> list[RouteEnergy]:
        jobs = []
        for key, by_route in self._parts:
            mine = tuple((n, c.route, c.spec, c.payload_kg) for n, c in enumerate(cells) if c.route in by_route)
            if mine:
                routes = tuple((r, by_route[r]) for r in sorted({c[1] for c in mine}))
                jobs.append(PartitionRoutesJob(key, str(self.fleet.work.root), routes, cells=mine, sim=sim_cfg))
        runs: list[list[pd.DataFrame]] = [[] for _ in cells]
        for part in self._map(partition_runs, jobs, "route energy"):
            for number, frame in part:
                runs[number].append(frame)
        empty = pd.DataFrame(columns=[*RUN_COLUMNS, schema.PERIOD_ID])
        return [energy_of_runs(pd.concat(parts, ignore_index=True) if parts else empty, cell.spec)
                for parts, cell in zip(runs, cells, strict=True)]
