r"""Compiled kernel of the l1 trend filter (:func:`fleetfuel.clean.elevation.trend_filter`).

The primal-dual interior-point method of Kim, Koh, Boyd and Gorinevsky (2009), section 6, on
the dual of :math:`\min_x \tfrac12\|y - x\|^2 + \lambda \|D x\|_1` (D the second difference):
a box-constrained QP in the dual variable :math:`z` with the pentadiagonal matrix
:math:`D D^T` (diagonals 6, -4, 1). Each Newton step solves one pentadiagonal system; that and
the line search are a sequential recurrence over the profile, so the whole iteration is compiled
with numba (one call per stretch instead of tens of scipy calls and dozens of numpy temporaries
per iteration). The arithmetic is the same as the numpy/scipy formulation step for step; results
agree to rounding (the banded Cholesky factorisation is written out, not LAPACK's ``pbtrf``).
Loops that read the same arrays are fused (the Newton system's assembly, factorisation and forward
substitution in one pass; a line-search trial's update, residual and feasibility in one pass;
``D^T z`` of the accepted trial kept for the next iteration), each value computed by the same
operations in the same order as the separate loops, so the iterates are the same to the bit.

References
----------
Kim, S.-J., Koh, K., Boyd, S. and Gorinevsky, D. (2009). l1 trend filtering. SIAM Review
51(2), 339-360. doi:10.1137/070690274
Golub, G. H. and Van Loan, C. F. (2013). Matrix Computations, 4th ed., section 4.3 (banded
Cholesky factorisation).
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
import numpy.typing as npt
from numba import njit

FloatArray = npt.NDArray[np.float64]

# Interior-point settings of Kim et al. (2009), their reference implementation's values.
SUFFICIENT_DECREASE: Final = 0.01  # backtracking sufficient-decrease parameter
BETA: Final = 0.5  # backtracking step shrink
MU: Final = 2.0  # barrier update factor
MAX_ITER: Final = 80
MAX_LINE_SEARCH: Final = 40
REL_GAP: Final = 1e-7  # stop when the duality gap is this small relative to the objective
T_START: Final = 1e-10  # initial barrier parameter (reference implementation)
STEP_KEEP_T: Final = 0.2  # the barrier parameter is raised only after a step at least this long
T_GROWTH: Final = 1.2  # ... and by at least this factor
STEP_BACKOFF: Final = 0.99  # fraction of the step to the boundary of mu >= 0

# D D^T of the second-difference operator: constant diagonals (main, first, second).
_DDT_MAIN: Final = 6.0
_DDT_FIRST: Final = -4.0
_DDT_SECOND: Final = 1.0


@njit(cache=True)
def _factor(diag: FloatArray, u0: FloatArray, u1: FloatArray, u2: FloatArray) -> None:  # pragma: no cover
    """Banded Cholesky ``A = U^T U`` of the pentadiagonal A (main ``diag``, off-diagonals constant).

    ``u0[j] = U[j, j]``, ``u1[j] = U[j-1, j]``, ``u2[j] = U[j-2, j]`` (written in place).
    """
    m = diag.size
    for j in range(m):
        a2 = 0.0
        a1 = 0.0
        if j >= 2:
            a2 = _DDT_SECOND / u0[j - 2]
        if j >= 1:
            prev = u1[j - 1] if j >= 2 else 0.0  # U[j-2, j-1]
            a1 = (_DDT_FIRST - prev * a2) / u0[j - 1]
        u2[j] = a2
        u1[j] = a1
        u0[j] = math.sqrt(diag[j] - a2 * a2 - a1 * a1)


@njit(cache=True)
def _solve(u0: FloatArray, u1: FloatArray, u2: FloatArray, b: FloatArray, x: FloatArray) -> None:  # pragma: no cover
    """Solve ``U^T U x = b`` with the factor of :func:`_factor` (``x`` written in place)."""
    m = b.size
    for j in range(m):  # forward: U^T y = b
        s = b[j]
        if j >= 1:
            s -= u1[j] * x[j - 1]
        if j >= 2:
            s -= u2[j] * x[j - 2]
        x[j] = s / u0[j]
    for j in range(m - 1, -1, -1):  # backward: U x = y
        s = x[j]
        if j + 1 < m:
            s -= u1[j + 1] * x[j + 1]
        if j + 2 < m:
            s -= u2[j + 2] * x[j + 2]
        x[j] = s / u0[j]


@njit(cache=True)
def _dt(z: FloatArray, out: FloatArray) -> None:  # pragma: no cover
    """``out = D^T z`` (length ``z.size + 2``)."""
    out[:] = 0.0
    for k in range(z.size):
        out[k] += z[k]
        out[k + 1] -= 2.0 * z[k]
        out[k + 2] += z[k]


@njit(cache=True)
def _d(x: FloatArray, out: FloatArray) -> None:  # pragma: no cover
    """``out = D x`` (length ``x.size - 2``)."""
    for k in range(out.size):
        out[k] = x[k] - 2.0 * x[k + 1] + x[k + 2]


@njit(cache=True)
def _objectives(dy: FloatArray, z: FloatArray, mu1: FloatArray, mu2: FloatArray, w: FloatArray, sol: FloatArray,
                dtz: FloatArray, ddtz: FloatArray, lam: float) -> tuple[float, float]:  # pragma: no cover
    """Primal (the smaller of its two bounds) and dual objective at the current point."""
    wsol = 0.0
    musum = 0.0
    absres = 0.0
    dyz = 0.0
    for k in range(dy.size):
        wsol += w[k] * sol[k]
        musum += mu1[k] + mu2[k]
        absres += abs(dy[k] - ddtz[k])
        dyz += dy[k] * z[k]
    dtzdtz = 0.0
    for k in range(dtz.size):
        dtzdtz += dtz[k] * dtz[k]
    pobj = min(0.5 * wsol + lam * musum, 0.5 * dtzdtz + lam * absres)
    return pobj, -0.5 * dtzdtz + dyz


@njit(cache=True)
def _trial(z: FloatArray, mu1: FloatArray, mu2: FloatArray, dz: FloatArray, dmu1: FloatArray, dmu2: FloatArray,
           dy: FloatArray, lam: float, inv_t: float, step: float, work: tuple) -> float:  # pragma: no cover
    """The trial point ``z + step dz`` (and multipliers) into ``work`` (nz, nmu1, nmu2, nf1, nf2,
    scratch, D^T nz, D D^T nz) and its residual norm, in one pass; ``inf`` if it leaves the box
    ``|nz| < lam``. The same operations in the same order as the update loop, :func:`_dt`,
    :func:`_d` and the residual norm one after the other, so the same bits."""
    nz, nmu1, nmu2, nf1, nf2, nres, ndtz, nddtz = work
    m = z.size
    worst = -np.inf
    a = 0.0
    b = 0.0
    c = 0.0
    for j in range(m + 2):
        if j < m:
            nz[j] = z[j] + step * dz[j]
            nmu1[j] = mu1[j] + step * dmu1[j]
            nmu2[j] = mu2[j] + step * dmu2[j]
            nf1[j] = nz[j] - lam
            nf2[j] = -nz[j] - lam
            worst = max(worst, nf1[j], nf2[j])
        v = 0.0
        if j >= 2:
            v += nz[j - 2]
        if 1 <= j <= m:
            v -= 2.0 * nz[j - 1]
        if j < m:
            v += nz[j]
        ndtz[j] = v
        if j >= 2:
            k = j - 2
            d = ndtz[k] - 2.0 * ndtz[k + 1] + ndtz[k + 2]
            nddtz[k] = d
            r = d - dy[k] + nmu1[k] - nmu2[k]
            nres[k] = r
            a += r * r
            r1 = nmu1[k] * nf1[k] + inv_t
            r2 = nmu2[k] * nf2[k] + inv_t
            b += r1 * r1
            c += r2 * r2
    if not worst < 0:
        return np.inf
    return math.sqrt(a + b + c)


@njit(cache=True)
def _line_search(z: FloatArray, mu1: FloatArray, mu2: FloatArray, dz: FloatArray, dmu1: FloatArray,
                 dmu2: FloatArray, dy: FloatArray, lam: float, inv_t: float, residual: float, step: float,
                 work: tuple) -> tuple[float, bool]:  # pragma: no cover
    """Backtracking on the residual norm; the trial point is left in ``work`` (see :func:`_trial`).
    Returns the step after the search (halved once more when no trial point was accepted, as in
    the reference implementation) and whether the last two work arrays hold ``D^T nz`` and
    ``D D^T nz`` of the point left (they do unless its last trial left the box)."""
    known = False
    for _ls in range(MAX_LINE_SEARCH):
        norm = _trial(z, mu1, mu2, dz, dmu1, dmu2, dy, lam, inv_t, step, work)
        known = norm < np.inf
        if known and norm <= (1 - SUFFICIENT_DECREASE * step) * residual:
            return step, known
        step *= BETA
    return step, known


@njit(cache=True)
def _back_substitute(u0: FloatArray, u1: FloatArray, u2: FloatArray, dz: FloatArray, mu1: FloatArray,
                     mu2: FloatArray, f1: FloatArray, f2: FloatArray, inv_t: float, dmu1: FloatArray,
                     dmu2: FloatArray) -> float:  # pragma: no cover
    """Backward substitution ``U dz = y`` (as :func:`_solve`), with the multipliers' Newton
    directions (``dmu1``, ``dmu2`` written) and the longest step (backed off) that keeps them
    positive, at most 1, in the same pass (a minimum does not depend on the order)."""
    m = dz.size
    lim1 = np.inf
    lim2 = np.inf
    for j in range(m - 1, -1, -1):
        s = dz[j]
        if j + 1 < m:
            s -= u1[j + 1] * dz[j + 1]
        if j + 2 < m:
            s -= u2[j + 2] * dz[j + 2]
        dz[j] = s / u0[j]
        dmu1[j] = -(mu1[j] + (inv_t + dz[j] * mu1[j]) / f1[j])
        dmu2[j] = -(mu2[j] + (inv_t - dz[j] * mu2[j]) / f2[j])
        if dmu1[j] < 0:
            lim1 = min(lim1, -mu1[j] / dmu1[j])
        if dmu2[j] < 0:
            lim2 = min(lim2, -mu2[j] / dmu2[j])
    step = 1.0
    if lim1 < np.inf:
        step = min(step, STEP_BACKOFF * lim1)
    if lim2 < np.inf:
        step = min(step, STEP_BACKOFF * lim2)
    return step


@njit(cache=True)
def _newton_direction(mu1: FloatArray, mu2: FloatArray, f1: FloatArray, f2: FloatArray, dy: FloatArray,
                      ddtz: FloatArray, w: FloatArray, inv_t: float, work: tuple) -> tuple[float, float]:  # pragma: no cover
    """Newton direction ``dz`` (in ``work``), the residual norm at the current point and the
    multipliers' step limit, in two passes: the system's diagonal and right-hand side, the residual
    norm, the banded factorisation (as :func:`_factor`) and the forward substitution (as
    :func:`_solve`) in one, :func:`_back_substitute` in the other; each value by the same
    operations in the same order as separate loops would use."""
    u0, u1, u2, dz, nres, dmu1, dmu2 = work
    m = dy.size
    a = 0.0
    b = 0.0
    c = 0.0
    for j in range(m):
        diag = _DDT_MAIN - (mu1[j] / f1[j] + mu2[j] / f2[j])
        rhs = -ddtz[j] + dy[j] + inv_t / f1[j] - inv_t / f2[j]
        r = ddtz[j] - w[j]  # the dual residual
        nres[j] = r
        a += r * r
        r1 = mu1[j] * f1[j] + inv_t
        r2 = mu2[j] * f2[j] + inv_t
        b += r1 * r1
        c += r2 * r2
        a2 = 0.0
        a1 = 0.0
        if j >= 2:
            a2 = _DDT_SECOND / u0[j - 2]
        if j >= 1:
            prev = u1[j - 1] if j >= 2 else 0.0
            a1 = (_DDT_FIRST - prev * a2) / u0[j - 1]
        u2[j] = a2
        u1[j] = a1
        u0[j] = math.sqrt(diag - a2 * a2 - a1 * a1)
        s = rhs
        if j >= 1:
            s -= u1[j] * dz[j - 1]
        if j >= 2:
            s -= u2[j] * dz[j - 2]
        dz[j] = s / u0[j]
    step = _back_substitute(u0, u1, u2, dz, mu1, mu2, f1, f2, inv_t, dmu1, dmu2)
    return math.sqrt(a + b + c), step


@njit(cache=True)
def dual_solution(y: FloatArray, lam: float) -> FloatArray:  # pragma: no cover
    """Dual variable ``z`` of the l1 trend filter of ``y`` (``y.size >= 3``, ``lam > 0``).

    The fit is ``y - D^T z``. Same iteration as Kim et al. (2009), section 6.
    """
    m = y.size - 2
    dy = np.empty(m)
    _d(y, dy)
    c0, c1, c2 = np.empty(m), np.empty(m), np.empty(m)
    _factor(np.full(m, _DDT_MAIN), c0, c1, c2)
    z = np.zeros(m)
    mu1 = np.ones(m)
    mu2 = np.ones(m)
    f1 = z - lam
    f2 = -z - lam
    t = T_START
    step = np.inf
    dtz = np.empty(m + 2)
    ddtz = np.empty(m)
    w = np.empty(m)
    sol = np.empty(m)
    dz = np.empty(m)
    dmu1 = np.empty(m)
    dmu2 = np.empty(m)
    u0, u1, u2 = np.empty(m), np.empty(m), np.empty(m)
    nz, nmu1, nmu2, nf1, nf2 = np.empty(m), np.empty(m), np.empty(m), np.empty(m), np.empty(m)
    nres = np.empty(m)
    ndtz = np.empty(m + 2)
    nddtz = np.empty(m)
    known = False  # do dtz, ddtz hold D^T z, D D^T z of the current z (from the line search)?
    for _ in range(MAX_ITER):
        if not known:
            _dt(z, dtz)
            _d(dtz, ddtz)
        for k in range(m):
            w[k] = dy[k] - (mu1[k] - mu2[k])
        _solve(c0, c1, c2, w, sol)
        pobj, dobj = _objectives(dy, z, mu1, mu2, w, sol, dtz, ddtz, lam)
        gap = pobj - dobj
        if gap <= REL_GAP * max(1.0, abs(pobj)):
            break
        if step >= STEP_KEEP_T:
            t = max(2 * m * MU / gap, T_GROWTH * t)
        inv_t = 1.0 / t
        residual, step = _newton_direction(mu1, mu2, f1, f2, dy, ddtz, w, inv_t,
                                           (u0, u1, u2, dz, nres, dmu1, dmu2))
        step, known = _line_search(z, mu1, mu2, dz, dmu1, dmu2, dy, lam, inv_t, residual, step,
                                   (nz, nmu1, nmu2, nf1, nf2, nres, ndtz, nddtz))
        z, nz = nz, z
        mu1, nmu1 = nmu1, mu1
        mu2, nmu2 = nmu2, mu2
        f1, nf1 = nf1, f1
        f2, nf2 = nf2, f2
        if known:
            dtz, ndtz = ndtz, dtz
            ddtz, nddtz = nddtz, ddtz
    return z
