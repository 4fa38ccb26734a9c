"""Benchmark: trace simulation speed, against a straightforward vectorised baseline in the same run.

1. Gear-step evaluations per second for a 12-gear spec over >= 1 M steps: engine speed, engine
   torque, full-load torque and fuel rate in every gear (steps x gears), as the ``best_efficiency``
   strategy needs them. Ours: :func:`fleetfuel.simulate.combustion.evaluate_gears` in blocks plus
   the spec's fuel model. Baseline: the textbook numpy formulation on the whole (steps, gears)
   array with ``scipy.interpolate.RegularGridInterpolator`` over the same fuel map.
   Target (issue 3): >= 4x the baseline.
2. One spec over one vehicle-year of 1 Hz driving (2.5 M driving seconds), shift logic included,
   with ``simulate_trace`` end to end. Target: <= 1 s on one core.

Threads are pinned to one (OMP/OpenBLAS/MKL/numba env vars set before numpy is imported, and the
process bound to one CPU where the OS allows). Times are CPU seconds of this process
(``time.process_time``), best of ``--repeat`` runs, so other work on the machine disturbs less.

The year trace is, in order of preference: the synthetic fleet's 40 t tractor (``fleetfuel.synth``,
10 seeded days of 1 Hz drives with their road grade, tiled to 2.5 M s); the standard cycles in
``../shared/reference_cycles`` (read with the ingest reader, concatenated); a seeded numpy
stop-and-go trace. The script prints which it used.

Usage: ``python benchmarks/bench_simulate.py [--steps N] [--year-s N] [--repeat K] [--spec FILE]``
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from collections.abc import Callable  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from fleetfuel.simulate import SimConfig, load_spec, simulate_trace  # noqa: E402
from fleetfuel.simulate.combustion import evaluate_gears  # noqa: E402
from fleetfuel.simulate.fuelmap import fuel_model, load_fuel_map, max_torque_nm  # noqa: E402
from fleetfuel.simulate.spec import VehicleSpec  # noqa: E402
from fleetfuel.simulate.spec_parts import KW_W, RPM_RAD_S  # noqa: E402

SEED = 20240303
DEFAULT_SPEC = ROOT / "models" / "tractor_40t_diesel_axle264.toml"
SHARED_CYCLES = ROOT.parent / "shared" / "reference_cycles"
BLOCK = 1 << 14


def pin_one_cpu() -> str:
    """Bind the process to one CPU where the OS allows it."""
    if hasattr(os, "sched_setaffinity"):
        cpu = min(os.sched_getaffinity(0))
        os.sched_setaffinity(0, {cpu})
        return f"pinned to CPU {cpu}"
    return "not pinned (no sched_setaffinity)"


def best_cpu_s(run: Callable[[], object], repeat: int) -> float:
    """Smallest CPU time of ``repeat`` calls. [s]"""
    best = float("inf")
    for _ in range(repeat):
        start = time.process_time()
        run()
        best = min(best, time.process_time() - start)
    return best


def random_trace(steps: int, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Speeds 0-25 m/s as a smoothed random walk, with accelerations and road loads to match."""
    speed = np.abs(np.cumsum(rng.normal(0.0, 0.4, steps)) % 50.0 - 25.0)
    accel = np.gradient(speed)
    force = 2000.0 + 0.5 * 1.2 * 5.8 * speed**2 + 35000.0 * accel
    return speed, accel, force


def ours(spec: VehicleSpec, speed: np.ndarray, accel: np.ndarray, force: np.ndarray) -> float:
    """fleetfuel's gear grid plus the spec's fuel model, block by block; returns a checksum."""
    assert spec.engine is not None
    model = fuel_model(spec.engine)
    extra = np.zeros(spec.overall_ratios.size)
    total = 0.0
    for start in range(0, speed.size, BLOCK):
        sl = slice(start, start + BLOCK)
        grid = evaluate_gears(spec, speed[sl], accel[sl], force[sl], extra)
        fuel = model.fuel_rate_g_s(grid.engine_speed_rpm(), np.minimum(grid.engine_torque_nm, grid.full_load_nm))
        total += float(fuel.sum())
    return total


def baseline(spec: VehicleSpec, speed: np.ndarray, accel: np.ndarray, force: np.ndarray) -> float:
    """Textbook numpy on the whole (steps, gears) array, fuel by RegularGridInterpolator."""
    from scipy.interpolate import RegularGridInterpolator

    engine = spec.engine
    assert engine is not None and engine.fuel_map_path is not None
    grid = load_fuel_map(engine.fuel_map_path)
    interp = RegularGridInterpolator((grid.speed_rpm, grid.torque_nm), grid.fuel_g_s, bounds_error=False, fill_value=None)
    ratios, radius, eta = spec.overall_ratios, spec.rolling_radius_m, spec.driveline.efficiency
    omega = speed[:, None] / radius * ratios[None, :]
    rpm = omega / RPM_RAD_S
    torque = np.where(force[:, None] >= 0, force[:, None] * radius / (ratios * eta), force[:, None] * radius * eta / ratios)
    with np.errstate(divide="ignore"):
        torque = torque + np.where(omega > 0, spec.auxiliary.power_kw * KW_W / omega, 0.0)
    full = max_torque_nm(engine, rpm)
    points = np.stack((np.clip(rpm, grid.speed_rpm[0], grid.speed_rpm[-1]),
                       np.clip(np.minimum(torque, full), grid.torque_nm[0], grid.torque_nm[-1])), axis=-1)
    return float(interp(points).sum())


