"""Declarative ingest profiles: one TOML per telematics export layout (format: ``ingest/README.md``).

A :class:`Profile` holds everything needed to read *and to write* one layout: delimiter, decimal
mark, encoding, header or column positions, column names (with synonyms) and their units, the
time format and zone, and where the vehicle id comes from. A new export layout is a new TOML
file, not code. :func:`detect_profile` (module :mod:`fleetfuel.ingest.detect`) picks one by header.
"""

from __future__ import annotations

import functools
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Final

from fleetfuel import schema
from fleetfuel.errors import ProfileError
from fleetfuel.resources import data_dir

QUANTITY_OF: Final[dict[str, str | None]] = {
    schema.SPEED_M_S: "speed",
    schema.LAT_DEG: None,
    schema.LON_DEG: None,
    schema.ELEVATION_M: "length",
    schema.FUEL_USED_L: "volume",
    schema.FUEL_RATE_L_H: "fuel_rate",
    schema.ODOMETER_M: "length",
    schema.ENGINE_SPEED_RPM: "rotation",
    schema.AMBIENT_TEMP_C: "temperature",
    schema.SOC: "fraction",
    schema.GRADE: "fraction",
}
"""Canonical numeric columns a profile may fill, with the unit quantity (None: degrees, no unit)."""

TEXT_COLUMNS: Final = tuple(
    c for c in getattr(schema, "STRING_COLUMNS", ()) if c not in (schema.VEHICLE_ID, schema.SOURCE_FILE)
)
"""Canonical text columns a profile may fill (e.g. ``route``)."""

TIME_KINDS: Final = ("iso", "format", "epoch_s", "epoch_ms", "elapsed_s")
DELIMITERS: Final = ("auto", ",", ";", "\t", "|")
DECIMALS: Final = (".", ",")
ENCODINGS: Final = ("auto", "utf-8", "utf-16", "latin-1", "cp1252")
VEHICLE_SOURCES: Final = ("config", "column", "fixed", "name_regex", "folder", "stem")
UNIT_FROM_HEADER: Final = "header"
DEFAULT_PLACEHOLDERS: Final = ("", "nan", "NaN", "NAN", "NA", "N/A", "n/a", "null", "NULL", "None", "-", "--")


@dataclass(frozen=True, slots=True, kw_only=True)
class ColumnRule:
    """How one canonical column is found and converted.

    Attributes
    ----------
    canonical : str
        Target column of the raw canonical frame (:mod:`fleetfuel.schema`), or ``grade``.
    names : tuple of str
        Header synonyms, matched case-insensitively; the first is the name a writer uses.
    unit : str or None
        Unit symbol of the file's values (:mod:`fleetfuel.units`), ``"header"`` for the unit written
        in the header (``Speed [km/h]``), None for degrees and text.
    scale : float
        Factor applied to the file's numbers before the unit conversion (``0.001`` for a column that
        holds feet x 1000). A writer divides by it.
    strip_unit : bool
        Cells carry a unit after the number (``374.8 m``): keep only the leading number.
    hemisphere : str or None
        Header of a column with hemisphere letters; ``S`` and ``W`` make the value negative.
    required : bool
        Detection needs this column in the header.
    """

    canonical: str
    names: tuple[str, ...]
    unit: str | None = None
    scale: float = 1.0
    strip_unit: bool = False
    hemisphere: str | None = None
    required: bool = False


@dataclass(frozen=True, slots=True, kw_only=True)
class TimeRule:
    """How the sample time is read.

    Attributes
    ----------
    kind : str
        ``iso`` (ISO 8601, offset optional: ``Z``, ``+02:00``, ``+0200``), ``format`` (strptime
        ``format``), ``epoch_s``, ``epoch_ms`` (Unix time), ``elapsed_s`` (seconds counted from
        1970-01-01 UTC: cycle files).
    columns : tuple of tuple of str
        Time parts, each a tuple of header synonyms; several parts are joined with one space.
    format : str
        strptime format of the joined parts (kind ``format``); seconds may carry a fraction.
    timezone : str or None
        IANA zone of naive times; None: :attr:`IngestConfig.timezone`.
    date_from_name : str
        Regex with a group ``date`` searched in the file name; the date is put before the parts
        (time-of-day columns) and the day rolls over when the time of day steps back past midnight.
    """

    kind: str
    columns: tuple[tuple[str, ...], ...]
    format: str = ""
    timezone: str | None = None
    date_from_name: str = ""

    def part_formats(self) -> tuple[str, ...]:
        """strptime/strftime format of each time column (kind ``format``), for writers.

        The format is split at spaces into one piece per part (after the date piece when the date
        comes from the file name); :func:`load_profile` checks that the counts agree.
        """
        pieces = tuple(self.format.split(" "))
        return pieces[1:] if self.date_from_name else pieces


