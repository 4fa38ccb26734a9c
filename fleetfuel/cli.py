"""Thin command-line verbs over the library: ``fleetfuel <verb> ...``.

One ``_add_<verb>`` (arguments) and one ``_cmd_<verb>`` (build config, call the library, print,
return an exit code) per verb. :class:`~fleetfuel.errors.FleetFuelError` is caught once, in
:func:`main`, and printed as one line on stderr.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence

from fleetfuel import __version__
from fleetfuel.errors import FleetFuelError

EXIT_OK = 0
EXIT_NO_USABLE_INPUT = 3
EXIT_SOME_INPUT_FAILED = 7  # with --strict

Command = Callable[[argparse.Namespace], int]


def _add_inspect(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("inspect", help="read and clean logs; print a per-file data-quality table")
    p.add_argument("paths", nargs="+", help="log files, folders (searched recursively) or globs")
    p.add_argument("--profile", help="force an ingest profile: a bundled NAME or a PATH to a TOML file")
    p.add_argument("--json", action="store_true", help="print the table as JSON")
    p.add_argument("--strict", action="store_true", help="non-zero exit when any file failed")
    p.set_defaults(func=_cmd_inspect)


def _cmd_inspect(args: argparse.Namespace) -> int:
    from fleetfuel import pipeline
    from fleetfuel.report import quality

    result = pipeline.inspect_paths(args.paths, profile=args.profile)
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
    p.set_defaults(func=_cmd_demo)


def _cmd_demo(args: argparse.Namespace) -> int:
    from pathlib import Path

    from fleetfuel import demo

    written = demo.run_demo(Path(args.out))
    for path in written:
        print(f"wrote {path}")
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


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="fleetfuel",
        description="Forecast fuel and energy of candidate vehicle specs on the routes your fleet drives.",
    )
    parser.add_argument("--version", action="version", version=f"fleetfuel {__version__}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    for add in (_add_inspect, _add_demo, _add_envelope, _add_simulate):
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
