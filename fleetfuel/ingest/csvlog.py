"""Read one CSV (or text) telematics export into the raw canonical frame: :func:`read_csv_log`.

The file is opened once (gzip and zip members included), its encoding settled, its header
matched to an ingest profile, then pyarrow parses only the needed columns (multi-threaded, typed
where possible). A cell that does not parse becomes NaN; a malformed row (wrong field count) is
dropped ``row_malformed`` and a row whose time does not parse ``time_unparseable``.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pv

from fleetfuel import schema
from fleetfuel.errors import InputDataError
from fleetfuel.ingest import sniff
from fleetfuel.ingest.base import LogFile
from fleetfuel.ingest.config import IngestConfig, member_name
from fleetfuel.ingest.convert import build_log
from fleetfuel.ingest.detect import Resolved, resolve
from fleetfuel.ingest.profiles import QUANTITY_OF, Profile, bundled_profiles, detect_profile, load_profile

_HEAD_LINES = 64
_SHOWN_HEADERS = 15
_DROP_MALFORMED = schema.DROP_ROW_MALFORMED


@dataclass(frozen=True, slots=True)
class _Prepared:
    data: bytes
    profile: Profile
    delimiter: str
    headers: tuple[str, ...]


def _split_fields(line: str, delimiter: str) -> list[str]:
    try:
        return next(csv.reader([line], delimiter=delimiter))
    except (csv.Error, StopIteration):
        return line.split(delimiter)


def _leading_hash_lines(lines: list[str]) -> int:
    count = 0
    for line in lines:
        if not line.lstrip().startswith("#"):
            break
        count += 1
    return count


def _drop_lines(data: bytes, profile: Profile) -> bytes:
    """Remove comment lines and lines matching ``skip_line_pattern`` (they are not rows).

    Each match removes exactly the line it starts on, whatever the pattern's own reach.
    """
    patterns = []
    if profile.comment:
        patterns.append(rb"[ \t]*" + re.escape(profile.comment.encode()))
    if profile.skip_line_pattern:
        patterns.append(b"(?:" + profile.skip_line_pattern.lstrip("^").encode() + b")")
    if not patterns:
        return data
    rx = re.compile(rb"(?m)^(?:" + b"|".join(patterns) + rb")")
    pieces, end = [], 0
    for match in rx.finditer(data):
        start = match.start()
        if start < end:
            continue
        nl = data.find(b"\n", start)
        pieces.append(data[end:start])
        end = len(data) if nl < 0 else nl + 1
    if not pieces:
        return data
    pieces.append(data[end:])
    return b"".join(pieces)


def _no_profile_message(path: Path | str, headers: list[str]) -> str:
    shown = ", ".join(repr(h) for h in headers[:_SHOWN_HEADERS])
    more = f" ... ({len(headers) - _SHOWN_HEADERS} more)" if len(headers) > _SHOWN_HEADERS else ""
    names = ", ".join(p.name for p in bundled_profiles())
    return (
        f"{path}: no ingest profile matches the header; found columns [{shown}{more}]; "
        f"give --profile NAME or PATH (bundled: {names})"
    )


def _prepare(path: Path | str, cfg: IngestConfig) -> _Prepared:
    raw = sniff.read_bytes(path, cfg.max_file_bytes)
    forced = load_profile(cfg.profile) if cfg.profile else None
    data, _ = sniff.to_utf8(path, raw, forced.encoding if forced else "auto")
    if re.search(rb"\S", data) is None:
        raise InputDataError(f"{path}: empty file (no header, no rows)")
    lines = sniff.head_lines(path, data, _HEAD_LINES)
    hashes = _leading_hash_lines(lines)
    if hashes >= len(lines):
        raise InputDataError(f"{path}: only comment lines, no header and no rows")
    if forced is not None:
        profile = forced
        delimiter = forced.delimiter if forced.delimiter != "auto" else sniff.sniff_delimiter(lines[hashes])
    else:
        delimiter = sniff.sniff_delimiter(lines[hashes])
        fields = _split_fields(lines[hashes], delimiter)
        found = detect_profile([f.strip() for f in fields], file_name=member_name(path), head=lines[hashes:])
        if found is None:
            raise InputDataError(_no_profile_message(path, fields))
        profile = found
        if profile.delimiter != "auto":
            delimiter = profile.delimiter
    data = _drop_lines(data, profile)
    skip_rows = profile.skip_lines + (0 if profile.comment == "#" else hashes)
    data = _cut_lines(data, skip_rows)
    if profile.header:
        header_lines = sniff.head_lines(path, data, 1)
        if not header_lines:
            raise InputDataError(f"{path}: no header line after {skip_rows} skipped line(s)")
        headers = tuple(_split_fields(header_lines[0], delimiter))
    else:
        headers = profile.column_names
    return _Prepared(data, profile, delimiter, headers)


def _column_types(profile: Profile, resolved: Resolved, typed: bool) -> dict[str, pa.DataType]:
    types: dict[str, pa.DataType] = {name: pa.string() for name in resolved.needed()}
    if not typed or profile.trim:
        return types
    for header, rule, _ in resolved.columns.values():
        if rule.canonical in QUANTITY_OF and not rule.strip_unit:
            types[header] = pa.float64()
    if profile.time.kind in ("epoch_s", "epoch_ms", "elapsed_s"):
        types[resolved.time_parts[0]] = pa.float64()
    elif profile.time.kind == "iso" and len(resolved.time_parts) == 1:
        del types[resolved.time_parts[0]]  # let pyarrow infer: ISO 8601 parses to timestamps in the reader
    if resolved.vehicle_column:
        types[resolved.vehicle_column] = pa.dictionary(pa.int32(), pa.string())
    return types


def _data_rows_of_lines(header: bool, line_numbers: list[int]) -> npt.NDArray[np.int64]:
    """0-based data-row index of the parser's row numbers (1-based, counted over non-empty lines
    from the start of the buffer, header included: pyarrow's ``InvalidRow.number``)."""
    return np.asarray(line_numbers, dtype=np.int64) - 1 - int(header)