@dataclass(frozen=True, slots=True, kw_only=True)
class VehicleRule:
    """Where the vehicle id comes from: ``config`` (:class:`IngestConfig` rule), ``column``
    (synonyms ``column``), ``fixed`` (``value``), ``name_regex`` (``pattern`` on the file name,
    group ``id`` or the first group), ``folder`` or ``stem``."""

    source: str = "config"
    column: tuple[str, ...] = ()
    value: str = ""
    pattern: str = ""


@dataclass(frozen=True, slots=True, kw_only=True)
class Profile:
    """One export layout. Field meanings: ``ingest/README.md`` (one TOML key per field)."""

    name: str
    source: str
    description: str = ""
    flags: tuple[str, ...] = ()
    delimiter: str = "auto"
    decimal: str = "."
    encoding: str = "auto"
    header: bool = True
    column_names: tuple[str, ...] = ()
    skip_lines: int = 0
    comment: str = ""
    skip_line_pattern: str = ""
    placeholders: tuple[str, ...] = DEFAULT_PLACEHOLDERS
    trim: bool = False
    time: TimeRule
    vehicle: VehicleRule = VehicleRule()
    columns: tuple[ColumnRule, ...] = ()
    detect_file_name: str = ""
    detect_content: str = ""
    priority: int = 0

    def rules(self, canonical: str) -> tuple[ColumnRule, ...]:
        """The column rules for ``canonical`` (alternatives in order; empty when not read)."""
        return tuple(rule for rule in self.columns if rule.canonical == canonical)

    def column(self, canonical: str) -> ColumnRule | None:
        """The first (preferred, written) rule for ``canonical``, or None."""
        found = self.rules(canonical)
        return found[0] if found else None


def _load_file(path: Path) -> Profile:
    source = str(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise ProfileError(f"{source}: cannot read profile: {exc}") from exc
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"{source}: not valid TOML: {exc}") from exc
    from fleetfuel.ingest.profile_toml import parse_profile  # the parser needs the types above

    return parse_profile(data, path.stem, source)


@functools.lru_cache(maxsize=1)
def bundled_profiles() -> tuple[Profile, ...]:
    """Every profile TOML in the bundled ``ingest/`` folder, sorted by name."""
    folder = data_dir("ingest")
    return tuple(_load_file(path) for path in sorted(folder.glob("*.toml")))


def load_profile(name_or_path: str | Path) -> Profile:
    """A bundled profile by NAME, or the profile TOML at PATH.

    Raises
    ------
    ProfileError
        Unknown name (the message lists the bundled names), unreadable or malformed TOML,
        unknown keys (named with the file).
    """
    text = str(name_or_path)
    path = Path(text)
    if path.suffix.lower() == ".toml" or path.is_file():
        if not path.is_file():
            raise ProfileError(f"{text}: profile file not found")
        return _load_file(path)
    for profile in bundled_profiles():
        if profile.name == text:
            return profile
    names = ", ".join(p.name for p in bundled_profiles())
    raise ProfileError(
        f"unknown ingest profile {text!r}; bundled profiles: {names}; or give a path to a .toml"
    )


def detect_profile(
    headers: list[str] | tuple[str, ...],
    profiles: tuple[Profile, ...] | None = None,
    *,
    file_name: str = "",
    head: list[str] | tuple[str, ...] = (),
) -> Profile | None:
    """The profile whose columns best match ``headers`` (None when none fits).

    Thin alias of :func:`fleetfuel.ingest.detect.detect_profile`; see there.
    """
    from fleetfuel.ingest.detect import detect_profile as _detect_profile

    return _detect_profile(headers, profiles, file_name=file_name, head=head)
