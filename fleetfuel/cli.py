"""Thin command-line verbs over the library: ``fleetfuel <verb> ...``.

One ``_add_<verb>`` (arguments) and one ``_cmd_<verb>`` (build config, call the library, print,
return an exit code) per verb. :class:`~fleetfuel.errors.FleetFuelError` is caught once, in
:func:`main`, and printed as one line on stderr.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING

from fleetfuel import __version__
from fleetfuel.errors import FleetFuelError

if TYPE_CHECKING:
    from fleetfuel.config import RunConfig

EXIT_OK = 0
EXIT_NO_USABLE_INPUT = 3
EXIT_SOME_INPUT_FAILED = 7  # with --strict

Command = Callable[[argparse.Namespace], int]


def _add_engine_flags(p: argparse.ArgumentParser, work_help: str) -> None:
    g = p.add_argument_group("engine (where the per-partition work runs)")
    g.add_argument("--engine", choices=("local", "processes", "dask"),
                   help="local: this process (default); processes: a pool of worker processes; dask: a Dask cluster")
    g.add_argument("--workers", type=int, help="worker processes (processes, or a local Dask cluster); default 1")
    g.add_argument("--scheduler", help="join the Dask cluster at this address (tcp://host:8786) instead of starting one")
    g.add_argument("--work", help=work_help)
    g.add_argument("--resume", action="store_true",
                   help="keep the partitions an earlier run of the same inputs and settings finished in --work")


def _run_config(args: argparse.Namespace) -> RunConfig:
    """The run configuration of ``--config`` (defaults without it), with the engine flags applied."""
    import dataclasses
    from pathlib import Path

    from fleetfuel.config import load_run_config

    cfg = load_run_config(Path(args.config) if getattr(args, "config", None) else None)
    flags = {"kind": "dask" if args.scheduler and not args.engine else args.engine, "workers": args.workers,
             "scheduler": args.scheduler, "resume": True if args.resume else None}
    engine = dataclasses.replace(cfg.engine, **{k: v for k, v in flags.items() if v is not None})
    if args.workers and not args.engine and engine.kind == "local" and args.workers > 1:
        engine = dataclasses.replace(engine, kind="processes")
    return dataclasses.replace(cfg, engine=engine)


def _add_inspect(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("inspect", help="read and clean logs; print a per-file data-quality table")
    p.add_argument("paths", nargs="+", help="log files, folders (searched recursively) or globs")
    p.add_argument("--profile", help="force an ingest profile: a bundled NAME or a PATH to a TOML file")
    p.add_argument("--json", action="store_true", help="print the table as JSON")
    p.add_argument("--strict", action="store_true", help="non-zero exit when any file failed")
    p.add_argument("--config", help="run configuration TOML ([ingest], [clean], [segment], [engine] ...)")
    _add_engine_flags(p, "work folder for the cleaned Parquet dataset (default: a temporary folder, removed)")
    p.set_defaults(func=_cmd_inspect)


def _cmd_inspect(args: argparse.Namespace) -> int:
    from fleetfuel import pipeline
    from fleetfuel.report import quality

    result = pipeline.inspect_paths(args.paths, _run_config(args), profile=args.profile, work_dir=args.work,
                                    keep_samples=False)
    print(quality.account_json(result.account) if args.json else quality.account_text(result.account))
    for failure in result.failures:
        print(f"fleetfuel: {failure.path}: {failure.error}", file=sys.stderr)
    if not result.usable_files:
        return EXIT_NO_USABLE_INPUT
    if args.strict and result.failures:
        return EXIT_SOME_INPUT_FAILED
    return EXIT_OK


def _add_demo(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("demo", help="run fleetfuel on the bundled sample fleet into ./fleetfuel-demo/")
    p.add_argument("--out", default="fleetfuel-demo", help="output folder (default: ./fleetfuel-demo)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=_cmd_demo)


def _cmd_demo(args: argparse.Namespace) -> int:
    from pathlib import Path

    from fleetfuel import demo
    from fleetfuel.report.progress import ProgressBar

    with ProgressBar(label="demo", quiet=args.quiet) as bar:
        written = demo.run_demo(Path(args.out), progress=bar.update)
    for path in written:
        print(f"wrote {path}")
    report = next((p for p in written if p.name == demo.REPORT_FILE), None)
    if report is not None:
        print(f"report: {report.resolve()}")
    return EXIT_OK


def _add_envelope(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("envelope", help="top speed, grades, startability and acceleration of a vehicle spec")
    p.add_argument("spec", help="vehicle spec TOML file")
    p.add_argument("--payload-kg", type=float, default=None, help="payload (default: the spec's payload_kg)")
    p.add_argument("--json", action="store_true", help="print the envelope as JSON")
    p.set_defaults(func=_cmd_envelope)


def _cmd_envelope(args: argparse.Namespace) -> int:
    import json

    from fleetfuel.simulate.envelope import envelope_text, performance_envelope
    from fleetfuel.simulate.spec import load_spec

    envelope = performance_envelope(load_spec(args.spec), payload_kg=args.payload_kg)
    print(json.dumps(envelope.to_dict(), indent=2) if args.json else envelope_text(envelope))
    return EXIT_OK


def _add_simulate(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("simulate", help="fuel or energy of one vehicle spec over one speed-time cycle file")
    p.add_argument("--cycle", required=True, help="cycle CSV: time_s, speed_m_s or speed_kmh, optional grade or elevation_m")
    p.add_argument("--spec", required=True, help="vehicle spec TOML file")
    p.add_argument("--payload-kg", type=float, default=None, help="payload (default: the spec's payload_kg)")
    p.add_argument("--json", action="store_true", help="print the totals as JSON")
    p.set_defaults(func=_cmd_simulate)


def _cmd_simulate(args: argparse.Namespace) -> int:
    import json

    from fleetfuel.simulate import load_spec, simulate_trace
    from fleetfuel.simulate.cycle import read_cycle
    from fleetfuel.simulate.trace import totals_text

    spec = load_spec(args.spec)
    cycle = read_cycle(args.cycle)
    result = simulate_trace(cycle.time_s, cycle.speed_m_s, cycle.grade, spec, payload_kg=args.payload_kg,
                            elevation_m=cycle.elevation_m)
    if args.json:
        head = {"spec": spec.name, "cycle": str(args.cycle), "payload_kg": result.payload_kg,
                "grade_source": cycle.grade_source}
        print(json.dumps({**head, **result.totals.as_dict()}, indent=2))
    else:
        print(totals_text(result, cycle=str(args.cycle)))
    return EXIT_OK


def _add_cycles(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("cycles", help="duty-cycle types, a validated representative cycle each, and route weights")
    p.add_argument("paths", nargs="+", help="log files, folders (searched recursively) or globs")
    p.add_argument("--out", required=True, help="output folder (cycle CSVs, tables, summary.json, plots)")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.add_argument("--profile", help="force an ingest profile: a bundled NAME or a PATH to a TOML file")
    p.add_argument("--routes", help="routes file (CSV or TOML) mapping vehicles and times to routes")
    p.add_argument("--config", help="run configuration TOML ([cycles], [segment], [clean] ...); flags override it")
    p.add_argument("--target-min", type=float, help="duration of each cycle [min] (default 20)")
    p.add_argument("--min-types", type=int, help="fewest duty-cycle types to try (default 2)")
    p.add_argument("--max-types", type=int, help="most duty-cycle types to try (default 8)")
    p.add_argument("--seed", type=int, help="seed of every random draw (default 0)")
    p.add_argument("--spec", help="reference spec of the fuel check: a models/ file stem or a TOML path")
    p.add_argument("--holdout-day", help="day held out for the prediction check: last (default), none or YYYY-MM-DD")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    _add_engine_flags(p, "work folder for the cleaned Parquet dataset (default: a hidden .work folder inside --out)")
    p.set_defaults(func=_cmd_cycles)


def _cmd_cycles(args: argparse.Namespace) -> int:
    import dataclasses
    import json
    from pathlib import Path

    from fleetfuel import pipeline
    from fleetfuel.report.cycle_outputs import cycles_summary, cycles_text, write_cycle_outputs

    run_cfg = _run_config(args)
    flags = {"target_duration_s": None if args.target_min is None else args.target_min * 60.0,
             "min_types": args.min_types, "max_types": args.max_types, "seed": args.seed,
             "reference_spec": args.spec, "holdout_day": args.holdout_day}
    cfg = dataclasses.replace(run_cfg.cycles, **{k: v for k, v in flags.items() if v is not None})
    work = Path(args.work) if args.work else Path(args.out) / ".work"
    result = pipeline.cycles_paths(args.paths, run_cfg, cycles_cfg=cfg, profile=args.profile,
                                   routes_file=args.routes, work_dir=work)
    parts = (result.cycles, result.routes, result.fuel_check, result.holdout, result.reference_spec, result.unit)
    write_cycle_outputs(Path(args.out), *parts, cfg, plots=not args.no_plots)
    print(json.dumps(cycles_summary(*parts), indent=2) if args.json else cycles_text(*parts, out=args.out))
    for failure in result.failures:
        print(f"fleetfuel: {failure.path}: {failure.error}", file=sys.stderr)
    return EXIT_OK


def _add_forecast(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("forecast", help="per-route fuel, energy, cost and CO2 of candidate specs; rank them")
    p.add_argument("paths", nargs="+", help="log files, folders (searched recursively) or globs")
    p.add_argument("--out", required=True, help="output folder (tables, workbook, plots, report.html)")
    p.add_argument("--config", help="run configuration TOML ([forecast] prices, payloads, current specs ...)")
    p.add_argument("--full", action="store_true", help="simulate every route on its own logs, not on the cycles")
    p.add_argument("--routes", help="routes file (CSV or TOML): vehicles and times -> routes, payload, planned km")
    p.add_argument("--profile", help="force an ingest profile: a bundled NAME or a PATH to a TOML file")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    _add_engine_flags(p, "folder for intermediate data (default: a hidden .work folder inside --out)")
    p.set_defaults(func=_cmd_forecast)


def _cmd_forecast(args: argparse.Namespace) -> int:
    from pathlib import Path

    from fleetfuel import pipeline
    from fleetfuel.engine.executors import make_engine
    from fleetfuel.report.outputs import write_outputs
    from fleetfuel.report.progress import ProgressBar

    cfg = _run_config(args)
    out = Path(args.out)
    work = Path(args.work) if args.work else out / ".work"
    with ProgressBar(label="forecast", quiet=args.quiet) as bar, make_engine(cfg.engine) as engine:
        result = pipeline.forecast_paths(args.paths, cfg, full=args.full, profile=args.profile,
                                         routes_file=args.routes, work_dir=work, progress=bar.update, engine=engine)
        written = write_outputs(result, out, work, on_progress=bar.update, map_figures=engine.figure_map())
    for failed, error in result.failures:
        print(f"fleetfuel: {failed}: {error}", file=sys.stderr)
    for row in result.fleet_ranking.loc[result.fleet_ranking["rank"] == 1].itertuples(index=False):
        print(f"{row.vehicle_class}: best {row.spec} by {row.ranked_by} ({getattr(row, row.ranked_by):,.0f} "
              f"{result.currency}/year)")
    for path in written:
        print(f"wrote {path}")
    return EXIT_OK


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="fleetfuel",
        description="Forecast fuel and energy of candidate vehicle specs on the routes your fleet drives.",
    )
    parser.add_argument("--version", action="version", version=f"fleetfuel {__version__}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    for add in (_add_inspect, _add_demo, _add_envelope, _add_simulate, _add_cycles, _add_forecast):
        add(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the CLI; returns the process exit code (tests call this directly)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_OK
    func: Command = args.func
    try:
        return func(args)
    except FleetFuelError as exc:
        print(f"fleetfuel: {exc}", file=sys.stderr)
        return type(exc).exit_code
    except KeyboardInterrupt:
        print("fleetfuel: interrupted", file=sys.stderr)
        return 130
