"""The pool of pieces is bounded per type: a seeded draw of micro-trips up to ``pool_max_s``.

Common practice, no source: a big fleet's cycles come from a fixed amount of driving per type,
drawn without bias and the same way in every run, so memory stays bounded in the main process.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from fleetfuel import schema
from fleetfuel.cycles import CyclesConfig
from fleetfuel.cycles.pieces import pool_microtrips


def _table(n: int, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return pd.DataFrame({
        schema.MICROTRIP_ID: [f"V1/{k:05d}" for k in range(n)],
        "type": pd.array(np.where(np.arange(n) % 4 == 0, "T2", "T1"), dtype="string"),
        "duration_s": rng.uniform(30.0, 300.0, n),
        "measured": np.ones(n, dtype=bool),
        "eligible": np.arange(n) % 7 != 0,
    })


def test_a_type_over_the_cap_gets_a_seeded_draw_up_to_it() -> None:
    table = _table(4000)
    cfg = CyclesConfig(pool_max_s=3600.0)
    chosen = pool_microtrips(table, cfg)
    candidates = table["eligible"].to_numpy()  # all short: the long measured ones would join too
    assert not (chosen & ~candidates).any()
    for name in ("T1", "T2"):
        mine = chosen & (table["type"] == name).to_numpy()
        total = table.loc[mine, "duration_s"].sum()
        # micro-trips in drawn order until their duration reaches the cap: over it by less than one
        assert 3600.0 <= total < 3600.0 + table["duration_s"].max()
    np.testing.assert_array_equal(chosen, pool_microtrips(table, cfg))  # same draw every run
    shuffled = table.sample(frac=1.0, random_state=1)
    again = pd.Series(pool_microtrips(shuffled.reset_index(drop=True), cfg), index=shuffled.index).sort_index()
    np.testing.assert_array_equal(chosen, again.to_numpy())  # drawn in id order, whatever the row order
    other = pool_microtrips(table, CyclesConfig(pool_max_s=3600.0, seed=1))
    assert (other != chosen).any()  # the seed is the draw


def test_a_type_under_the_cap_keeps_every_candidate() -> None:
    table = _table(200)
    chosen = pool_microtrips(table, CyclesConfig())  # 200 micro-trips of at most 5 min: under 20 h
    np.testing.assert_array_equal(chosen, table["eligible"].to_numpy())
