"""The cycles stage's logs read from the work folder answer as the same samples held in memory.

Reference: :class:`fleetfuel.cycles.logs.FrameLogs` over the fleet's segmented samples (the
library's in-memory path); the work folder's answers (per-partition SAFD tasks, pool rows read
where a type's search runs) must be the same numbers.
"""

from __future__ import annotations

import pickle
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from fleet_files import write_tiny_fleet

from fleetfuel import schema
from fleetfuel.config import RunConfig
from fleetfuel.cycles import CyclesConfig
from fleetfuel.cycles.logs import FrameLogs
from fleetfuel.engine.cycle_logs import WorkFolderCycleLogs, WorkFolderRows
from fleetfuel.engine.executors import make_engine
from fleetfuel.engine.stream import prepare_fleet
from fleetfuel.segment.config import SegmentConfig


@pytest.fixture(scope="module")
def both(tmp_path_factory: pytest.TempPathFactory):
    base = tmp_path_factory.mktemp("cycle-logs")
    fleet_dir = write_tiny_fleet(base / "fleet", vehicles=2, days=2)
    cfg = RunConfig()
    with make_engine(cfg.engine) as engine:
        fleet = prepare_fleet([fleet_dir], cfg, base / "work", engine)
        yield WorkFolderCycleLogs(fleet, engine), FrameLogs(fleet.samples()), fleet.features


def _types(features: pd.DataFrame) -> pd.Series:
    """Every third micro-trip T2, the others T1, one in five untyped: an assignment of the stage's shape."""
    ids = features[schema.MICROTRIP_ID].astype("string")
    names = np.where(np.arange(len(ids)) % 3 == 0, "T2", "T1")
    keep = np.arange(len(ids)) % 5 != 4
    return pd.Series(pd.array(names[keep], dtype="string"), index=pd.Index(ids.array[keep]), dtype="string")


def test_type_safd_from_partition_tasks_equals_the_frame(both) -> None:
    work, frame, features = both
    cfg, seg = CyclesConfig(), SegmentConfig()
    got, want = work.type_safd(_types(features), cfg, seg), frame.type_safd(_types(features), cfg, seg)
    assert sorted(got) == sorted(want) == ["T1", "T2"]
    for name in want:
        assert want[name].sum() > 0
        # the same cells; partitions' counts added in fleet order, so only the last digits may move
        np.testing.assert_allclose(got[name], want[name], rtol=1e-12, atol=1e-9)


def test_pool_rows_read_in_a_task_equal_the_frame(both) -> None:
    work, frame, features = both
    ids = features[schema.MICROTRIP_ID].astype(str).tolist()[::4]
    note = work.pool_rows(ids)
    assert isinstance(note, WorkFolderRows) and len(pickle.dumps(note)) < 50_000  # a note, not rows
    got = pickle.loads(pickle.dumps(note)).read()  # as a worker would
    want = frame.pool_rows(ids).read()
    assert len(want) > len(ids)  # the micro-trips' rows and their neighbours
    got = got.astype({c: "string" for c in got.columns if isinstance(got[c].dtype, pd.CategoricalDtype)})
    pd.testing.assert_frame_equal(got[list(want.columns)], want, check_dtype=False, check_exact=True)
    assert work.pool_rows([]).read().empty
