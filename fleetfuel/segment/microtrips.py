"""Micro-trips: stop to stop, each carrying the idle that precedes it.

Definitions in :mod:`fleetfuel.segment.labels`; statistics in :mod:`fleetfuel.segment.features`.
"""

from __future__ import annotations

import pandas as pd

from fleetfuel import schema
from fleetfuel.segment._frame import ordered
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.segment.labels import label_rows


def split_microtrips(samples: pd.DataFrame, cfg: SegmentConfig | None = None) -> pd.DataFrame:
    """A copy of ``samples`` with ``period_id``, ``trip_id`` and ``microtrip_id``.

    A micro-trip is the idle before a drive plus the drive, up to and including the first stopped
    sample after it (stop: speed below ``cfg.stop_speed_m_s``, ~1 km/h by default). Rows between
    trips carry <NA> in ``trip_id`` and ``microtrip_id``.

    Parameters
    ----------
    samples : DataFrame
        Clean frame (see :mod:`fleetfuel.schema`), one or many vehicles and periods.
    cfg : SegmentConfig, optional

    Returns
    -------
    DataFrame
        Sorted by vehicle and time, index labels kept. The input is not modified.
    """
    cfg = cfg or SegmentConfig()
    out = ordered(samples)
    labels = label_rows(out, cfg)
    for name in schema.SEGMENT_ID_COLUMNS:
        out[name] = labels.column(name, out.index)
    return out
