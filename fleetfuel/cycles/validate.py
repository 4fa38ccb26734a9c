r"""The fuel check of the representative cycles, fleet-wide, per route, per type and on a held-out day.

The key check of a set of cycles: the consumption (fuel or energy) of a reference vehicle
simulated on the weighted representative cycles against the same vehicle simulated on the full
cleaned logs. The vehicle model belongs to a later stage, so it comes in as a function
(:data:`FuelModel`): the pipeline wraps :func:`fleetfuel.simulate.simulate_trace`.

- *On the logs*: every trip holding a measured micro-trip is simulated whole (so each sample
  keeps its real neighbours); each micro-trip's consumption is the sum over its rows.
- *On the cycles*: each type's cycle is simulated once; its consumption per metre :math:`c_k`
  times the distance :math:`D_{g,k}` a group :math:`g` drives in type :math:`k` gives
  :math:`\hat F_g = \sum_k D_{g,k} c_k`.

Both sides cover the same driving: the *measured* micro-trips
(:func:`fleetfuel.cycles.pieces.measured_microtrips`: logged at the cycle step) of types that have
a cycle, including those that start or end moving (cut at a gap or a log's edge): they give at
most splice-level pieces to the cycles, but their distance belongs to their type, as in the
weights the forecast uses. Only low-rate logs stay out (simulating them at their coarse step
would not be a reference). The rates are per metre and the groups are weighted by distance, as
in the forecast's route intensities (a time weighting with per-second rates was measured worse on
the sample fleet). Relative error :math:`(\hat F_g - F_g) / F_g`; goals
``cfg.fuel_tolerance_fleet`` (fleet), ``cfg.fuel_tolerance_route`` (each route) and
``cfg.holdout_tolerance`` (held-out day: types and cycles fitted without that day's micro-trips,
its micro-trips typed by the fitted model and predicted).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Final

import numpy as np
import numpy.typing as npt
import pandas as pd

from fleetfuel import schema
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.cycles.logs import CycleLogs
from fleetfuel.errors import CycleError
from fleetfuel.segment.config import METRES_PER_KM, SegmentConfig

if TYPE_CHECKING:
    from fleetfuel.cycles.build import CycleSet

FloatArray = npt.NDArray[np.float64]
FuelModel = Callable[[FloatArray, FloatArray, FloatArray], FloatArray]
"""``(time_s [s], speed_m_s [m/s], grade [1])`` of one continuous trace -> consumption of each row."""

CHECK_COLUMNS: Final = (
    "scope", "key", "microtrips", "distance_km", "on_logs", "on_cycles", "relative_error", "goal", "passed",
)
"""Columns of :func:`fuel_check` and :func:`holdout_check` (consumption in the model's unit)."""


def _seconds(times: pd.Series) -> FloatArray:
    return ((times - pd.Timestamp(0, tz="UTC")) / pd.Timedelta(seconds=1)).to_numpy(np.float64)


def _measured(microtrips: pd.DataFrame) -> npt.NDArray[np.bool_]:
    """Rows in the check: ``measured`` (tables from before that column: ``eligible``)."""
    flag = "measured" if "measured" in microtrips.columns else "eligible"
    return microtrips[flag].to_numpy(dtype=bool)


def microtrip_consumption(samples: pd.DataFrame, microtrips: pd.DataFrame, fuel_model: FuelModel) -> pd.Series:
    """Consumption of each measured micro-trip, simulated trip by trip over the full logs.

    Parameters
    ----------
    samples : DataFrame
        Segmented clean frame, sorted by vehicle and time (trips are contiguous runs of rows).
    microtrips : DataFrame
        :attr:`CycleSet.microtrips` (``measured`` column; ``eligible`` when it has none).
    fuel_model : FuelModel

    Returns
    -------
    Series
        Indexed by ``microtrip_id`` (measured ones, sorted), in the model's unit.
    """
    ids = microtrips.loc[_measured(microtrips), schema.MICROTRIP_ID].astype(str)
    wanted = samples[schema.MICROTRIP_ID].isin(set(ids)).to_numpy()
    trips = set(samples.loc[wanted, schema.TRIP_ID].astype(str))
    rows = np.flatnonzero(samples[schema.TRIP_ID].isin(trips).to_numpy())
    trip_codes, _ = pd.factorize(samples[schema.TRIP_ID].iloc[rows])
    t = _seconds(samples[schema.TIME_UTC].iloc[rows])
    v = np.nan_to_num(samples[schema.SPEED_M_S].to_numpy(dtype=np.float64, na_value=np.nan)[rows], nan=0.0)
    grade = samples[schema.GRADE] if schema.GRADE in samples.columns else pd.Series(0.0, index=samples.index)
    g = np.nan_to_num(grade.to_numpy(dtype=np.float64, na_value=np.nan)[rows], nan=0.0)
    used = np.zeros(rows.size)
    bounds = np.flatnonzero(np.r_[True, trip_codes[1:] != trip_codes[:-1], True])
    for lo, hi in zip(bounds[:-1], bounds[1:], strict=True):  # one vectorised simulation per trip
        if hi - lo >= 2:
            used[lo:hi] = fuel_model(t[lo:hi] - t[lo], v[lo:hi], g[lo:hi])
    mt = samples[schema.MICROTRIP_ID].iloc[rows].astype("string")
    keep = mt.isin(set(ids)).to_numpy()
    return pd.Series(used[keep]).groupby(mt.to_numpy()[keep]).sum().reindex(sorted(ids), fill_value=0.0)


def cycle_rates(cycles: dict[str, pd.DataFrame], fuel_model: FuelModel) -> pd.DataFrame:
    """Each cycle's distance [km], consumption and consumption per metre (index: type)."""
    rows = []
    for name, trace in cycles.items():
        t, v, g = (trace[c].to_numpy(dtype=np.float64) for c in ("time_s", "speed_m_s", "grade"))
        used = float(np.sum(fuel_model(t, v, g)))
        distance_m = float(np.trapezoid(v, t))
        rows.append({"type": name, "distance_km": distance_m / METRES_PER_KM, "consumption": used,
                     "per_m": used / distance_m if distance_m > 0 else np.nan})
    return pd.DataFrame(rows, columns=["type", "distance_km", "consumption", "per_m"]).set_index("type")


def _check_rows(scope: str, keys: pd.Series, frame: pd.DataFrame, goal: float) -> pd.DataFrame:
    grouped = frame.groupby(keys.to_numpy(), sort=True)
    out = pd.DataFrame(
        {
            "microtrips": grouped.size(),
            "distance_km": grouped["distance_m"].sum() / METRES_PER_KM,
            "on_logs": grouped["on_logs"].sum(),
            "on_cycles": grouped["on_cycles"].sum(),
        }
    )
    out["relative_error"] = (out["on_cycles"] - out["on_logs"]) / out["on_logs"].where(out["on_logs"] != 0)
    out["goal"] = goal
    out["passed"] = out["relative_error"].abs() <= goal
    out.index.name = "key"
    out = out.reset_index()
    out.insert(0, "scope", scope)
    return out[list(CHECK_COLUMNS)]


def _predicted(microtrips: pd.DataFrame, types: pd.Series, consumption: pd.Series, rates: pd.DataFrame) -> pd.DataFrame:
    """Micro-trips of types with a cycle and a consumption: distance, consumption on logs and on cycles."""
    ids = microtrips[schema.MICROTRIP_ID].astype(str)
    per_m = types.astype("string").map(rates["per_m"]).to_numpy(dtype=np.float64, na_value=np.nan)
    frame = pd.DataFrame(
        {
            schema.MICROTRIP_ID: ids.to_numpy(),
            "type": types.astype("string").to_numpy(),
            "distance_m": microtrips["distance_m"].to_numpy(dtype=np.float64),
            "on_logs": ids.map(consumption).to_numpy(dtype=np.float64, na_value=np.nan),
        },
        index=microtrips.index,
    )
    frame["on_cycles"] = frame["distance_m"] * per_m
    if schema.ROUTE in microtrips.columns:
        frame[schema.ROUTE] = microtrips[schema.ROUTE].astype("string").fillna("(none)").to_numpy()
    return frame.loc[np.isfinite(frame["on_logs"]).to_numpy() & np.isfinite(per_m)]


def fuel_check(cycleset: CycleSet, consumption: pd.Series, rates: pd.DataFrame, cfg: CyclesConfig) -> pd.DataFrame:
    """Consumption on the weighted cycles vs on the logs: fleet, each route, each type.

    Parameters
    ----------
    cycleset : CycleSet
    consumption : Series
        :func:`microtrip_consumption` of the same micro-trips.
    rates : DataFrame
        :func:`cycle_rates` of ``cycleset.cycles``.
    cfg : CyclesConfig
        Goals.

    Returns
    -------
    DataFrame
        :data:`CHECK_COLUMNS`; ``scope`` is ``fleet``, ``route`` or ``type`` (the type's goal is
        the route goal: it is the per-type agreement behind the route figures).
    """
    mts = cycleset.microtrips
    keep = _measured(mts)
    frame = _predicted(mts.loc[keep], mts["type"].loc[keep], consumption, rates)
    parts = [_check_rows("fleet", pd.Series("fleet", index=frame.index), frame, cfg.fuel_tolerance_fleet)]
    if schema.ROUTE in frame.columns:
        parts.append(_check_rows("route", frame[schema.ROUTE], frame, cfg.fuel_tolerance_route))
    parts.append(_check_rows("type", frame["type"], frame, cfg.fuel_tolerance_route))
    return pd.concat(parts, ignore_index=True)


def microtrip_days(microtrips: pd.DataFrame) -> pd.Series:
    """UTC date (ISO string) of the start of each micro-trip's operating period."""
    start = microtrips.groupby(schema.PERIOD_ID)["start_utc"].transform("min")
    return pd.to_datetime(start, utc=True).dt.strftime("%Y-%m-%d")


def holdout_check(
    samples: pd.DataFrame | CycleLogs,
    cycleset: CycleSet,
    consumption: pd.Series,
    fuel_model: FuelModel,
    cfg: CyclesConfig,
    segment_cfg: SegmentConfig | None = None,
) -> pd.DataFrame:
    """Build types and cycles without one day, then predict that day's consumption.

    The day is ``cfg.holdout_day`` (``"last"``: the last day with driving; days are the UTC dates
    operating periods start on, so a night shift stays whole). Returns one row of
    :data:`CHECK_COLUMNS` (``scope`` ``holdout``, ``key`` the day) plus ``note``; no row when
    there is a single day or ``holdout_day`` is ``"none"``.
    """
    from fleetfuel.cycles.build import build_cycles  # loads the clustering (see the package docstring)

    empty = pd.DataFrame(columns=[*CHECK_COLUMNS, "note"])
    if cfg.holdout_day == "none":
        return empty
    mts = cycleset.microtrips
    days = microtrip_days(mts)
    known = sorted(days.dropna().unique())
    day = known[-1] if cfg.holdout_day == "last" and known else cfg.holdout_day
    if len(known) < 2 or day not in known:
        return empty
    train = mts.loc[(days != day).to_numpy()].drop(columns=["type", "measured", "eligible"], errors="ignore")
    test = mts.loc[(days == day).to_numpy()]
    try:
        fitted = build_cycles(samples, train, cfg, segment_cfg)
    except CycleError as exc:
        row = dict.fromkeys(CHECK_COLUMNS, np.nan) | {"scope": "holdout", "key": day, "note": str(exc)}
        return pd.DataFrame([row])
    rates = cycle_rates(fitted.cycles, fuel_model)
    test_types = fitted.assign(test)
    keep = _measured(test)
    frame = _predicted(test.loc[keep], test_types[keep], consumption, rates)
    out = _check_rows("holdout", pd.Series(day, index=frame.index), frame, cfg.holdout_tolerance)
    out["note"] = f"types and cycles fitted on {len(known) - 1} other day(s) ({fitted.types.shape[0]} types)"
    return out
