"""README.md of the sample fleet, written by build_sample_fleet.py from what it generated."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from fleetfuel import synth

INTRO = """# Sample fleet: Quillmere Haulage & Transit (invented)

A working week (Monday {first} to Friday {last}) of telematics exports from the fourteen vehicles
of **Quillmere Haulage & Transit**, an invented company with its depot on the industrial estate
of the invented town of Quillmere. Everything here is synthetic, made by `fleetfuel.synth`
(seed {seed}); `python sample_logs/build_sample_fleet.py` regenerates every file byte for byte.
No real place, company or product is meant. The coordinates lie in the open Atlantic around
47.6 N, 7.9 W on purpose, so that no real town is implied; local time is UTC+1 (`Etc/GMT-1`).

## The scenario

- **Quillmere** (about 60 m above sea level): a street grid with 50 km/h main streets every
  fifth line (signals where two meet) and 30 km/h side streets; Quill Rise (+24 m) in the north-east.
  Parcel vans do stop-and-go rounds (75-100 drops a day, engine off at most drops, a lunch break);
  city bus Line 1 runs 7.5 km from Eastgate to Westfield with stops every 300-500 m.
- **Corvey Heights** lies over the **Corvey pass**: from 95 m to 455 m in about 7 km of hairpins
  (up to 9 % grade), then down to the plateau at 300 m. **Brindlecross** is down the Corvey
  valley (310 m to 140 m); the **River road** leads back to Quillmere. Rigid trucks run this loop
  either way round, or over the pass and back, with deliveries in the towns and a 45-minute break.
- **Dunhallow Port** is down the motorway, about 170 km away (a 95 m rise at km 50, roadworks at
  80 km/h near km 80, the Dunhallow escarpment down to the coast near km 120). Two 40 t tractor
  units go there and back every day, unloading for about an hour with the engine off.
- **Eskerby** lies over the Esker ridge; the pool car goes there, to Brindlecross, over the pass,
  or on errands in town, on four of the five days.

Fuel counters (where a vehicle has one) come from the generator's truth fuel model
(`fleetfuel/synth/truth.py`), deliberately **not** fleetfuel's own vehicle model: a power-based
fuel-rate formula with its own coefficients, engine-on idle, fuel cut-off on overrun, a
cold-start surcharge, and per-day and time-correlated multiplicative noise. `TRUTH.tab` gives the
exact truth fuel of each vehicle-day, for calibration tests.

"""

READING = """## Reading the files

```bash
fleetfuel inspect sample_logs/
```

Each CSV or Parquet layout has a bundled ingest profile (top-level `ingest/`), picked from the
header. GPX files hold one vehicle each, one folder per day; the file stem is the vehicle id
(`phone_gpx/2025-03-12/CAR-01.gpx`), which is the readers' default id rule.

## Truth files

Both are tab-separated text (`pandas.read_csv(path, sep="\t")`), with the suffix `.tab` so
that no log reader picks them up.

- `TRUTH.tab`: one row per vehicle and day: class, duty, true route name and kind, start and end
  (UTC), distance, truth fuel (exact, unquantised), rows generated (before defects), logging
  rate, fuel counter resolution, layout and file.
