"""Write the cycles stage's outputs: cycle CSVs, tables, the JSON summary and the plots.

Presents only: every number comes from :mod:`fleetfuel.cycles` (types, cycles, weights,
acceptance) and the fuel check. Files are written atomically (:mod:`fleetfuel.report.files`).

Output folder::

    cycle_T1.csv ...       one per representative cycle: time_s, speed_m_s, grade
    types.csv              type summary: label, micro-trips, shares, target/achieved stats, errors
    acceptance.csv         each cycle's acceptance table (statistic, target, achieved, floor, pass)
    routes.csv             route table (route, vehicles, trips, km, end points)
    route_type_mix.csv     per-route share of distance of each type
    weights.csv            share of distance and time per type: fleet, route, vehicle
    composition.csv        the real pieces of every cycle (micro-trip id, vehicle, times)
    fuel_check.csv         reference spec on cycles vs on the logs: fleet, routes, types, held-out day
    silhouettes.csv        silhouette of each number of types tried
    summary.json           what ``fleetfuel cycles --json`` prints
    cycle_T1.png ...       speed and elevation of each cycle
    safd_T1.png ...        SAFD heat maps, type vs cycle
    feature_scatter.png    micro-trips coloured by type
    route_ends.png         map-free sketch of the routes' end points
"""

from __future__ import annotations

import io
import json
import math
from pathlib import Path
from typing import Any, Final

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from fleetfuel.cycles import TARGET_STATS, CycleSet, route_type_mix, safd_edges
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.report import cycle_plots
from fleetfuel.report.files import write_bytes_atomic, write_text_atomic

CYCLE_CSV_COLUMNS: Final = ("time_s", "speed_m_s", "grade")
FLOAT_FORMAT: Final = "%.6g"
ROUTE_COLUMNS: Final = (
    "route", "route_source", "vehicles", "vehicle_ids", "trips", "distance_km", "duration_h",
    "end_a_lat_deg", "end_a_lon_deg", "end_b_lat_deg", "end_b_lon_deg", "description",
)
PNG_DPI: Final = 110


def cycle_file_name(type_name: str) -> str:
    """File name of a type's cycle CSV (``cycle_T1.csv``)."""
    return f"cycle_{type_name}.csv"


