"""Where tile functions run: here one after another, on threads, or (see
``slopescreen.maps.region.distributed``) on dask workers; results always come back in job order."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any

Runner = Callable[[Callable[..., Any], list[tuple]], Iterator[Any]]


def serial_runner(fn: Callable[..., dict], jobs: list[tuple]) -> Iterator[dict]:
    for args in jobs:
        yield fn(*args)


def in_order(submit: Callable[..., Any], jobs: list[tuple], ahead: int) -> Iterator[dict]:
    """Results of ``submit(*job)`` futures in job order, at most ``ahead`` in flight: the
    caller writes and sums them as a serial run does and holds a bounded number of tiles."""
    pending = [submit(*args) for args in jobs[:ahead]]
    next_job = len(pending)
    while pending:
        result = pending.pop(0).result()
        if next_job < len(jobs):
            pending.append(submit(*jobs[next_job]))
            next_job += 1
        yield result


def threaded_runner(fn: Callable[..., dict], jobs: list[tuple]) -> Iterator[dict]:
    """The jobs on a thread per core (at most 8), results in job order: for tile functions
    that release the GIL (raster reads, nogil kernels)."""
    import os
    from concurrent.futures import ThreadPoolExecutor

    threads = max(1, min(os.cpu_count() or 1, 8))
    with ThreadPoolExecutor(threads) as pool:
        yield from in_order(lambda *args: pool.submit(fn, *args), jobs, 2 * threads)


def side_by_side(runner: Runner) -> Runner:
    """The run's cluster, or a thread per core (at most 8) instead of one after another:
    for tasks that release the GIL in their compiled kernels and numpy."""
    return threaded_runner if runner is serial_runner else runner