- `DEFECTS.tab`: every injected defect: file, vehicle, kind, first and last **data row** of the
  file (0-based, header excluded: the readers' `source_row`), UTC times and details. For a gap,
  the row is where the missing rows would be: the first row after the gap, or the file's row
  count when the gap closes a day's file.

"""


def _md(table: pd.DataFrame) -> str:
    cols = list(table.columns)
    lines = ["| " + " | ".join(cols) + " |", "|" + "|".join("---" for _ in cols) + "|"]
    lines += ["| " + " | ".join(str(v) for v in row) + " |" for row in table.itertuples(index=False)]
    return "\n".join(lines) + "\n"


def write_readme(folder: Path, truth: pd.DataFrame, defects: pd.DataFrame,
                 files: list[tuple[str, str, tuple[str, ...], int]], seed: int) -> None:
    """Write ``folder/README.md`` from the truth, defect and file tables."""
    dates = sorted(truth.date.unique())
    vehicles = truth.groupby("vehicle_id", sort=False).agg(
        vehicle_class=("vehicle_class", "first"), description=("description", "first"), duty=("duty", "first"),
        days=("date", "count"), km=("distance_km", "sum"), fuel_l=("truth_fuel_l", "sum"),
        rate_hz=("rate_hz", "first"), counter_l=("fuel_counter_step_l", "first"), layout=("layout", "first"),
    ).reset_index()
    vehicles["km"] = vehicles.km.round(0).astype(int)
    vehicles["L/100 km"] = (100 * vehicles.fuel_l / vehicles.km).round(1)
    vehicles["logging"] = [f"every {1 / r:.0f} s" if r < 1 else f"{r:g} Hz" for r in vehicles.rate_hz]
    vehicles["fuel counter"] = [f"{c:g} L" if pd.notna(c) else "none" for c in vehicles.counter_l]
    vehicles = vehicles.drop(columns=["fuel_l", "rate_hz", "counter_l", "vehicle_class"]).sort_values("vehicle_id")
    routes = truth.groupby(["route_kind", "route_name"]).agg(
        vehicle_days=("vehicle_id", "count"), mean_km=("distance_km", "mean"),
        vehicles=("vehicle_id", lambda s: ", ".join(sorted(s.unique())))).reset_index()
    routes["mean_km"] = routes.mean_km.round(1)
    net = synth.quillmere_network()
    roads = pd.DataFrame([{
        "road": r.name, "km": round(r.length_m / 1000, 1),
        "elevation m": f"{r.elevation.z_m.min():.0f}-{r.elevation.z_m.max():.0f}" if r.elevation else "town",
    } for r in net.roads.values()])
    sizes = pd.DataFrame([{
        "file": path, "layout": layout, "vehicles": ", ".join(ids), "rows": rows,
        "kB": round((folder / path).stat().st_size / 1000),
    } for path, layout, ids, rows in files])
    by_folder = sizes.assign(group=[p.split("/")[0] if "/" in p else p for p in sizes.file]).groupby(
        ["group", "layout"], sort=False).agg(files=("file", "count"), vehicles=("vehicles", lambda s: ", ".join(sorted(set(
            ", ".join(s).split(", "))))), rows=("rows", "sum"), kB=("kB", "sum")).reset_index()
    counts = defects.assign(group=[p.split("/")[0] if "/" in p else p for p in defects.file]).pivot_table(
        index="group", columns="defect", values="vehicle_id", aggfunc="count", fill_value=0).reset_index()
    text = INTRO.format(first=dates[0], last=dates[-1], seed=seed)
    text += "## Vehicles\n\n" + _md(vehicles) + "\n"
    text += "## Routes driven\n\n" + _md(routes) + "\n"
    text += "Intercity roads of the network:\n\n" + _md(roads) + "\n"
    text += "## Files\n\n" + _md(by_folder.rename(columns={"group": "file or folder"})) + "\n"
    text += f"Total: {sizes.rows.sum()} rows, {sizes.kB.sum() / 1000:.1f} MB.\n\n"
    text += ("Layouts: `depot_tracker_csv` (comma, km/h, ISO 8601 UTC, `unit_id` column, gzip); "
             "`fleet_portal_csv` (semicolon, decimal comma, local date and time columns, mph, miles, "
             "id from the file name); `phone_gpx` (GPX 1.1, speed in m/s in a track-point extension, "
             "a segment per stretch without a 10-minute gap); `bus_parquet` (zstd Parquet, UTC "
             "timestamps, km/h); `event_logger_csv` (Unix seconds, whole km/h, about one sample every 30 s).\n\n")
    text += "## Injected defects (counts)\n\n" + _md(counts.rename(columns={"group": "file or folder"})) + "\n"
    text += ("Every file also carries GNSS-like altitude error (time-correlated, 3-5 m, quantised to "
             "1 m except in GPX) and horizontal position error; vehicles that stand still for more than "
             "two minutes show parked drift at about half of those stops (not on the event logger). "
             "The unit mix-up: a block of VAN-03's rows has speeds in mph written into the km/h column.\n\n")
    text += READING
    (folder / "README.md").write_text(text, encoding="utf-8")
