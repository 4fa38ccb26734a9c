"""What the report reads from a forecast result, gathered once (duck-typed on the forecast contract).

The forecast stage's ``ForecastResult`` carries ``route_forecast``, ``fleet_ranking``,
``route_best``, ``savings``, ``missions``, ``assumptions`` and ``duty_mix``, plus references to the
cycles result and the data-quality account. :func:`report_view` reads those attributes by name
(missing optional ones become empty), so the outputs do not depend on the class itself.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
import pandas as pd

from fleetfuel.report.plots import duty_mix_wide

OPERATING_POINT_KEYS: Final = ("engine_speed_rpm", "torque_nm", "map_speed_rpm", "map_torque_nm", "map_fuel_g_s")
"""Arrays of ``result.operating_points`` (mapping or object) for the fuel-map plot; optional ``spec``."""

CYCLES_ATTRS: Final = ("cycles_result", "cycles")
ACCOUNT_ATTRS: Final = ("account", "quality", "data_quality")
CURRENCY_DEFAULT: Final = "currency units"


@dataclass(frozen=True, slots=True, kw_only=True)
class ReportView:
    """The tables, traces and labels the outputs present."""

    route_forecast: pd.DataFrame
    fleet_ranking: pd.DataFrame
    route_best: pd.DataFrame
    savings: pd.DataFrame
    missions: pd.DataFrame
    assumptions: dict[str, Any]
    duty_mix: pd.DataFrame
    cycle_traces: dict[str, pd.DataFrame] = field(default_factory=dict)
    account: pd.DataFrame | None = None
    operating_points: dict[str, Any] | None = None
    currency: str = CURRENCY_DEFAULT


def _frame(value: Any) -> pd.DataFrame:
    return value if isinstance(value, pd.DataFrame) else pd.DataFrame()


def _get(obj: Any, name: str) -> Any:
    if isinstance(obj, Mapping):
        return obj.get(name)
    return getattr(obj, name, None)


def _cycle_set(result: Any) -> Any:
    """The object holding ``cycles`` (type -> trace) and ``types``: a CycleSet, found through a CyclesResult."""
    for name in CYCLES_ATTRS:
        obj = getattr(result, name, None)
        for _ in range(3):
            if obj is None or isinstance(_get(obj, "cycles"), Mapping):
                break
            obj = _get(obj, "cycles")
        if obj is not None and isinstance(_get(obj, "cycles"), Mapping):
            return obj
    return None


def _cycle_traces(result: Any) -> dict[str, pd.DataFrame]:
    """Duty type (with its label when known) -> cycle trace with ``time_s`` and ``speed_m_s``."""
    found = _cycle_set(result)
    if found is None:
        return {}
    labels: dict[str, str] = {}
    types = _get(found, "types")
    if isinstance(types, pd.DataFrame) and {"type", "label"} <= set(types.columns):
        labels = dict(zip(types["type"].astype(str), types["label"].astype(str), strict=True))
    traces = {}
    for key in sorted(_get(found, "cycles"), key=str):
        trace = _get(found, "cycles")[key]
        if isinstance(trace, pd.DataFrame) and {"time_s", "speed_m_s"} <= set(trace.columns):
            name = str(key) if labels.get(str(key)) in (None, str(key)) else f"{key} ({labels[str(key)]})"
            traces[name] = trace
    return traces


def _account(result: Any) -> pd.DataFrame | None:
    holders = [result, getattr(result, "cycles_result", None), getattr(result, "cycles", None)]
    for holder in holders:
        for name in ACCOUNT_ATTRS:
            value = getattr(holder, name, None) if holder is not None else None
            if isinstance(value, pd.DataFrame):
                return value
    return None


def _operating_points(result: Any) -> dict[str, Any] | None:
    points = getattr(result, "operating_points", None)
    if points is None:
        return None
    values = {key: _get(points, key) for key in (*OPERATING_POINT_KEYS, "spec")}
    if any(values[key] is None for key in OPERATING_POINT_KEYS):
        return None
    for key in OPERATING_POINT_KEYS:
        values[key] = np.asarray(values[key], dtype=float)
    return values


def _currency(result: Any, assumptions: Mapping[str, Any]) -> str:
    label = getattr(result, "currency", None)
    if not label:
        label = next((v for k, v in assumptions.items() if "currency" in str(k).lower()), None)
    return str(label) if label else CURRENCY_DEFAULT


def report_view(result: Any) -> ReportView:
    """Gather what the outputs present from a forecast result (see the module docstring)."""
    assumptions = dict(getattr(result, "assumptions", None) or {})
    duty_mix = _frame(getattr(result, "duty_mix", None))
    return ReportView(
        route_forecast=_frame(result.route_forecast),
        fleet_ranking=_frame(result.fleet_ranking),
        route_best=_frame(getattr(result, "route_best", None)),
        savings=_frame(getattr(result, "savings", None)),
        missions=_frame(getattr(result, "missions", None)),
        assumptions=assumptions,
        duty_mix=duty_mix_wide(duty_mix) if not duty_mix.empty else duty_mix,
        cycle_traces=_cycle_traces(result),
        account=_account(result),
        operating_points=_operating_points(result),
        currency=_currency(result, assumptions),
    )
