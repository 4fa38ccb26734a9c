"""Defects real telematics exports have, injected into a clean synthetic frame with a report.

:func:`add_defects` returns the damaged frame and an :class:`InjectedDefects` saying exactly what
was done and where (row positions in the *returned* frame), so a cleaning test can check what
it found against what is there. Defects, in the order applied to each vehicle's rows:

1. altitude error: time-correlated (Ornstein-Uhlenbeck) error of a few metres, quantised to whole
   metres, with dropout runs (NaN), as GNSS receivers without a barometer report;
2. horizontal position error (time-correlated) and speed noise;
3. parked drift: at long stops, positions wander around the true spot and the reported speed is
   a small non-zero value, as GNSS fixes do at standstill;
4. spikes: single-row speed jumps and single-row position jumps;
5. unit mix-up: a contiguous block of one vehicle's speeds scaled by a unit factor;
6. gaps: runs of rows removed (logger or coverage outages);
7. duplicates: exact repeated rows, and repeated time stamps with other values.

All randomness comes from the seed; same seed and frame, same bytes.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.constants import WGS84_MEAN_RADIUS_M
from fleetfuel.synth.truth import ar1_noise

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
NS_PER_S: Final = 1_000_000_000
SECONDS_PER_DAY: Final = 86400.0


@dataclass(frozen=True, slots=True, kw_only=True)
class DefectSpec:
    """What to inject (all off by default). Shares are per row unless said otherwise.

    Attributes
    ----------
    altitude_sigma_m, altitude_corr_s : float
        Standard deviation [m] and correlation time [s] of the altitude error.
    altitude_step_m : float
        Quantisation of the reported altitude (0: none). [m]
    altitude_dropout_share : float
        Share of rows in altitude dropout runs (NaN). [1]
    altitude_dropout_rows : int
        Mean length of a dropout run. [rows]
    position_sigma_m, position_corr_s : float
        Horizontal position error per axis [m] and its correlation time [s].
    speed_sigma_m_s : float
        White noise on the reported speed while moving. [m/s]
    drift_min_stop_s : float
        Stops (runs of zero speed) at least this long may get parked drift (0: none). [s]
    drift_share : float
        Share of eligible stops that get drift. [1]
    drift_radius_m : float
        Typical distance of drifting fixes from the true spot. [m]
    drift_speed_m_s : float
        Typical speed reported while drifting. [m/s]
    speed_spike_share, position_spike_share : float
        Share of moving rows with a speed spike / a position jump. [1]
    speed_spike_m_s : tuple of float
        Range of the speed added by a spike. [m/s]
    position_jump_m : tuple of float
        Range of the distance a position spike jumps. [m]
    unit_mixup_vehicles : tuple of str
        Vehicles with a unit mix-up block.
    unit_mixup_factor : float
        Factor on the speeds of the block (1.609344: km/h values written as mph). [1]
    unit_mixup_share : float
        Length of the block as a share of the vehicle's rows. [1]
    gaps_per_day : float
        Expected number of outages per vehicle and day of log. [1/d]
    gap_s : tuple of float
        Range of outage durations. [s]
    duplicate_share, duplicate_time_share : float
        Share of rows repeated exactly / repeated with the same time stamp but other values. [1]
    """

    altitude_sigma_m: float = 0.0
    altitude_corr_s: float = 60.0
    altitude_step_m: float = 0.0
    altitude_dropout_share: float = 0.0
    altitude_dropout_rows: int = 20
    position_sigma_m: float = 0.0
    position_corr_s: float = 30.0
    speed_sigma_m_s: float = 0.0
    drift_min_stop_s: float = 0.0
    drift_share: float = 1.0
    drift_radius_m: float = 12.0
    drift_speed_m_s: float = 0.6
    speed_spike_share: float = 0.0
    position_spike_share: float = 0.0
    speed_spike_m_s: tuple[float, float] = (8.0, 30.0)
    position_jump_m: tuple[float, float] = (300.0, 3000.0)
    unit_mixup_vehicles: tuple[str, ...] = ()
    unit_mixup_factor: float = 1.609344
    unit_mixup_share: float = 0.2
    gaps_per_day: float = 0.0
    gap_s: tuple[float, float] = (60.0, 900.0)
    duplicate_share: float = 0.0
    duplicate_time_share: float = 0.0

    @classmethod
    def typical(cls, **overrides: float | tuple) -> DefectSpec:
        """A realistic mix (common practice for GNSS telematics, no source): 4 m correlated
        altitude error quantised to 1 m with 0.3 % dropouts, 2.5 m position error, 0.1 m/s
        speed noise, drift at half of the stops over 2 min, 0.05 % spikes of each kind, one gap a
        day, 0.2 % duplicated rows and 0.1 % repeated time stamps."""
        base = cls(
            altitude_sigma_m=4.0, altitude_step_m=1.0, altitude_dropout_share=0.003, position_sigma_m=2.5,
            speed_sigma_m_s=0.1, drift_min_stop_s=120.0, drift_share=0.5, speed_spike_share=0.0005,
            position_spike_share=0.0005, gaps_per_day=1.0, duplicate_share=0.002, duplicate_time_share=0.001,
        )
        return replace(base, **overrides)


@dataclass(frozen=True, slots=True, kw_only=True)
class InjectedDefects:
    """What :func:`add_defects` did. Row numbers are positions (0-based) in the returned frame.

    Attributes
    ----------
    source_index : ndarray of int
        For each returned row, the position of the input row it came from (align truth with
        ``truth.iloc[source_index]``).
    speed_spike_rows, position_spike_rows : ndarray of int
        Rows with a speed spike / a position jump.
    duplicate_rows : ndarray of int
        Exact copies (each is the second of two equal rows).
    duplicate_time_rows : ndarray of int
        Rows repeating the previous row's time stamp with other values.
    altitude_dropout_rows : ndarray of int
        Rows whose elevation was blanked (NaN).
    elevation_error_m : ndarray
        Reported minus true elevation per returned row (NaN in dropouts). [m]
    drift : DataFrame
        ``vehicle_id``, ``first_row``, ``last_row`` (inclusive) of parked-drift segments.
    gaps : DataFrame
        ``vehicle_id``, ``start_utc``, ``end_utc``, ``rows_removed``, ``next_row`` of each outage.
    unit_mixup : DataFrame
        ``vehicle_id``, ``first_row``, ``last_row``, ``factor`` of unit mix-up blocks.
    """

    source_index: IntArray
    speed_spike_rows: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    position_spike_rows: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    duplicate_rows: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    duplicate_time_rows: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    altitude_dropout_rows: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    elevation_error_m: FloatArray = field(default_factory=lambda: np.zeros(0))
    drift: pd.DataFrame = field(default_factory=pd.DataFrame)
    gaps: pd.DataFrame = field(default_factory=pd.DataFrame)
    unit_mixup: pd.DataFrame = field(default_factory=pd.DataFrame)


def _ou_on_times(t_s: FloatArray, corr_s: float, rng: np.random.Generator) -> FloatArray:
    """Unit-variance Ornstein-Uhlenbeck values at times ``t_s`` (uniform grid + interpolation)."""
    if not len(t_s):
        return np.zeros(0)
    step = min(1.0, corr_s / 10)
    span = float(t_s[-1] - t_s[0])
    grid = ar1_noise(int(span / step) + 2, step, corr_s, rng)
    return np.interp(t_s - t_s[0], np.arange(len(grid)) * step, grid)


def _runs(mask: npt.NDArray[np.bool_]) -> tuple[IntArray, IntArray]:
    """Start and stop (exclusive) of each run of True."""
    edges = np.diff(np.r_[0, mask.astype(np.int8), 0])
    return np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)


def _pick(n: int, share: float, rng: np.random.Generator, allowed: npt.NDArray[np.bool_] | None = None) -> IntArray:
    candidates = np.arange(n) if allowed is None else np.flatnonzero(allowed)
    k = min(len(candidates), int(rng.binomial(len(candidates), share))) if share > 0 else 0
    return np.sort(rng.choice(candidates, size=k, replace=False)) if k else np.zeros(0, dtype=np.int64)


def _offset_latlon(lat: FloatArray, lon: FloatArray, east_m: FloatArray, north_m: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Shift positions by small east/north offsets (spherical, mean radius: adequate for noise). [deg]"""
    dlat = np.rad2deg(north_m / WGS84_MEAN_RADIUS_M)
    dlon = np.rad2deg(east_m / (WGS84_MEAN_RADIUS_M * np.cos(np.deg2rad(lat))))
    return lat + dlat, lon + dlon


