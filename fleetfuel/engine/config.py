"""Configuration of the engine: where the per-partition work runs, and whether a rerun resumes.

An ``[engine]`` table of a run TOML maps onto :class:`EngineConfig` key by key; the command-line
flags ``--engine``, ``--workers``, ``--scheduler`` and ``--resume`` override it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

from fleetfuel.errors import ConfigError

ENGINE_KINDS: Final = ("local", "processes", "dask")
"""``local``: in this process, one partition after another (the default, used by tests and the
demo); ``processes``: a pool of local worker processes; ``dask``: a Dask distributed cluster
(a local one started for the run, or an existing one joined by its scheduler address)."""


@dataclass(frozen=True, slots=True, kw_only=True)
class EngineConfig:
    """Options of the engine.

    Attributes
    ----------
    kind : str
        One of :data:`ENGINE_KINDS`.
    workers : int
        Worker processes (``processes``, and ``dask`` when it starts its own local cluster).
        Each worker runs one partition at a time with one thread.
    scheduler : str
        Address of an existing Dask scheduler (``tcp://host:8786``) to join instead of starting a
        local cluster; implies ``kind = "dask"``. Its workers must see the input and work folders
        at the same paths.
    resume : bool
        Keep the partitions a previous run of the same inputs and settings finished in the work
        folder and run only the others.
    memory_limit_bytes : int
        Memory limit of each worker of a local Dask cluster (0: Dask's default share of the
        machine). [bytes]
    retries : int
        Times a partition is retried on another worker after its worker died (``dask``).
    """

    kind: str = "local"
    workers: int = 1
    scheduler: str = ""
    resume: bool = False
    memory_limit_bytes: int = 0
    retries: int = 3  # our choice: a worker lost twice in a row is rare; a third failure is a bug

    def __post_init__(self) -> None:
        if self.kind not in ENGINE_KINDS:
            raise ConfigError(f"engine.kind must be one of {', '.join(ENGINE_KINDS)}; got {self.kind!r}")
        if self.workers < 1:
            raise ConfigError(f"engine.workers must be at least 1; got {self.workers}")
        if self.scheduler and self.kind != "dask":
            raise ConfigError(f"engine.scheduler is set ({self.scheduler!r}) but engine.kind is {self.kind!r}, not 'dask'")
        if self.memory_limit_bytes < 0 or self.retries < 0:
            raise ConfigError("engine.memory_limit_bytes and engine.retries must not be negative")