def _plain(value: Any) -> Any:
    """JSON-ready value: numpy scalars unwrapped, NaN to None, times to ISO 8601."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_plain(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    if value is pd.NA or value is pd.NaT:
        return None
    return value


def _csv(frame: pd.DataFrame, float_format: str | None = FLOAT_FORMAT) -> str:
    return frame.to_csv(index=False, float_format=float_format, lineterminator="\n")


def _check_row(row: pd.Series) -> dict[str, Any]:
    return {k: row[k] for k in ("key", "microtrips", "distance_km", "on_logs", "on_cycles", "relative_error", "goal", "passed")}


def cycles_summary(
    cycleset: CycleSet,
    routes: pd.DataFrame,
    fuel_check: pd.DataFrame,
    holdout: pd.DataFrame,
    reference_spec: str,
    unit: str,
) -> dict[str, Any]:
    """The JSON summary of a cycles run (``types``, ``routes``, ``fuel_check``, ``silhouettes``)."""
    types = []
    accept = cycleset.acceptance
    for row in cycleset.types.to_dict("records"):
        name = row["type"]
        own = accept.loc[accept["type"] == name].set_index("statistic")
        types.append({
            "type": name,
            "label": row["label"],
            "microtrips": row["microtrips"],
            "distance_share": row["distance_share"],
            "time_share": row["time_share"],
            "mean_speed_kmh": row["mean_speed_kmh"],
            "cycle_file": cycle_file_name(name) if name in cycleset.cycles else None,
            "cycle_duration_s": row["cycle_duration_s"],
            "cycle_distance_km": row["cycle_distance_km"],
            "stat_errors": {s: own["relative_error"].get(s, np.nan) for s in TARGET_STATS} if len(own) else {},
            "stats_passed": row["passed"],
            "safd_difference": row["safd_difference"],
        })
    mix = route_type_mix(cycleset.weights).set_index("route")
    route_list = []
    for row in routes.to_dict("records"):
        shares = mix.loc[row["route"]].to_dict() if row["route"] in mix.index else {}
        route_list.append({
            **{k: row.get(k) for k in ROUTE_COLUMNS},
            "type_mix": {k.removeprefix("distance_share_"): v for k, v in shares.items()},
        })
    fleet = fuel_check.loc[fuel_check["scope"] == "fleet"]
    check: dict[str, Any] = {"reference_spec": reference_spec, "unit": unit}
    if len(fleet):
        check |= {k: fleet.iloc[0][k] for k in ("on_cycles", "on_logs", "relative_error", "goal", "passed")}
    check["routes"] = [_check_row(r) for _, r in fuel_check.loc[fuel_check["scope"] == "route"].iterrows()]
    check["types"] = [_check_row(r) for _, r in fuel_check.loc[fuel_check["scope"] == "type"].iterrows()]
    check["holdout"] = (
        {**_check_row(holdout.iloc[0]), "note": holdout.iloc[0].get("note")} if len(holdout) else None
    )
    silhouettes = dict(zip(cycleset.silhouettes["types"], cycleset.silhouettes["silhouette"], strict=True))
    return _plain({"types": types, "routes": route_list, "fuel_check": check, "silhouettes": silhouettes})


def _png(figure: Figure) -> bytes:
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=PNG_DPI)
    return buffer.getvalue()


def write_cycle_outputs(
    out: Path,
    cycleset: CycleSet,
    routes: pd.DataFrame,
    fuel_check: pd.DataFrame,
    holdout: pd.DataFrame,
    reference_spec: str,
    unit: str,
    cfg: CyclesConfig | None = None,
    *,
    plots: bool = True,
) -> list[Path]:
    """Write every output file of a cycles run into ``out`` (created); returns the paths written."""
    cfg = cfg or CyclesConfig()
    written = []
    for name, trace in cycleset.cycles.items():
        # full precision: accelerations of the file (differences) keep their driving modes
        written.append(write_text_atomic(out / cycle_file_name(name), _csv(trace[list(CYCLE_CSV_COLUMNS)], None)))
    route_cols = [c for c in ROUTE_COLUMNS if c in routes.columns]
    tables = {
        "types.csv": cycleset.types,
        "acceptance.csv": cycleset.acceptance,
        "routes.csv": routes[route_cols],
        "route_type_mix.csv": route_type_mix(cycleset.weights),
        "weights.csv": cycleset.weights,
        "composition.csv": cycleset.composition,
        "fuel_check.csv": pd.concat([fuel_check, holdout], ignore_index=True) if len(holdout) else fuel_check,
        "silhouettes.csv": cycleset.silhouettes,
    }
    for file, frame in tables.items():
        written.append(write_text_atomic(out / file, _csv(frame)))
    summary = cycles_summary(cycleset, routes, fuel_check, holdout, reference_spec, unit)
    written.append(write_text_atomic(out / "summary.json", json.dumps(summary, indent=2) + "\n"))
    if not plots:
        return written
    labels = dict(zip(cycleset.types["type"], cycleset.types["label"], strict=True))
    edges = safd_edges(cfg)
    for name, trace in cycleset.cycles.items():
        title = f"{name}: {labels[name]}"
        written.append(write_bytes_atomic(out / f"cycle_{name}.png", _png(cycle_plots.plot_cycle(trace, title=title))))
        if name in cycleset.safd_type:
            figure = cycle_plots.plot_safd(cycleset.safd_type[name], cycleset.safd_cycle[name], edges, title=title)
            written.append(write_bytes_atomic(out / f"safd_{name}.png", _png(figure)))
    scatter = cycle_plots.plot_feature_scatter(cycleset.microtrips, labels=labels)
    written.append(write_bytes_atomic(out / "feature_scatter.png", _png(scatter)))
    written.append(write_bytes_atomic(out / "route_ends.png", _png(cycle_plots.plot_route_ends(routes))))
    return written


def cycles_text(
    cycleset: CycleSet,
    routes: pd.DataFrame,
    fuel_check: pd.DataFrame,
    holdout: pd.DataFrame,
    reference_spec: str,
    unit: str,
    *,
    out: str | Path = "",
) -> str:
    """Human-readable summary: one line per type, the fuel check, where the files are."""
    lines = [f"{len(cycleset.types)} duty-cycle types from {len(cycleset.microtrips)} micro-trips, {len(routes)} routes"]
    for row in cycleset.types.to_dict("records"):
        worst = cycleset.acceptance.loc[cycleset.acceptance["type"] == row["type"], "normalised_error"].max()
        lines.append(
            f"  {row['type']:<4} {row['label']:<40} {row['microtrips']:>6} micro-trips  "
            f"{row['distance_share']:6.1%} of km  {row['time_share']:6.1%} of time  "
            f"{row['mean_speed_kmh']:5.1f} km/h  cycle {row['cycle_duration_s'] / 60:5.1f} min  "
            f"worst stat {worst:5.1%}  SAFD diff {row['safd_difference']:.3f}  "
            + ("ok" if row["passed"] else "OFF GOAL")
        )
    fleet = fuel_check.loc[fuel_check["scope"] == "fleet"]
    if len(fleet):
        f = fleet.iloc[0]
        lines.append(f"fuel check ({reference_spec}): cycles {f['on_cycles']:.1f} {unit} vs logs {f['on_logs']:.1f} "
                     f"{unit}: {f['relative_error']:+.1%} fleet-wide (goal {f['goal']:.0%})")
    route_rows = fuel_check.loc[fuel_check["scope"] == "route"]
    if len(route_rows):
        lines.append(f"  routes within {route_rows['goal'].iloc[0]:.0%}: {int(route_rows['passed'].sum())} of "
                     f"{len(route_rows)} (worst {route_rows['relative_error'].abs().max():.1%})")
    if len(holdout) and pd.notna(holdout.iloc[0]["relative_error"]):
        h = holdout.iloc[0]
        lines.append(f"  held-out day {h['key']}: {h['relative_error']:+.1%} (goal {h['goal']:.0%})")
    if out:
        lines.append(f"wrote cycles, tables, summary.json and plots to {out}")
    return "\n".join(lines)
