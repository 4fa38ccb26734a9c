"""Plots of the cycles stage: cycle traces, SAFD heat maps, feature scatter, route end points.

Presents only: every number comes from :mod:`fleetfuel.cycles` and :mod:`fleetfuel.segment`.
Each function takes results and an optional Axes and returns the Figure; figures are built with
:class:`matplotlib.figure.Figure` on the Agg canvas (no pyplot, no global state, never shown).
Speeds are drawn in km/h and times in minutes, for people.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

KMH_PER_M_S: Final = 3.6  # 1 m/s = 3.6 km/h (exact, from the definitions of km and h)
SECONDS_PER_MINUTE: Final = 60.0
TRACE_SIZE_IN: Final = (9.0, 3.5)
SAFD_SIZE_IN: Final = (10.0, 4.0)
SCATTER_SIZE_IN: Final = (7.0, 5.0)
ROUTES_SIZE_IN: Final = (7.0, 6.0)


def _figure(ax: Axes | None, size_in: tuple[float, float]) -> tuple[Figure, Axes]:
    if ax is not None:
        figure = ax.get_figure()
        assert isinstance(figure, Figure)
        return figure, ax
    figure = Figure(figsize=size_in)
    FigureCanvasAgg(figure)
    return figure, figure.add_subplot()


def plot_cycle(trace: pd.DataFrame, *, title: str = "", ax: Axes | None = None) -> Figure:
    """Speed and elevation of one representative cycle.

    Parameters
    ----------
    trace : DataFrame
        ``time_s`` [s], ``speed_m_s`` [m/s] and ``elevation_m`` [m] (relative to the start), as
        :func:`fleetfuel.cycles.assemble.cycle_trace` returns.
    title : str
    ax : Axes, optional
        Draw the speed here (the elevation goes on a twin axis).
    """
    figure, ax = _figure(ax, TRACE_SIZE_IN)
    minutes = trace["time_s"].to_numpy(dtype=float) / SECONDS_PER_MINUTE
    ax.plot(minutes, trace["speed_m_s"].to_numpy(dtype=float) * KMH_PER_M_S, color="tab:blue", lw=1.0)
    ax.set_xlabel("time [min]")
    ax.set_ylabel("speed [km/h]", color="tab:blue")
    ax.set_ylim(bottom=0)
    ax.set_title(title)
    if "elevation_m" in trace.columns:
        twin = ax.twinx()
        twin.plot(minutes, trace["elevation_m"].to_numpy(dtype=float), color="tab:brown", lw=1.0)
        twin.set_ylabel("elevation from start [m]", color="tab:brown")
    ax.grid(alpha=0.3)
    figure.tight_layout()
    return figure


def plot_safd(
    type_safd: npt.ArrayLike,
    cycle_safd: npt.ArrayLike,
    edges: tuple[npt.ArrayLike, npt.ArrayLike],
    *,
    title: str = "",
    axes: Sequence[Axes] | None = None,
) -> Figure:
    """Speed-acceleration frequency distributions of a type and its cycle, side by side.

    Parameters
    ----------
    type_safd, cycle_safd : array_like, shape (speed bins, acceleration bins)
        Time shares. [1]
    edges : (ndarray, ndarray)
        Speed edges [m/s] and acceleration edges [m/s^2] (:func:`fleetfuel.cycles.safd_edges`).
    title : str
    axes : two Axes, optional
    """
    if axes is None:
        figure = Figure(figsize=SAFD_SIZE_IN)
        FigureCanvasAgg(figure)
        axes = figure.subplots(1, 2, sharey=True)
    else:
        parent = axes[0].get_figure()
        assert isinstance(parent, Figure)
        figure = parent
    speed = np.asarray(edges[0], dtype=float) * KMH_PER_M_S
    accel = np.asarray(edges[1], dtype=float)
    maps = [np.asarray(type_safd, dtype=float), np.asarray(cycle_safd, dtype=float)]
    top = max(float(m.max()) for m in maps) or 1.0
    image = None
    for ax, data, name in zip(axes, maps, ("type (all its driving)", "representative cycle"), strict=True):
        image = ax.pcolormesh(accel, speed, data, vmin=0.0, vmax=top, cmap="viridis")
        ax.set_xlabel("acceleration [m/s^2]")
        ax.set_title(name)
    axes[0].set_ylabel("speed [km/h]")
    if image is not None:
        figure.colorbar(image, ax=list(axes), label="share of time [1]")
    if title:
        figure.suptitle(title)
    return figure


def plot_feature_scatter(
    microtrips: pd.DataFrame,
    *,
    x: str = "mean_running_speed_m_s",
    y: str = "pke_m_s2",
    labels: dict[str, str] | None = None,
    ax: Axes | None = None,
) -> Figure:
    """Micro-trips in two features, coloured by type (speeds in km/h, marker area ~ distance).

    Parameters
    ----------
    microtrips : DataFrame
        Micro-trip table with ``type``, ``distance_m`` and the two feature columns.
    x, y : str
        Feature columns (a name ending ``_m_s`` is drawn in km/h).
    labels : dict, optional
        Type -> label for the legend.
    ax : Axes, optional
    """
    figure, ax = _figure(ax, SCATTER_SIZE_IN)
    rows = microtrips.loc[microtrips["type"].notna().to_numpy()]

    def values(name: str) -> npt.NDArray[np.float64]:
        data = rows[name].to_numpy(dtype=float, na_value=np.nan)
        return data * KMH_PER_M_S if name.endswith("_m_s") else data

    def axis_name(name: str) -> str:
        return name.removesuffix("_m_s") + " [km/h]" if name.endswith("_m_s") else name

    distance = rows["distance_m"].to_numpy(dtype=float, na_value=0.0)
    size = 4 + 60 * np.sqrt(distance / max(distance.max(), 1.0))
    xs, ys = values(x), values(y)
    for name in sorted(rows["type"].astype(str).unique()):
        pick = (rows["type"].astype(str) == name).to_numpy()
        legend = f"{name}: {labels[name]}" if labels and name in labels else name
        ax.scatter(xs[pick], ys[pick], s=size[pick], alpha=0.5, label=legend, edgecolors="none")
    ax.set_xlabel(axis_name(x))
    ax.set_ylabel(axis_name(y))
    ax.set_title("micro-trips by duty-cycle type")
    ax.legend(fontsize="small", markerscale=0.6)
    ax.grid(alpha=0.3)
    figure.tight_layout()
    return figure


def plot_route_ends(routes: pd.DataFrame, *, ax: Axes | None = None) -> Figure:
    """Map-free sketch of the routes' end points: one line per route from end A to end B.

    Parameters
    ----------
    routes : DataFrame
        Route table with ``route``, ``end_a_lat_deg``, ``end_a_lon_deg``, ``end_b_lat_deg``,
        ``end_b_lon_deg`` [deg] (routes without positions are listed in the title only).
    ax : Axes, optional
    """
    figure, ax = _figure(ax, ROUTES_SIZE_IN)
    cols = ["end_a_lon_deg", "end_a_lat_deg", "end_b_lon_deg", "end_b_lat_deg"]
    known = routes.loc[routes[cols].notna().all(axis=1).to_numpy()]
    # Routes sharing their end points (loops from one depot) get one line and one joined label.
    for ends, group in known.groupby(cols, sort=True):  # a few dozen routes, not samples
        xa, ya, xb, yb = (float(v) for v in ends)
        ax.plot([xa, xb], [ya, yb], marker="o", lw=1.5, alpha=0.8)
        ax.annotate(", ".join(map(str, group["route"])), ((xa + xb) / 2, (ya + yb) / 2), fontsize="small",
                    xytext=(4, 4), textcoords="offset points")
    if len(known):
        mid_lat = float(np.nanmean(known[["end_a_lat_deg", "end_b_lat_deg"]].to_numpy(dtype=float)))
        ax.set_aspect(1.0 / max(np.cos(np.radians(mid_lat)), 1e-3))  # equirectangular: metres alike
    missing = len(routes) - len(known)
    ax.set_title("route end points" + (f" ({missing} route(s) without positions)" if missing else ""))
    ax.set_xlabel("longitude [deg]")
    ax.set_ylabel("latitude [deg]")
    ax.grid(alpha=0.3)
    figure.tight_layout()
    return figure
