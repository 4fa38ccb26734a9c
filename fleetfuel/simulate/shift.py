"""Gear choice along a trace: load-dependent rpm window with hysteresis and dwell, or best efficiency.

Everything that can be done for all gears at once is done by the caller over (steps, gears)
arrays (:mod:`fleetfuel.simulate.combustion`). What remains is a recurrence: the gear at step
``i`` depends on the gear held at ``i - 1`` and on how long it has been held (minimum dwell,
hysteresis). That recurrence is compiled with numba (:func:`_choose_gears`), one pass over the
steps, state carried between blocks of steps.

Rules (both strategies)
-----------------------
- Standstill, or coasting with the engine below idle in every usable gear: clutch open, neutral
  (gear 0). Launch (traction below the lowest gear's idle road speed): gear 1, clutch slipping.
- From neutral while rolling, the strategy engages its preferred gear at once, except while coasting
  or braking with no gear inside the window: then the clutch stays open until the wheels pull.
- A gear is left before ``min_gear_dwell_s`` only when it is physically impossible: engine above
  its maximum speed, or below idle while pulling. While braking or coasting no downshift is made
  (fuel is cut on overrun; below idle the clutch opens).
- ``rpm_window``: leave the gear when the normalised engine speed ``n*`` rises above the upshift
  threshold, falls below the downshift threshold, or the demand exceeds full load (kickdown).
  Thresholds move linearly with the load. A new gear must land at least ``shift_landing_margin``
  above the downshift threshold and carry the demand within ``upshift_torque_reserve`` of full
  load (up) or within full load (down): this is the hysteresis that stops gear hunting.
- ``best_efficiency``: the feasible gear of lowest fuel rate among those landing at least
  ``shift_landing_margin`` above the (load-dependent) downshift threshold; the held gear is left
  only when the best one saves more than ``best_efficiency_margin``.

Gear numbers are 1-based in results (0 = neutral); indices into arrays are 0-based.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt
from numba import njit

MODE_NEUTRAL = 0
MODE_LAUNCH = 1
MODE_DRIVE = 2
STRATEGY_CODES = {"rpm_window": 0, "best_efficiency": 1}


@njit(cache=True)
def _upshift(nstar, load, i, k, down, margin, reserve, nmax):  # pragma: no cover - compiled
    """Highest higher gear landing inside the window and carrying the demand with reserve, else k."""
    target = k
    for h in range(k + 1, nstar.shape[1]):
        if nstar[i, h] >= down + margin and nstar[i, h] <= nmax and load[i, h] <= reserve:
            target = h
    return target


@njit(cache=True)
def _strongest(nstar, load, i, k, nmax):  # pragma: no cover - compiled
    """Gear passing the most force (lowest load ratio) among those the engine speed allows."""
    target = k
    for h in range(nstar.shape[1]):
        if 0.0 <= nstar[i, h] <= nmax and load[i, h] < load[i, target]:
            target = h
    return target


@njit(cache=True)
def _nearest_usable(nstar, i, nmax):  # pragma: no cover - compiled
    """Gear whose engine speed is nearest the usable range [idle, max] (0 when one lies inside it)."""
    best = 0
    best_gap = np.inf
    for h in range(nstar.shape[1]):
        gap = max(0.0 - nstar[i, h], nstar[i, h] - nmax, 0.0)
        if gap < best_gap:
            best, best_gap = h, gap
    return best


@njit(cache=True)
def _engage_window(nstar, load, i, down, margin, reserve, nmax, window_only=False):  # pragma: no cover
    """Gear to engage from neutral: highest inside the window with reserve, else the strongest usable
    (or -1 with ``window_only``)."""
    gears = nstar.shape[1]
    best = -1
    for h in range(gears):
        if nstar[i, h] >= down + margin and nstar[i, h] <= nmax and load[i, h] <= reserve:
            best = h
    if best < 0 and not window_only:
        best = _strongest(nstar, load, i, _nearest_usable(nstar, i, nmax), nmax)
    return best


@njit(cache=True)
def _downshift(nstar, load, i, k, down, margin, nmax):  # pragma: no cover - compiled
    """Highest lower gear landing inside the window and carrying the demand, else the next usable one."""
    for h in range(k - 1, -1, -1):
        if nstar[i, h] >= down + margin and nstar[i, h] <= nmax and load[i, h] <= 1.0:
            return h
    for h in range(k - 1, -1, -1):
        if 0.0 <= nstar[i, h] <= nmax:
            return h
    return k


@njit(cache=True)
def _window_target(nstar, load, i, k, up, down, margin, reserve, nmax, forced_up, forced_down):  # pragma: no cover
    n = nstar[i, k]
    if forced_up or n > up:
        target = _upshift(nstar, load, i, k, down, margin, reserve, nmax)
        if target != k:
            return target
    if load[i, k] > 1.0 and not forced_down:  # power-limited: up or down, whichever passes more force
        target = _strongest(nstar, load, i, k, nmax)
        if target != k or not forced_up:
            return target
    if forced_up:  # over-speed and nothing better: the next gear the engine speed allows
        for h in range(k + 1, nstar.shape[1]):
            if nstar[i, h] <= nmax:
                return h
        return k
    if forced_down or n < down:
        return _downshift(nstar, load, i, k, down, margin, nmax)
    return k


@njit(cache=True)
def _best_gear(cost, nstar, load, i, floor, nmax):  # pragma: no cover - compiled
    """Lowest-cost gear carrying the demand with the engine speed in [floor, max]; else the strongest."""
    gears = cost.shape[1]
    best = -1
    best_cost = np.inf
    for h in range(gears):
        if floor <= nstar[i, h] <= nmax and load[i, h] <= 1.0 and cost[i, h] < best_cost:
            best = h
            best_cost = cost[i, h]
    if best < 0:  # nothing carries the demand: the gear with the most force to spare
        best = _strongest(nstar, load, i, _nearest_usable(nstar, i, nmax), nmax)
    return best


@njit(cache=True)
def _engage(strategy, nstar, load, cost, i, braking, down, margin, reserve, nmax):  # pragma: no cover
    """Gear index to engage from neutral at step ``i``, or -1 to stay in neutral."""
    if braking and _engage_window(nstar, load, i, down, margin, 1.0, nmax, True) < 0:
        return -1  # coasting or braking slowly: the clutch stays open until a gear fits or the wheels pull
    if strategy == 0:
        return _engage_window(nstar, load, i, down, margin, reserve, nmax)
    return _best_gear(cost, nstar, load, i, down + margin, nmax)


@njit(cache=True)
def _target(strategy, nstar, load, cost, i, k, up, down, margin, reserve, eff_margin, nmax,
            forced_up, under):  # pragma: no cover - compiled
    """Gear index the strategy wants at step ``i`` when it may (or must) leave gear index ``k``."""
    if strategy == 0:
        return _window_target(nstar, load, i, k, up, down, margin, reserve, nmax, forced_up, under)
    best = _best_gear(cost, nstar, load, i, down + margin, nmax)
    if forced_up or under or load[i, k] > 1.0 or cost[i, k] > cost[i, best] * (1.0 + eff_margin):
        return best
    return k


@njit(cache=True)
def _choose_gears(strategy, time_s, mode, braking, nstar, load, cost, up, down,
                  margin, reserve, eff_margin, nmax, dwell_s, state):  # pragma: no cover - compiled
    steps = time_s.shape[0]
    gear = np.zeros(steps, dtype=np.int8)
    cur = int(state[0])  # 0 neutral, else 1-based gear
    t_last = state[1]
    for i in range(steps):
        if mode[i] == MODE_NEUTRAL:
            cur = 0
            continue
        if mode[i] == MODE_LAUNCH:
            if cur != 1:
                cur, t_last = 1, time_s[i]
            gear[i] = 1
            continue
        if cur == 0:
            k = _engage(strategy, nstar, load, cost, i, braking[i], down[i], margin, reserve, nmax)
            if k >= 0:
                cur, t_last = k + 1, time_s[i]
                gear[i] = cur
            continue
        k = cur - 1
        forced_up = nstar[i, k] > nmax
        under = nstar[i, k] < 0.0
        if under and braking[i]:
            cur = 0
            continue
        if forced_up or under or (time_s[i] - t_last >= dwell_s and not braking[i]):
            target = _target(strategy, nstar, load, cost, i, k, up[i], down[i], margin, reserve, eff_margin,
                             nmax, forced_up, under)
            if target != k:
                cur, t_last = target + 1, time_s[i]
        gear[i] = cur
    state[0] = cur
    state[1] = t_last
    return gear


def choose_gears(strategy: str, time_s: npt.NDArray[np.float64], mode: npt.NDArray[np.int8],
                 braking: npt.NDArray[np.bool_], nstar: npt.NDArray[np.float64],
                 load: npt.NDArray[np.float64], cost: npt.NDArray[np.float64] | None,
                 up: npt.NDArray[np.float64], down: npt.NDArray[np.float64], *, margin: float,
                 reserve: float, efficiency_margin: float, nstar_max: float, dwell_s: float,
                 state: npt.NDArray[np.float64]) -> npt.NDArray[np.int8]:
    """Gear per step for one block of steps (state carried in ``state`` between blocks).

    Parameters
    ----------
    strategy : str
        ``"rpm_window"`` or ``"best_efficiency"``.
    time_s : ndarray, shape (n,)
        Sample times. [s]
    mode : ndarray of int8, shape (n,)
        :data:`MODE_NEUTRAL`, :data:`MODE_LAUNCH` or :data:`MODE_DRIVE` per step.
    braking : ndarray of bool, shape (n,)
        Demand at the wheels <= 0 (coasting or braking).
    nstar : ndarray, shape (n, gears)
        Normalised engine speed ``(n - idle) / (rated - idle)`` in each gear. [1]
    load : ndarray, shape (n, gears)
        Engine torque demand over full-load torque in each gear (may exceed 1). [1]
    cost : ndarray, shape (n, gears), or None
        Fuel rate per gear (only for ``best_efficiency``). [g/s]
    up, down : ndarray, shape (n,)
        Load-dependent upshift and downshift thresholds (normalised speed). [1]
    margin, reserve, efficiency_margin, nstar_max, dwell_s : float
        Landing margin [1], upshift torque reserve [1], fuel saving to switch [1], normalised
        maximum engine speed [1], minimum dwell [s].
    state : ndarray, shape (2,)
        ``[gear held (0 = neutral), time of the last change [s]]``; updated in place.

    Returns
    -------
    ndarray of int8, shape (n,)
        Gear per step, 1-based; 0 = neutral.
    """
    code = STRATEGY_CODES[strategy]
    cost_arr = np.zeros((1, 1)) if cost is None else np.ascontiguousarray(cost, dtype=np.float64)
    return _choose_gears(code, time_s, mode, braking, np.ascontiguousarray(nstar), np.ascontiguousarray(load),
                         cost_arr, up, down, float(margin), float(reserve), float(efficiency_margin),
                         float(nstar_max), float(dwell_s), state)


def initial_state() -> npt.NDArray[np.float64]:
    """Shift state at the start of a trace: neutral, no change yet."""
    return np.array([0.0, -np.inf])


def gear_changes(gear: npt.ArrayLike) -> int:
    """Number of gear selections that differ from the previously engaged gear (neutral ignored).

    Parameters
    ----------
    gear : array_like of int
        Gear per step, 1-based, 0 = neutral.
    """
    g = np.asarray(gear)
    engaged = g[g > 0]
    return int(np.count_nonzero(np.diff(engaged)))


def gear_holds(time_s: npt.ArrayLike, gear: npt.ArrayLike) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64], npt.NDArray[np.bool_]]:
    """Runs of one engaged gear: gear, time held, and whether the run ended in another gear.

    A run ends at the first sample in another gear (duration measured to that sample) or in
    neutral. Only runs that end directly in another gear are shift decisions; runs that end in
    neutral (clutch opened to stop or coast) are not.

    Returns
    -------
    run_gear : ndarray of int64
    held_s : ndarray of float64
        From the run's first sample to the first sample after it. [s]
    ends_in_shift : ndarray of bool
    """
    t = np.asarray(time_s, dtype=np.float64)
    g = np.asarray(gear).astype(np.int64)
    if g.size == 0:
        return np.zeros(0, np.int64), np.zeros(0), np.zeros(0, bool)
    starts = np.flatnonzero(np.concatenate(([True], g[1:] != g[:-1])))
    ends = np.concatenate((starts[1:], [g.size]))  # first index after the run
    keep = g[starts] > 0
    end_t = np.where(ends < g.size, t[np.minimum(ends, g.size - 1)], t[-1])
    next_gear = np.where(ends < g.size, g[np.minimum(ends, g.size - 1)], 0)
    return g[starts][keep], (end_t - t[starts])[keep], (next_gear > 0)[keep]
