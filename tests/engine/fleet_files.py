"""A tiny generated fleet written as several log files (the engine tests' input)."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from fleetfuel import synth


def write_tiny_fleet(folder: Path, vehicles: int = 3, days: int = 2, seed: int = 5) -> Path:
    """Generated fleet (``fleetfuel.synth``), one Parquet file per vehicle and day, into ``folder``.

    The last file repeats the first rows of the one before it, so that a duplicate spans two
    files (charged to the later file).
    """
    folder.mkdir(parents=True, exist_ok=True)
    samples = synth.fleet(n_vehicles=vehicles, n_days=days, seed=seed, with_truth=False).samples
    written = synth.write_daily_files(samples, folder)
    if len(written) >= 2:
        last = pd.read_parquet(written[-1])
        before = pd.read_parquet(written[-2])
        if before["vehicle_id"].iloc[0] == last["vehicle_id"].iloc[0]:
            both = pd.concat([before.tail(20), last], ignore_index=True)
            synth.write_parquet(both, None, written[-1])
    return folder
