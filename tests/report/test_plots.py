"""Plots draw the data they are given, on a new Figure or a given Axes, without pyplot state."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402  (only to check that no global figure is opened)
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from fleetfuel.report import plots  # noqa: E402

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature


def _all(result) -> dict[str, Figure]:
    pts = result.operating_points
    trace = result.cycles_result.cycles.cycles["A"]
    return {
        "ranking": plots.ranking_bars(result.fleet_ranking, currency="EUR"),
        "route": plots.route_consumption_bars(result.route_forecast),
        "mix": plots.duty_mix_bars(plots.duty_mix_wide(result.duty_mix)),
        "cycle": plots.cycle_trace_plot(trace["time_s"].to_numpy(), trace["speed_m_s"].to_numpy()),
        "map": plots.fuel_map_points(
            pts["engine_speed_rpm"], pts["torque_nm"], pts["map_speed_rpm"], pts["map_torque_nm"], pts["map_fuel_g_s"]
        ),
    }


def test_every_plot_returns_a_figure_without_pyplot_state(result) -> None:
    before = plt.get_fignums()
    figures = _all(result)
    assert all(isinstance(f, Figure) for f in figures.values())
    assert plt.get_fignums() == before
    for fig in figures.values():
        data = plots.png_bytes(fig)
        assert data.startswith(PNG_SIGNATURE)


def test_plot_draws_on_given_axes(result) -> None:
    fig = Figure()
    ax = fig.add_subplot()
    assert plots.route_consumption_bars(result.route_forecast, ax=ax) is fig
    # one bar per route x competing spec (a class's specs only; NaN drawn as 0 height)
    assert len(ax.patches) == len(result.route_forecast) == 6
    heights = sorted(p.get_height() for p in ax.patches)
    assert heights == sorted(result.route_forecast["fuel_l_per_100km"].fillna(0.0).tolist())
    pale = [p for p in ax.patches if p.get_alpha() is not None and p.get_alpha() < 1.0]
    assert len(pale) == 1  # the one infeasible cell of the fixture


def test_ranking_bars_lengths_are_the_ranked_figures(result) -> None:
    fig = plots.ranking_bars(result.fleet_ranking)
    assert len(fig.axes) == 2  # one panel per vehicle class
    patches = [p for ax in fig.axes for p in ax.patches]
    assert sorted(p.get_width() for p in patches) == sorted(result.fleet_ranking["tco_per_year"].tolist())
    assert len([p for p in patches if p.get_hatch()]) == 1  # the one spec that cannot serve every route
    # text form of routes_not_served (space-joined, empty when all are served) works the same
    text_form = result.fleet_ranking.assign(
        routes_not_served=[" ".join(r) for r in result.fleet_ranking["routes_not_served"]]
    )
    shared = Figure().add_subplot()
    fig = plots.ranking_bars(text_form, ax=shared)
    assert len(fig.axes) == 1 and len([p for p in shared.patches if p.get_hatch()]) == 1


def test_duty_mix_wide_from_long_table_and_stacks_to_one(result) -> None:
    wide = plots.duty_mix_wide(result.duty_mix)
    assert list(wide.columns) == ["A", "B"]
    np.testing.assert_allclose(wide.sum(axis=1).to_numpy(), 1.0)
    fig = plots.duty_mix_bars(wide)
    right = max(p.get_x() + p.get_width() for p in fig.axes[0].patches)
    assert right == pytest.approx(1.0)


def test_cycle_trace_is_drawn_in_km_h(result) -> None:
    trace = result.cycles_result.cycles.cycles["B"]
    fig = plots.cycle_trace_plot(trace["time_s"].to_numpy(), trace["speed_m_s"].to_numpy())
    y = fig.axes[0].lines[0].get_ydata()
    # 1 m/s = 3.6 km/h (NIST SP 811)
    assert np.max(y) == pytest.approx(3.6 * trace["speed_m_s"].max())


def test_png_bytes_are_deterministic(result) -> None:
    assert plots.png_bytes(plots.ranking_bars(result.fleet_ranking)) == plots.png_bytes(
        plots.ranking_bars(result.fleet_ranking)
    )


def test_duty_mix_wide_names_types_with_their_labels() -> None:
    import pandas as pd

    long = pd.DataFrame(
        {"route": ["R1", "R1"], "type": ["T1", "T2"], "label": ["urban", "T2"], "distance_share": [0.25, 0.75]}
    )
    wide = plots.duty_mix_wide(long)
    assert list(wide.columns) == ["T1 (urban)", "T2"]
    assert wide.loc["R1"].tolist() == [0.25, 0.75]


def test_fuel_map_view_is_the_map_range(result) -> None:
    pts = result.operating_points
    fig = plots.fuel_map_points(
        np.array([1000.0, 1200.0]), np.array([-3000.0, 500.0]),
        pts["map_speed_rpm"], pts["map_torque_nm"], pts["map_fuel_g_s"],
    )
    assert fig.axes[0].get_ylim() == (0.0, 2000.0)  # motoring at -3000 N m is left out of view
    assert fig.axes[0].get_xlim() == (800.0, 2200.0)
