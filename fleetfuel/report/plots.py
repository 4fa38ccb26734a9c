"""Plots for the report (Agg backend, no global pyplot state, never shown).

Every function takes data (tables or arrays from the result) and an optional ``Axes``; it draws
on that ``Axes`` or on a new :class:`~matplotlib.figure.Figure`, and returns the ``Figure``.
No physics here: operating points and fuel maps are passed in as arrays.
"""

from __future__ import annotations

import io
from typing import Final

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

FIGSIZE_IN: Final = (8.0, 4.5)
DPI: Final = 96
BAR_HEIGHT: Final = 0.8
FUEL_MAP_LEVELS: Final = 12
POINT_SIZE: Final = 4.0
POINT_OPACITY: Final = 0.3
KMH_PER_M_S: Final = 3.6  # NIST SP 811: 1 km/h = 1/3.6 m/s, exact
RANK_VALUE_COLUMNS: Final = ("tco_per_year", "energy_cost_per_year")


def _axes(ax: Axes | None, figsize: tuple[float, float] = FIGSIZE_IN) -> tuple[Figure, Axes]:
    if ax is not None:
        return ax.figure, ax  # type: ignore[return-value]
    fig = Figure(figsize=figsize, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig, fig.add_subplot()


def ranked_value_column(ranked_by: str) -> str:
    """The ranking table column a ``ranked_by`` label refers to (``tco...`` or ``energy_cost...``)."""
    if ranked_by in RANK_VALUE_COLUMNS:
        return ranked_by
    return RANK_VALUE_COLUMNS[0] if "tco" in str(ranked_by).lower() else RANK_VALUE_COLUMNS[1]


def _ranking_panel(ax: Axes, table: pd.DataFrame, currency: str) -> None:
    labels, values, hatched = [], [], []
    for row in table.itertuples(index=False):
        value = getattr(row, ranked_value_column(str(row.ranked_by)))
        labels.append(f"{row.vehicle_class}: {row.rank}. {row.spec}")
        values.append(float(value) if pd.notna(value) else 0.0)
        unserved = row.routes_not_served
        hatched.append(bool(len(unserved)) if isinstance(unserved, list | tuple) else bool(unserved))
    y = np.arange(len(labels))[::-1]
    bars = ax.barh(y, values, height=BAR_HEIGHT, color="tab:blue")
    for bar, hatch in zip(bars, hatched, strict=True):
        if hatch:
            bar.set_hatch("//")
            bar.set_facecolor("lightgray")
    ax.set_yticks(y, labels)
    ranked = ", ".join(sorted({ranked_value_column(str(v)) for v in table["ranked_by"]}))
    ax.set_xlabel(f"{ranked} [{currency or 'currency'}/year]")


def ranking_bars(fleet_ranking: pd.DataFrame, ax: Axes | None = None, currency: str = "") -> Figure:
    """Horizontal bars of each class's specs by the figure they are ranked on; hatched: not every route served.

    Without ``ax``, one panel per vehicle class (each on its own scale); with ``ax``, all on it.

    Parameters
    ----------
    fleet_ranking : DataFrame
        ``vehicle_class``, ``rank``, ``spec``, ``ranked_by``, ``tco_per_year``, ``energy_cost_per_year``,
        ``routes_not_served`` (list, or text: empty when every route is served).
    currency : str
        Label of the money unit.
    """
    table = fleet_ranking.sort_values(["vehicle_class", "rank", "spec"], kind="mergesort")
    title = "Ranking per vehicle class (hatched: cannot serve every route)"
    if ax is not None:
        _ranking_panel(ax, table, currency)
        ax.set_title(title)
        return ax.figure  # type: ignore[return-value]
    groups = [group for _, group in table.groupby("vehicle_class", sort=True)] or [table]
    height = sum(max(1.2, 0.35 * len(g) + 0.9) for g in groups)
    fig = Figure(figsize=(FIGSIZE_IN[0], height), dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(len(groups), 1, squeeze=False, height_ratios=[len(g) + 1 for g in groups])[:, 0]
    for panel, group in zip(axes, groups, strict=True):
        _ranking_panel(panel, group, currency)
    fig.suptitle(title)
    return fig


CONSUMPTION_LABELS: Final = {
    "fuel_l_per_100km": "fuel [L/100 km]",
    "kwh_per_100km": "electricity from the grid [kWh/100 km]",
}


def route_consumption_bars(
    route_forecast: pd.DataFrame, ax: Axes | None = None, column: str = "fuel_l_per_100km"
) -> Figure:
    """Grouped bars: ``column`` (default L/100 km) of the specs competing on each route; infeasible drawn pale.

    Each route gets bars only for the specs offered on it (its class's), one colour per spec.
    """
    fig, ax = _axes(ax)
    table = route_forecast.assign(route=route_forecast["route"].astype(str), spec=route_forecast["spec"].astype(str))
    table = table.sort_values(["route", "spec"], kind="mergesort")
    routes = list(dict.fromkeys(table["route"]))
    specs = sorted(table["spec"].unique())
    colours = {spec: f"C{j % 10}" for j, spec in enumerate(specs)}
    hatches = {spec: ("" if j < 10 else "..") for j, spec in enumerate(specs)}
    widest = max([int(n) for n in table.groupby("route", sort=False).size()] or [1])
    width = BAR_HEIGHT / widest
    labelled: set[str] = set()
    for i, (_, rows) in enumerate(table.groupby("route", sort=False)):
        offsets = (np.arange(len(rows)) - (len(rows) - 1) / 2) * width
        values = np.nan_to_num(rows[column].to_numpy(dtype=float))
        feasible = rows["feasible"].fillna(True).to_numpy(dtype=bool)
        for offset, value, ok, spec in zip(offsets, values, feasible, rows["spec"], strict=True):
            ax.bar(i + offset, value, width=width, color=colours[spec], hatch=hatches[spec],
                   alpha=1.0 if ok else POINT_OPACITY, label=None if spec in labelled else spec)
            labelled.add(spec)
    ax.set_xticks(np.arange(len(routes)), routes, rotation=30, ha="right")
    label = CONSUMPTION_LABELS.get(column, column)
    ax.set_ylabel(label)
    ax.set_title(f"{label.split(' [')[0].capitalize()} per 100 km by route and spec (pale: infeasible)")
    if specs:
        ax.legend(fontsize="x-small", ncols=2)
    return fig


def duty_mix_bars(duty_mix: pd.DataFrame, ax: Axes | None = None) -> Figure:
    """Stacked horizontal bars: share of each duty type on each route.

    Parameters
    ----------
    duty_mix : DataFrame
        Wide table, index route, one column per duty type, shares 0..1 (see :func:`duty_mix_wide`).
    """
    fig, ax = _axes(ax, (FIGSIZE_IN[0], max(2.0, 0.4 * len(duty_mix) + 1.5)))
    y = np.arange(len(duty_mix))[::-1]
    left = np.zeros(len(duty_mix))
    for column in duty_mix.columns:
        share = duty_mix[column].to_numpy(dtype=float, na_value=0.0)
        ax.barh(y, share, left=left, height=BAR_HEIGHT, label=str(column))
        left = left + share
    ax.set_yticks(y, [str(r) for r in duty_mix.index])
    ax.set_xlim(0.0, 1.0)
    ax.set_xlabel("share of distance [1]")
    ax.set_title("Duty-type mix per route")
    if len(duty_mix.columns):
        ax.legend(fontsize="small", loc="upper center", bbox_to_anchor=(0.5, -0.12), ncols=min(3, len(duty_mix.columns)))
    return fig


def duty_mix_wide(duty_mix: pd.DataFrame) -> pd.DataFrame:
    """``duty_mix`` as a wide table (index route, one column per type), from a wide or long table.

    A long table has ``route``, ``type`` and a share column (``distance_share``, ``share`` or
    ``weight``); a wide one has a ``route`` column or index and one numeric column per type.
    """
    if {"route", "type"} <= set(duty_mix.columns):
        value = next(c for c in ("distance_share", "share", "weight", "time_share") if c in duty_mix.columns)
        named = duty_mix
        if "label" in duty_mix.columns:
            label = duty_mix["label"].astype("string").fillna("").astype(str)
            kind = duty_mix["type"].astype(str)
            named = duty_mix.assign(type=kind.where(label.eq("") | label.eq(kind), kind + " (" + label + ")"))
        wide = named.pivot_table(index="route", columns="type", values=value, aggfunc="sum", fill_value=0.0)
    else:
        wide = duty_mix.set_index("route") if "route" in duty_mix.columns else duty_mix
        wide = wide.select_dtypes("number")
    wide = wide.sort_index(kind="mergesort")
    wide.index = wide.index.astype(str)
    wide.columns = [str(c) for c in wide.columns]
    return wide


def cycle_trace_plot(
    time_s: np.ndarray, speed_m_s: np.ndarray, ax: Axes | None = None, title: str = ""
) -> Figure:
    """Speed over time of one representative cycle. ``time_s`` [s], ``speed_m_s`` [m/s]; drawn in km/h."""
    fig, ax = _axes(ax, (FIGSIZE_IN[0], FIGSIZE_IN[1] * 0.6))
    ax.plot(np.asarray(time_s, dtype=float), np.asarray(speed_m_s, dtype=float) * KMH_PER_M_S, lw=1.0)
    ax.set_xlabel("time [s]")
    ax.set_ylabel("speed [km/h]")
    ax.set_title(title)
    return fig


def fuel_map_points(
    engine_speed_rpm: np.ndarray,
    torque_nm: np.ndarray,
    map_speed_rpm: np.ndarray,
    map_torque_nm: np.ndarray,
    map_fuel_g_s: np.ndarray,
    ax: Axes | None = None,
    title: str = "",
) -> Figure:
    """Operating points over the fuel map's contours.

    Parameters
    ----------
    engine_speed_rpm, torque_nm : ndarray
        Operating points. [rpm], [N m]
    map_speed_rpm, map_torque_nm : ndarray
        Grid axes of the map, lengths n and m. [rpm], [N m]
    map_fuel_g_s : ndarray
        Fuel rate on the grid, shape (m, n) (torque rows, speed columns). [g/s]
    """
    fig, ax = _axes(ax)
    grid = np.asarray(map_fuel_g_s, dtype=float)
    contours = ax.contour(map_speed_rpm, map_torque_nm, grid, levels=FUEL_MAP_LEVELS, cmap="viridis")
    ax.clabel(contours, fontsize="x-small")
    ax.scatter(engine_speed_rpm, torque_nm, s=POINT_SIZE, alpha=POINT_OPACITY, color="tab:red", label="operation")
    # the view is the map: motoring (negative torque) and points off the map stay out of sight
    ax.set_xlim(float(np.min(map_speed_rpm)), float(np.max(map_speed_rpm)))
    ax.set_ylim(min(0.0, float(np.min(map_torque_nm))), float(np.max(map_torque_nm)))
    ax.set_xlabel("engine speed [rpm]")
    ax.set_ylabel("torque [N m]")
    ax.set_title(title or "Operating points on the fuel map (contours: fuel rate [g/s])")
    ax.legend(fontsize="small", loc="upper right")
    return fig


def png_bytes(fig: Figure) -> bytes:
    """The figure as PNG bytes, without the software tag (same data, same bytes)."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=DPI, metadata={"Software": None})
    return buffer.getvalue()
