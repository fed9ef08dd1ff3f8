"""Running scenario tiles on dask.distributed (a local cluster, or an existing one)."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager

from slopescreen.errors import InputError

SCHEDULER_TIMEOUT_S = 10  # how long to wait for an existing scheduler to answer


@contextmanager
def dask_runner(
    workers: int, scheduler: str | None, echo: Callable[[str], None]
) -> Iterator[Callable[..., Iterator[dict]]]:
    """A runner that maps a tile function over its jobs on dask workers.

    Results come back in job order, a few waves at a time, so the client writes and sums
    them exactly as a serial run does and holds only a bounded number of tiles.
    """
    from distributed import Client, LocalCluster

    cluster = None
    try:
        if scheduler:
            client = Client(scheduler, timeout=f"{SCHEDULER_TIMEOUT_S}s")
        else:
            cluster = LocalCluster(
                n_workers=workers,
                threads_per_worker=1,
                processes=True,
                dashboard_address=None,
                silence_logs=40,
            )
            client = Client(cluster)
    except OSError as exc:
        raise InputError(
            f"--scheduler {scheduler}: cannot reach the dask scheduler ({exc})"
        ) from None
    n = max(1, len(client.scheduler_info().get("workers", {})))
    echo(f"dask: {n} workers at {client.scheduler.address}")

    def runner(fn: Callable[..., dict], jobs: list[tuple]) -> Iterator[dict]:
        from slopescreen.maps.region.runners import in_order

        yield from in_order(lambda *args: client.submit(fn, *args, pure=False), jobs, 2 * n)

    try:
        yield runner
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
