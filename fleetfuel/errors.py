"""One exception hierarchy for fleetfuel.

The CLI catches :class:`FleetFuelError` once, prints its message as one line on stderr and
returns the exit code named on the class. Anything else escaping is a bug.
Messages say where (file, row, field or key) and what was expected versus found.
"""

from __future__ import annotations

from typing import ClassVar


class FleetFuelError(Exception):
    """Base of every error fleetfuel raises on purpose."""

    exit_code: ClassVar[int] = 1


class InputDataError(FleetFuelError, ValueError):
    """A log file cannot be read or holds nothing usable."""

    exit_code = 3


class ProfileError(FleetFuelError, ValueError):
    """An ingest profile (TOML) is malformed, or no profile fits a file."""

    exit_code = 4


class SpecError(FleetFuelError, ValueError):
    """A vehicle spec file is malformed or physically out of range."""

    exit_code = 5


class ConfigError(FleetFuelError, ValueError):
    """A run configuration, or a command-line option, is invalid."""

    exit_code = 2


class CycleError(FleetFuelError, ValueError):
    """A trace cannot be cut into trips or cycles (for example: too little driving)."""

    exit_code = 6


class OutputError(FleetFuelError, OSError):
    """An output or work folder cannot be created or written (e.g. read-only, a file in the way)."""

    exit_code = 7


class InternalError(RuntimeError):
    """A broken invariant inside fleetfuel (e.g. the row account does not add up): a bug, never
    bad input. Deliberately NOT a :class:`FleetFuelError`, so it escapes with its traceback."""
