"""Write synthetic frames as telematics exports, laid out by ingest profiles (and as GPX).

Every CSV or Parquet layout the demo writes is described by a
:class:`fleetfuel.ingest.profiles.Profile`, and written here from that same object, so the
profile that reads a layout is the one that wrote it: a writer's column name is a rule's first
synonym, its unit the rule's unit (SI values are divided by the unit's factor and by the rule's
``scale``), its time text the profile's time rule in the profile's zone. Output is byte for
byte deterministic (gzip without a time stamp or file name in its header).

References
----------
GPX 1.1 Schema Documentation, TopoGrafix (2004), https://www.topografix.com/GPX/1/1/
RFC 1952, GZIP file format specification version 4.3 (MTIME = 0: no time stamp available).
"""

from __future__ import annotations

import gzip
import io
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Final
from xml.sax.saxutils import escape

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from fleetfuel import schema, units
from fleetfuel.errors import ConfigError
from fleetfuel.ingest.profiles import QUANTITY_OF, UNIT_FROM_HEADER, ColumnRule, Profile, load_profile

DEFAULT_DECIMALS: Final[dict[str, int]] = {
    schema.SPEED_M_S: 2, schema.LAT_DEG: 6, schema.LON_DEG: 6, schema.ELEVATION_M: 1,
    schema.FUEL_USED_L: 3, schema.FUEL_RATE_L_H: 2, schema.ODOMETER_M: 3, schema.ENGINE_SPEED_RPM: 0,
    schema.AMBIENT_TEMP_C: 1, schema.SOC: 4,
}
"""Decimals written per canonical column, in the file's unit (6 decimals of a degree: 0.11 m)."""

GPX_EXTENSION_NS: Final = "https://example.invalid/gpx/phone-track/1"
"""Namespace of the invented phone app's track-point extension (``.invalid``: RFC 2606)."""


SI_SYMBOL: Final[dict[str, str]] = {
    "speed": "m/s", "length": "m", "volume": "L", "fuel_rate": "L/h", "temperature": "degC",
    "fraction": "1", "rotation": "rpm", "mass": "kg",
}
"""Unit a writer puts in brackets for a rule whose unit is read from the header (``unit = "header"``)."""


def _unit_symbol(rule: ColumnRule) -> str | None:
    quantity = QUANTITY_OF.get(rule.canonical)
    if quantity is None or rule.unit is None:
        return None
    return SI_SYMBOL[quantity] if rule.unit == UNIT_FROM_HEADER else rule.unit


def _from_si(values: np.ndarray, rule: ColumnRule) -> np.ndarray:
    quantity = QUANTITY_OF.get(rule.canonical)
    out = np.asarray(values, dtype=np.float64)
    symbol = _unit_symbol(rule)
    if quantity is not None and symbol is not None:
        unit = units.lookup(quantity, symbol)
        out = (out - unit.offset) / unit.factor
    return out / rule.scale


def _number_text(values: np.ndarray, decimals: int, decimal_mark: str) -> pd.Series:
    rounded = np.round(values, decimals)
    if decimals <= 0:
        text = pd.Series(rounded).astype("Int64").astype("string")
    else:
        text = pd.Series(np.char.mod(f"%.{decimals}f", rounded), dtype="string")
    text = text.mask(np.isnan(rounded), "")
    return text.str.replace(".", decimal_mark, regex=False) if decimal_mark != "." else text


