"""Present the ingest data-quality account (one row per input file) as text or JSON.

Presents only: every number comes from :func:`fleetfuel.clean.clean_batch`'s account.
"""

from __future__ import annotations

import json
import math
from typing import Any, Final

import numpy as np
import pandas as pd

JSON_KEYS: Final = (
    "path",
    "vehicle_ids",
    "rows_in",
    "rows_kept",
    "rows_interpolated",
    "dropped",
    "gaps",
    "logging_interval_s",
    "driving_time_s",
    "distance_km",
    "climb_m",
    "time_start",
    "time_end",
    "flags",
    "error",
)
"""Keys of each entry of ``files`` in ``inspect --json``, in order (extra account columns follow)."""


def _plain(value: Any) -> Any:
    """A JSON-ready Python value: numpy scalars unwrapped, NaN/NaT to None, times to ISO 8601."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_plain(v) for v in value]
    if isinstance(value, pd.Timestamp):
        return None if pd.isna(value) else value.isoformat()
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def account_records(account: pd.DataFrame) -> list[dict[str, Any]]:
    """The account as a list of JSON-ready dicts, :data:`JSON_KEYS` first."""
    keys = [k for k in JSON_KEYS if k in account.columns]
    keys += [c for c in account.columns if c not in keys]
    return [{k: _plain(row[k]) for k in keys} for row in account.to_dict(orient="records")]


def usable_files(account: pd.DataFrame) -> int:
    """Files that were read without error and kept at least one row."""
    return int((account["error"].isna() & (account["rows_kept"] > 0)).sum())


def account_json(account: pd.DataFrame) -> str:
    """``inspect --json`` output: ``{"files": [...], "summary": {...}}``."""
    files = account_records(account)
    summary = {
        "files": len(files),
        "usable_files": usable_files(account),
        "failed_files": sum(1 for f in files if f.get("error")),
        "rows_in": sum(int(f.get("rows_in") or 0) for f in files),
        "rows_kept": sum(int(f.get("rows_kept") or 0) for f in files),
        "rows_interpolated": sum(int(f.get("rows_interpolated") or 0) for f in files),
    }
    return json.dumps({"files": files, "summary": summary}, indent=2, ensure_ascii=False)


def _dropped_text(dropped: Any) -> str:
    if not isinstance(dropped, dict) or not dropped:
        return "-"
    return ", ".join(f"{reason} {count}" for reason, count in sorted(dropped.items()) if count)


def _number(value: Any, fmt: str) -> str:
    value = _plain(value)
    return "-" if value is None else format(value, fmt)


def account_text(account: pd.DataFrame) -> str:
    """The per-file data-quality table for a terminal, then a one-line fleet summary."""
    rows = []
    for rec in account_records(account):
        span = "-"
        if rec.get("time_start") and rec.get("time_end"):
            span = f"{rec['time_start'][:16]} .. {rec['time_end'][:16]}"
        rows.append(
            {
                "file": rec["path"],
                "vehicles": ",".join(rec.get("vehicle_ids") or []) or "-",
                "rows in": rec.get("rows_in", 0),
                "kept": rec.get("rows_kept", 0),
                "dropped": _dropped_text(rec.get("dropped")),
                "interpolated": rec.get("rows_interpolated", 0),
                "gaps": rec.get("gaps", 0),
                "step [s]": _number(rec.get("logging_interval_s"), ".3g"),
                "driving [h]": _number(
                    None if rec.get("driving_time_s") is None else rec["driving_time_s"] / 3600.0, ".2f"
                ),
                "distance [km]": _number(rec.get("distance_km"), ".1f"),
                "climb [m]": _number(rec.get("climb_m"), ".0f"),
                "time span (UTC)": span,
                "flags": ",".join(rec.get("flags") or []) or ("ERROR" if rec.get("error") else "-"),
            }
        )
    table = pd.DataFrame(rows).to_string(index=False) if rows else "(no files)"
    total_in = sum(r["rows in"] or 0 for r in rows)
    total_kept = sum(r["kept"] or 0 for r in rows)
    footer = (
        f"{len(rows)} files, {usable_files(account)} usable, "
        f"{int(account['error'].notna().sum())} failed; "
        f"{total_in} rows in, {total_kept} kept"
    )
    return f"{table}\n{footer}"
