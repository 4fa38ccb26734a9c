"""Plots of the cycles stage return Figures (drawn on a given Axes when one is passed)."""

from __future__ import annotations

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from fleetfuel.cycles import CyclesConfig, safd_edges
from fleetfuel.cycles.safd import safd_shape
from fleetfuel.report.cycle_plots import plot_cycle, plot_feature_scatter, plot_route_ends, plot_safd


def _trace() -> pd.DataFrame:
    t = np.arange(120.0)
    v = np.clip(np.r_[np.linspace(0, 15, 30), np.full(60, 15.0), np.linspace(15, 0, 30)], 0, None)
    return pd.DataFrame({"time_s": t, "speed_m_s": v, "grade": 0.01, "elevation_m": np.cumsum(v) * 0.01})


def test_plot_cycle_returns_figure_with_speed_in_kmh() -> None:
    fig = plot_cycle(_trace(), title="T1")
    assert isinstance(fig, Figure)
    speed_line = fig.axes[0].get_lines()[0]
    assert np.max(speed_line.get_ydata()) == 15.0 * 3.6  # 1 m/s = 3.6 km/h, exact
    assert len(fig.axes) == 2  # speed and its elevation twin


def test_plot_cycle_draws_on_given_axes() -> None:
    fig = Figure()
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    assert plot_cycle(_trace(), ax=ax) is fig


def test_plot_safd_two_maps() -> None:
    cfg = CyclesConfig()
    grid = np.zeros(safd_shape(cfg))
    grid[3, 12] = 1.0
    fig = plot_safd(grid, grid, safd_edges(cfg), title="T1")
    assert isinstance(fig, Figure)
    assert [ax.get_title() for ax in fig.axes[:2]] == ["type (all its driving)", "representative cycle"]


def test_feature_scatter_and_route_ends() -> None:
    mts = pd.DataFrame({"type": ["T1", "T1", "T2", None], "distance_m": [100.0, 300.0, 5000.0, 10.0],
                        "mean_running_speed_m_s": [5.0, 6.0, 20.0, 1.0], "pke_m_s2": [0.5, 0.4, 0.1, 0.2]})
    fig = plot_feature_scatter(mts, labels={"T1": "urban", "T2": "motorway"})
    assert isinstance(fig, Figure)
    assert len(fig.axes[0].collections) == 2  # one scatter per type, the untyped row left out
    routes = pd.DataFrame({"route": ["R01", "R02"], "end_a_lat_deg": [47.6, np.nan], "end_a_lon_deg": [-7.9, np.nan],
                           "end_b_lat_deg": [47.5, np.nan], "end_b_lon_deg": [-8.0, np.nan]})
    fig = plot_route_ends(routes)
    assert isinstance(fig, Figure)
    assert "1 route(s) without positions" in fig.axes[0].get_title()
