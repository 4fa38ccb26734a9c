"""Parse and validate one ingest profile TOML table into a :class:`~fleetfuel.ingest.profiles.Profile`.

Strict: an unknown key, a wrong type, an unknown unit or zone, or a bad regex is a
:class:`ProfileError` of one line naming the file and the key.
"""

from __future__ import annotations

import re
from typing import Any, Final
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from fleetfuel import schema, units
from fleetfuel.errors import ProfileError
from fleetfuel.ingest.profiles import (
    DECIMALS,
    DEFAULT_PLACEHOLDERS,
    DELIMITERS,
    ENCODINGS,
    QUANTITY_OF,
    TEXT_COLUMNS,
    TIME_KINDS,
    UNIT_FROM_HEADER,
    VEHICLE_SOURCES,
    ColumnRule,
    Profile,
    TimeRule,
    VehicleRule,
)

_TOP_KEYS: Final = frozenset({"description", "flags", "layout", "time", "vehicle", "detect", "columns"})
_LAYOUT_KEYS: Final = frozenset(
    {
        "delimiter",
        "decimal",
        "encoding",
        "header",
        "column_names",
        "skip_lines",
        "comment",
        "skip_line_pattern",
        "placeholders",
        "trim",
    }
)
_TIME_KEYS: Final = frozenset({"kind", "columns", "format", "timezone", "date_from_name"})
_VEHICLE_KEYS: Final = frozenset({"source", "column", "value", "pattern"})
_DETECT_KEYS: Final = frozenset({"file_name", "content", "priority"})
_COLUMN_KEYS: Final = frozenset({"names", "unit", "scale", "strip_unit", "hemisphere", "required"})


def _fail(source: str, message: str) -> ProfileError:
    return ProfileError(f"{source}: {message}")


def _check_keys(source: str, table: Any, allowed: frozenset[str], where: str) -> dict[str, Any]:
    if not isinstance(table, dict):
        raise _fail(source, f"{where or 'profile'} must be a table, found {type(table).__name__}")
    for key in table:
        if key not in allowed:
            prefix = f"{where}." if where else ""
            raise _fail(source, f"unknown key {prefix}{key!r}; expected one of {', '.join(sorted(allowed))}")
    return table


def _typed(source: str, value: Any, kind: type | tuple[type, ...], key: str) -> Any:
    if isinstance(value, bool) and kind in (int, float, (int, float)):
        raise _fail(source, f"{key} must be a number, found {value!r}")
    if not isinstance(value, kind):
        raise _fail(source, f"{key} has the wrong type: found {value!r}")
    return value


def _names(source: str, value: Any, key: str) -> tuple[str, ...]:
    items = [value] if isinstance(value, str) else value
    if not isinstance(items, list) or not items or not all(isinstance(v, str) and v for v in items):
        raise _fail(source, f"{key} must be a non-empty string or list of strings, found {value!r}")
    return tuple(items)


def _regex(source: str, value: Any, key: str) -> str:
    _typed(source, value, str, key)
    try:
        re.compile(value)
    except re.error as exc:
        raise _fail(source, f"{key}: bad regex {value!r}: {exc}") from exc
    return value


def _zone(source: str, value: Any, key: str) -> str:
    _typed(source, value, str, key)
    try:
        ZoneInfo(value)
    except (ZoneInfoNotFoundError, ValueError) as exc:
        raise _fail(source, f"{key}: unknown IANA time zone {value!r}") from exc
    return value


