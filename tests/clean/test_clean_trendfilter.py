"""The compiled l1 trend-filter kernel (fleetfuel.clean.trendfilter) against outside references."""

from __future__ import annotations

import numpy as np
from scipy import linalg

from fleetfuel.clean.elevation import trend_filter
from fleetfuel.clean.trendfilter import _factor, _solve, dual_solution


def test_banded_cholesky_solve_matches_lapack() -> None:
    # Outside reference: LAPACK's banded Cholesky solver (dpbsv via scipy.linalg.solveh_banded) on the
    # Newton matrix shape of the kernel: D D^T (diagonals 6, -4, 1) plus a positive diagonal.
    rng = np.random.default_rng(3)
    m = 500
    diag = 6.0 + rng.uniform(0.0, 50.0, m)
    rhs = rng.normal(size=m)
    ab = np.zeros((3, m))
    ab[2] = diag
    ab[1, 1:] = -4.0
    ab[0, 2:] = 1.0
    expected = linalg.solveh_banded(ab, rhs)
    u0, u1, u2, got = np.empty(m), np.empty(m), np.empty(m), np.empty(m)
    _factor(diag, u0, u1, u2)
    _solve(u0, u1, u2, rhs, got)
    np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-12)


def test_optimality_conditions_on_a_long_profile() -> None:
    # Outside reference: the optimality conditions of l1 trend filtering (Kim, Koh, Boyd and
    # Gorinevsky 2009, section 3): x = y - D^T z with |z| <= lam, and z = lam * sign(D x) wherever
    # D x is clearly non-zero. Checked on a 4000-point noisy profile (the size of an 80 km stretch
    # on the 20 m grid).
    rng = np.random.default_rng(11)
    n = 4000
    y = 40.0 * np.sin(np.linspace(0.0, 9.0, n)) + np.cumsum(rng.normal(0.0, 0.3, n)) + rng.normal(0.0, 3.0, n)
    lam = 3750.0  # grade_penalty_m3 / grade_step_m**2 of the defaults (1.5e6 / 20**2)
    z = dual_solution(y, lam)
    x = trend_filter(y, lam)
    dtz = np.zeros(n)
    dtz[:-2] += z
    dtz[1:-1] -= 2 * z
    dtz[2:] += z
    np.testing.assert_allclose(x, y - dtz, atol=1e-9)
    assert np.all(np.abs(z) <= lam * (1 + 1e-9))
    dx = x[:-2] - 2 * x[1:-1] + x[2:]
    kink = np.abs(dx) > 1e-3 * np.abs(dx).max()
    assert kink.sum() >= 5  # the fit is piecewise linear with some kinks, not a straight line
    np.testing.assert_allclose(z[kink], lam * np.sign(dx[kink]), rtol=1e-3)
