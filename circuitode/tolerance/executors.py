"""Where chunks run: in this process, in local worker processes, or on a Dask cluster.

Chunks are independent, so every executor has one method,
``map_unordered(function, tasks)``, that runs ``function(payload)`` for each
``(key, payload)`` in ``tasks`` and yields ``(key, result)`` as each finishes,
in whatever order they finish.  The function and payloads must be picklable
for the process and Dask executors (a module-level function and plain data).
"""
from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Any, Callable, Iterable, Iterator

from ..errors import CircuitodeError, EnvironmentFault
from .scheduler_probe import probe_scheduler

__all__ = ["InProcessExecutor", "LocalProcessExecutor", "DaskExecutor", "make_executor", "CONNECT_TIMEOUT"]

#: Seconds to wait for a Dask scheduler to answer.
CONNECT_TIMEOUT = 10.0

Task = tuple[Any, Any]


class InProcessExecutor:
    """Runs chunks one after another in the calling process (the default)."""

    name = "in-process"

    def map_unordered(self, function: Callable[[Any], Any], tasks: Iterable[Task]) -> Iterator[tuple[Any, Any]]:
        for key, payload in tasks:
            yield key, function(payload)

    def close(self) -> None:
        pass


class LocalProcessExecutor:
    """Runs chunks on ``workers`` local processes (``--workers N``)."""

    def __init__(self, workers: int):
        if int(workers) < 1:
            raise CircuitodeError(f"--workers must be at least 1, not {workers}")
        self.workers = int(workers)
        self.name = f"{self.workers} local processes"

    def map_unordered(self, function, tasks):
        tasks = list(tasks)
        with ProcessPoolExecutor(max_workers=self.workers) as pool:
            futures = {pool.submit(function, payload): key for key, payload in tasks}
            try:
                for fut in as_completed(futures):
                    yield futures[fut], fut.result()
            except BaseException:
                for fut in futures:
                    fut.cancel()
                raise

    def close(self) -> None:
        pass


class DaskExecutor:
    """Runs chunks on a Dask distributed cluster (``--scheduler ADDRESS``).

    scheduler : the scheduler's address (``tcp://host:8786``) or an existing
    ``distributed.Client``.  Needs the optional ``cluster`` extra.
    """

    def __init__(self, scheduler: Any, timeout: float | None = None):
        try:
            import distributed
        except ImportError:
            raise CircuitodeError(
                "--scheduler needs Dask: install the optional extra, "
                "pip install 'circuitode[cluster]'"
            ) from None
        self._distributed = distributed
        if isinstance(scheduler, distributed.Client):
            self.client, self._own = scheduler, False
            address = scheduler.scheduler.address
        else:
            address = str(scheduler)
            probe_scheduler(address, timeout=min(timeout or CONNECT_TIMEOUT, 5.0))
            try:
                self.client = distributed.Client(address, timeout=timeout or CONNECT_TIMEOUT)
            except Exception as exc:  # noqa: BLE001 - whatever Dask raises, the cause is the address
                raise EnvironmentFault(
                    f"error: cannot use the Dask scheduler at {address!r} ({type(exc).__name__}: "
                    f"{str(exc)[:200]})\n  what to do: check the address (e.g. tcp://host:8786) and "
                    "that the scheduler is running"
                ) from None
            self._own = True
        self.name = f"Dask scheduler {address}"

    def map_unordered(self, function, tasks):
        tasks = list(tasks)
        if not tasks:
            return
        keys = [k for k, _ in tasks]
        futures = self.client.map(function, [p for _, p in tasks], pure=False)
        index = {f.key: k for f, k in zip(futures, keys)}
        for fut in self._distributed.as_completed(futures):
            yield index[fut.key], fut.result()

    def close(self) -> None:
        if self._own:
            self.client.close()


def make_executor(workers: int | None = None, scheduler: Any = None):
    """Pick the executor: Dask when a scheduler is given, processes for workers > 1,
    otherwise in process.  Giving both is refused."""
    if scheduler is not None and workers not in (None, 0, 1):
        raise CircuitodeError("give either --workers or --scheduler, not both")
    if scheduler is not None:
        return DaskExecutor(scheduler)
    if workers is not None and int(workers) > 1:
        return LocalProcessExecutor(min(int(workers), max(os.cpu_count() or 1, 1) * 4))
    if workers is not None and int(workers) < 1:
        raise CircuitodeError(f"--workers must be at least 1, not {workers}")
    return InProcessExecutor()