def _vehicle_rng(seed: int, vehicle_id: str) -> np.random.Generator:
    import zlib

    return np.random.default_rng(np.random.SeedSequence([seed, zlib.crc32(vehicle_id.encode("utf-8"))]))


def _damage_signals(sig: dict[str, FloatArray], t: FloatArray, spec: DefectSpec, rng: np.random.Generator,
                    report: dict[str, object]) -> None:
    """Altitude, position and speed errors, parked drift and spikes, in place on ``sig``."""
    n = len(t)
    speed_true = sig["speed"].copy()
    if "elev" in sig:
        if spec.altitude_sigma_m:
            sig["elev"] = sig["elev"] + spec.altitude_sigma_m * _ou_on_times(t, spec.altitude_corr_s, rng)
        if spec.altitude_step_m:
            sig["elev"] = np.round(sig["elev"] / spec.altitude_step_m) * spec.altitude_step_m
        if spec.altitude_dropout_share and n:
            runs = rng.poisson(spec.altitude_dropout_share * n / spec.altitude_dropout_rows)
            starts = rng.integers(0, n, runs)
            lengths = rng.geometric(1 / spec.altitude_dropout_rows, runs)
            cover = np.zeros(n + 1, dtype=np.int64)
            np.add.at(cover, starts, 1)
            np.add.at(cover, np.minimum(starts + lengths, n), -1)
            drop = np.cumsum(cover[:-1]) > 0
            sig["elev"] = np.where(drop, np.nan, sig["elev"])
            report["dropout"] = np.flatnonzero(drop)
    if spec.position_sigma_m and "lat" in sig:
        east = spec.position_sigma_m * _ou_on_times(t, spec.position_corr_s, rng)
        north = spec.position_sigma_m * _ou_on_times(t, spec.position_corr_s, rng)
        sig["lat"], sig["lon"] = _offset_latlon(sig["lat"], sig["lon"], east, north)
    if spec.speed_sigma_m_s:
        moving = speed_true > 0
        sig["speed"] = np.where(moving, np.maximum(sig["speed"] + spec.speed_sigma_m_s * rng.standard_normal(n), 0.0),
                                sig["speed"])
    drift = np.zeros(n, dtype=bool)
    if spec.drift_min_stop_s and n:
        start, stop = _runs(speed_true == 0)
        long_enough = (t[np.maximum(stop - 1, start)] - t[start]) >= spec.drift_min_stop_s
        chosen = long_enough & (rng.uniform(size=len(start)) < spec.drift_share)
        start, stop = start[chosen], stop[chosen]
        cover = np.zeros(n + 1, dtype=np.int64)
        np.add.at(cover, start, 1)
        np.add.at(cover, stop, -1)
        drift = np.cumsum(cover[:-1]) > 0
        east = spec.drift_radius_m * _ou_on_times(t, 120.0, rng)
        north = spec.drift_radius_m * _ou_on_times(t, 120.0, rng)
        wander = spec.drift_speed_m_s * np.abs(_ou_on_times(t, 15.0, rng))
        if "lat" in sig:
            lat, lon = _offset_latlon(sig["lat"], sig["lon"], east, north)
            sig["lat"], sig["lon"] = np.where(drift, lat, sig["lat"]), np.where(drift, lon, sig["lon"])
        sig["speed"] = np.where(drift, wander, sig["speed"])
        report["drift"] = (start, stop - 1)
    moving = (speed_true > 1.0) & ~drift
    spikes = _pick(n, spec.speed_spike_share, rng, moving)
    sig["speed"][spikes] += rng.uniform(*spec.speed_spike_m_s, len(spikes))
    report["speed_spikes"] = spikes
    jumps = _pick(n, spec.position_spike_share, rng, moving) if "lat" in sig else np.zeros(0, dtype=np.int64)
    if len(jumps):
        bearing = rng.uniform(0.0, 2 * np.pi, len(jumps))
        dist = rng.uniform(*spec.position_jump_m, len(jumps))
        sig["lat"][jumps], sig["lon"][jumps] = _offset_latlon(
            sig["lat"][jumps], sig["lon"][jumps], dist * np.sin(bearing), dist * np.cos(bearing))
    report["position_spikes"] = jumps


