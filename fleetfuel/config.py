"""Run configuration: one frozen config dataclass per stage, grouped in :class:`RunConfig`.

Loaded from TOML (``--config FILE``) with :func:`load_run_config`: one table per stage
(``[ingest]``, ``[clean]``, ...), keys equal to the stage dataclass's field names, unknown keys
rejected with a message naming the file and key. Command-line flags override with
:func:`dataclasses.replace`.
"""

from __future__ import annotations

import dataclasses
import tomllib
import types
import typing
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TypeVar

from fleetfuel.clean.config import CleanConfig
from fleetfuel.cycles.config import CyclesConfig
from fleetfuel.engine.config import EngineConfig
from fleetfuel.errors import ConfigError
from fleetfuel.forecast.config import ForecastConfig
from fleetfuel.ingest.config import IngestConfig
from fleetfuel.segment.config import SegmentConfig
from fleetfuel.simulate.config import SimConfig

T = TypeVar("T")


@dataclass(frozen=True, slots=True, kw_only=True)
class RunConfig:
    """Every stage's configuration."""

    ingest: IngestConfig = field(default_factory=IngestConfig)
    clean: CleanConfig = field(default_factory=CleanConfig)
    segment: SegmentConfig = field(default_factory=SegmentConfig)
    cycles: CyclesConfig = field(default_factory=CyclesConfig)
    simulate: SimConfig = field(default_factory=SimConfig)
    forecast: ForecastConfig = field(default_factory=ForecastConfig)
    engine: EngineConfig = field(default_factory=EngineConfig)


def _coerce(value: Any, annotation: Any, where: str) -> Any:
    """Turn TOML arrays into tuples where the field wants a tuple; check plain scalar types."""
    origin = typing.get_origin(annotation)
    if origin is tuple and isinstance(value, list):
        return tuple(value)
    if origin in (typing.Union, types.UnionType):
        for arm in typing.get_args(annotation):
            if arm is type(None) and value is None:
                return value
        return value
    if annotation is float and isinstance(value, int) and not isinstance(value, bool):
        return float(value)
    if annotation in (float, int, str, bool) and not isinstance(value, annotation):
        raise ConfigError(f"{where}: expected {annotation.__name__}, found {type(value).__name__} {value!r}")
    return value


def from_mapping(cls: type[T], mapping: Mapping[str, Any], where: str) -> T:
    """Build the frozen dataclass ``cls`` from ``mapping``, rejecting unknown keys.

    Parameters
    ----------
    cls : type
        A dataclass type.
    mapping : Mapping
        Key -> value, e.g. one TOML table.
    where : str
        Prefix for messages, e.g. ``"run.toml [clean]"``.
    """
    if not dataclasses.is_dataclass(cls):
        raise TypeError(f"{cls!r} is not a dataclass")
    hints = typing.get_type_hints(cls)
    names = {f.name for f in dataclasses.fields(cls) if f.init}
    unknown = sorted(set(mapping) - names)
    if unknown:
        raise ConfigError(f"{where}: unknown key {unknown[0]!r}; known keys: {', '.join(sorted(names))}")
    kwargs = {key: _coerce(value, hints[key], f"{where} {key}") for key, value in mapping.items()}
    try:
        return cls(**kwargs)
    except (TypeError, ValueError) as exc:
        if isinstance(exc, ConfigError):
            raise
        raise ConfigError(f"{where}: {exc}") from None


def load_run_config(path: Path | None) -> RunConfig:
    """Read a run configuration TOML; ``None`` gives the documented defaults."""
    if path is None:
        return RunConfig()
    try:
        data = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: cannot read config ({exc.__class__.__name__}: {exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML ({exc})") from None
    sections = {f.name: f.type for f in dataclasses.fields(RunConfig)}
    unknown = sorted(set(data) - set(sections))
    if unknown:
        raise ConfigError(f"{path}: unknown section [{unknown[0]}]; known: {', '.join(sorted(sections))}")
    hints = typing.get_type_hints(RunConfig)
    built = {}
    for name, table in data.items():
        if not isinstance(table, dict):
            raise ConfigError(f"{path}: [{name}] must be a table, found {type(table).__name__}")
        built[name] = from_mapping(hints[name], table, f"{path} [{name}]")
    return RunConfig(**built)
