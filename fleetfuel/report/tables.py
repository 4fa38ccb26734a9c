"""Tidy output tables: fixed column order, stable sort, spreadsheet-formula escaping, deterministic bytes.

Presents only: every number comes from the forecast stage's result. Column names carry their unit
(``_per_year`` figures are per calendar year at the configured operating days; money in the
configured currency).

References
----------
OWASP, "CSV Injection" (https://owasp.org/www-community/attacks/CSV_Injection): prefix text cells
that begin with ``= + - @``, tab or carriage return with a single quote.
"""

from __future__ import annotations

import io
import math
from collections.abc import Iterable, Mapping
from typing import Any, Final

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from fleetfuel.errors import InternalError

ROUTE_FORECAST_COLUMNS: Final = (
    "route",
    "vehicle_class",
    "spec",
    "annual_km",
    "fuel_l_per_100km",
    "fuel_l_per_year",
    "kwh_per_year",
    "co2_kg_per_year",
    "energy_cost_per_year",
    "tco_per_year",
    "feasible",
    "infeasible_reason",
)
"""First columns of ``route_forecast.csv``/``.parquet`` (one row per route x spec); extra columns follow."""

ROUTE_FORECAST_SORT: Final = ("route", "vehicle_class", "spec")

FLEET_RANKING_COLUMNS: Final = (
    "vehicle_class",
    "rank",
    "spec",
    "ranked_by",
    "tco_per_year",
    "energy_cost_per_year",
    "fuel_l_per_year",
    "kwh_per_year",
    "co2_kg_per_year",
    "routes_not_served",
)
"""First columns of ``fleet_ranking.csv`` (one row per class x spec); extra columns follow."""

FLEET_RANKING_SORT: Final = ("vehicle_class", "rank", "spec")

FORMULA_PREFIXES: Final = ("=", "+", "-", "@", "\t", "\r")
"""Leading characters a spreadsheet may read as a formula (OWASP CSV Injection)."""

ESCAPE_MARK: Final = "'"


def escape_text(value: Any) -> Any:
    """``value`` with a leading ``'`` when it is text beginning with a formula character; else unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_PREFIXES):
        return ESCAPE_MARK + value
    return value


def _is_text_column(column: pd.Series) -> bool:
    return pd.api.types.is_string_dtype(column.dtype) or column.dtype == object


def escape_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``frame`` with every text cell escaped (:func:`escape_text`); numbers untouched."""
    out = frame.copy()
    for name in out.columns:
        if _is_text_column(out[name]):
            out[name] = out[name].map(escape_text, na_action="ignore")
    out.columns = [escape_text(str(c)) for c in out.columns]
    return out


def tidy_table(frame: pd.DataFrame, columns: Iterable[str], sort: Iterable[str], name: str) -> pd.DataFrame:
    """``frame`` with ``columns`` first (extra columns after, in their order), stably sorted by ``sort``.

    Raises
    ------
    InternalError
        A required column is missing: the forecast broke its contract (a bug, not bad input).
    """
    columns = tuple(columns)
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise InternalError(
            f"{name}: missing column {missing[0]!r}; expected {list(columns)}, found {list(frame.columns)}"
        )
    extra = [c for c in frame.columns if c not in columns]
    out = frame.loc[:, [*columns, *extra]].reset_index(drop=True)
    keys = [c for c in sort if c in out.columns]
    return out.sort_values(keys, kind="mergesort", na_position="last").reset_index(drop=True)


def route_forecast_table(route_forecast: pd.DataFrame) -> pd.DataFrame:
    """The tidy per-route table (:data:`ROUTE_FORECAST_COLUMNS` first), sorted by route, class, spec."""
    return tidy_table(route_forecast, ROUTE_FORECAST_COLUMNS, ROUTE_FORECAST_SORT, "route_forecast")


def fleet_ranking_table(fleet_ranking: pd.DataFrame) -> pd.DataFrame:
    """The tidy ranking (:data:`FLEET_RANKING_COLUMNS` first), sorted by class, rank, spec."""
    return tidy_table(fleet_ranking, FLEET_RANKING_COLUMNS, FLEET_RANKING_SORT, "fleet_ranking")


def plain_value(value: Any) -> Any:
    """A cell value for text outputs: numpy scalars unwrapped, NaN/NA to ``None``, sequences joined."""
    if isinstance(value, list | tuple | np.ndarray):
        return "; ".join(str(plain_value(v)) for v in value)
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and math.isnan(value):
        return None
    return value


def assumptions_table(assumptions: Mapping[str, Any]) -> pd.DataFrame:
    """The ordered assumption mapping as a two-column table ``assumption``, ``value`` (values as text)."""
    rows = [(str(k), "" if plain_value(v) is None else str(plain_value(v))) for k, v in assumptions.items()]
    return pd.DataFrame(rows, columns=["assumption", "value"], dtype="string")


def _cells_for_text(frame: pd.DataFrame) -> pd.DataFrame:
    """Sequence-valued cells (e.g. lists of routes) joined with ``; `` so CSV shows them readably."""
    out = frame.copy()
    for name in out.columns:
        if out[name].dtype == object:
            out[name] = out[name].map(
                lambda v: "; ".join(map(str, v)) if isinstance(v, list | tuple | np.ndarray) else v
            )
    return out


def csv_bytes(frame: pd.DataFrame) -> bytes:
    """UTF-8 CSV of ``frame``: text escaped, ``\\n`` line ends, no index, full float precision."""
    text = escape_frame(_cells_for_text(frame)).to_csv(index=False, lineterminator="\n")
    return text.encode("utf-8")


def parquet_bytes(frame: pd.DataFrame) -> bytes:
    """Parquet of ``frame`` (no index, text as written, not escaped: Parquet is not a spreadsheet).

    The bytes depend only on the data and the library versions: no time stamps are written.
    """
    table = pa.Table.from_pandas(_cells_for_text(frame), preserve_index=False)
    buffer = io.BytesIO()
    pq.write_table(table, buffer, compression="zstd", write_statistics=True)
    return buffer.getvalue()
