"""The routes file: which route each vehicle drives, optionally per time window.

Two layouts, one content. Each entry has the keys

================== ========== ====================================================================
key                required   meaning
================== ========== ====================================================================
``vehicle_id``     yes        vehicle, as in the logs
``route``          yes        route name (free text)
``start``          no         ISO 8601 date-time: the entry applies to trips starting at or after it
``end``            no         ISO 8601 date-time: ... and starting before it
``payload_kg``     no         payload carried on the route [kg]
``planned_annual_km`` no      distance planned on the route per year [km]
================== ========== ====================================================================

Times without a UTC offset are read as UTC. Unknown keys or columns are rejected. An entry
without ``start`` and ``end`` is the vehicle's default; entries with a window win over it, and two
windowed entries of one vehicle must not overlap. ``payload_kg`` and ``planned_annual_km`` belong
to the route: entries naming one route must not disagree on them.

CSV (``.csv``): a header line with those column names, one entry per line, empty cells absent::

    vehicle_id,route,start,end,payload_kg,planned_annual_km
    V01,Harbour shuttle,,,18000,90000
    V02,North loop,2024-03-01T00:00:00Z,2024-04-01T00:00:00Z,,

TOML (``.toml``): an array of tables named ``route``::

    [[route]]
    vehicle_id = "V01"
    route = "Harbour shuttle"
    payload_kg = 18000
"""

from __future__ import annotations

import csv
import datetime as dt
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any, Final

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.errors import ConfigError
from fleetfuel.segment._frame import seconds

ROUTES_FILE_KEYS: Final = ("vehicle_id", "route", "start", "end", "payload_kg", "planned_annual_km")
REQUIRED_KEYS: Final = ("vehicle_id", "route")
RULE_COLUMNS: Final = (
    schema.VEHICLE_ID,
    schema.ROUTE,
    "start_utc",
    "end_utc",
    "payload_kg",
    "planned_annual_km",
    "where",
)
"""Columns of the rule table :func:`load_routes_file` returns (``where``: file and line/entry)."""


def _time(value: Any, where: str, key: str) -> pd.Timestamp | None:
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    if isinstance(value, dt.date) and not isinstance(value, dt.datetime):
        value = dt.datetime(value.year, value.month, value.day)
    try:
        stamp = pd.Timestamp(value.strip() if isinstance(value, str) else value)
    except (ValueError, TypeError):
        raise ConfigError(f"{where}: {key} must be an ISO 8601 date-time, found {value!r}") from None
    if pd.isna(stamp):
        raise ConfigError(f"{where}: {key} must be an ISO 8601 date-time, found {value!r}")
    return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")


def _number(value: Any, where: str, key: str, *, positive: bool) -> float:
    if value is None or (isinstance(value, str) and not value.strip()):
        return float("nan")
    try:
        number = float(value) if not isinstance(value, bool) else float("nan")
    except (ValueError, TypeError):
        number = float("nan")
    ok = np.isfinite(number) and (number > 0 if positive else number >= 0)
    if not ok:
        bound = "> 0" if positive else ">= 0"
        raise ConfigError(f"{where}: {key} must be a number {bound}, found {value!r}")
    return number


def _rule(entry: Mapping[str, Any], where: str) -> dict[str, Any]:
    unknown = sorted(set(entry) - set(ROUTES_FILE_KEYS))
    if unknown:
        raise ConfigError(f"{where}: unknown key {unknown[0]!r}; known keys: {', '.join(ROUTES_FILE_KEYS)}")
    for key in REQUIRED_KEYS:
        value = entry.get(key)
        if not isinstance(value, str) or not value.strip():
            raise ConfigError(f"{where}: {key} must be a non-empty text, found {value!r}")
    start, end = _time(entry.get("start"), where, "start"), _time(entry.get("end"), where, "end")
    if start is not None and end is not None and not start < end:
        raise ConfigError(f"{where}: start must be before end, found start {start} and end {end}")
    return {
        schema.VEHICLE_ID: entry["vehicle_id"].strip(),
        schema.ROUTE: entry["route"].strip(),
        "start_utc": start,
        "end_utc": end,
        "payload_kg": _number(entry.get("payload_kg"), where, "payload_kg", positive=False),
        "planned_annual_km": _number(
            entry.get("planned_annual_km"), where, "planned_annual_km", positive=True
        ),
        "where": where,
    }


def _csv_entries(path: Path, text: str) -> list[tuple[dict[str, Any], str]]:
    reader = csv.reader(text.splitlines())
    header = next(reader, None)
    if header is None:
        raise ConfigError(f"{path}: empty routes file; expected a header with {', '.join(REQUIRED_KEYS)}")
    names = [h.strip() for h in header]
    unknown = [h for h in names if h not in ROUTES_FILE_KEYS]
    if unknown:
        raise ConfigError(
            f"{path}: unknown column {unknown[0]!r}; known columns: {', '.join(ROUTES_FILE_KEYS)}"
        )
    missing = [k for k in REQUIRED_KEYS if k not in names]
    if missing:
        raise ConfigError(f"{path}: missing column {missing[0]!r}; found columns {names}")
    entries = []
    for line_no, cells in enumerate(reader, start=2):
        if not any(c.strip() for c in cells):
            continue
        if len(cells) != len(names):
            raise ConfigError(f"{path} line {line_no}: expected {len(names)} cells, found {len(cells)}")
        entries.append(
            ({k: c for k, c in zip(names, cells, strict=True) if c.strip()}, f"{path} line {line_no}")
        )
    return entries


