"""The per-partition tasks: module-level functions of small, picklable job descriptions.

Each task reads its inputs from the work folder (or the input file), writes its outputs there
and returns a few facts. Nothing large travels between the driver and the workers.

``read_file``
    one input path (every CSV member of a zip): raw canonical rows, reader drops, account facts;
``plan_vehicle``
    one vehicle: its raw times and speeds from every file, one row group at a time, cut into
    windows (:mod:`fleetfuel.engine.partition`);
``clean_partition``
    one window: clean (:func:`fleetfuel.clean.clean_vehicle`), segment into periods, trips and
    micro-trips, micro-trip features and trip table;
``partition_consumption``
    one window: a reference spec simulated over its measured micro-trips (the fuel check);
``partition_path_cells``
    one window: the path cells of its journeys left to route discovery
    (:func:`fleetfuel.segment.discovery.path_cells`).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from fleetfuel import clean, schema, segment
from fleetfuel.clean.config import CleanConfig
from fleetfuel.cycles.validate import microtrip_consumption
from fleetfuel.engine.partition import CutFinder, IntArray, partition_key, window_of
from fleetfuel.engine.workdir import WorkFolder, read_frames, read_trip_rows, typed, write_frame, write_json
from fleetfuel.ingest.base import empty_raw_frame
from fleetfuel.ingest.config import IngestConfig
from fleetfuel.ingest.dispatch import read_path
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.discovery import CELL_COLUMNS, path_cells
from fleetfuel.simulate.config import SimConfig
from fleetfuel.simulate.reference import consumption_model

_TIME_TYPE = pa.timestamp("ns", tz="UTC")


@dataclass(frozen=True, slots=True)
class ReadJob:
    """Read input ``path`` (number ``number`` in the sorted input list) into ``work``."""

    path: str
    number: int
    ingest: IngestConfig
    work: str


def read_file(job: ReadJob) -> dict[str, Any]:
    """Read one input path; write each read file's raw rows and reader drops; return its facts.

    Returns (and writes as ``raw/<n>.json``) ``{"files": [...], "failures": [...]}``: per read
    file its ``path``, ``raw`` (Parquet of its rows), ``dropped``, ``rows_in``, ``profile``,
    ``flags`` and ``vehicles`` (vehicle id or None -> rows); per failure ``path`` and ``error``.
    """
    work = WorkFolder(Path(job.work))
    files, failures = read_path(Path(job.path), job.ingest)
    facts = []
    for member, log in enumerate(files):
        raw = work.raw(job.number, f"-{member:03d}.parquet")
        dropped = work.raw(job.number, f"-{member:03d}.dropped.parquet")
        write_frame(raw, log.samples)
        write_frame(dropped, log.dropped)
        counts = log.samples[schema.VEHICLE_ID].value_counts(dropna=False, sort=False)
        facts.append({
            "path": str(log.path), "raw": str(raw), "dropped": str(dropped), "rows_in": int(log.rows_in),
            "profile": log.profile, "flags": list(log.flags),
            "vehicles": [[None if pd.isna(v) else str(v), int(n)] for v, n in counts.items()],
        })
    out = {"files": facts, "failures": [{"path": str(f.path), "error": f.error} for f in failures]}
    write_json(work.raw(job.number, ".json"), out)
    return out


def _vehicle_filter(vehicle_id: str | None) -> pc.Expression:
    field = pc.field(schema.VEHICLE_ID)
    return field.is_null() if vehicle_id is None else field == vehicle_id


@dataclass(frozen=True, slots=True)
class PlanJob:
    """Cut vehicle ``vehicle_id``'s samples in ``raw`` (Parquet files, batch order) into windows."""

    vehicle_id: str | None
    raw: tuple[str, ...]
    rest_s: float
    stop_speed_m_s: float


@dataclass(frozen=True, slots=True)
class Window:
    """One partition: a vehicle's samples with ``lo_ns <= t < hi_ns`` (None: open), untimed rows too when ``untimed``."""

    key: str
    vehicle_id: str | None
    raw: tuple[str, ...]
    lo_ns: int | None
    hi_ns: int | None
    untimed: bool
    rows: int


