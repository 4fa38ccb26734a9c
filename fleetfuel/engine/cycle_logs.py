"""The cycles stage's logs read from the work folder: :class:`WorkFolderCycleLogs`.

:class:`fleetfuel.cycles.logs.CycleLogs` asks for two things. Each type's SAFD over all its
measured driving is one task per partition (:func:`partition_type_safd`: its rows read, its
kinematics trip by trip, a few small arrays back); the main process adds the partitions' counts in
fleet order, so the sum does not depend on the engine. Each type's cycle search is a task too
(:mod:`fleetfuel.cycles.search`); it reads its pool's rows (at most ``CyclesConfig.pool_max_s`` of
driving) itself, partition by partition, only the trips holding the pool's micro-trips (rows
filtered by trip id in pyarrow), from the note :meth:`WorkFolderCycleLogs.pool_rows` gives it
(:class:`WorkFolderRows`). The main process never holds the fleet's samples, nor the pool's rows.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TypeVar

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from pandas.api.types import union_categoricals

from fleetfuel import schema
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.logs import POOL_COLUMNS, microtrip_rows
from fleetfuel.cycles.pieces import FloatArray, type_safd_counts
from fleetfuel.engine.executors import Engine, release_free_memory
from fleetfuel.engine.stream import PARTITION_KEY, PreparedFleet
from fleetfuel.engine.workdir import WorkFolder, read_frames, read_trip_rows
from fleetfuel.segment.config import SegmentConfig

J = TypeVar("J")
R = TypeVar("R")
POOL_ID_COLUMNS = (schema.VEHICLE_ID, *schema.SEGMENT_ID_COLUMNS)
"""The pool rows' columns held as categoricals (:meth:`WorkFolderRows.read`)."""
SAFD_COLUMNS = (schema.TIME_UTC, schema.SPEED_M_S, schema.TRIP_ID, schema.MICROTRIP_ID)
"""The columns a SAFD task reads (kinematics trip by trip, micro-trip of each row)."""


def _arrow(values: pd.Series | pd.Index) -> pa.Array:
    """``values`` as one Arrow string array (no copy for Arrow-backed texts of one chunk)."""
    array = pa.array(values.astype("string").array)
    return array.combine_chunks() if isinstance(array, pa.ChunkedArray) else array


@dataclass(frozen=True, slots=True)
class SafdJob:
    """Count the SAFD of partition ``key``'s micro-trips by type: the ``i``-th row of its feature
    table has type ``names[codes[i]]`` (none where ``codes[i]`` is -1).

    A code a micro-trip, not its id and type as texts: a fleet's jobs hold one byte per micro-trip.
    """

    key: str
    work: str
    codes: npt.NDArray[np.int8]
    names: tuple[str, ...]
    cycles: CyclesConfig
    segment: SegmentConfig


def partition_type_safd(job: SafdJob) -> dict[str, FloatArray]:
    """:func:`fleetfuel.cycles.pieces.type_safd_counts` of one partition's typed micro-trips. [s]"""
    work = WorkFolder(Path(job.work))
    samples = read_trip_rows(work.table("samples", job.key), SAFD_COLUMNS)
    ids = read_frames([work.table("features", job.key)], (schema.MICROTRIP_ID,))
    if samples is None or ids is None:
        return {}
    if len(ids) != job.codes.size:
        raise ValueError(f"{work.table('features', job.key)}: {len(ids)} micro-trips, the job typed {job.codes.size}")
    typed = job.codes >= 0
    names = np.asarray(job.names, dtype=object)[job.codes[typed]]
    types = pd.Series(names, index=ids[schema.MICROTRIP_ID].to_numpy()[typed], dtype="string")
    return type_safd_counts(samples, types, job.cycles, job.segment)