def _toml_entries(path: Path, text: str) -> list[tuple[dict[str, Any], str]]:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML ({exc})") from None
    unknown = sorted(set(data) - {"route"})
    if unknown:
        raise ConfigError(f"{path}: unknown key {unknown[0]!r}; expected [[route]] tables only")
    tables = data.get("route", [])
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        raise ConfigError(f"{path}: 'route' must be an array of tables ([[route]])")
    return [(table, f"{path} [[route]] entry {k}") for k, table in enumerate(tables, start=1)]


def _check_windows(rules: pd.DataFrame) -> None:
    windowed = rules.loc[rules["start_utc"].notna() | rules["end_utc"].notna()].copy()
    lo, hi = seconds(windowed["start_utc"]), seconds(windowed["end_utc"])
    windowed["lo"] = np.where(np.isnan(lo), -np.inf, lo)  # open start
    windowed["hi"] = np.where(np.isnan(hi), np.inf, hi)  # open end
    windowed = windowed.sort_values([schema.VEHICLE_ID, "lo"], kind="stable")
    same = windowed[schema.VEHICLE_ID].eq(windowed[schema.VEHICLE_ID].shift())
    overlap = same & (windowed["lo"] < windowed["hi"].shift())
    if overlap.any():
        k = int(np.flatnonzero(overlap.to_numpy())[0])
        raise ConfigError(
            f"{windowed['where'].iloc[k]}: time window overlaps {windowed['where'].iloc[k - 1]} "
            f"for vehicle {windowed[schema.VEHICLE_ID].iloc[k]!r}"
        )
    defaults = rules.loc[rules["start_utc"].isna() & rules["end_utc"].isna()]
    twice = defaults[schema.VEHICLE_ID].duplicated()
    if twice.any():
        k = int(np.flatnonzero(twice.to_numpy())[0])
        raise ConfigError(
            f"{defaults['where'].iloc[k]}: second entry without start/end for vehicle "
            f"{defaults[schema.VEHICLE_ID].iloc[k]!r}; give time windows"
        )


def _check_route_attributes(rules: pd.DataFrame) -> None:
    for key in ("payload_kg", "planned_annual_km"):
        given = rules.loc[rules[key].notna(), [schema.ROUTE, key, "where"]]
        spread = given.groupby(schema.ROUTE)[key].nunique()
        if (spread > 1).any():
            route = spread.index[np.flatnonzero(spread.to_numpy() > 1)[0]]
            places = given.loc[given[schema.ROUTE] == route, "where"].tolist()
            raise ConfigError(f"{places[1]}: {key} of route {route!r} disagrees with {places[0]}")


def load_routes_file(path: str | Path) -> pd.DataFrame:
    """Read and check a routes file (CSV or TOML, by suffix; layout in the module docstring).

    Returns
    -------
    DataFrame
        :data:`RULE_COLUMNS`, one row per entry: ``start_utc``/``end_utc`` UTC (NaT: open),
        ``payload_kg`` [kg] and ``planned_annual_km`` [km] (NaN: not given).

    Raises
    ------
    ConfigError
        Unreadable file, unknown suffix, key or column, bad value, overlapping windows or
        disagreeing route attributes; the message names the file and line or entry.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".toml"):
        raise ConfigError(f"{path}: routes file must be .csv or .toml, found suffix {path.suffix!r}")
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: cannot read routes file ({exc.__class__.__name__}: {exc})") from None
    entries = _csv_entries(path, text) if suffix == ".csv" else _toml_entries(path, text)
    rules = pd.DataFrame([_rule(entry, where) for entry, where in entries], columns=list(RULE_COLUMNS))
    for col in ("start_utc", "end_utc"):
        rules[col] = pd.to_datetime(rules[col], utc=True)
    for col in ("payload_kg", "planned_annual_km"):
        rules[col] = rules[col].astype(np.float64)
    for col in (schema.VEHICLE_ID, schema.ROUTE, "where"):
        rules[col] = rules[col].astype("string")
    _check_windows(rules)
    _check_route_attributes(rules)
    return rules


def match_rules(trips: pd.DataFrame, rules: pd.DataFrame) -> pd.Series:
    """Route of each trip from the rules (windowed entries first, then the vehicle's default).

    Parameters
    ----------
    trips : DataFrame
        At least ``trip_id``, ``vehicle_id`` and ``start_utc``.
    rules : DataFrame
        From :func:`load_routes_file`.

    Returns
    -------
    Series
        Route name indexed by ``trip_id``; trips no entry matches are absent.
    """
    if trips.empty or rules.empty:
        return pd.Series(dtype="string")
    pairs = trips[[schema.TRIP_ID, schema.VEHICLE_ID, "start_utc"]].merge(
        rules[[schema.VEHICLE_ID, schema.ROUTE, "start_utc", "end_utc"]].rename(
            columns={"start_utc": "lo", "end_utc": "hi"}
        ),
        on=schema.VEHICLE_ID,
    )
    inside = (pairs["lo"].isna() | (pairs["start_utc"] >= pairs["lo"])) & (
        pairs["hi"].isna() | (pairs["start_utc"] < pairs["hi"])
    )
    pairs = pairs.loc[inside].assign(default=pairs["lo"].isna() & pairs["hi"].isna())
    pairs = pairs.sort_values([schema.TRIP_ID, "default"], kind="stable").drop_duplicates(schema.TRIP_ID)
    return pairs.set_index(schema.TRIP_ID)[schema.ROUTE].astype("string")
