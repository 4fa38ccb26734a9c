"""Where partition tasks run: in this process, in a pool of local processes, or on a Dask cluster.

Every engine offers the same :meth:`Engine.map`: apply a top-level function to a list of small
task descriptions (paths, keys, configs; never large frames) and return the small results in the
order of the list. Tasks read their inputs from and write their outputs to the work folder, so
what crosses a process or network boundary is a few kilobytes per partition. Results therefore
cannot depend on the engine, on the worker count or on the order tasks finish in.

Each task runs with one BLAS/OpenMP thread (a :class:`threadpoolctl.ThreadpoolController` made once
per process, after the task modules have loaded their libraries), and in
worker processes pyarrow's thread pools are pinned to one as well, so a worker is one core.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import os
import resource
import socket
import sys
import time
import uuid
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from multiprocessing import get_context
from typing import Any, Generic, TypeVar

from threadpoolctl import ThreadpoolController

from fleetfuel.engine.config import EngineConfig
from fleetfuel.errors import ConfigError

KIB = 1024  # ru_maxrss is in KiB on Linux
CONNECT_TIMEOUT_S = 10  # our choice: a scheduler that does not answer in 10 s is taken as unreachable
T = TypeVar("T")
R = TypeVar("R")


@dataclass(frozen=True, slots=True)
class TaskRecord:
    """One finished task: its stage and key, the worker that ran it, its wall time [s] and the
    worker process's peak resident memory so far [bytes]."""

    stage: str
    key: str
    worker: str
    seconds: float
    peak_rss_bytes: int


@dataclass(frozen=True, slots=True)
class Outcome(Generic[R]):
    """A task's result and its record."""

    value: R
    record: TaskRecord


def worker_name() -> str:
    """The Dask worker's address inside a Dask task, else ``host:pid`` of this process."""
    if "distributed" in sys.modules:  # a Dask worker has it loaded; never import it just to ask
        from distributed import get_worker

        try:
            return str(get_worker().address)
        except ValueError:  # not inside a Dask task
            pass
    return f"{socket.gethostname()}:{os.getpid()}"


_CONTROLLERS: dict[int, ThreadpoolController] = {}


def _controller() -> ThreadpoolController:
    """This process's thread-pool controller (finding the loaded BLAS and OpenMP libraries takes
    about 10 ms: once per process, not once per task)."""
    pid = os.getpid()
    if pid not in _CONTROLLERS:
        _CONTROLLERS.clear()  # a forked child does not reuse its parent's
        _CONTROLLERS[pid] = ThreadpoolController()
    return _CONTROLLERS[pid]


def pin_threads() -> None:
    """One thread for pyarrow's CPU and I/O pools (a worker process is one core)."""
    import pyarrow as pa

    pa.set_cpu_count(1)
    pa.set_io_thread_count(1)


def release_free_memory() -> None:
    """Give the memory this process has freed back to the system, between the main process's stages.

    pyarrow's memory pool keeps freed buffers for reuse (``release_unused``), and glibc's malloc
    keeps freed heap pages mapped until ``malloc_trim`` (the heap of a long run of mid-sized
    arrays is fragmented, so it cannot shrink from the top): without this, the main process's
    resident size ratchets up to the sum of its stages' peaks. Nothing to do elsewhere.
    """
    _release_arrow_memory()
    if sys.platform.startswith("linux"):
        try:
            ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6").malloc_trim(0)
        except (OSError, AttributeError):  # not glibc (e.g. musl has no malloc_trim)
            pass


def peak_rss_bytes() -> int:
    """This process's peak resident set size. [B]

    Linux: ``VmHWM`` of ``/proc/self/status``, the peak of this program's own memory. Not
    ``ru_maxrss``: Linux carries the parent's peak across ``fork`` and ``exec`` into it, so a worker
    or benchmark child started by a large process would report the parent's size. Elsewhere
    ``ru_maxrss`` (KiB on Linux and the BSDs, bytes on macOS; taken as KiB).
    """
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) * KIB
    except OSError:
        pass
    return int(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss) * KIB


