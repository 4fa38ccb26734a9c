"""The row account: one row per input file, every input row kept or dropped with a reason.

``rows_in == rows_kept + sum(dropped.values())`` for every file, always. ``rows_kept`` is counted
independently of the drops (input rows that survive every step, whether or not resampling merged
them with others), so the identity is a real check; a violation is a bug and raises
:class:`fleetfuel.errors.InternalError`. Interpolated samples are counted apart
(``rows_interpolated``) and are never input rows.

Columns (:data:`ACCOUNT_TABLE_COLUMNS`):

====================== ==========================================================================
``path``               the file as given
``vehicle_ids``        list of vehicle ids seen in it (sorted)
``rows_in``            data rows (or GPX points) the file holds
``rows_kept``          input rows that reach the clean frame
``rows_interpolated``  clean samples made by resampling, attributed to this file
``dropped``            dict reason -> count (reader drops and clean drops)
``error``              None, or the one-line message of a file that could not be read
``gaps``               breaks (long gaps, lasting position jumps) starting in this file
``logging_interval_s`` median time step of the file's kept rows [s]
``driving_time_s``     clean samples not at standstill, times the step [s]
``distance_km``        distance driven [km]
``climb_m``            climb of the smoothed elevation [m]
``time_start``         first clean sample [UTC]
``time_end``           last clean sample [UTC]
``flags``              list of reader and clean flags
``profile``            ingest profile that read it
``positions_blanked``  kept rows whose invalid or outlying position was blanked
``grade_clipped``      clean samples whose grade was clipped to ``grade_limit``
====================== ==========================================================================
"""

from __future__ import annotations

from typing import Any, Final

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.errors import InternalError
from fleetfuel.ingest.base import LogBatch, LogFile

M_PER_KM: Final = 1000.0  # SI prefix kilo, exact

ACCOUNT_TABLE_COLUMNS: Final = (
    *schema.ACCOUNT_COLUMNS,
    "gaps",
    "logging_interval_s",
    "driving_time_s",
    "distance_km",
    "climb_m",
    "time_start",
    "time_end",
    "flags",
    "profile",
    "positions_blanked",
    "grade_clipped",
)

_SUMMED: Final = ("rows_kept", "rows_interpolated", "gaps", "driving_time_s", "distance_m", "climb_m",
                  "positions_blanked", "grade_clipped")


def weighted_median(values: np.ndarray, weights: np.ndarray) -> float:
    """Median of ``values`` weighted by ``weights`` (NaN values and zero weights ignored)."""
    v = np.asarray(values, dtype=np.float64)
    wt = np.asarray(weights, dtype=np.float64)
    use = np.isfinite(v) & (wt > 0)
    if not use.any():
        return float("nan")
    order = np.argsort(v[use])
    v, wt = v[use][order], wt[use][order]
    cum = np.cumsum(wt)
    return float(v[np.searchsorted(cum, cum[-1] / 2)])


def check_identity(path: str, rows_in: int, rows_kept: int, dropped: dict[str, int]) -> None:
    """Raise :class:`InternalError` unless ``rows_in == rows_kept + sum(dropped)`` (a bug otherwise)."""
    total = rows_kept + sum(dropped.values())
    if rows_in != total:
        raise InternalError(
            f"row account broken for {path}: rows_in {rows_in} != rows_kept {rows_kept} + dropped "
            f"{sum(dropped.values())} {dropped}"
        )
    unknown = set(dropped) - set(schema.DROP_REASONS)
    if unknown:
        raise InternalError(f"row account for {path}: drop reasons {sorted(unknown)} not in schema.DROP_REASONS")


def _empty_row(path: str) -> dict[str, Any]:
    return {
        "path": path, "vehicle_ids": [], "rows_in": 0, "rows_kept": 0, "rows_interpolated": 0,
        "dropped": {}, "error": None, "gaps": 0, "logging_interval_s": float("nan"),
        "driving_time_s": 0.0, "distance_km": 0.0, "climb_m": 0.0, "time_start": pd.NaT,
        "time_end": pd.NaT, "flags": [], "profile": None, "positions_blanked": 0, "grade_clipped": 0,
    }


def _file_row(log: LogFile, part: pd.DataFrame | None, drops: pd.Series) -> dict[str, Any]:
    """Account row of one read file: reader drops + clean drops, summaries summed over vehicles."""
    path = str(log.path)
    row = _empty_row(path)
    dropped: dict[str, int] = {}
    if len(log.dropped):
        for why, count in log.dropped["reason"].astype(str).value_counts(sort=False).items():
            dropped[why] = dropped.get(why, 0) + int(count)
    if len(drops) and path in drops.index.get_level_values(0):
        for why, count in drops.loc[path].items():
            dropped[str(why)] = dropped.get(str(why), 0) + int(count)
    flags: list[str] = []
    if part is not None:
        for key in _SUMMED:
            row[key] = part[key].sum().item()
        row["distance_km"] = float(row.pop("distance_m")) / M_PER_KM
        row["vehicle_ids"] = sorted(str(v) for v in part[schema.VEHICLE_ID].dropna().unique())
        row["logging_interval_s"] = weighted_median(part["logging_interval_s"].to_numpy(), part["intervals"].to_numpy())
        row["time_start"] = part["time_start"].min()
        row["time_end"] = part["time_end"].max()
        flags = [f for fs in part["flags"] for f in fs]
    row["flags"] = list(dict.fromkeys([*log.flags, *flags]))
    row["rows_in"] = int(log.rows_in)
    row["dropped"] = dict(sorted(dropped.items()))
    row["profile"] = log.profile
    check_identity(path, int(log.rows_in), int(row["rows_kept"]), row["dropped"])
    return row


def build_account(batch: LogBatch, summaries: pd.DataFrame, clean_dropped: pd.DataFrame) -> pd.DataFrame:
    """The row account of a batch.

    Parameters
    ----------
    batch : LogBatch
        What the readers returned (files and failures).
    summaries : DataFrame
        Per (vehicle, file) summaries from :func:`fleetfuel.clean.vehicle.clean_vehicle`, concatenated.
    clean_dropped : DataFrame
        Rows the clean stage dropped (``source_file``, ``source_row``, ``reason``).

    Returns
    -------
    DataFrame
        One row per input file (failures included), :data:`ACCOUNT_TABLE_COLUMNS`, sorted by path.
    """
    by_file = {name: part for name, part in summaries.groupby(schema.SOURCE_FILE, sort=False)} if len(summaries) else {}
    drops = (
        clean_dropped.groupby([schema.SOURCE_FILE, "reason"]).size() if len(clean_dropped) else pd.Series(dtype=int)
    )
    rows = [_file_row(log, by_file.get(str(log.path)), drops) for log in batch.files]
    for failure in batch.failures:
        row = _empty_row(str(failure.path))
        row["error"] = failure.error
        rows.append(row)
    table = pd.DataFrame(rows, columns=list(ACCOUNT_TABLE_COLUMNS))
    for col in ("error", "profile"):  # None stays None (not NaN) for the JSON report
        table[col] = pd.Series([r[col] for r in rows], dtype=object, index=table.index)
    for col in ("time_start", "time_end"):
        table[col] = pd.to_datetime(table[col], utc=True).astype("datetime64[ns, UTC]")
    for col in ("rows_in", "rows_kept", "rows_interpolated", "gaps", "positions_blanked", "grade_clipped"):
        table[col] = table[col].astype(np.int64)
    for col in ("logging_interval_s", "driving_time_s", "distance_km", "climb_m"):
        table[col] = table[col].astype(np.float64)
    return table.sort_values("path", kind="stable").reset_index(drop=True)