_SIGNALS: Final = {"speed": schema.SPEED_M_S, "lat": schema.LAT_DEG, "lon": schema.LON_DEG, "elev": schema.ELEVATION_M}


def _damage_vehicle(block: pd.DataFrame, vehicle_id: str, spec: DefectSpec, rng: np.random.Generator) -> dict:
    """All defects on one vehicle's rows; indices in the report are local output positions."""
    n = len(block)
    ns = pd.DatetimeIndex(block[schema.TIME_UTC]).as_unit("ns").asi8
    t = (ns - (ns[0] if n else 0)) / NS_PER_S
    sig = {k: block[c].to_numpy(dtype=np.float64, copy=True) for k, c in _SIGNALS.items() if c in block.columns}
    elev_true = sig.get("elev", np.full(n, np.nan)).copy()
    report: dict[str, object] = {}
    _damage_signals(sig, t, spec, rng, report)
    mix = None
    if vehicle_id in spec.unit_mixup_vehicles and n:
        length = max(1, int(spec.unit_mixup_share * n))
        first = int(rng.integers(0, max(1, n - length)))
        sig["speed"][first:first + length] *= spec.unit_mixup_factor
        mix = (first, first + length - 1)
    keep = np.ones(n, dtype=bool)
    if spec.gaps_per_day and n:
        starts = rng.integers(0, n, rng.poisson(spec.gaps_per_day * max(t[-1], 1.0) / SECONDS_PER_DAY))
        ends = np.maximum(np.searchsorted(t, t[starts] + rng.uniform(*spec.gap_s, len(starts)), side="left"), starts + 1)
        cover = np.zeros(n + 1, dtype=np.int64)
        np.add.at(cover, starts, 1)
        np.add.at(cover, ends, -1)
        keep = np.cumsum(cover[:-1]) == 0
    g_start, g_stop = _runs(~keep)
    gaps = list(zip(g_start.tolist(), (g_stop - 1).tolist(), strict=True))
    kept = np.flatnonzero(keep)
    counts = np.ones(len(kept), dtype=np.int64)
    spiked = np.zeros(n + 1, dtype=bool)
    spiked[np.r_[report["speed_spikes"], report["position_spikes"]].astype(np.int64)] = True
    plain = ~spiked[kept] & ~spiked[kept + 1]  # copies never repeat a spike nor blend with one
    dup = _pick(len(kept), spec.duplicate_share, rng, plain)
    counts[dup] = 2
    free = plain & (counts == 1)
    free[-1:] = False  # the last row has no next row to blend with
    dup_time = _pick(len(kept), spec.duplicate_time_share, rng, free)
    counts[dup_time] = 2
    source = np.repeat(kept, counts)
    first_pos = np.cumsum(counts) - counts
    out_of = np.full(n, -1, dtype=np.int64)
    out_of[kept] = first_pos
    out = {k: v[source] for k, v in sig.items()}
    copies = first_pos[dup_time] + 1
    nxt = np.minimum(kept[dup_time] + 1, n - 1)
    for k in out:  # a second fix at the same time stamp, half way to the next one
        out[k][copies] = (sig[k][kept[dup_time]] + sig[k][nxt]) / 2
    if "elev" in out and spec.altitude_step_m:
        out["elev"][copies] = np.round(out["elev"][copies] / spec.altitude_step_m) * spec.altitude_step_m

    def live(rows: IntArray) -> IntArray:
        pos = out_of[np.asarray(rows, dtype=np.int64)]
        return pos[pos >= 0]

    def span(a: int, b: int) -> tuple[int, int] | None:
        """Returned rows covering input rows a..b (inclusive), copies included."""
        i0, i1 = np.searchsorted(kept, a, side="left"), np.searchsorted(kept, b, side="right") - 1
        return None if i1 < i0 else (int(first_pos[i0]), int(first_pos[i1] + counts[i1] - 1))

    after = np.searchsorted(kept, [b for _, b in gaps], side="right")
    next_row = [int(first_pos[i]) if i < len(kept) else -1 for i in after]
    drift_spans = [span(a, b) for a, b in zip(*report.get("drift", ((), ())), strict=True)]
    mix_span = span(*mix) if mix is not None else None
    elev_out = out.get("elev", np.full(len(source), np.nan))
    return {
        "frame": block.iloc[source].assign(**{c: out[k] for k, c in _SIGNALS.items() if k in out}),
        "source": source,
        "speed_spikes": live(report["speed_spikes"]),
        "position_spikes": live(report["position_spikes"]),
        "duplicates": first_pos[dup] + 1,
        "duplicate_times": copies,
        "dropout": np.flatnonzero(np.isnan(elev_out) & ~np.isnan(elev_true[source])),
        "elev_error": elev_out - elev_true[source],
        "drift": [(vehicle_id, *sp) for sp in drift_spans if sp is not None],
        "gaps": [(vehicle_id, pd.Timestamp(ns[a], tz="UTC"), pd.Timestamp(ns[b], tz="UTC"), b - a + 1, nr)
                 for (a, b), nr in zip(gaps, next_row, strict=True)],
        "mixup": [] if mix_span is None else [(vehicle_id, *mix_span, spec.unit_mixup_factor)],
    }


