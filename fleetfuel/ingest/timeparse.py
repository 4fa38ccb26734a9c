"""Parse sample times in pyarrow and convert local wall-clock times to UTC.

Everything is vectorised: Arrow's ISO 8601 cast and ``strptime`` kernels parse, numpy and pandas'
``tz_localize`` convert. Fractions of a second (``12:52:47.250``) are cut off with an Arrow regex
before ``strptime`` (which takes whole seconds) and added back in nanoseconds.

References
----------
ISO 8601-1:2019, Date and time -- Representations for information interchange.
IANA time zone database (tzdata), read through :mod:`zoneinfo` / pandas.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from fleetfuel.errors import InputDataError
from fleetfuel.ingest.profiles import TimeRule

NAT: Final = np.iinfo(np.int64).min
"""Integer value of NaT in datetime64[ns]."""

NS_PER_S: Final = 1_000_000_000
NS_PER_MS: Final = 1_000_000
NS_PER_DAY: Final = 86_400 * NS_PER_S
HALF_DAY_NS: Final = NS_PER_DAY // 2
"""A time-of-day stepping back by more than this is read as passing midnight."""

MAX_EPOCH_S: Final = 9.2e9
"""Largest |Unix time| held in datetime64[ns] (about year 2262). [s]"""

_ISO_FORMATS: Final = (
    "%Y-%m-%d %H:%M:%S%z",
    "%Y-%m-%d %H:%M:%S",
    "%Y-%m-%d %H:%M%z",
    "%Y-%m-%d %H:%M",
    "%Y-%m-%d",
)
_FRACTION: Final = r"(\d{2}:\d{2}:\d{2})[.,](\d{1,9})\d*"
_FRACTION_RE: Final = re.compile(r"\d{2}:\d{2}:\d{2}[.,]\d")
_OFFSET_RE: Final = re.compile(r"(?:[Zz]|[+-]\d{2}:?\d{2})\s*$")


@dataclass(frozen=True, slots=True)
class ParsedTimes:
    """Times as int64 nanoseconds (``NAT`` where unparseable) and whether each is already UTC."""

    ns: npt.NDArray[np.int64]
    is_utc: npt.NDArray[np.bool_]


def _as_strings(arr: pa.Array) -> pa.Array:
    if pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type):
        return arr
    return pc.cast(arr, pa.string())


def _numbers(arr: pa.Array) -> npt.NDArray[np.float64]:
    if pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type):
        from fleetfuel.ingest.convert import parse_numbers

        arr = parse_numbers(arr)
    return np.asarray(pc.cast(arr, pa.float64()).to_numpy(zero_copy_only=False), dtype=np.float64)


def _epoch(arr: pa.Array, ns_per_unit: int) -> ParsedTimes:
    values = _numbers(arr)
    ok = np.isfinite(values) & (np.abs(values * (ns_per_unit / NS_PER_S)) < MAX_EPOCH_S)
    ns = np.full(len(values), NAT, dtype=np.int64)
    ns[ok] = np.round(values[ok] * ns_per_unit).astype(np.int64)
    return ParsedTimes(ns, np.ones(len(values), dtype=bool))


def _timestamps(arr: pa.Array) -> ParsedTimes:
    """An Arrow timestamp or date column (Parquet): aware -> UTC, naive -> local."""
    aware = pa.types.is_timestamp(arr.type) and arr.type.tz is not None
    ns = pc.cast(pc.cast(arr, pa.timestamp("ns", arr.type.tz if aware else None)), pa.int64())
    values = np.asarray(ns.fill_null(NAT).to_numpy(zero_copy_only=False), dtype=np.int64)
    return ParsedTimes(values, np.full(len(values), aware))


def _fraction_ns(strings: pa.Array) -> tuple[pa.Array, npt.NDArray[np.int64]]:
    """Strings with the fraction of a second removed, and that fraction in ns."""
    digits = pc.struct_field(pc.extract_regex(strings, r":\d{2}[.,](?P<f>\d{1,9})"), [0])
    padded = pc.utf8_slice_codeunits(pc.utf8_rpad(digits, width=9, padding="0"), 0, 9)
    frac = pc.cast(pc.if_else(pc.equal(digits, ""), "0", padded), pa.int64())
    values = np.asarray(frac.fill_null(0).to_numpy(zero_copy_only=False), dtype=np.int64)
    return pc.replace_substring_regex(strings, _FRACTION, r"\1"), values


def _iso_normal(strings: pa.Array) -> pa.Array:
    """ISO variants to one shape: ``T`` -> space, no space before an offset, ``+02`` -> ``+0200``."""
    out = pc.replace_substring_regex(strings, r"^(\d{4}-\d{2}-\d{2})[Tt ]\s*", r"\1 ")
    out = pc.replace_substring_regex(out, r"\s+([+-]\d{2}:?\d{2}|[Zz])$", r"\1")
    # RE2 rewrite strings take one-digit group references: "\\100" is group 1, then "00".
    out = pc.replace_substring_regex(out, r"(\d{2}:\d{2}(?::\d{2})?[+-]\d{2})$", r"\100")
    return pc.replace_substring_regex(out, r"z$", "Z")


def _strptime_rounds(strings: pa.Array, formats: tuple[str, ...], iso: bool) -> ParsedTimes:
    n = len(strings)
    ns = np.full(n, NAT, dtype=np.int64)
    is_utc = np.zeros(n, dtype=bool)
    pending = np.flatnonzero(np.asarray(strings.is_valid().to_numpy(zero_copy_only=False)))
    first = strings[int(pending[0])].as_py() if len(pending) else ""
    fraction_first = bool(_FRACTION_RE.search(first or ""))
    rounds = [(fraction_first, False), (not fraction_first, False)]
    if iso:
        rounds += [(True, True)]
    strings = pc.utf8_trim_whitespace(strings)
    for strip_fraction, normalise in rounds:
        if not len(pending):
            break
        sub = strings if len(pending) == n else strings.take(pa.array(pending))
        frac = np.zeros(len(pending), dtype=np.int64)
        if normalise:
            sub = _iso_normal(sub)
        if strip_fraction:
            sub, frac = _fraction_ns(sub)
        for fmt in formats:
            parsed = pc.strptime(sub, format=fmt, unit="ns", error_is_null=True)
            ok = np.asarray(parsed.is_valid().to_numpy(zero_copy_only=False))
            if ok.any():
                values = np.asarray(pc.cast(parsed, pa.int64()).fill_null(0).to_numpy(zero_copy_only=False))
                rows = pending[ok]
                ns[rows] = values[ok] + frac[ok]
                is_utc[rows] = "%z" in fmt
                pending, sub, frac = pending[~ok], sub.filter(pa.array(~ok)), frac[~ok]
            if not len(pending):
                break
    return ParsedTimes(ns, is_utc)


def _first_valid(strings: pa.Array) -> str:
    valid = strings.drop_null()
    return str(valid[0].as_py()) if len(valid) else ""


def _iso_cast(strings: pa.Array) -> ParsedTimes | None:
    """Fast path: Arrow's ISO 8601 cast, when every value parses (all naive, or all with offsets).

    The first value decides which cast is tried first (a failed cast can cost a full pass).
    """
    targets = [(pa.timestamp("ns"), False), (pa.timestamp("ns", "UTC"), True)]
    if _OFFSET_RE.search(_first_valid(strings)):
        targets.reverse()
    for target, utc in targets:
        try:
            ns = pc.cast(pc.cast(strings, target), pa.int64())
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            continue
        if ns.null_count != strings.null_count:  # pragma: no cover - cast maps invalid to error, not null
            return None
        values = np.asarray(ns.fill_null(NAT).to_numpy(zero_copy_only=False), dtype=np.int64)
        return ParsedTimes(values, np.full(len(values), utc))
    return None


def _roll_midnight(ns: npt.NDArray[np.int64]) -> npt.NDArray[np.int64]:
    """Add a day each time a time of day steps back by more than half a day (passing midnight)."""
    ok = ns != NAT
    valid = ns[ok]
    if len(valid) < 2:
        return ns
    days = np.concatenate(([0], np.cumsum(np.diff(valid) < -HALF_DAY_NS)))
    out = ns.copy()
    out[ok] = valid + days * NS_PER_DAY
    return out


def parse_times(parts: list[pa.Array], rule: TimeRule, file_name: str) -> ParsedTimes:
    """Parse the time parts of one file by ``rule``.

    Parameters
    ----------
    parts : list of pyarrow.Array
        The time columns, in the rule's order (text, numbers or Arrow timestamps).
    rule : TimeRule
        The profile's time rule.
    file_name : str
        The file's own name (for ``date_from_name``).

    Returns
    -------
    ParsedTimes
        Nanoseconds since 1970-01-01 (UTC where ``is_utc``, else naive local wall-clock), ``NAT``
        where the value does not parse.
    """
    if rule.kind in ("epoch_s", "elapsed_s"):
        return _epoch(parts[0], NS_PER_S)
    if rule.kind == "epoch_ms":
        return _epoch(parts[0], NS_PER_MS)
    if len(parts) == 1 and (pa.types.is_timestamp(parts[0].type) or pa.types.is_date(parts[0].type)):
        return _timestamps(parts[0])
    strings = [_as_strings(p) for p in parts]
    joined = strings[0] if len(strings) == 1 else pc.binary_join_element_wise(*strings, " ")
    if rule.date_from_name:
        match = re.search(rule.date_from_name, file_name)
        if match is None:
            raise InputDataError(
                f"{file_name}: the file name carries no date matching {rule.date_from_name!r} (needed for time of day)"
            )
        joined = pc.binary_join_element_wise(match.group("date"), joined, " ")
    if rule.kind == "iso":
        fast = _iso_cast(joined)
        parsed = fast if fast is not None else _strptime_rounds(joined, _ISO_FORMATS, iso=True)
    else:
        parsed = _strptime_rounds(joined, (rule.format,), iso=False)
    if rule.date_from_name:
        return ParsedTimes(_roll_midnight(parsed.ns), parsed.is_utc)
    return parsed


def _second_pass(
    naive: npt.NDArray[np.int64], ambiguous: npt.NDArray[np.bool_], groups: npt.NDArray[np.int64]
) -> npt.NDArray[np.bool_]:
    """Ambiguous rows on the second (standard-time) pass of a fall-back hour, by row order.

    Within each run of consecutive ambiguous rows of one vehicle, rows after a backward step of
    the wall clock belong to the repeated hour.
    """
    order = np.argsort(groups, kind="stable")
    a, t, g = ambiguous[order], naive[order], groups[order]
    same_prev = np.concatenate(([False], (g[1:] == g[:-1]) & a[:-1] & a[1:]))
    back = same_prev & np.concatenate(([False], t[1:] < t[:-1]))
    run_id = np.cumsum(a & ~same_prev)
    cum_back = np.cumsum(back)
    start_back = np.zeros(run_id.max() + 1 if len(run_id) else 1, dtype=np.int64)
    starts = np.flatnonzero(a & ~same_prev)
    start_back[run_id[starts]] = cum_back[starts]
    second = a & (cum_back - start_back[run_id] > 0)
    out = np.zeros(len(naive), dtype=bool)
    out[order] = second
    return out


def localize_ns(
    naive: npt.NDArray[np.int64], zone: str, groups: npt.NDArray[np.int64] | None = None
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.bool_]]:
    """Convert naive local wall-clock times in ``zone`` to UTC.

    Fall-back (ambiguous) times are resolved by row order (:func:`_second_pass`), so a repeated
    hour is kept as two distinct hours. Spring-forward (nonexistent) times become ``NAT``.

    Parameters
    ----------
    naive : ndarray of int64
        Wall-clock times in ns since 1970-01-01 as if UTC; ``NAT`` for missing.
    zone : str
        IANA time zone.
    groups : ndarray of int64, optional
        Vehicle code per row: runs are judged within one vehicle's rows.

    Returns
    -------
    utc_ns : ndarray of int64
        UTC nanoseconds (``NAT`` where missing or nonexistent).
    nonexistent : ndarray of bool
        Rows whose wall-clock time falls in a spring-forward gap.
    """
    if zone == "UTC":
        return naive, np.zeros(len(naive), dtype=bool)
    index = pd.DatetimeIndex(naive.view("datetime64[ns]"))
    n = len(naive)
    dst = index.tz_localize(zone, ambiguous=np.ones(n, dtype=bool), nonexistent="NaT").asi8
    std = index.tz_localize(zone, ambiguous=np.zeros(n, dtype=bool), nonexistent="NaT").asi8
    ambiguous = (dst != std) & (dst != NAT) & (std != NAT)
    missing = naive == NAT
    nonexistent = (dst == NAT) & ~missing
    if ambiguous.any():
        second = _second_pass(naive, ambiguous, np.zeros(n, dtype=np.int64) if groups is None else groups)
        dst = np.where(second, std, dst)
    return dst, nonexistent