def _column_rule(source: str, canonical: str, table: Any, key: str) -> ColumnRule:
    _check_keys(source, table, _COLUMN_KEYS, key)
    if "names" not in table:
        raise _fail(source, f"{key}.names is missing")
    quantity = QUANTITY_OF.get(canonical)
    unit = table.get("unit")
    if unit is not None:
        _typed(source, unit, str, f"{key}.unit")
        if quantity is None:
            raise _fail(source, f"{key}.unit: {canonical} takes no unit, found {unit!r}")
        if unit != UNIT_FROM_HEADER:
            try:
                units.lookup(quantity, unit)
            except ProfileError as exc:
                raise _fail(source, f"{key}.unit: {exc}") from exc
    elif quantity is not None:
        raise _fail(source, f'{key}.unit is missing (a {quantity} unit, or "header")')
    scale = float(_typed(source, table.get("scale", 1.0), (int, float), f"{key}.scale"))
    if scale == 0:
        raise _fail(source, f"{key}.scale must not be 0")
    hemisphere = table.get("hemisphere")
    return ColumnRule(
        canonical=canonical,
        names=_names(source, table["names"], f"{key}.names"),
        unit=unit,
        scale=scale,
        strip_unit=_typed(source, table.get("strip_unit", False), bool, f"{key}.strip_unit"),
        hemisphere=None if hemisphere is None else _typed(source, hemisphere, str, f"{key}.hemisphere"),
        required=_typed(source, table.get("required", False), bool, f"{key}.required"),
    )


def _columns(source: str, table: Any) -> tuple[ColumnRule, ...]:
    allowed = frozenset(QUANTITY_OF) | frozenset(TEXT_COLUMNS)
    _check_keys(source, table, allowed, "columns")
    rules: list[ColumnRule] = []
    for canonical, spec in table.items():
        alternatives = spec if isinstance(spec, list) else [spec]
        for i, alt in enumerate(alternatives):
            key = f"columns.{canonical}" + (f"[{i}]" if isinstance(spec, list) else "")
            rules.append(_column_rule(source, canonical, alt, key))
    return tuple(rules)


def _time(source: str, table: Any) -> TimeRule:
    _check_keys(source, table, _TIME_KEYS, "time")
    kind = table.get("kind")
    if kind not in TIME_KINDS:
        raise _fail(source, f"time.kind must be one of {', '.join(TIME_KINDS)}, found {kind!r}")
    parts = table.get("columns")
    if not isinstance(parts, list) or not parts:
        raise _fail(source, f"time.columns must be a non-empty list, found {parts!r}")
    columns = tuple(_names(source, part, f"time.columns[{i}]") for i, part in enumerate(parts))
    fmt = _typed(source, table.get("format", ""), str, "time.format")
    if kind == "format" and not fmt:
        raise _fail(source, 'time.format is needed for time.kind = "format"')
    date_from_name = _regex(source, table.get("date_from_name", ""), "time.date_from_name")
    if kind == "format":
        pieces = len(fmt.split(" ")) - (1 if date_from_name else 0)
        if pieces != len(columns):
            raise _fail(
                source,
                f"time.format {fmt!r} has {pieces} space-separated piece(s) for {len(columns)} time column(s)"
                + (" (the first piece is the date from the file name)" if date_from_name else ""),
            )
    if kind in ("epoch_s", "epoch_ms", "elapsed_s") and len(columns) != 1:
        raise _fail(source, f"time.kind {kind!r} takes exactly one column, found {len(columns)}")
    if date_from_name and "(?P<date>" not in date_from_name:
        raise _fail(source, "time.date_from_name needs a named group (?P<date>...)")
    zone = table.get("timezone")
    return TimeRule(
        kind=kind,
        columns=columns,
        format=fmt,
        timezone=None if zone is None else _zone(source, zone, "time.timezone"),
        date_from_name=date_from_name,
    )


def _vehicle(source: str, table: Any) -> VehicleRule:
    _check_keys(source, table, _VEHICLE_KEYS, "vehicle")
    src = table.get("source", "config")
    if src not in VEHICLE_SOURCES:
        raise _fail(source, f"vehicle.source must be one of {', '.join(VEHICLE_SOURCES)}, found {src!r}")
    rule = VehicleRule(
        source=src,
        column=_names(source, table["column"], "vehicle.column") if "column" in table else (),
        value=_typed(source, table.get("value", ""), str, "vehicle.value"),
        pattern=_regex(source, table.get("pattern", ""), "vehicle.pattern"),
    )
    needs = {"column": rule.column, "fixed": rule.value, "name_regex": rule.pattern}
    if src in needs and not needs[src]:
        key = {"column": "column", "fixed": "value", "name_regex": "pattern"}[src]
        raise _fail(source, f"vehicle.source = {src!r} needs vehicle.{key}")
    return rule