@dataclass(frozen=True, slots=True)
class WorkFolderRows:
    """:class:`fleetfuel.cycles.logs.PoolRows` in the work folder: ``(partition key, trip ids,
    micro-trip ids)`` of each partition holding some, in fleet order."""

    work: str
    parts: tuple[tuple[str, tuple[str, ...], tuple[str, ...]], ...]

    def read(self) -> pd.DataFrame:
        """:func:`fleetfuel.cycles.logs.microtrip_rows` of the listed micro-trips, read partition
        by partition (only their trips' rows, filtered in pyarrow); the id columns categorical
        (:data:`POOL_ID_COLUMNS`: a few thousand names over up to a hundred thousand rows)."""
        work, parts = WorkFolder(Path(self.work)), []
        for key, trips, microtrips in self.parts:
            rows = read_trip_rows(work.table("samples", key), POOL_COLUMNS, trips)
            if rows is not None:
                part = microtrip_rows(rows, microtrips)
                parts.append(part.astype({c: pd.CategoricalDtype(pd.Index(part[c].dropna().unique(), dtype="string"))
                                          for c in POOL_ID_COLUMNS}))
        if not parts:
            return pd.DataFrame({c: pd.Series([], dtype="string") for c in POOL_COLUMNS})
        pool = pd.DataFrame({c: union_categoricals([p[c] for p in parts]) if c in POOL_ID_COLUMNS
                             else pd.concat([p[c] for p in parts], ignore_index=True) for c in POOL_COLUMNS})
        del parts
        release_free_memory()  # the partitions' whole trips, read and cut down to the pool's rows
        return pool


class WorkFolderCycleLogs:
    """:class:`fleetfuel.cycles.logs.CycleLogs` answered from the work folder (see the module docstring).

    Parameters
    ----------
    fleet : PreparedFleet
    engine : Engine
        Where the SAFD tasks run; their records go to the fleet's task log.
    """

    def __init__(self, fleet: PreparedFleet, engine: Engine) -> None:
        self.fleet, self.engine = fleet, engine
        # The fleet's micro-trips with their partitions, one table (columns of the fleet's feature
        # table, not copies), so a lookup is one hash pass over the fleet, not one per partition.
        self._ids = fleet.microtrip_partitions()

    def _by_partition(self, mask: pd.Series) -> list[tuple[str, pd.DataFrame]]:
        """The rows of :attr:`_ids` under ``mask``, per partition in fleet order."""
        chosen = self._ids.loc[mask]
        return [(str(key), rows) for key, rows in chosen.groupby(PARTITION_KEY, sort=False, observed=True)]

    def type_safd(self, types: pd.Series, cfg: CyclesConfig, segment_cfg: SegmentConfig) -> dict[str, FloatArray]:
        names = tuple(sorted(str(name) for name in types.unique()))
        # micro-trip id -> type by Arrow's hash lookup (no Python text per micro-trip)
        at = pc.index_in(_arrow(self._ids[schema.MICROTRIP_ID]), value_set=_arrow(types.index)).to_numpy(
            zero_copy_only=False)
        found = ~np.isnan(at)
        codes = np.full(len(self._ids), -1, dtype=np.int8)
        codes[found] = pd.Categorical(types.array, categories=list(names)).codes[at[found].astype(np.int64)]
        by_key = pd.Series(codes, index=self._ids.index).groupby(self._ids[PARTITION_KEY], sort=False, observed=True)
        jobs = [SafdJob(str(key), str(self.fleet.work.root), part.to_numpy(dtype=np.int8), names, cfg, segment_cfg)
                for key, part in by_key if (part.to_numpy() >= 0).any()]
        parts = self.fleet.run_round(self.engine, partition_type_safd, jobs, "type safd")
        total: dict[str, FloatArray] = {}
        for part in parts:  # fleet order: the same sums whatever the engine
            for name, counts in part.items():
                total[name] = total[name] + counts if name in total else np.array(counts, dtype=np.float64)
        return dict(sorted(total.items()))

    def pool_rows(self, microtrip_ids: Collection[str]) -> WorkFolderRows:
        """Where the rows of ``microtrip_ids`` are in the work folder: each partition holding any,
        in fleet order, with its trips to read and its micro-trips wanted."""
        wanted = self._ids[schema.MICROTRIP_ID].isin(pd.Index(list(microtrip_ids)))
        parts = tuple((key, tuple(sorted(set(mine[schema.TRIP_ID]))), tuple(mine[schema.MICROTRIP_ID]))
                      for key, mine in self._by_partition(wanted))
        return WorkFolderRows(str(self.fleet.work.root), parts)

    def map(self, fn: Callable[[J], R], jobs: Sequence[J], stage: str) -> list[R]:
        return self.fleet.run_round(self.engine, fn, list(jobs), stage)
