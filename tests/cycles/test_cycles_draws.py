"""The compiled random draw of whole micro-trips equals numpy's selection and sort."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fleetfuel.cycles.chains import _bucket_sort, _fill_draw


def _numpy_draw(keys: np.ndarray, width: int, duration: np.ndarray, base: np.ndarray, target: float):
    # Reference: numpy's argpartition, argsort and argmin (the formulation the kernel replaced).
    if width < keys.shape[1]:
        take = np.argpartition(keys, width - 1, axis=1)[:, :width]
    else:
        take = np.tile(np.arange(keys.shape[1]), (keys.shape[0], 1))
    take = np.take_along_axis(take, np.argsort(np.take_along_axis(keys, take, axis=1), axis=1), axis=1)
    totals = np.concatenate([base[:, None], base[:, None] + np.cumsum(duration[take], axis=1)], axis=1)
    return take, np.argmin(np.abs(totals - target), axis=1)


@settings(max_examples=60, deadline=None)
@given(n=st.integers(1, 400), share=st.floats(0.01, 1.0), seed=st.integers(0, 2**31), chain=st.booleans())
def test_fill_draw_equals_numpy_selection(n: int, share: float, seed: int, chain: bool) -> None:
    rng = np.random.default_rng(seed)
    width = max(1, int(round(share * n)))
    keys = rng.random((17, n))
    duration = rng.uniform(5.0, 300.0, n)
    base = np.where(rng.random(17) < 0.3, np.inf, rng.uniform(0, 600, 17)) if chain else np.zeros(17)
    take, count = _fill_draw(keys, width, duration, base, 900.0)
    want_take, want_count = _numpy_draw(keys, width, duration, base, 900.0)
    np.testing.assert_array_equal(take, want_take)
    np.testing.assert_array_equal(count, want_count)


def test_fill_draw_widens_its_cut_when_too_few_keys_lie_below_it() -> None:
    # All keys near 1: the first cut (about width / n) holds none, so the kernel must double it.
    keys = 0.999 + 0.001 * np.random.default_rng(3).random((4, 50))
    take, _ = _fill_draw(keys, 5, np.ones(50), np.zeros(4), 3.0)
    np.testing.assert_array_equal(take, np.argsort(keys, axis=1)[:, :5])


@pytest.mark.parametrize("size", [1, 2, 7, 500])
def test_bucket_sort_orders_columns_by_key(size: int) -> None:
    keys = np.random.default_rng(size).random(size) * 0.25
    cols = np.random.default_rng(size + 1).permutation(size).astype(np.int64)
    want = cols[np.argsort(keys[cols])]
    _bucket_sort(keys, cols, size, 0.25, np.empty(size, np.int64), np.empty(size + 1, np.int64))
    np.testing.assert_array_equal(cols, want)
