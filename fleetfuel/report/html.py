"""``report.html``: one self-contained page (inline CSS, plots as PNG data URIs, no scripts, no requests).

Built from ``templates/report.html.tmpl`` (:class:`string.Template`) with data; every text that
comes from data is passed through :func:`html.escape`. Presents only.
"""

from __future__ import annotations

import base64
import html
import json
import math
from collections.abc import Mapping
from importlib import resources
from string import Template
from typing import Any, Final

import pandas as pd

from fleetfuel.report import quality
from fleetfuel.report.tables import (
    FLEET_RANKING_COLUMNS,
    ROUTE_FORECAST_COLUMNS,
    assumptions_table,
    fleet_ranking_table,
    plain_value,
    route_forecast_table,
)
from fleetfuel.report.view import ReportView

TEMPLATE: Final = ("templates", "report.html.tmpl")
TITLE: Final = "Fleet fuel and energy forecast"
SUBTITLE: Final = "Per-route forecast of candidate vehicle specs from the fleet's own logs."
RANKING_EXTRA: Final = ("spec_name", "annual_km")
ROUTE_EXTRA: Final = ("spec_name", "kwh_per_100km", "co2_wtw_kg_per_year")
"""Columns shown in the page besides the fixed ones, when the result has them (all are in the CSV/XLSX)."""
QUALITY_COLUMNS: Final = (
    ("path", "file"),
    ("vehicle_ids", "vehicles"),
    ("rows_in", "rows in"),
    ("rows_kept", "rows kept"),
    ("rows_interpolated", "interpolated"),
    ("dropped", "dropped (reason count)"),
    ("distance_km", "distance [km]"),
    ("flags", "flags"),
    ("error", "error"),
)
DECIMALS: Final = (("_per_100km", 2), ("_share", 3), ("rank", 0), ("_km", 0), ("_per_year", 0))
"""Column-name pattern -> decimals shown; first match wins; other floats 3 significant digits."""


def _format_number(column: str, value: float | int) -> str:
    if isinstance(value, int):
        return f"{value:,}"
    if not math.isfinite(value):
        return "-"
    for pattern, decimals in DECIMALS:
        if pattern in column:
            return f"{value:,.{decimals}f}"
    return f"{value:.3g}"


def _cell(column: str, value: Any) -> str:
    value = plain_value(value)
    if value is None:
        return "<td>-</td>"
    if isinstance(value, bool):
        return f"<td>{'yes' if value else 'no'}</td>"
    if isinstance(value, dict):
        value = ", ".join(f"{k} {v}" for k, v in sorted(value.items()) if v) or "-"
    if isinstance(value, int | float):
        return f'<td class="num">{html.escape(_format_number(column, value))}</td>'
    return f"<td>{html.escape(str(value))}</td>"


def table_html(frame: pd.DataFrame, row_class: list[str] | None = None) -> str:
    """An HTML table of ``frame`` (headers and cells escaped; numbers right-aligned and rounded)."""
    if frame.empty:
        return '<p class="note">(none)</p>'
    head = "".join(f"<th>{html.escape(str(c))}</th>" for c in frame.columns)
    classes = [""] * len(frame) if row_class is None else row_class
    rows = []
    for cls, values in zip(classes, frame.itertuples(index=False, name=None), strict=True):
        attr = f' class="{html.escape(cls)}"' if cls else ""
        cells = "".join(_cell(str(c), v) for c, v in zip(frame.columns, values, strict=True))
        rows.append(f"<tr{attr}>{cells}</tr>")
    return f'<div class="scroll"><table><thead><tr>{head}</tr></thead><tbody>{"".join(rows)}</tbody></table></div>'


def image_html(png: bytes, alt: str) -> str:
    """A ``<figure>`` with the PNG embedded as a base64 data URI."""
    data = base64.b64encode(png).decode("ascii")
    text = html.escape(alt)
    return f'<figure><img src="data:image/png;base64,{data}" alt="{text}"><figcaption>{text}</figcaption></figure>'


def _answer(view: ReportView, figures: Mapping[str, bytes]) -> str:
    ranking = fleet_ranking_table(view.fleet_ranking)
    shown = ranking.loc[:, [*FLEET_RANKING_COLUMNS, *(c for c in RANKING_EXTRA if c in ranking.columns)]]
    parts = []
    for vehicle_class, group in ranking.groupby("vehicle_class", sort=True):
        best = group.iloc[0]
        text = (
            f"<p><strong>{html.escape(str(vehicle_class))}</strong>: one spec for every route of the class: "
            f"<strong>{html.escape(str(best['spec']))}</strong> "
            f"(ranked by {html.escape(str(best['ranked_by']))})"
        )
        unserved = plain_value(best["routes_not_served"])
        if unserved:
            text += f"; it cannot serve {html.escape(str(unserved))}"
        parts.append(text + ".</p>")
    parts.append(table_html(shown))
    if "ranking" in figures:
        parts.append(image_html(figures["ranking"], "Spec ranking per vehicle class"))
    if not view.route_best.empty:
        parts.append("<h3>Best feasible spec per route, with class and fleet totals</h3>")
        parts.append(table_html(view.route_best))
    if not view.savings.empty:
        parts.append(f"<h3>Saving against the current spec per class [{html.escape(view.currency)}/year]</h3>")
        parts.append(table_html(view.savings))
    return "\n".join(parts)