def _time_columns(times: pd.Series, profile: Profile) -> dict[str, pd.Series]:
    rule = profile.time
    utc = pd.DatetimeIndex(times).tz_convert("UTC") if pd.DatetimeIndex(times).tz is not None else \
        pd.DatetimeIndex(times).tz_localize("UTC")
    ns = utc.as_unit("ns").asi8
    names = [part[0] for part in rule.columns]
    fractional = bool((ns % 1_000_000_000).any())
    if rule.kind in ("epoch_s", "elapsed_s"):
        seconds = ns / 1e9
        text = pd.Series(np.char.mod("%.3f", seconds) if fractional else (ns // 1_000_000_000).astype(str), dtype="string")
        return {names[0]: text}
    if rule.kind == "epoch_ms":
        return {names[0]: pd.Series((ns // 1_000_000).astype(str), dtype="string")}
    zone = rule.timezone or "UTC"
    local = utc.tz_convert(zone)
    if rule.kind == "iso":
        fmt = "%Y-%m-%dT%H:%M:%S" + (".%f" if fractional else "")
        text = pd.Series(local.strftime(fmt), dtype="string")
        suffix = "Z" if zone == "UTC" else pd.Series(local.strftime("%z"), dtype="string").str.replace(
            r"([+-]\d\d)(\d\d)", r"\1:\2", regex=True)
        return {names[0]: text + suffix}
    parts = rule.format.split(" ")
    if rule.date_from_name:  # time-of-day files: the date parts come from the file name
        parts = parts[len(parts) - len(names):]
    if len(parts) != len(names):
        raise ConfigError(f"profile {profile.name}: time.format {rule.format!r} must have one space-separated part "
                          f"per time column ({len(names)})")
    if fractional:
        parts = [p.replace("%S", "%S.%f") for p in parts]
    return {name: pd.Series(local.strftime(part), dtype="string") for name, part in zip(names, parts, strict=True)}


def _check_vehicle(frame: pd.DataFrame, profile: Profile, path: Path) -> None:
    ids = frame[schema.VEHICLE_ID].astype("string").unique() if schema.VEHICLE_ID in frame.columns else []
    if profile.vehicle.source == "column":
        return
    if len(ids) > 1:
        raise ConfigError(f"{path}: profile {profile.name} holds one vehicle per file, the frame has {len(ids)}")
    if profile.vehicle.source == "name_regex" and len(ids):
        match = re.search(profile.vehicle.pattern, path.name)
        found = None if match is None else (match.groupdict().get("id") or (match.group(1) if match.groups() else match.group(0)))
        if found != ids[0]:
            raise ConfigError(f"{path}: file name gives vehicle id {found!r} by {profile.vehicle.pattern!r}, expected {ids[0]!r}")


def export_table(frame: pd.DataFrame, profile: Profile, decimals: Mapping[str, int] | None = None) -> pd.DataFrame:
    """The frame as the text table ``profile`` describes (column order: vehicle, time, signals)."""
    digits = {**DEFAULT_DECIMALS, **(decimals or {})}
    mark = profile.decimal
    out: dict[str, pd.Series] = {}
    if profile.vehicle.source == "column":
        out[profile.vehicle.column[0]] = frame[schema.VEHICLE_ID].astype("string").reset_index(drop=True)
    out.update(_time_columns(frame[schema.TIME_UTC], profile))
    for rule in profile.columns:
        if rule.canonical not in frame.columns or profile.column(rule.canonical) is not rule:
            continue
        values = _from_si(frame[rule.canonical].to_numpy(dtype=np.float64), rule)
        if rule.hemisphere:
            letters = ("N", "S") if rule.canonical == schema.LAT_DEG else ("E", "W")
            out[rule.hemisphere] = pd.Series(np.where(values < 0, letters[1], letters[0]), dtype="string")
            values = np.abs(values)
        text = _number_text(values, digits.get(rule.canonical, 3), mark)
        if rule.strip_unit and rule.unit:
            text = text.where(text == "", text + " " + rule.unit)
        header = f"{rule.names[0]} [{_unit_symbol(rule)}]" if rule.unit == UNIT_FROM_HEADER else rule.names[0]
        out[header] = text
    table = pd.DataFrame(out)
    if not profile.header:
        table = table.reindex(columns=list(profile.column_names), fill_value="")
    return table


def write_export(
    frame: pd.DataFrame,
    profile: Profile | str,
    path: Path | str,
    *,
    decimals: Mapping[str, int] | None = None,
    preamble: tuple[str, ...] = (),
    crlf: bool = False,
) -> Path:
    """Write ``frame`` (canonical columns) as a CSV export in the layout of ``profile``.

    Parameters
    ----------
    frame : DataFrame
        Canonical columns (``vehicle_id``, ``time_utc`` and signals). Columns the profile does
        not name are not written; profile columns the frame lacks are left out.
    profile : Profile or str
        The layout, or a bundled profile name / TOML path (:func:`fleetfuel.ingest.load_profile`).
    path : Path or str
        Output file; a ``.gz`` suffix writes gzip (deterministic header).
    decimals : mapping, optional
        Decimals per canonical column, in the file's unit (default :data:`DEFAULT_DECIMALS`).
    preamble : tuple of str
        Lines written before the header (must be ``profile.skip_lines`` long, or comment lines).
    crlf : bool
        End lines with CR LF (as exports from some office tools do).
    """
    prof = load_profile(profile) if isinstance(profile, str) else profile
    path = Path(path)
    _check_vehicle(frame, prof, path)
    table = export_table(frame, prof, decimals)
    delimiter = "," if prof.delimiter == "auto" else prof.delimiter
    newline = "\r\n" if crlf else "\n"
    buffer = io.StringIO()
    for line in preamble:
        buffer.write(line + newline)
    table.to_csv(buffer, sep=delimiter, index=False, header=prof.header, lineterminator=newline, na_rep="")
    encoding = "utf-8" if prof.encoding == "auto" else prof.encoding
    data = buffer.getvalue().encode(encoding)
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.suffix.lower() == ".gz":
        with open(path, "wb") as raw, gzip.GzipFile(filename="", mode="wb", fileobj=raw, mtime=0, compresslevel=9) as gz:
            gz.write(data)
    else:
        path.write_bytes(data)
    return path


def write_parquet(
    frame: pd.DataFrame,
    profile: Profile | str | None,
    path: Path | str,
    *,
    compression: str = "zstd",
    float32: tuple[str, ...] = (),
    row_group_rows: int = 1 << 17,
) -> Path:
    """Write ``frame`` as Parquet: canonical column names (``profile`` None) or a profile's.

    Times are written as a UTC timestamp column (millisecond resolution), the profile's first
    time column; numbers in the profile's units, rounded to :data:`DEFAULT_DECIMALS`; columns in
    ``float32`` (canonical names) as 32-bit floats.
    """
    path = Path(path)
    prof = None if profile is None else (load_profile(profile) if isinstance(profile, str) else profile)
    times = pd.DatetimeIndex(frame[schema.TIME_UTC]).tz_convert("UTC").as_unit("ms")
    arrays: dict[str, pa.Array] = {}
    if prof is None:
        if schema.VEHICLE_ID in frame.columns:
            arrays[schema.VEHICLE_ID] = pa.array(frame[schema.VEHICLE_ID].astype(str).to_numpy(), pa.string())
        arrays[schema.TIME_UTC] = pa.array(times, pa.timestamp("ms", "UTC"))
        rules = [ColumnRule(canonical=c, names=(c,), unit="m/s" if c == schema.SPEED_M_S else None)
                 for c in schema.RAW_COLUMNS if c in frame.columns and c not in (schema.VEHICLE_ID, schema.TIME_UTC)]
        rules = [r for r in rules if r.canonical in DEFAULT_DECIMALS]
    else:
        if prof.vehicle.source == "column":
            arrays[prof.vehicle.column[0]] = pa.array(frame[schema.VEHICLE_ID].astype(str).to_numpy(), pa.string())
        arrays[prof.time.columns[0][0]] = pa.array(times, pa.timestamp("ms", "UTC"))
        rules = [r for r in prof.columns if r.canonical in frame.columns and prof.column(r.canonical) is r]
    for rule in rules:
        values = np.round(_from_si(frame[rule.canonical].to_numpy(dtype=np.float64), rule),
                          DEFAULT_DECIMALS.get(rule.canonical, 3))
        kind = pa.float32() if rule.canonical in float32 else pa.float64()
        arrays[rule.names[0]] = pa.array(values, kind, mask=np.isnan(values))
    path.parent.mkdir(parents=True, exist_ok=True)
    pq.write_table(pa.table(arrays), path, compression=compression, row_group_size=row_group_rows)
    return path


def write_gpx(frame: pd.DataFrame, path: Path | str, *, creator: str = "synthetic phone tracker",
              split_gap_s: float = 600.0, name: str = "") -> Path:
    """Write one vehicle's frame as GPX 1.1: one track, a segment per stretch without a long gap,
    ``<ele>`` to 0.1 m, time to the second (or millisecond), speed [m/s] in an extension."""
    path = Path(path)
    times = pd.DatetimeIndex(frame[schema.TIME_UTC]).tz_convert("UTC")
    ns = times.as_unit("ns").asi8
    fmt = "%Y-%m-%dT%H:%M:%S.%fZ" if (ns % 1_000_000_000).any() else "%Y-%m-%dT%H:%M:%SZ"
    stamp = np.asarray(times.strftime(fmt), dtype=str)
    lat = np.char.mod("%.7f", frame[schema.LAT_DEG].to_numpy(dtype=np.float64))
    lon = np.char.mod("%.7f", frame[schema.LON_DEG].to_numpy(dtype=np.float64))
    ele_v = frame[schema.ELEVATION_M].to_numpy(dtype=np.float64) if schema.ELEVATION_M in frame else np.full(len(frame), np.nan)
    ele = np.where(np.isnan(ele_v), "", np.char.add(np.char.add("<ele>", np.char.mod("%.1f", ele_v)), "</ele>"))
    spd_v = frame[schema.SPEED_M_S].to_numpy(dtype=np.float64)
    spd = np.where(np.isnan(spd_v), "", np.char.add(np.char.add("<extensions><pt:speed>", np.char.mod("%.2f", spd_v)),
                                                     "</pt:speed></extensions>"))
    points = np.char.add(np.char.add(np.char.add(np.char.add(np.char.add(
        '<trkpt lat="', lat), '" lon="'), lon), '">'), ele)
    points = np.char.add(np.char.add(np.char.add(np.char.add(points, "<time>"), stamp), "</time>"), spd)
    points = np.char.add(points, "</trkpt>")
    breaks = np.flatnonzero(np.diff(ns) > split_gap_s * 1e9) + 1
    segments = ["<trkseg>" + "\n".join(seg) + "</trkseg>" for seg in np.split(points, breaks) if len(seg)]
    title = f"<name>{escape(name)}</name>" if name else ""
    text = (
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        f'<gpx version="1.1" creator="{escape(creator)}" xmlns="http://www.topografix.com/GPX/1/1" '
        f'xmlns:pt="{GPX_EXTENSION_NS}">\n'
        f"<metadata><time>{stamp[0] if len(stamp) else ''}</time></metadata>\n"
        f"<trk>{title}\n" + "\n".join(segments) + "\n</trk>\n</gpx>\n"
    )
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def write_daily_files(frame: pd.DataFrame, folder: Path | str, *, profile: Profile | str | None = None) -> list[Path]:
    """One Parquet file per vehicle and UTC day (``<vehicle>_<YYYY-MM-DD>.parquet``), as a
    telematics portal exports a fleet; returns the files in name order."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    day = pd.DatetimeIndex(frame[schema.TIME_UTC]).tz_convert("UTC").strftime("%Y-%m-%d")
    keys = frame[schema.VEHICLE_ID].astype(str).str.cat(pd.Series(day, index=frame.index), sep="_")
    return [write_parquet(part, profile, folder / f"{key}.parquet") for key, part in frame.groupby(keys, sort=True)]