def synth_tractor_trace(seconds: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, str] | None:
    """1 Hz driving of the synthetic fleet's first 40 t tractor (fleetfuel.synth), tiled; None if unavailable."""
    try:
        from fleetfuel import synth

        truth = synth.fleet(n_vehicles=3, n_days=10, seed=SEED, with_truth=True).truth
        plan = next(p for p in synth.ROSTER if p.vehicle_class == "tractor_40t" and p.logger.rate_hz == 1.0)
        drives = truth[truth["vehicle_id"] == plan.vehicle_id]
        speed = drives["speed_m_s"].to_numpy(dtype=np.float64)
        grade = drives["grade"].to_numpy(dtype=np.float64)
    except (ImportError, AttributeError, KeyError, StopIteration, TypeError) as exc:
        print(f"(fleetfuel.synth not usable here: {exc.__class__.__name__}: {exc})")
        return None
    if speed.size == 0:
        return None
    reps = seconds // speed.size + 1
    label = f"fleetfuel.synth: {plan.vehicle_id} ({plan.duty} duty), 10 days of 1 Hz drives tiled x{reps}"
    return np.arange(seconds, dtype=np.float64), np.tile(speed, reps)[:seconds], np.tile(grade, reps)[:seconds], label


def year_trace(seconds: int) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, str]:
    """Time, speed and grade of ``seconds`` of 1 Hz driving: synth, else reference cycles, else numpy."""
    made = synth_tractor_trace(seconds)
    if made is not None:
        return made
    files = sorted(SHARED_CYCLES.glob("*.csv")) if SHARED_CYCLES.is_dir() else []
    if files:
        from fleetfuel.simulate.cycle import read_cycle

        one = np.concatenate([read_cycle(path).speed_m_s for path in files])
        speed = np.tile(one, seconds // one.size + 1)[:seconds]
        names = ", ".join(p.stem for p in files)
        return np.arange(seconds, dtype=np.float64), speed, None, f"reference cycles ({names}) concatenated"
    rng = np.random.default_rng(SEED)
    cruise = rng.uniform(8.0, 25.0, seconds // 120 + 1).repeat(120)[:seconds]
    ramp = np.minimum(1.0, np.mod(np.arange(seconds), 120) / 20.0) * np.minimum(1.0, np.mod(-np.arange(seconds), 120) / 20.0)
    return np.arange(seconds, dtype=np.float64), cruise * ramp, None, "seeded numpy stop-and-go trace"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--steps", type=int, default=1_000_000, help="steps for the gear-step benchmark (>= 1 M)")
    parser.add_argument("--year-s", type=int, default=2_500_000, help="driving seconds of the vehicle-year")
    parser.add_argument("--repeat", type=int, default=3, help="runs per measurement (best counts)")
    parser.add_argument("--spec", type=Path, default=DEFAULT_SPEC, help="a 12-gear combustion spec with a fuel-map CSV")
    args = parser.parse_args(argv)
    print(f"threads: 1 (env), {pin_one_cpu()}; times are CPU seconds, best of {args.repeat}")
    spec = load_spec(args.spec)
    gears = spec.overall_ratios.size
    print(f"spec: {spec.name} ({gears} gears)")

    speed, accel, force = random_trace(args.steps, np.random.default_rng(SEED))
    ours(spec, speed[:BLOCK], accel[:BLOCK], force[:BLOCK])  # compile numba kernels outside the timing
    evaluations = args.steps * gears
    ours_s = best_cpu_s(lambda: ours(spec, speed, accel, force), args.repeat)
    base_s = best_cpu_s(lambda: baseline(spec, speed, accel, force), args.repeat)
    check_ours = ours(spec, speed, accel, force)
    check_base = baseline(spec, speed, accel, force)
    print(f"gear-step evaluations ({args.steps:,} steps x {gears} gears = {evaluations:,}):")
    print(f"  fleetfuel  {evaluations / ours_s / 1e6:8.1f} M/s  ({ours_s:.3f} s)")
    print(f"  baseline   {evaluations / base_s / 1e6:8.1f} M/s  ({base_s:.3f} s)  numpy + RegularGridInterpolator")
    print(f"  ratio      {base_s / ours_s:8.2f} x   (target >= 4)   fuel checksums agree to "
          f"{abs(check_ours / check_base - 1):.1e}")

    time_s, speed_m_s, grade, source = year_trace(args.year_s)
    cfg = SimConfig()
    simulate_trace(time_s[:5000], speed_m_s[:5000], None, spec, cfg=cfg)  # warm-up (compilation)
    year_cpu = best_cpu_s(lambda: simulate_trace(time_s, speed_m_s, grade, spec, cfg=cfg), args.repeat)
    result = simulate_trace(time_s, speed_m_s, grade, spec, cfg=cfg)
    print(f"vehicle-year: {args.year_s:,} s of 1 Hz driving from {source}")
    print(f"  simulate_trace (rpm_window shifts): {year_cpu:.3f} s   (target <= 1 s)   "
          f"{result.totals.distance_km:,.0f} km, {result.totals.gear_changes:,} gear changes, "
          f"{result.totals.fuel_l_per_100km:.1f} L/100 km, short {result.totals.shortfall_s:,.0f} s")
    eff_cfg = SimConfig(shift_strategy="best_efficiency")
    eff_cpu = best_cpu_s(lambda: simulate_trace(time_s, speed_m_s, grade, spec, cfg=eff_cfg), args.repeat)
    print(f"  simulate_trace (best_efficiency, fuel in all gears): {eff_cpu:.3f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