def _vehicle_group(files: dict[str, pq.ParquetFile], path: str, group: int, vehicle_id: str | None,
                   columns: list[str]) -> pa.Table:
    """Row group ``group`` of raw file ``path``: the rows of ``vehicle_id``, ``columns`` only."""
    if path not in files:  # keep the file last read open (the passes read files in turn)
        files.clear()
        files[path] = pq.ParquetFile(path)
    table = files[path].read_row_group(group, columns=[*columns, schema.VEHICLE_ID])
    return table.filter(_vehicle_filter(vehicle_id)).select(columns)


def _times_ns(table: pa.Table) -> IntArray:
    """The sample times of ``table`` (no missing ones) as int64 nanoseconds since the epoch."""
    times = table.column(schema.TIME_UTC).cast(_TIME_TYPE).cast(pa.int64())
    return np.asarray(times.to_numpy(zero_copy_only=False), dtype=np.int64)


def _time_clusters(spans: list[tuple[int, int, int]]) -> list[list[int]]:
    """Row groups (``spans[k]`` = (first, last time, k) in batch order) gathered into runs of
    overlapping time ranges, in time order; each run's groups in batch order."""
    clusters: list[list[int]] = []
    end = None
    for lo, hi, k in sorted(spans):
        if end is None or lo > end:
            clusters.append([k])
            end = hi
        else:
            clusters[-1].append(k)
            end = max(end, hi)
    return [sorted(c) for c in clusters]


def plan_vehicle(job: PlanJob) -> list[Window]:
    """The windows of one vehicle (see :func:`fleetfuel.engine.partition.window_cuts`).

    Streams the vehicle's raw rows one row group at a time, in three passes: each group's time
    range; the cuts, fed to :class:`~fleetfuel.engine.partition.CutFinder` in time order (groups
    whose ranges overlap are read together); the rows and first time of each window. Memory is
    one row group (:data:`~fleetfuel.engine.workdir.ROW_GROUP_ROWS` rows) when the logs run
    forward in time, whatever the length of the history; logs out of time order cost up to
    the overlapping groups at once.
    """
    files: dict[str, pq.ParquetFile] = {}
    groups = [(path, g) for path in job.raw for g in range(pq.ParquetFile(path).metadata.num_row_groups)]
    time_only = [schema.TIME_UTC]
    untimed, spans = 0, []
    for k, (path, g) in enumerate(groups):
        table = _vehicle_group(files, path, g, job.vehicle_id, time_only)
        valid = pc.is_valid(table.column(schema.TIME_UTC))
        untimed += table.num_rows - int(pc.sum(valid).as_py() or 0)
        t_ns = _times_ns(table.filter(valid))
        if t_ns.size:
            spans.append((int(t_ns.min()), int(t_ns.max()), k))
    if not spans:
        return [Window(partition_key(job.vehicle_id, None), job.vehicle_id, job.raw, None, None, True, untimed)]
    finder = CutFinder(job.rest_s, job.stop_speed_m_s)
    if job.vehicle_id is not None:  # rows without a vehicle are one window
        for cluster in _time_clusters(spans):
            parts = [_vehicle_group(files, *groups[k], job.vehicle_id, [schema.TIME_UTC, schema.SPEED_M_S])
                     for k in cluster]
            table = pa.concat_tables(parts)
            table = table.filter(pc.is_valid(table.column(schema.TIME_UTC)))
            speed = np.asarray(table.column(schema.SPEED_M_S).to_numpy(zero_copy_only=False), dtype=np.float64)
            finder.feed(_times_ns(table), speed)
    cuts = finder.cuts()
    rows = np.zeros(cuts.size + 1, dtype=np.int64)
    first = np.full(cuts.size + 1, np.iinfo(np.int64).max, dtype=np.int64)
    for _, _, k in spans:
        t_ns = _times_ns(_vehicle_group(files, *groups[k], job.vehicle_id, time_only).drop_null())
        number = window_of(t_ns, cuts)
        rows += np.bincount(number, minlength=cuts.size + 1)
        np.minimum.at(first, number, t_ns)
    bounds = [None, *cuts.tolist(), None]
    out = []
    for k in range(cuts.size + 1):
        start = pd.Timestamp(int(first[k]), tz="UTC") if rows[k] else None
        extra = untimed if k == 0 else 0
        out.append(Window(partition_key(job.vehicle_id, start), job.vehicle_id, job.raw, bounds[k], bounds[k + 1],
                          k == 0, int(rows[k]) + extra))
    return out


@dataclass(frozen=True, slots=True)
class CleanJob:
    """Clean and segment window ``window`` into ``work``."""

    window: Window
    clean: CleanConfig
    segment: SegmentConfig
    work: str


