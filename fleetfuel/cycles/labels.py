"""Plain descriptive labels of duty-cycle types, from their statistics (our own words).

A type's label is a road class from its mean running speed (speed excluding idle), plus
qualifiers; the thresholds are named here with the reason for each (no outside source gives
these bands for mixed fleets; they are our choice, common practice, no source):

============================ ================ ===============================================
rule                         threshold        label part
============================ ================ ===============================================
running speed < URBAN        35 km/h          ``urban``
running speed < SUBURBAN     50 km/h          ``suburban``
running speed < RURAL        70 km/h          ``rural``
otherwise                                     ``motorway``
stops per km >= STOP_AND_GO  2 /km            ``stop-and-go`` (a stop every 500 m or less)
idle share >= LONG_IDLE      0.30             ``long idling``
RPA >= BRISK                 0.30 m/s^2       ``brisk`` (hard accelerations)
mean abs grade >= HILLY      0.015            ``hilly`` (1.5 % on average, up or down)
============================ ================ ===============================================

Labels are unique within a set of types: types sharing a label are numbered, slowest first.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Final

import numpy as np
import pandas as pd

from fleetfuel.segment.config import KMH_M_S

URBAN_MAX_RUNNING_SPEED_M_S: Final = 35.0 * KMH_M_S
SUBURBAN_MAX_RUNNING_SPEED_M_S: Final = 50.0 * KMH_M_S
RURAL_MAX_RUNNING_SPEED_M_S: Final = 70.0 * KMH_M_S
STOP_AND_GO_STOPS_PER_KM: Final = 2.0
LONG_IDLE_SHARE: Final = 0.30
BRISK_RPA_M_S2: Final = 0.30
HILLY_MEAN_ABS_GRADE: Final = 0.015


def describe_type(stats: Mapping[str, float]) -> str:
    """Label of one type from its statistics (:data:`fleetfuel.segment.FEATURE_COLUMNS` keys).

    >>> describe_type({"mean_running_speed_m_s": 8.0, "stops_per_km": 3.0, "idle_share": 0.2,
    ...                "rpa_m_s2": 0.2, "mean_abs_grade": 0.004})
    'urban stop-and-go'
    """

    def value(name: str) -> float:
        x = stats.get(name, np.nan)
        return float("nan") if x is None or pd.isna(x) else float(x)

    running = value("mean_running_speed_m_s")
    if running < URBAN_MAX_RUNNING_SPEED_M_S:
        road = "urban"
    elif running < SUBURBAN_MAX_RUNNING_SPEED_M_S:
        road = "suburban"
    elif running < RURAL_MAX_RUNNING_SPEED_M_S:
        road = "rural"
    else:
        road = "motorway"
    parts = []
    if value("mean_abs_grade") >= HILLY_MEAN_ABS_GRADE:
        parts.append("hilly")
    parts.append(road)
    if value("stops_per_km") >= STOP_AND_GO_STOPS_PER_KM:
        parts.append("stop-and-go")
    extras = []
    if value("idle_share") >= LONG_IDLE_SHARE:
        extras.append("long idling")
    if value("rpa_m_s2") >= BRISK_RPA_M_S2:
        extras.append("brisk")
    label = " ".join(parts)
    return f"{label}, {', '.join(extras)}" if extras else label


def label_types(stats: pd.DataFrame) -> pd.Series:
    """Unique label of each type (rows of ``stats``, in order: types are numbered slowest first)."""
    labels = pd.Series([describe_type(row) for row in stats.to_dict("records")], index=stats.index, name="label")
    counts = labels.groupby(labels).transform("size")
    number = labels.groupby(labels).cumcount() + 1
    return labels.where(counts == 1, labels + " " + number.astype(str))
