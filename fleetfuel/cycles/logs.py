"""What the cycles stage asks of the logs beyond the micro-trip feature table: :class:`CycleLogs`.

The clustering, the types' targets and which micro-trips are measured come from the feature table
alone (one row per micro-trip). Two things need samples: each type's speed-acceleration frequency
distribution over all its measured driving (additive, so it can be summed partition by partition)
and the rows of the micro-trips each type's pool of pieces is cut from (bounded by
``CyclesConfig.pool_max_s`` per type; read inside the type's search task, :class:`PoolRows`). :class:`FrameLogs` answers both from a frame in memory;
the engine answers them from the work folder (:mod:`fleetfuel.engine.cycle_logs`), so the main
process never holds the fleet's samples. The logs also say where the types' independent cycle
searches run (:meth:`CycleLogs.map`): one after the other here, on the engine's workers there.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Sequence
from dataclasses import dataclass
from typing import Protocol, TypeVar

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.pieces import FloatArray, type_safd_counts
from fleetfuel.segment.config import SegmentConfig

POOL_COLUMNS = (schema.VEHICLE_ID, schema.TIME_UTC, schema.SPEED_M_S, schema.GRADE, *schema.SEGMENT_ID_COLUMNS)
"""The columns of the pool's rows (what pieces, their features and the cycle traces read)."""
J = TypeVar("J")
R = TypeVar("R")


class PoolRows(Protocol):
    """Where one type's pool rows are: read by :meth:`read` inside the type's search task (a small,
    picklable note, so no rows travel to the task)."""

    def read(self) -> pd.DataFrame:
        """:func:`microtrip_rows` of the type's pool micro-trips (:data:`POOL_COLUMNS`)."""
        ...


class CycleLogs(Protocol):
    """The samples side of the cycles stage (see the module docstring)."""

    def type_safd(self, types: pd.Series, cfg: CyclesConfig, segment_cfg: SegmentConfig) -> dict[str, FloatArray]:
        """Time in each SAFD cell of each type's micro-trips (``types``: microtrip_id -> type). [s]"""
        ...

    def pool_rows(self, microtrip_ids: Collection[str]) -> PoolRows:
        """Where the rows of ``microtrip_ids`` (:func:`microtrip_rows` of the fleet's segmented
        samples) are read."""
        ...

    def map(self, fn: Callable[[J], R], jobs: Sequence[J], stage: str) -> list[R]:
        """``fn`` of each job (independent, picklable, each with a ``key``), results in job order."""
        ...


def microtrip_rows(samples: pd.DataFrame, microtrip_ids: Collection[str]) -> pd.DataFrame:
    """Rows of the micro-trips ``microtrip_ids`` and the row before and after each within its trip.

    The neighbours give the micro-trips' edge rows the accelerations and time weights they have in
    the whole trip (:mod:`fleetfuel.segment.kinematics` looks one row either way). ``samples`` is
    a segmented frame sorted by vehicle and time; rows keep that order, index reset.
    """
    mt = samples[schema.MICROTRIP_ID]
    wanted = mt.isin(set(microtrip_ids)).to_numpy()
    trip = samples[schema.TRIP_ID].astype("string")
    known = trip.notna().to_numpy()
    values = trip.to_numpy(dtype=object, na_value="")
    same_trip_prev = np.r_[False, known[1:] & (values[1:] == values[:-1])]
    same_trip_next = np.r_[same_trip_prev[1:], False]
    keep = wanted.copy()
    keep[:-1] |= wanted[1:] & same_trip_prev[1:]  # row before a wanted row, same trip
    keep[1:] |= wanted[:-1] & same_trip_next[:-1]  # row after a wanted row, same trip
    return samples.loc[keep].reset_index(drop=True)


class FrameLogs:
    """:class:`CycleLogs` of a segmented frame in memory (the library's default)."""

    def __init__(self, samples: pd.DataFrame) -> None:
        self.samples = samples

    def type_safd(self, types: pd.Series, cfg: CyclesConfig, segment_cfg: SegmentConfig) -> dict[str, FloatArray]:
        return type_safd_counts(self.samples, types, cfg, segment_cfg)

    def pool_rows(self, microtrip_ids: Collection[str]) -> PoolRows:
        columns = [c for c in POOL_COLUMNS if c in self.samples.columns]
        return HeldRows(microtrip_rows(self.samples[columns], microtrip_ids))

    def map(self, fn: Callable[[J], R], jobs: Sequence[J], stage: str) -> list[R]:
        return [fn(job) for job in jobs]


@dataclass(frozen=True, slots=True)
class HeldRows:
    """:class:`PoolRows` already in memory (:class:`FrameLogs`: the searches run in this process)."""

    rows: pd.DataFrame

    def read(self) -> pd.DataFrame:
        return self.rows
