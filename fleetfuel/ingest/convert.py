"""From an Arrow table of one file's columns to a :class:`LogFile`: units, times, ids, the row account.

Shared by the CSV and Parquet readers; every step is vectorised (Arrow compute, numpy).
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any, Final

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from fleetfuel import schema, units
from fleetfuel.errors import InputDataError
from fleetfuel.ingest.base import LogFile, conform
from fleetfuel.ingest.config import IngestConfig, member_name, vehicle_id_from_path
from fleetfuel.ingest.detect import Resolved
from fleetfuel.ingest.profiles import QUANTITY_OF, ColumnRule, Profile
from fleetfuel.ingest.timeparse import NAT, localize_ns, parse_times

_NUMBER: Final = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_NEGATIVE_HEMISPHERES: Final = ("s", "w")


def _is_text(arr: pa.Array) -> bool:
    return pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type)


def parse_numbers(arr: pa.Array, *, strip_unit: bool = False, decimal: str = ".") -> pa.Array:
    """Text cells to float64; cells that are not a number become null (never an error).

    Parameters
    ----------
    arr : pyarrow.Array
        Text cells.
    strip_unit : bool
        Keep only the leading number of each cell (``"374.812 m"`` -> 374.812).
    decimal : str
        Decimal mark of the cells, ``"."`` or ``","``.
    """
    text = pc.utf8_trim_whitespace(arr)
    if decimal == ",":
        text = pc.replace_substring(text, ",", ".")
    if strip_unit:
        found = pc.struct_field(pc.extract_regex(text, rf"^(?P<n>{_NUMBER})"), [0])
        text = pc.if_else(pc.is_valid(pc.extract_regex(text, rf"^(?P<n>{_NUMBER})")), found, None)
    else:
        text = pc.if_else(pc.match_substring_regex(text, rf"^{_NUMBER}$"), text, None)
    return pc.cast(text, pa.float64())


def _to_numpy(arr: pa.Array) -> npt.NDArray[np.float64]:
    if not (pa.types.is_floating(arr.type) or pa.types.is_integer(arr.type) or pa.types.is_decimal(arr.type)):
        arr = parse_numbers(arr) if _is_text(arr) else pc.cast(arr, pa.float64())
    arr = pc.cast(arr, pa.float64())
    return np.asarray(arr.to_numpy(zero_copy_only=False), dtype=np.float64)


def column_si(arr: pa.Array, rule: ColumnRule, unit: str | None, decimal: str) -> npt.NDArray[np.float64]:
    """One numeric column in SI: tolerant parse, ``scale``, unit conversion (NaN where absent)."""
    if _is_text(arr):
        arr = parse_numbers(arr, strip_unit=rule.strip_unit, decimal=decimal)
    values = _to_numpy(arr)
    if rule.scale != 1.0:
        values = values * rule.scale
    quantity = QUANTITY_OF.get(rule.canonical)
    if quantity is not None and unit is not None:
        values = units.to_si(values, quantity, unit)
    return np.where(np.isfinite(values), values, np.nan)


def _hemisphere_sign(arr: pa.Array) -> npt.NDArray[np.float64]:
    letters = pc.utf8_lower(pc.utf8_trim_whitespace(pc.cast(arr, pa.string())))
    negative = pc.is_in(letters, value_set=pa.array(_NEGATIVE_HEMISPHERES))
    return np.where(np.asarray(negative.fill_null(False).to_numpy(zero_copy_only=False)), -1.0, 1.0)


def _dictionary_text(column: pa.ChunkedArray | pa.Array) -> pa.DictionaryArray:
    """A text column as one dictionary array, values trimmed, empty values null."""
    if isinstance(column, pa.ChunkedArray):
        if pa.types.is_dictionary(column.type):
            column = pa.table({"c": column}).unify_dictionaries().column(0)
        column = column.combine_chunks()
    if not pa.types.is_dictionary(column.type):
        column = pc.dictionary_encode(pc.cast(column, pa.string()))
    values = pc.utf8_trim_whitespace(pc.cast(column.dictionary, pa.string()))
    empty = pc.take(pc.equal(values, ""), column.indices)
    indices = pc.if_else(pc.fill_null(empty, False), pa.scalar(None, column.indices.type), column.indices)
    return pa.DictionaryArray.from_arrays(indices, values)


def _vehicle_ids(
    table: pa.Table, profile: Profile, resolved: Resolved, path: Path, cfg: IngestConfig
) -> pa.DictionaryArray:
    """Vehicle id per row, dictionary-encoded text (null where the id column is empty)."""
    rule = profile.vehicle
    n = table.num_rows
    if rule.source == "column" and resolved.vehicle_column is not None:
        return _dictionary_text(table.column(resolved.vehicle_column))
    if rule.source == "config":
        value = cfg.vehicle_id_for(path)
    elif rule.source == "name_regex":
        match = re.search(rule.pattern, member_name(path))
        if match is None:
            raise InputDataError(f"{path}: vehicle id pattern {rule.pattern!r} does not match the file name")
        value = match.groupdict().get("id") or (match.group(1) if match.groups() else match.group(0))
    else:
        value = vehicle_id_from_path(path, rule.source, rule.value)
    return pa.DictionaryArray.from_arrays(
        pa.array(np.zeros(n, dtype=np.int32)), pa.array([value], pa.string())
    )


def _blank(parts: list[pa.Array], rows: npt.NDArray[np.int64]) -> npt.NDArray[np.bool_]:
    """Of the given rows, those whose time cells are all empty (null or only white space)."""
    blank = np.ones(len(rows), dtype=bool)
    if not len(rows):
        return blank
    index = pa.array(rows)
    for part in parts:
        sub = part.take(index)
        empty = pc.is_null(sub)
        if _is_text(sub):
            empty = pc.or_kleene(empty, pc.equal(pc.utf8_trim_whitespace(sub), ""))
        blank &= np.asarray(empty.fill_null(True).to_numpy(zero_copy_only=False))
    return blank


def _times_utc(
    table: pa.Table,
    profile: Profile,
    resolved: Resolved,
    path: Path,
    cfg: IngestConfig,
    ids: pa.DictionaryArray,
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.bool_], npt.NDArray[np.bool_], npt.NDArray[np.bool_]]:
    """UTC ns per row, plus masks: time cells empty, unparseable, implausible."""
    parts = [table.column(h).combine_chunks() for h in resolved.time_parts]
    parsed = parse_times(parts, profile.time, member_name(path))
    ns = parsed.ns
    naive = (~parsed.is_utc) & (ns != NAT)
    nonexistent = np.zeros(len(ns), dtype=bool)
    zone = profile.time.timezone or cfg.timezone
    if naive.any() and zone != "UTC":
        groups = np.asarray(pc.cast(ids.indices, pa.int64()).fill_null(-1).to_numpy(zero_copy_only=False))
        local, gap = localize_ns(np.where(naive, ns, NAT), zone, groups)
        ns = np.where(naive, local, ns)
        nonexistent = gap & naive
    failed = np.flatnonzero((ns == NAT) & ~nonexistent)
    empty = np.zeros(len(ns), dtype=bool)
    empty[failed] = _blank(parts, failed)
    unparseable = (ns == NAT) & ~empty & ~nonexistent
    implausible = nonexistent
    if profile.time.kind != "elapsed_s":
        low = pd.Timestamp(cfg.earliest_time_utc, tz="UTC").value
        high = pd.Timestamp(cfg.latest_time_utc, tz="UTC").value
        implausible = implausible | ((ns != NAT) & ((ns < low) | (ns >= high)))
    return ns, empty, unparseable, implausible


def _string_array(arr: pa.Array) -> pd.api.extensions.ExtensionArray:
    """Arrow text as a pandas ``string`` array without a round trip through Python objects."""
    return pd.arrays.ArrowStringArray(pa.chunked_array([pc.cast(arr, pa.string())]))


def _repeat_text(text: str, n: int) -> pa.Array:
    codes = pa.array(np.zeros(n, dtype=np.int32))
    return pa.DictionaryArray.from_arrays(codes, pa.array([text], pa.string())).cast(pa.string())


def _reasons(masks: list[tuple[str, npt.NDArray[np.bool_]]], n: int) -> npt.NDArray[np.int8]:
    """Index (into ``masks``) of the first applicable drop reason per row; -1: kept."""
    code = np.full(n, -1, dtype=np.int8)
    for i in range(len(masks) - 1, -1, -1):
        code[masks[i][1]] = i
    return code


def build_log(
    table: pa.Table,
    *,
    path: Path,
    profile: Profile,
    resolved: Resolved,
    cfg: IngestConfig,
    decimal: str,
    source_rows: npt.NDArray[np.int64] | None = None,
    extra_dropped: pd.DataFrame | None = None,
    rows_in: int | None = None,
) -> LogFile:
    """Convert the columns of one file to a :class:`LogFile` with its row account.

    Parameters
    ----------
    table : pyarrow.Table
        The needed columns (headers as in the file), one row per parsed data row.
    source_rows : ndarray of int64, optional
        0-based data row of each table row (default ``0..n-1``).
    extra_dropped : DataFrame, optional
        Rows already rejected by the parser (``source_row``, ``reason``).
    rows_in : int, optional
        Data rows of the file (default ``table.num_rows`` plus ``extra_dropped``).

    Raises
    ------
    InputDataError
        No row is usable; the message gives the tally of reasons.
    """
    n = table.num_rows
    rows = np.arange(n, dtype=np.int64) if source_rows is None else source_rows
    ids = _vehicle_ids(table, profile, resolved, path, cfg)
    ns, empty, unparseable, implausible = _times_utc(table, profile, resolved, path, cfg, ids)
    data: dict[str, Any] = {}
    for canonical, (header, rule, unit) in resolved.columns.items():
        arr = table.column(header).combine_chunks()
        if canonical in schema.STRING_COLUMNS:
            data[canonical] = _string_array(pc.utf8_trim_whitespace(pc.cast(arr, pa.string())))
            continue
        values = column_si(arr, rule, unit, decimal)
        if canonical in resolved.hemispheres:
            values = values * _hemisphere_sign(table.column(resolved.hemispheres[canonical]).combine_chunks())
        data[canonical] = values
    nan = np.full(n, np.nan)
    speed = data.get(schema.SPEED_M_S, nan)
    has_pos = np.isfinite(data.get(schema.LAT_DEG, nan)) & np.isfinite(data.get(schema.LON_DEG, nan))
    no_signal = ~np.isfinite(speed) & ~has_pos
    no_vehicle = np.asarray(pc.is_null(ids).to_numpy(zero_copy_only=False)) if n else np.zeros(0, bool)
    masks = [
        (schema.DROP_TIME_MISSING, empty),
        (schema.DROP_TIME_UNPARSEABLE, unparseable),
        (schema.DROP_TIME_IMPLAUSIBLE, implausible),
        (schema.DROP_VEHICLE_UNKNOWN, no_vehicle),
        (schema.DROP_NO_SIGNAL, no_signal),
    ]
    code = _reasons(masks, n)
    keep = code < 0
    names = np.array([name for name, _ in masks], dtype=object)
    dropped = pd.DataFrame(
        {"source_row": rows[~keep], "reason": pd.array(names[code[~keep]], dtype="string")}
    )
    if extra_dropped is not None and len(extra_dropped):
        dropped = pd.concat([extra_dropped, dropped], ignore_index=True).sort_values(
            "source_row", kind="stable"
        )
        dropped = dropped.reset_index(drop=True)
    total = n + (0 if extra_dropped is None else len(extra_dropped)) if rows_in is None else rows_in
    if not keep.any():
        tally = dropped["reason"].value_counts()
        detail = ", ".join(f"{k}: {v}" for k, v in tally.items()) or "no data rows"
        raise InputDataError(f"{path}: no usable rows out of {total} ({detail}); profile {profile.name}")
    every = bool(keep.all())
    mask = pa.array(keep)
    columns = {
        schema.VEHICLE_ID: _string_array(ids if every else ids.filter(mask)),
        schema.TIME_UTC: pd.DatetimeIndex((ns if every else ns[keep]).view("datetime64[ns]"))
        .tz_localize("UTC")
        .array,
        **{k: (v if every else v[keep]) for k, v in data.items()},
        schema.SOURCE_FILE: _string_array(_repeat_text(str(path), int(keep.sum()))),
        schema.SOURCE_ROW: rows if every else rows[keep],
    }
    samples = conform(columns, int(keep.sum()))
    return LogFile(
        path=path,
        samples=samples,
        rows_in=int(total),
        dropped=dropped,
        profile=profile.name,
        flags=profile.flags,
    )