def _routes(view: ReportView, figures: Mapping[str, bytes]) -> str:
    table = route_forecast_table(view.route_forecast)
    shown = table.loc[:, [*ROUTE_FORECAST_COLUMNS, *(c for c in ROUTE_EXTRA if c in table.columns)]]
    feasible = table["feasible"].fillna(False).astype(bool).tolist()
    parts = [
        f'<p class="note">Money in {html.escape(view.currency)}; marked rows: the spec cannot serve the route. '
        "Every column is in route_forecast.csv and route_forecast.xlsx.</p>",
        table_html(shown, ["" if ok else "infeasible" for ok in feasible]),
    ]
    if "route_consumption" in figures:
        parts.append(image_html(figures["route_consumption"], "Fuel per 100 km by route and spec"))
    if "route_electric" in figures:
        parts.append(image_html(figures["route_electric"], "Electricity per 100 km by route and spec"))
    if "fuel_map" in figures:
        parts.append(image_html(figures["fuel_map"], "Operating points of the winning combustion spec on its fuel map"))
    if not view.missions.empty:
        parts.append("<h3>Mission mix per route</h3>")
        parts.append(table_html(view.missions))
    return "\n".join(parts)


def _duty_mix(view: ReportView, figures: Mapping[str, bytes]) -> str:
    parts = []
    if not view.duty_mix.empty:
        parts.append(table_html(view.duty_mix.reset_index()))
    if "duty_mix" in figures:
        parts.append(image_html(figures["duty_mix"], "Duty-type mix per route (share of distance)"))
    for name in sorted(k for k in figures if k.startswith("cycle_")):
        label = name.removeprefix("cycle_")
        parts.append(image_html(figures[name], f"Representative cycle of duty type {label}"))
    return "\n".join(parts) or '<p class="note">(no duty-type mix in this result)</p>'


def _feasibility(view: ReportView) -> str:
    table = route_forecast_table(view.route_forecast)
    bad = table.loc[~table["feasible"].fillna(False).astype(bool).to_numpy()]
    if bad.empty:
        return "<p>Every spec offered can serve every route of its class.</p>"
    items = "".join(
        f"<li>{html.escape(str(r.route))} / {html.escape(str(r.spec))}: "
        f"{html.escape(str(plain_value(r.infeasible_reason) or 'infeasible'))}</li>"
        for r in bad.itertuples(index=False)
    )
    return f"<ul>{items}</ul>"


def _quality(view: ReportView) -> str:
    if view.account is None or view.account.empty:
        return '<p class="note">(no data-quality account in this result)</p>'
    summary = json.loads(quality.account_json(view.account))["summary"]
    records = quality.account_records(view.account)
    rows = [{label: rec.get(key) for key, label in QUALITY_COLUMNS if key in rec} for rec in records]
    head = ", ".join(f"{html.escape(k.replace('_', ' '))}: {v}" for k, v in summary.items())
    return f"<p>{head}</p>\n{table_html(pd.DataFrame(rows))}"


def _ranked_by_note(view: ReportView) -> str:
    labels = sorted({str(v) for v in view.fleet_ranking.get("ranked_by", pd.Series(dtype=str)).dropna()})
    if not labels:
        return ""
    return (
        f"<p>Ranking figure used: {html.escape(', '.join(labels))} (total cost of ownership where every spec "
        "of the class has costs, else energy cost).</p>"
    )


def report_html(view: ReportView, figures: Mapping[str, bytes]) -> str:
    """The whole page.

    Parameters
    ----------
    view : ReportView
        What to present (:func:`fleetfuel.report.view.report_view`).
    figures : Mapping of str to bytes
        PNGs by name: ``ranking``, ``route_consumption``, ``duty_mix``, ``fuel_map``, ``cycle_<type>``.
    """
    text = resources.files("fleetfuel.report").joinpath(*TEMPLATE).read_text(encoding="utf-8")
    return Template(text).substitute(
        title=html.escape(TITLE),
        subtitle=html.escape(SUBTITLE),
        answer=_answer(view, figures),
        routes=_routes(view, figures),
        duty=_duty_mix(view, figures),
        feasibility=_feasibility(view),
        quality=_quality(view),
        assumptions=table_html(assumptions_table(view.assumptions)),
        extra_cautions=_ranked_by_note(view),
    )