def _window_filter(w: Window) -> pc.Expression:
    time = pc.field(schema.TIME_UTC)
    in_window = pc.scalar(True)
    if w.lo_ns is not None:
        in_window = in_window & (time >= pa.scalar(w.lo_ns, _TIME_TYPE))
    if w.hi_ns is not None:
        in_window = in_window & (time < pa.scalar(w.hi_ns, _TIME_TYPE))
    if w.untimed:
        in_window = in_window | time.is_null()
    return _vehicle_filter(w.vehicle_id) & in_window


def window_rows(w: Window) -> pd.DataFrame:
    """The raw rows of window ``w``: files in batch order, rows in file order."""
    expr = _window_filter(w)
    parts = []
    for path in w.raw:
        table = pq.read_table(path, filters=expr)
        if table.num_rows:
            order = pc.sort_indices(table, sort_keys=[(schema.SOURCE_ROW, "ascending")])
            parts.append(table.take(order))
    if not parts:
        return empty_raw_frame()
    return typed(pa.concat_tables(parts, promote_options="default").to_pandas())


def clean_partition(job: CleanJob) -> dict[str, Any]:
    """Clean and segment one window; write its tables and, last, its done marker; return counts."""
    work = WorkFolder(Path(job.work))
    key = job.window.key
    rows = window_rows(job.window)
    done = clean.clean_vehicle(rows, job.clean)
    samples = done.samples
    if len(samples):
        samples = segment.split_microtrips(samples, job.segment).reset_index(drop=True)
        features = segment.microtrip_features(samples, job.segment)
        trips = segment.trip_table(samples, job.segment)
    else:
        features, trips = pd.DataFrame(), pd.DataFrame()
    for name, frame in (("samples", samples), ("features", features), ("trips", trips),
                        ("summary", done.files), ("dropped", done.dropped)):
        if len(frame) or name == "summary":  # an empty table is a missing file (read_frames skips it)
            write_frame(work.table(name, key), frame)
    facts = {"key": key, "rows_in": len(rows), "rows_kept": int(len(rows) - len(done.dropped)),
             "samples": len(samples), "microtrips": len(features), "trips": len(trips)}
    write_json(work.done(key), facts)
    return facts


@dataclass(frozen=True, slots=True)
class ConsumptionJob:
    """Simulate spec ``spec`` over the micro-trips ``microtrips`` (ids, all measured) of partition ``key``."""

    key: str
    work: str
    spec: str
    sim: SimConfig
    microtrips: tuple[str, ...]


def partition_consumption(job: ConsumptionJob) -> pd.Series:
    """Consumption of each listed micro-trip of one partition, simulated trip by trip over its logs
    (:func:`fleetfuel.cycles.microtrip_consumption`; index ``microtrip_id``, the model's unit)."""
    samples = read_frames([WorkFolder(Path(job.work)).table("samples", job.key)])
    ids = pd.DataFrame({schema.MICROTRIP_ID: list(job.microtrips), "measured": True})
    if samples is None or not job.microtrips:
        return pd.Series(dtype=np.float64)
    return microtrip_consumption(samples, ids, _model(job.spec, job.sim))


@functools.lru_cache(maxsize=4)
def _model(spec: str, sim: SimConfig) -> Any:
    """The consumption model of ``spec``, loaded once per worker process (not once per partition)."""
    return consumption_model(spec, sim)[2]


@dataclass(frozen=True, slots=True)
class PathsJob:
    """Path cells of the trips ``trips`` of partition ``key``, on the fleet's plane ``origin`` [rad]."""

    key: str
    work: str
    trips: tuple[str, ...]
    origin: tuple[float, float]
    segment: SegmentConfig


PATH_COLUMNS = (schema.PERIOD_ID, schema.TRIP_ID, schema.LAT_DEG, schema.LON_DEG)
"""The columns a path-cell task reads."""


def partition_path_cells(job: PathsJob) -> pd.DataFrame:
    """:func:`fleetfuel.segment.discovery.path_cells` of one partition (a few rows per journey and km)."""
    samples = read_trip_rows(WorkFolder(Path(job.work)).table("samples", job.key), PATH_COLUMNS, job.trips)
    if samples is None:
        return pd.DataFrame(columns=list(CELL_COLUMNS))
    return path_cells(samples, job.trips, job.origin, job.segment)
