"""Build the bundled sample fleet of Quillmere Haulage & Transit (an invented company).

Run from anywhere: ``python sample_logs/build_sample_fleet.py``. Seeded and deterministic: the
same fleetfuel version rewrites the same bytes. It writes, next to this script:

- ``depot_tracker_week.csv.gz``   vans and one tractor unit, one multi-vehicle CSV (profile depot_tracker_csv)
- ``fleet_portal/<ID>_<date>.csv`` rigid trucks, one file per vehicle and day (profile fleet_portal_csv)
- ``phone_gpx/<date>/<ID>.gpx``   the pool car, a phone's GPX 1.1 tracks (GPX reader)
- ``buses_week.parquet``          the city buses (profile bus_parquet)
- ``event_logger_TRK-02.csv``     a tractor unit on a low-rate event logger (profile event_logger_csv)
- ``TRUTH.tab``    each vehicle-day's true route, class, distance and truth fuel (tab-separated)
- ``DEFECTS.tab``  every injected defect, by file and data row (0-based, header excluded; tab-separated)

The truth tables have the suffix ``.tab`` on purpose: no reader picks them up as logs, so
``fleetfuel inspect sample_logs/`` sees the exports only.
- ``README.md``    the scenario, the vehicles and routes, the defects and the file sizes

Every regeneration adds to the repository's size: regenerate only when the generator changes.
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from readme_text import write_readme  # noqa: E402  (sibling module of this script)

from fleetfuel import schema, synth  # noqa: E402
from fleetfuel.synth.export import write_export, write_gpx, write_parquet  # noqa: E402

SEED = 20250310
N_DAYS = 5
START_DATE = "2025-03-10"
KMH_WRITTEN_AS_MPH: float = 1 / 1.609344  # mph values in a km/h column read 0.621 x true (NIST SP 811 mile)

SPECS: dict[str, synth.DefectSpec] = {
    "depot_tracker_csv": synth.DefectSpec.typical(unit_mixup_vehicles=("VAN-03",), unit_mixup_factor=KMH_WRITTEN_AS_MPH,
                                                   unit_mixup_share=0.05),
    "fleet_portal_csv": synth.DefectSpec.typical(speed_sigma_m_s=0.0, duplicate_time_share=0.0),
    "phone_gpx": synth.DefectSpec.typical(altitude_sigma_m=5.0, altitude_step_m=0.0, position_sigma_m=4.0,
                                          position_spike_share=0.002, gaps_per_day=0.5),
    "bus_parquet": synth.DefectSpec.typical(duplicate_share=0.001, speed_spike_share=0.0002, position_spike_share=0.0002),
    "event_logger_csv": synth.DefectSpec.typical(altitude_sigma_m=3.0, drift_min_stop_s=0.0, gaps_per_day=0.5,
                                                 speed_spike_share=0.0, position_spike_share=0.002,
                                                 duplicate_share=0.003),
}
"""Defects per export layout (each vehicle draws from its own stream)."""

DECIMALS: dict[str, dict[str, int]] = {
    "depot_tracker_csv": {schema.SPEED_M_S: 1, schema.LAT_DEG: 6, schema.ELEVATION_M: 0, schema.ODOMETER_M: 3},
    "fleet_portal_csv": {schema.SPEED_M_S: 1, schema.LAT_DEG: 5, schema.LON_DEG: 5, schema.ELEVATION_M: 0,
                         schema.FUEL_USED_L: 1, schema.ODOMETER_M: 1},
    "event_logger_csv": {schema.SPEED_M_S: 0, schema.LAT_DEG: 5, schema.LON_DEG: 5, schema.ELEVATION_M: 0,
                         schema.FUEL_USED_L: 1, schema.ODOMETER_M: 1},
}


@dataclass(frozen=True, slots=True)
class Written:
    """One file written: its path (relative to sample_logs/), layout, vehicles and rows."""

    path: str
    layout: str
    vehicles: tuple[str, ...]
    rows: int


def _defect_rows(inj: synth.InjectedDefects, frame: pd.DataFrame, file_row: np.ndarray, file_of: np.ndarray,
                 files: list[str], layout: str) -> list[dict]:
    """Injected defects in file terms. ``file_row`` / ``file_of``: each damaged row's data row and file."""
    out: list[dict] = []
    ids = frame[schema.VEHICLE_ID].astype(str).to_numpy()
    times = pd.DatetimeIndex(frame[schema.TIME_UTC])

    def add(kind: str, first: int, last: int, detail: str = "") -> None:
        out.append({"layout": layout, "file": files[file_of[first]], "vehicle_id": ids[first], "defect": kind,
                    "first_row": int(file_row[first]), "last_row": int(file_row[last]),
                    "first_utc": times[first].isoformat(), "last_utc": times[last].isoformat(), "detail": detail})

    for kind, rows in (("speed_spike", inj.speed_spike_rows), ("position_spike", inj.position_spike_rows),
                       ("duplicate_row", inj.duplicate_rows), ("duplicate_time", inj.duplicate_time_rows)):
        for r in rows:
            add(kind, int(r), int(r))
    for _, d in inj.drift.iterrows():
        add("parked_drift", int(d.first_row), int(d.last_row))
    for _, m in inj.unit_mixup.iterrows():
        add("unit_mixup", int(m.first_row), int(m.last_row), f"speed x {m.factor:.6f}")
    for _, g in inj.gaps.iterrows():
        # where the missing rows would be: the row after the gap in the same file, or the end of
        # the file of the row before it (a gap closing a day file)
        detail = f"{g.rows_removed} rows removed from {g.start_utc.isoformat()} to {g.end_utc.isoformat()}"
        nxt = int(g.next_row)
        same = np.flatnonzero(ids == g.vehicle_id)
        prev = int(same[same < nxt][-1]) if nxt >= 0 and (same < nxt).any() else (int(same[-1]) if nxt < 0 else -1)
        if nxt >= 0 and (prev < 0 or file_of[prev] == file_of[nxt]):
            add("gap", nxt, nxt, detail)
        else:
            add("gap", prev, prev, detail)
            out[-1]["first_row"] = out[-1]["last_row"] = int(file_row[prev]) + 1
    drop = inj.altitude_dropout_rows
    if len(drop):
        starts = np.r_[0, np.flatnonzero(np.diff(drop) != 1) + 1]
        stops = np.r_[starts[1:], len(drop)] - 1
        for a, b in zip(drop[starts], drop[stops], strict=True):
            add("altitude_dropout", int(a), int(b))
    return out