def _release_arrow_memory() -> None:
    """Hand the memory pyarrow's pool keeps after a task back to the system (its allocator holds
    freed pages for reuse; over thousands of tasks a worker would creep towards its limit)."""
    import pyarrow as pa

    pa.default_memory_pool().release_unused()


def run_task(fn: Callable[[T], R], stage: str, key: str, item: T) -> Outcome[R]:
    """Run ``fn(item)`` with one BLAS thread and time it (what every engine calls per task)."""
    start = time.perf_counter()
    with _controller().limit(limits=1):
        value = fn(item)
    _release_arrow_memory()
    return Outcome(value, TaskRecord(stage, key, worker_name(), time.perf_counter() - start, peak_rss_bytes()))


def _ready(_: int) -> str:
    """A task that only loads the task modules (see :meth:`Engine.warm_up`); returns its worker."""
    import fleetfuel.engine.tasks  # noqa: F401

    return worker_name()


def _ready_and_hold(_: int) -> str:
    """:func:`_ready`, then a short hold, so that one ready worker cannot answer a whole round."""
    name = _ready(0)
    time.sleep(WARM_UP_HOLD_S)
    return name


WARM_UP_HOLD_S = 0.05  # our choice: long beside a task hand-over, short beside start-up
WARM_UP_TIMEOUT_S = 120.0  # our choice: a worker that has not loaded fleetfuel in 2 min is stuck


