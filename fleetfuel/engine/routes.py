"""The forecast's route logs read from the work folder, one task per route: :class:`WorkFolderLogs`.

:class:`fleetfuel.forecast.logs.RouteLogs` asks for each route's steepest sustained grade and for
the energy of specs simulated on the route's own logs. Here each route is one task
(:func:`route_grade`, :func:`route_energies`): it reads the route's trips from the partitions that
hold them (a few columns, rows filtered by trip id in pyarrow), computes, and returns a number or a
few small records. The main process never holds the route's samples, and routes run in parallel
on the engine. A route's answer depends on its own rows only, in the order the partitions give
them (vehicle, then time), so it equals the in-memory answer of
:class:`fleetfuel.forecast.logs.FrameLogs`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from fleetfuel import schema
from fleetfuel.engine.executors import Engine
from fleetfuel.engine.stream import PreparedFleet
from fleetfuel.engine.workdir import WorkFolder, read_frames, typed
from fleetfuel.forecast.energy import RouteEnergy, energy_from_logs, shift_traces
from fleetfuel.forecast.grade import sustained_grades
from fleetfuel.forecast.logs import LogCell
from fleetfuel.simulate import SimConfig, VehicleSpec

ROUTE_COLUMNS = (schema.PERIOD_ID, schema.TRIP_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.GRADE,
                 schema.ELEVATION_M, schema.DISTANCE_M)
"""The columns a route task reads (what grades and shift traces use)."""


@dataclass(frozen=True, slots=True)
class RouteJob:
    """One route's trips in the work folder ``work``: the partitions ``keys`` holding them, their ids.

    ``window_m`` is the grade window [m] (:func:`route_grade`); ``cells`` the (spec, payload [kg])
    pairs to simulate and ``sim`` their settings (:func:`route_energies`).
    """

    route: str
    work: str
    keys: tuple[str, ...]
    trips: tuple[str, ...]
    window_m: float = 0.0
    cells: tuple[tuple[VehicleSpec, float], ...] = ()
    sim: SimConfig | None = None


def route_samples(job: RouteJob) -> pd.DataFrame:
    """The route's trip rows (:data:`ROUTE_COLUMNS` and ``route``), partitions in the job's order."""
    folder = WorkFolder(Path(job.work))
    wanted = pa.array(job.trips, type=pa.string())
    paths = [p for p in (folder.table("samples", key) for key in job.keys) if p.is_file()]
    parts = [pq.read_table(p, columns=list(ROUTE_COLUMNS), filters=pc.field(schema.TRIP_ID).isin(wanted)) for p in paths]
    if parts:
        frame = typed(pa.concat_tables(parts, promote_options="default").to_pandas())
    else:  # a route without rows (a routes-file route never driven): no grade, no shift
        frame = pd.DataFrame({name: pd.Series([], dtype="float64") for name in ROUTE_COLUMNS}).astype(
            {schema.PERIOD_ID: "string", schema.TRIP_ID: "string"})
        frame[schema.TIME_UTC] = pd.to_datetime(frame[schema.TIME_UTC], utc=True)
    frame[schema.ROUTE] = pd.Series(job.route, index=frame.index, dtype="string")
    return frame


def route_grade(job: RouteJob) -> float:
    """Steepest sustained grade of the job's route (:func:`fleetfuel.forecast.grade.sustained_grades`). [1]"""
    grades = sustained_grades(route_samples(job), job.window_m)
    return float(grades.get(job.route, float("nan")))


def route_energies(job: RouteJob) -> list[RouteEnergy]:
    """:func:`fleetfuel.forecast.energy.energy_from_logs` of each of the job's cells on the route's shifts."""
    traces = shift_traces(route_samples(job), job.route)
    sim = job.sim or SimConfig()
    return [energy_from_logs(traces, spec, payload, sim) for spec, payload in job.cells]


class WorkFolderLogs:
    """:class:`fleetfuel.forecast.logs.RouteLogs` answered by tasks over the work folder.

    Parameters
    ----------
    fleet : PreparedFleet
        The prepared fleet (its partitions' samples and trip tables).
    trip_routes : Series
        Trip id -> route (the segment stage's assignment).
    engine : Engine
        Where the route tasks run; their records go to the fleet's task log.
    """

    def __init__(self, fleet: PreparedFleet, trip_routes: pd.Series, engine: Engine) -> None:
        self.fleet, self.engine = fleet, engine
        keys: dict[str, list[str]] = {}
        trips: dict[str, list[str]] = {}
        for w in fleet.partitions:  # fleet order: vehicles sorted, windows in time order
            ids = read_frames([fleet.work.table("trips", w.key)], (schema.TRIP_ID,))
            if ids is None:
                continue
            trip_ids = ids[schema.TRIP_ID].astype(str)
            for route, mine in trip_ids.groupby(trip_ids.map(trip_routes), sort=True):  # trips without a route dropped
                keys.setdefault(str(route), []).append(w.key)
                trips.setdefault(str(route), []).extend(mine)
        self._keys = {r: tuple(k) for r, k in keys.items()}
        self._trips = {r: tuple(t) for r, t in trips.items()}

    def _job(self, route: str, **extra: object) -> RouteJob:
        return RouteJob(route, str(self.fleet.work.root), self._keys.get(route, ()), self._trips.get(route, ()),
                        **extra)  # type: ignore[arg-type]

    def _map(self, fn: object, jobs: list[RouteJob], stage: str) -> list:
        out = self.engine.map(fn, jobs, [j.route for j in jobs], stage)  # type: ignore[arg-type]
        self.fleet.work.log_tasks(self.engine.records)
        self.engine.records.clear()
        return out

    def steepest_grades(self, routes: Sequence[str], window_m: float) -> pd.Series:
        jobs = [self._job(r, window_m=window_m) for r in routes]
        values = self._map(route_grade, jobs, "route grade")
        return pd.Series(values, index=pd.Index(list(routes), name=schema.ROUTE), dtype="float64", name="steepest_grade")

    def log_energies(self, cells: Sequence[LogCell], sim_cfg: SimConfig) -> list[RouteEnergy]:
        by_route: dict[str, list[int]] = {}
        for n, cell in enumerate(cells):
            by_route.setdefault(cell.route, []).append(n)
        routes = sorted(by_route)
        jobs = [self._job(r, cells=tuple((cells[n].spec, cells[n].payload_kg) for n in by_route[r]), sim=sim_cfg)
                for r in routes]
        out: list[RouteEnergy | None] = [None] * len(cells)
        for route, energies in zip(routes, self._map(route_energies, jobs, "route energy"), strict=True):
            for n, energy in zip(by_route[route], energies, strict=True):
                out[n] = energy
        return [e for e in out if e is not None]