def _cut_lines(data: bytes, count: int) -> bytes:
    """``data`` without its first ``count`` non-blank lines."""
    end = 0
    while count > 0 and end < len(data):
        nl = data.find(b"\n", end)
        nl = len(data) if nl < 0 else nl
        if data[end:nl].strip():
            count -= 1
        end = nl + 1
    return data[end:]


def _parse(
    prep: _Prepared, resolved: Resolved, cfg: IngestConfig, *, typed: bool, strict: bool
) -> tuple[pa.Table, list[int]]:
    bad_lines: list[int] = []

    def on_invalid(row: pv.InvalidRow) -> str:
        bad_lines.append(int(row.number) if row.number is not None else -1)
        return "skip"

    profile = prep.profile
    read = pv.ReadOptions(
        column_names=list(profile.column_names) if not profile.header else None,
        block_size=cfg.csv_block_bytes,
        use_threads=cfg.use_threads and strict,
    )
    parse = pv.ParseOptions(delimiter=prep.delimiter, invalid_row_handler=None if strict else on_invalid)
    convert = pv.ConvertOptions(
        include_columns=resolved.needed(),
        column_types=_column_types(profile, resolved, typed),
        null_values=list(profile.placeholders),
        strings_can_be_null=True,
        quoted_strings_can_be_null=True,
        decimal_point=profile.decimal,
    )
    table = pv.read_csv(
        io.BytesIO(prep.data), read_options=read, parse_options=parse, convert_options=convert
    )
    return table, bad_lines