def add_defects(frame: pd.DataFrame, spec: DefectSpec, seed: int = 0) -> tuple[pd.DataFrame, InjectedDefects]:
    """Inject the defects of ``spec`` into a clean frame; never mutates ``frame``.

    Parameters
    ----------
    frame : DataFrame
        Canonical columns (at least ``time_utc`` and ``speed_m_s``; ``vehicle_id``, positions and
        ``elevation_m`` when present), each vehicle's rows in time order.
    spec : DefectSpec
        What to inject.
    seed : int
        Seed; each vehicle draws from its own stream (seed, vehicle id), so a vehicle's defects do
        not depend on the other vehicles in the frame.

    Returns
    -------
    frame : DataFrame
        The damaged frame (vehicles in order of first appearance, a fresh RangeIndex).
    injected : InjectedDefects
        What was injected where (positions in the returned frame).
    """
    if schema.VEHICLE_ID in frame.columns:
        codes, names = pd.factorize(frame[schema.VEHICLE_ID].astype("string").fillna(""), sort=False)
    else:
        codes, names = np.zeros(len(frame), dtype=np.int64), pd.Index([""])
    parts = []
    offset = 0
    for k, vehicle_id in enumerate(names):  # one iteration per vehicle
        rows = np.flatnonzero(codes == k)
        part = _damage_vehicle(frame.iloc[rows], str(vehicle_id), spec, _vehicle_rng(seed, str(vehicle_id)))
        part["source"] = rows[part["source"]]
        part["offset"] = offset
        offset += len(part["source"])
        parts.append(part)

    def cat(key: str) -> IntArray:
        return np.concatenate([p[key] + p["offset"] for p in parts]) if parts else np.zeros(0, dtype=np.int64)

    def table(key: str, columns: list[str], shift: tuple[str, ...]) -> pd.DataFrame:
        rows = pd.DataFrame([r for p in parts for r in p[key]], columns=columns)
        offsets = np.concatenate([[p["offset"]] * len(p[key]) for p in parts]) if parts else []
        for col in shift:
            rows[col] = np.where(rows[col] >= 0, rows[col] + np.asarray(offsets, dtype=np.int64), -1) if len(rows) else rows[col]
        return rows

    out = pd.concat([p["frame"] for p in parts], ignore_index=True) if parts else frame.iloc[:0].copy()
    injected = InjectedDefects(
        source_index=np.concatenate([p["source"] for p in parts]) if parts else np.zeros(0, dtype=np.int64),
        speed_spike_rows=cat("speed_spikes"),
        position_spike_rows=cat("position_spikes"),
        duplicate_rows=cat("duplicates"),
        duplicate_time_rows=cat("duplicate_times"),
        altitude_dropout_rows=cat("dropout"),
        elevation_error_m=np.concatenate([p["elev_error"] for p in parts]) if parts else np.zeros(0),
        drift=table("drift", ["vehicle_id", "first_row", "last_row"], ("first_row", "last_row")),
        gaps=table("gaps", ["vehicle_id", "start_utc", "end_utc", "rows_removed", "next_row"], ("next_row",)),
        unit_mixup=table("mixup", ["vehicle_id", "first_row", "last_row", "factor"], ("first_row", "last_row")),
    )
    return out, injected
