"""Match a profile's columns to a file's header, and pick a profile by header (autodetection).

Headers are compared case-insensitively after trimming, collapsing white space, dropping a BOM
and repairing double-encoded UTF-8 (``[Â°C]`` -> ``[°C]``). A synonym without a unit also
matches a header that adds a unit in brackets (``Speed [km/h]``) when that unit is the rule's
unit, so ``Speed [km/h]`` and ``Speed [mph]`` pick different profiles.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Final

from fleetfuel import schema, units
from fleetfuel.errors import ProfileError
from fleetfuel.ingest.profiles import QUANTITY_OF, UNIT_FROM_HEADER, ColumnRule, Profile, bundled_profiles

_UNIT_SUFFIX: Final = re.compile(r"\s*[\[(][^\])]*[\])]\s*$")


def repair_mojibake(text: str) -> str:
    """Undo one round of UTF-8 read as Latin-1 (``Â°C`` -> ``°C``); other text unchanged."""
    try:
        fixed = text.encode("latin-1").decode("utf-8")
    except (UnicodeEncodeError, UnicodeDecodeError):
        return text
    return fixed


def normalise_header(text: str) -> str:
    """Comparison key of a header: mojibake repaired, BOM dropped, trimmed, lower case, single spaces."""
    return " ".join(repair_mojibake(text.replace("\ufeff", "")).lower().split())


@dataclass(frozen=True, slots=True)
class Resolved:
    """A profile's columns located in one file's header.

    Attributes
    ----------
    columns : dict
        canonical name -> (file header, rule, unit symbol or None).
    time_parts : tuple of str
        File headers of the time parts, in order.
    hemispheres : dict
        canonical name -> file header of its hemisphere-letter column.
    vehicle_column : str or None
        File header of the vehicle id column.
    """

    columns: dict[str, tuple[str, ColumnRule, str | None]]
    time_parts: tuple[str, ...]
    hemispheres: dict[str, str]
    vehicle_column: str | None

    def needed(self) -> list[str]:
        """Every file header the reader must load (no duplicates, header order not kept)."""
        names = (
            [h for h, _, _ in self.columns.values()] + list(self.time_parts) + list(self.hemispheres.values())
        )
        if self.vehicle_column:
            names.append(self.vehicle_column)
        return list(dict.fromkeys(names))


def _header_unit_ok(rule: ColumnRule, header_unit: str) -> bool:
    quantity = QUANTITY_OF.get(rule.canonical)
    if quantity is None or rule.unit is None:
        return False
    if rule.unit == UNIT_FROM_HEADER:
        try:
            units.lookup(quantity, header_unit)
        except ProfileError:
            return False
        return True
    try:
        return units.lookup(quantity, header_unit) == units.lookup(quantity, rule.unit)
    except ProfileError:
        return False


def _find(
    names: tuple[str, ...], keys: dict[str, str], rule: ColumnRule | None = None
) -> tuple[str, str | None] | None:
    """First synonym found: (file header, unit read from the header or None)."""
    for name in names:
        want = normalise_header(name)
        if want in keys:
            header = keys[want]
            return header, units.unit_from_header(repair_mojibake(header.strip()))
    if rule is None:
        return None
    for name in names:
        want = normalise_header(name)
        if units.unit_from_header(name) is not None:
            continue
        for key, header in keys.items():
            unit = units.unit_from_header(key)
            if unit is not None and _UNIT_SUFFIX.sub("", key) == want and _header_unit_ok(rule, unit):
                return header, unit
    return None


def _locate_columns(
    profile: Profile, keys: dict[str, str]
) -> tuple[dict[str, tuple[str, ColumnRule, str | None]], dict[str, str]] | None:
    """Canonical column -> (header, rule, unit), and hemisphere headers; None if one is missing."""
    columns: dict[str, tuple[str, ColumnRule, str | None]] = {}
    hemispheres: dict[str, str] = {}
    for rule in profile.columns:
        if rule.canonical in columns:
            continue
        found = _find(rule.names, keys, rule)
        if found is None:
            continue
        header, unit = found[0], rule.unit
        if unit == UNIT_FROM_HEADER:
            if found[1] is None or not _header_unit_ok(rule, found[1]):
                continue
            unit = found[1]
        columns[rule.canonical] = (header, rule, unit)
        if rule.hemisphere:
            hemi = _find((rule.hemisphere,), keys)
            if hemi is None:
                return None
            hemispheres[rule.canonical] = hemi[0]
    return columns, hemispheres


def resolve(profile: Profile, headers: list[str] | tuple[str, ...]) -> Resolved | None:
    """Locate ``profile``'s columns in ``headers``; None when a time part, a required column or the
    vehicle column is absent, or when neither speed nor a lat/lon pair is found."""
    keys: dict[str, str] = {}
    for header in headers:
        keys.setdefault(normalise_header(header), header)
    parts = [_find(synonyms, keys) for synonyms in profile.time.columns]
    located = _locate_columns(profile, keys)
    if any(p is None for p in parts) or located is None:
        return None
    columns, hemispheres = located
    if any(rule.required and rule.canonical not in columns for rule in profile.columns):
        return None
    if schema.SPEED_M_S not in columns and not (schema.LAT_DEG in columns and schema.LON_DEG in columns):
        return None
    vehicle_column = None
    if profile.vehicle.source == "column":
        found = _find(profile.vehicle.column, keys)
        if found is None:
            return None
        vehicle_column = found[0]
    return Resolved(columns, tuple(p[0] for p in parts if p is not None), hemispheres, vehicle_column)


def _first_data_line(profile: Profile, head: Sequence[str]) -> str:
    for line in head:
        if profile.comment and line.lstrip().startswith(profile.comment):
            continue
        if profile.skip_line_pattern and re.search(profile.skip_line_pattern, line):
            continue
        return line
    return ""


def detect_profile(
    headers: list[str] | tuple[str, ...],
    profiles: tuple[Profile, ...] | None = None,
    *,
    file_name: str = "",
    head: Sequence[str] = (),
) -> Profile | None:
    """The profile that best fits a file.

    Header profiles fit when :func:`resolve` succeeds; the one locating the most columns wins
    (then the higher ``detect.priority``, then the name). Headerless profiles fit only through
    ``detect.file_name`` (regex on the file name) and/or ``detect.content`` (regex on the first
    line of ``head`` that is not a comment or skipped line); when both are given both must match.

    Parameters
    ----------
    headers : sequence of str
        The header fields of the file (for a headerless file: the first line's fields).
    profiles : tuple of Profile, optional
        Candidates; default :func:`bundled_profiles`.
    file_name : str
        The file's own name (for ``detect.file_name`` rules).
    head : sequence of str
        The first non-empty lines of the file (for ``detect.content`` rules).
    """
    candidates = bundled_profiles() if profiles is None else profiles
    best: tuple[int, int, str] | None = None
    chosen: Profile | None = None
    for profile in candidates:
        if profile.header:
            if profile.detect_file_name and not re.search(profile.detect_file_name, file_name):
                continue
            found = resolve(profile, headers)
            if found is None:
                continue
            score = len(found.columns) + len(found.time_parts) + (found.vehicle_column is not None)
        else:
            rules = [
                (profile.detect_file_name, file_name),
                (profile.detect_content, _first_data_line(profile, head)),
            ]
            given = [(rx, text) for rx, text in rules if rx]
            if not given or not all(re.search(rx, text) for rx, text in given):
                continue
            score = len(profile.column_names)
        key = (score, profile.priority, profile.name)
        if best is None or key[:2] > best[:2] or (key[:2] == best[:2] and key[2] < best[2]):
            best, chosen = key, profile
    return chosen