def _read_table(
    prep: _Prepared, resolved: Resolved, path: Path | str, cfg: IngestConfig
) -> tuple[tuple[pa.Table, list[int]], _Prepared]:
    """Parse typed and multi-threaded; on a conversion error fall back to text columns; on a
    malformed row fall back to a single-threaded parse that records the bad rows."""
    typed, strict, recoded = True, True, False
    for _ in range(4):
        try:
            return _parse(prep, resolved, cfg, typed=typed, strict=strict), prep
        except pa.ArrowInvalid as exc:
            text = str(exc)
            if "UTF8" in text and not recoded and prep.profile.encoding in ("auto", "cp1252"):
                # invalid UTF-8 past the sniffed head: the file is in a legacy 8-bit code page
                prep = dataclasses.replace(
                    prep, data=prep.data.decode("cp1252", errors="replace").encode("utf-8")
                )
                recoded = True
            elif "conversion error" in text and typed:
                typed = False
            elif ("Expected" in text and "columns" in text) and strict:
                strict = False
            else:
                first = text.splitlines()[0] if text else type(exc).__name__
                raise InputDataError(f"{path}: cannot parse as CSV ({first})") from exc
        except (pa.ArrowException, UnicodeDecodeError, ValueError) as exc:
            first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            raise InputDataError(f"{path}: cannot parse as CSV ({first})") from exc
    raise InputDataError(f"{path}: cannot parse as CSV")  # pragma: no cover - loop always returns


def read_csv_log(path: Path | str, cfg: IngestConfig | None = None) -> LogFile:
    """Read one CSV export (plain, ``.gz``, or a zip member ``archive.zip!member.csv``).

    Parameters
    ----------
    path : Path or str
        The file; ``source_file`` in the frame is ``str(path)``.
    cfg : IngestConfig, optional
        Forced profile, default time zone, vehicle id rule, limits.

    Returns
    -------
    LogFile
        Raw canonical samples (SI, UTC), ``rows_in`` data rows, ``dropped`` rows with reasons.

    Raises
    ------
    InputDataError
        Unreadable, empty, binary, not matching any profile, or without a usable row.
    ProfileError
        The forced profile is malformed or unknown.
    """
    cfg = cfg or IngestConfig()
    path = Path(path) if not isinstance(path, Path) else path
    prep = _prepare(path, cfg)
    resolved = resolve(prep.profile, [h.strip() for h in prep.headers])
    if resolved is None:
        raise InputDataError(
            _no_profile_message(path, list(prep.headers)).replace(
                "no ingest profile matches", f"profile {prep.profile.name} does not fit"
            )
        )
    if prep.profile.trim or any(h != h.strip() for h in prep.headers):
        resolved = _unstrip(resolved, prep.headers)
    (table, bad_lines), prep = _read_table(prep, resolved, path, cfg)
    extra = None
    rows = None
    rows_in = table.num_rows
    if bad_lines:
        bad = _data_rows_of_lines(prep.profile.header, bad_lines)
        rows_in = table.num_rows + len(bad)
        rows = np.setdiff1d(np.arange(rows_in, dtype=np.int64), bad, assume_unique=True)
        extra = pd.DataFrame(
            {
                "source_row": bad.astype(np.int64),
                "reason": pd.array([_DROP_MALFORMED] * len(bad), dtype="string"),
            }
        )
    if rows_in == 0:
        raise InputDataError(f"{path}: header only, no data rows (profile {prep.profile.name})")
    return build_log(
        table,
        path=path,
        profile=prep.profile,
        resolved=resolved,
        cfg=cfg,
        decimal=prep.profile.decimal,
        source_rows=rows,
        extra_dropped=extra,
        rows_in=rows_in,
    )


def _unstrip(resolved: Resolved, headers: tuple[str, ...]) -> Resolved:
    """Map trimmed header names back to the file's padded ones (pyarrow selects by exact name)."""
    exact = {h.strip(): h for h in headers}

    def fix(header: str) -> str:
        return exact.get(header, header)

    return Resolved(
        {k: (fix(h), rule, unit) for k, (h, rule, unit) in resolved.columns.items()},
        tuple(fix(h) for h in resolved.time_parts),
        {k: fix(h) for k, h in resolved.hemispheres.items()},
        fix(resolved.vehicle_column) if resolved.vehicle_column else None,
    )