class Engine:
    """The in-process engine: tasks one after another (the default; tests and the demo use it)."""

    kind = "local"
    workers = 1

    def __init__(self) -> None:
        self.records: list[TaskRecord] = []

    def __enter__(self) -> Engine:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Release workers (nothing to release here)."""

    def warm_up(self) -> int:
        """Start every worker and load the task modules in it, before timed work; returns the
        number of workers reached. Benchmarks call it so that they time the work, not start-up
        (which a long run pays once). Tasks need not call it."""
        seen: set[str] = set()
        deadline = time.monotonic() + WARM_UP_TIMEOUT_S
        while len(seen) < self.workers and time.monotonic() < deadline:  # rounds until each has answered
            seen.update(self._map_quiet(_ready_and_hold, list(range(self.workers))))
        return len(seen)

    def _map_quiet(self, fn: Callable[[int], str], items: list[int]) -> list[str]:
        return [o.value for o in self._run(fn, items, [str(i) for i in items], "warm-up")]

    def map(self, fn: Callable[[T], R], items: Sequence[T], keys: Sequence[str], stage: str) -> list[R]:
        """``[fn(item) for item in items]``, run where this engine runs tasks, in the items' order.

        ``fn`` must be a module-level function (or a :func:`functools.partial` of one) so that it
        can be sent to a worker; ``keys`` name the tasks in the task log.
        """
        if len(keys) != len(items):
            raise ValueError(f"engine.map: {len(items)} items but {len(keys)} keys")
        values = []
        for outcome in self._run(fn, list(items), list(keys), stage):  # records kept as tasks finish
            self.records.append(outcome.record)
            values.append(outcome.value)
        return values

    def _run(self, fn: Callable[[T], R], items: list[T], keys: list[str], stage: str) -> Iterator[Outcome[R]]:
        return (run_task(fn, stage, k, item) for k, item in zip(keys, items, strict=True))

    def figure_map(self) -> Callable[[Callable[[Any], bytes], list[Any], list[str]], list[bytes]] | None:
        """``fleetfuel.report.outputs.FigureMap`` on this engine (stage ``plots``); in-process,
        None: the figures then render where they are, with nothing to pickle."""
        if self.kind == "local":
            return None
        return lambda fn, figures, names: self.map(fn, figures, names, "plots")


def _init_process() -> None:
    pin_threads()


class ProcessEngine(Engine):
    """A pool of ``workers`` local processes (``spawn``: no threads inherited half-way)."""

    kind = "processes"

    def __init__(self, workers: int) -> None:
        super().__init__()
        self.workers = workers
        self._pool = ProcessPoolExecutor(max_workers=workers, mp_context=get_context("spawn"),
                                         initializer=_init_process)
        # Start the workers now: each takes seconds to load fleetfuel and its libraries, which it
        # does while the caller goes on (e.g. loading the pipeline itself).
        for number in range(workers):
            self._pool.submit(_ready, number)

    def close(self) -> None:
        # Without waiting: a worker takes about a second to exit (measured 0.6-1.6 s), which it can
        # spend while the caller goes on; the interpreter joins the pool's threads at its exit.
        self._pool.shutdown(wait=False, cancel_futures=True)

    def _run(self, fn: Callable[[T], R], items: list[T], keys: list[str], stage: str) -> Iterator[Outcome[R]]:
        futures = [self._pool.submit(run_task, fn, stage, k, item) for k, item in zip(keys, items, strict=True)]
        return (f.result() for f in futures)


class DaskEngine(Engine):
    """Dask distributed: futures over partitions on a ``LocalCluster`` or an existing scheduler.

    A task whose worker dies is run again on another worker (``retries``); the scheduler, not
    this class, decides where and when tasks run.
    """

    kind = "dask"

    def __init__(self, workers: int, scheduler: str = "", memory_limit_bytes: int = 0, retries: int = 3) -> None:
        super().__init__()
        self.workers = workers
        try:
            from distributed import Client, LocalCluster
        except ImportError as exc:  # pragma: no cover - a declared dependency
            raise ConfigError(f"engine.kind = 'dask' needs the distributed package ({exc})") from None
        self._retries = retries
        self._cluster = None
        if scheduler:
            try:
                self._client = Client(scheduler, timeout=f"{CONNECT_TIMEOUT_S}s")
            except OSError as exc:
                raise ConfigError(f"--scheduler {scheduler}: cannot reach the Dask scheduler ({exc})") from None
        else:
            import dask

            # Tasks keep no data on a worker (they write Parquet and return facts), so spilling and
            # pausing have nothing to act on: a worker whose heap stays above the pause fraction
            # would wait forever. The limit stays a hard cap: the nanny restarts a worker past
            # 95 % of it and its task runs again elsewhere (``retries``). The settings go with the
            # workers' spec, so a worker started in place of a dead one has them too.
            quiet = {"distributed": {"worker": {"memory": {"target": False, "spill": False, "pause": False}}}}
            self._cluster = LocalCluster(
                n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None,
                host="127.0.0.1", memory_limit=memory_limit_bytes or "auto", silence_logs=40,
                config=dask.config.merge(dask.config.config, quiet),
            )
            self._client = Client(self._cluster)
        from fleetfuel.engine.dask_worker import PinThreads

        self._client.register_plugin(PinThreads())

    @property
    def client(self) -> Any:
        """The ``distributed.Client`` (tests use it to find and stop workers)."""
        return self._client

    def close(self) -> None:
        self._client.close()
        if self._cluster is not None:
            self._cluster.close()

    def _run(self, fn: Callable[[T], R], items: list[T], keys: list[str], stage: str) -> Iterator[Outcome[R]]:
        token = uuid.uuid4().hex[:8]
        names = [f"{stage}-{k}-{token}" for k in keys]
        from distributed import as_completed

        order = {name: n for n, name in enumerate(names)}
        pending = as_completed([
            self._client.submit(run_task, fn, stage, k, item, key=name, pure=False, retries=self._retries)
            for k, item, name in zip(keys, items, names, strict=True)
        ])
        # Results are fetched as tasks finish and released at once: a result left on its worker
        # until the end would be lost with the worker (killed at its memory limit, say) and its
        # task run again. Handed on in input order.
        done: dict[int, Outcome[R]] = {}
        handed = 0
        for future in pending:
            done[order[future.key]] = future.result()  # an erred task raises here, as gather would
            future.release()
            while handed in done:
                yield done.pop(handed)
                handed += 1


def make_engine(cfg: EngineConfig) -> Engine:
    """The engine ``cfg`` asks for (close it, or use it as a context manager)."""
    if cfg.kind == "dask":
        return DaskEngine(cfg.workers, cfg.scheduler, cfg.memory_limit_bytes, cfg.retries)
    if cfg.kind == "processes":
        return ProcessEngine(cfg.workers)
    return Engine()