def _write_layout(layout: str, frame: pd.DataFrame) -> tuple[list[Written], list[int], np.ndarray, np.ndarray]:
    """Write one layout's damaged frame; return the files and each row's file index and data row."""
    files: list[Written] = []
    file_of = np.zeros(len(frame), dtype=np.int64)
    file_row = np.zeros(len(frame), dtype=np.int64)
    ids = frame[schema.VEHICLE_ID].astype(str)
    if layout in ("depot_tracker_csv", "bus_parquet", "event_logger_csv"):
        order = np.lexsort((ids.to_numpy(), frame[schema.TIME_UTC].to_numpy()))  # exports sorted by time
        name = {"depot_tracker_csv": "depot_tracker_week.csv.gz", "bus_parquet": "buses_week.parquet",
                "event_logger_csv": "event_logger_TRK-02.csv"}[layout]
        sorted_frame = frame.iloc[order]
        if layout == "bus_parquet":
            write_parquet(sorted_frame, layout, HERE / name, float32=())
        else:
            write_export(sorted_frame, layout, HERE / name, decimals=DECIMALS.get(layout))
        file_row[order] = np.arange(len(frame))
        files.append(Written(name, layout, tuple(sorted(ids.unique())), len(frame)))
        return files, [0], file_of, file_row
    local = pd.DatetimeIndex(frame[schema.TIME_UTC]).tz_convert(synth.SCENARIO_TIMEZONE)
    day = np.asarray(local.strftime("%Y-%m-%d"))
    keys = pd.DataFrame({"id": ids.to_numpy(), "day": day})
    for k, ((vid, date), idx) in enumerate(keys.groupby(["id", "day"], sort=True).indices.items()):
        part = frame.iloc[idx]
        if layout == "fleet_portal_csv":
            name = f"fleet_portal/{vid}_{date}.csv"
            write_export(part, layout, HERE / name, decimals=DECIMALS[layout])
        else:
            name = f"phone_gpx/{date}/{vid}.gpx"  # the file stem is the vehicle id (default id rule)
            write_gpx(part, HERE / name, name=f"{vid} {date}")
        file_of[idx] = k
        file_row[idx] = np.arange(len(idx))
        files.append(Written(name, layout, (vid,), len(idx)))
    return files, list(range(len(files))), file_of, file_row


def main() -> int:
    for old in [*HERE.glob("fleet_portal/*.csv"), *HERE.glob("phone_gpx/*/*.gpx"), *HERE.glob("*.csv")]:
        old.unlink()
    result = synth.fleet(n_days=N_DAYS, seed=SEED, start_date=START_DATE, with_truth=False)
    samples = result.samples
    layout_of = dict(zip(result.vehicles.vehicle_id, result.vehicles.layout, strict=True))
    written: list[Written] = []
    defects: list[dict] = []
    for layout, spec in SPECS.items():
        vehicles = [v for v, lay in layout_of.items() if lay == layout]
        frame = samples[samples[schema.VEHICLE_ID].isin(vehicles)]
        damaged, inj = synth.add_defects(frame, spec, seed=SEED)
        files, _, file_of, file_row = _write_layout(layout, damaged)
        written += files
        defects += _defect_rows(inj, damaged, file_row, file_of, [f.path for f in files], layout)
    file_of_vehicle_day = {(w.vehicles[0], re.search(r"\d{4}-\d{2}-\d{2}", w.path).group(0)): w.path
                           for w in written if len(w.vehicles) == 1 and re.search(r"\d{4}-\d{2}-\d{2}", w.path)}
    truth = result.days.merge(result.vehicles, on="vehicle_id")
    truth["file"] = [file_of_vehicle_day.get((v, d), next(w.path for w in written if v in w.vehicles))
                     for v, d in zip(truth.vehicle_id, truth.date, strict=True)]
    truth = truth[["vehicle_id", "vehicle_class", "description", "duty", "date", "route_name", "route_kind",
                   "start_utc", "end_utc", "distance_km", "fuel_l", "rows", "rate_hz", "fuel_counter_step_l",
                   "layout", "file"]].rename(columns={"fuel_l": "truth_fuel_l", "rows": "rows_generated"})
    truth.to_csv(HERE / "TRUTH.tab", sep="\t", index=False, float_format="%.3f", lineterminator="\n")
    table = pd.DataFrame(defects).sort_values(["file", "first_row", "defect"], kind="stable")
    table.to_csv(HERE / "DEFECTS.tab", sep="\t", index=False, lineterminator="\n")
    write_readme(HERE, truth, table, [(w.path, w.layout, w.vehicles, w.rows) for w in written], SEED)
    total = sum((HERE / w.path).stat().st_size for w in written)
    print(f"wrote {len(written)} files, {sum(w.rows for w in written)} rows, {total / 1e6:.1f} MB of logs")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