def _layout(source: str, table: Any) -> dict[str, Any]:
    _check_keys(source, table, _LAYOUT_KEYS, "layout")
    out: dict[str, Any] = {}
    choices = {"delimiter": DELIMITERS, "decimal": DECIMALS, "encoding": ENCODINGS}
    for key, allowed in choices.items():
        if key in table:
            if table[key] not in allowed:
                raise _fail(source, f"layout.{key} must be one of {allowed!r}, found {table[key]!r}")
            out[key] = table[key]
    for key, kind in (("header", bool), ("trim", bool), ("skip_lines", int), ("comment", str)):
        if key in table:
            out[key] = _typed(source, table[key], kind, f"layout.{key}")
    if out.get("skip_lines", 0) < 0:
        raise _fail(source, "layout.skip_lines must be >= 0")
    if "skip_line_pattern" in table:
        out["skip_line_pattern"] = _regex(source, table["skip_line_pattern"], "layout.skip_line_pattern")
    if "column_names" in table:
        out["column_names"] = _names(source, table["column_names"], "layout.column_names")
    if "placeholders" in table:
        extra = table["placeholders"]
        if not isinstance(extra, list) or not all(isinstance(v, str) for v in extra):
            raise _fail(source, f"layout.placeholders must be a list of strings, found {extra!r}")
        out["placeholders"] = tuple(dict.fromkeys((*DEFAULT_PLACEHOLDERS, *extra)))
    if out.get("header", True) is False and not out.get("column_names"):
        raise _fail(source, "layout.header = false needs layout.column_names (names by position)")
    return out


def _detect(source: str, table: Any) -> dict[str, Any]:
    _check_keys(source, table, _DETECT_KEYS, "detect")
    out: dict[str, Any] = {}
    if "file_name" in table:
        out["detect_file_name"] = _regex(source, table["file_name"], "detect.file_name")
    if "content" in table:
        out["detect_content"] = _regex(source, table["content"], "detect.content")
    if "priority" in table:
        out["priority"] = _typed(source, table["priority"], int, "detect.priority")
    return out


def _check_references(source: str, profile: Profile) -> None:
    """Headerless profiles must name every referenced column in ``layout.column_names``."""
    if profile.header:
        return
    known = {name.lower() for name in profile.column_names}
    refs = [
        n for rule in profile.columns for n in (*rule.names, *((rule.hemisphere,) if rule.hemisphere else ()))
    ]
    refs += [n for part in profile.time.columns for n in part] + list(profile.vehicle.column)
    for name in refs:
        if name.lower() not in known:
            raise _fail(source, f"column {name!r} is not in layout.column_names")


def parse_profile(data: dict[str, Any], name: str, source: str) -> Profile:
    """Build a :class:`Profile` from a parsed TOML table (``source`` names the file in errors)."""
    _check_keys(source, data, _TOP_KEYS, "")
    if "time" not in data:
        raise _fail(source, "the [time] table is missing")
    if "columns" not in data:
        raise _fail(source, "the [columns] table is missing")
    flags = data.get("flags", [])
    if not isinstance(flags, list) or not all(isinstance(f, str) for f in flags):
        raise _fail(source, f"flags must be a list of strings, found {flags!r}")
    profile = Profile(
        name=name,
        source=source,
        description=_typed(source, data.get("description", ""), str, "description"),
        flags=tuple(flags),
        time=_time(source, data["time"]),
        vehicle=_vehicle(source, data.get("vehicle", {})),
        columns=_columns(source, data["columns"]),
        **_layout(source, data.get("layout", {})),
        **_detect(source, data.get("detect", {})),
    )
    if not (
        profile.rules(schema.SPEED_M_S) or (profile.rules(schema.LAT_DEG) and profile.rules(schema.LON_DEG))
    ):
        raise _fail(source, "columns need speed_m_s, or lat_deg and lon_deg")
    _check_references(source, profile)
    return profile
