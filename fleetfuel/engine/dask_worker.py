"""Set-up of every Dask worker (restarted ones included): one thread for pyarrow's pools."""

from __future__ import annotations

from typing import Any

from distributed import WorkerPlugin

from fleetfuel.engine.executors import pin_threads


class PinThreads(WorkerPlugin):
    """Pin pyarrow's CPU and I/O pools to one thread on the worker it is set up on."""

    name = "fleetfuel-pin-threads"

    def setup(self, worker: Any) -> None:
        pin_threads()
