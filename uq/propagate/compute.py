"""Where chunks are solved: in this process (the default), or on dask workers.

A study is cut into chunks along the sample axis; every chunk is an independent task whose
result depends only on the study, the seed and the chunk's row range (the network solver
freezes each sample once it converges, and designs are drawn row range by row range, see
:class:`plyrisk.design.sampling.DesignPlan`). So the results are bit-identical whichever runner
solves the
chunks, in whatever order, on however many workers.

``workers > 1`` starts a local dask cluster (one single-threaded worker process each) on the
loopback interface; ``scheduler`` connects to an existing ``dask.distributed`` scheduler
instead (``tcp://host:8786``). A scheduler that cannot be reached raises
:class:`SchedulerError` (one line). Tasks are submitted a few per worker at a time, so the
driver never holds more than a bounded number of chunk results.
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Iterable, Sequence
from contextlib import contextmanager
from itertools import islice
from typing import Any

from plyrisk.errors import PlyriskError

CONNECT_TIMEOUT = "10s"
"""How long to wait for an existing scheduler before giving up [s]."""

IN_FLIGHT_PER_WORKER = 3
"""Chunks submitted per worker ahead of the results collected."""


class SchedulerError(PlyriskError, RuntimeError):
    """The dask scheduler could not be reached or the cluster could not start (one line)."""


PROBE_TIMEOUT = 5.0
"""How long to wait for a TCP connection to a scheduler before giving up [s]."""


def probe_scheduler(address: str, *, timeout: float | None = None) -> None:
    """Raise :class:`SchedulerError` (one line, within ``timeout``) unless ``address`` is a
    well-formed scheduler address that accepts a connection.

    A ``distributed.Client`` that fails to connect waits for its connect timeout and then
    again for its own shutdown, and prints a traceback when it is collected; checking the
    address and the port first gives one line in bounded time.

    Parameters
    ----------
    address
        ``tcp://host:port`` (or ``tls://``; other schemes are only parsed) [-].
    timeout
        Connection timeout [s]; default :data:`PROBE_TIMEOUT`.
    """
    import socket

    from distributed.comm.addressing import parse_address, parse_host_port

    try:
        scheme, location = parse_address(address, strict=False)
        if scheme not in ("tcp", "tls"):
            return
        host, port = parse_host_port(location)
    except (ValueError, TypeError) as err:
        raise SchedulerError(f"--scheduler {address}: not a scheduler address ({err}); "
                             "expected e.g. tcp://10.0.0.5:8786") from None
    try:
        with socket.create_connection((host, int(port)),
                                      timeout=PROBE_TIMEOUT if timeout is None else timeout):
            pass
    except OSError as err:
        reason = " ".join(str(getattr(err, "strerror", None) or err).split())
        raise SchedulerError(f"cannot reach the dask scheduler at {address} "
                             f"({reason or 'timed out'})") from None


@contextmanager
def dask_client(*, workers: int = 1, scheduler: str | None = None):
    """A ``distributed.Client`` on a new local cluster or an existing scheduler.

    Parameters
    ----------
    workers
        Worker processes of the local cluster, one thread each; ignored with ``scheduler``.
    scheduler
        Address of an existing scheduler, e.g. ``"tcp://10.0.0.5:8786"``.

    Yields
    ------
    distributed.Client
    """
    from distributed import Client, LocalCluster

    quiet = {"silence_logs": logging.ERROR}
    if scheduler:
        probe_scheduler(scheduler)
        try:
            client = Client(scheduler, timeout=CONNECT_TIMEOUT, set_as_default=False)
        except (OSError, TimeoutError, ValueError) as err:
            reason = " ".join(str(err).split()) or type(err).__name__
            raise SchedulerError(f"cannot reach the dask scheduler at {scheduler} "
                                 f"({reason})") from None
        try:
            yield client
        finally:
            client.close()
        return
    try:
        cluster = LocalCluster(n_workers=int(workers), threads_per_worker=1, processes=True,
                               host="127.0.0.1", dashboard_address=None, **quiet)
    except (OSError, TimeoutError, RuntimeError) as err:
        reason = " ".join(str(err).split()) or type(err).__name__
        raise SchedulerError(f"cannot start a local dask cluster of {workers} workers "
                             f"({reason})") from None
    client = Client(cluster, set_as_default=False)
    try:
        yield client
    finally:
        client.close()
        cluster.close()


def run_tasks(
    function: Callable[..., Any],
    arguments: Sequence[tuple],
    collect: Callable[[Any], None],
    *,
    shared: tuple = (),
    workers: int = 1,
    scheduler: str | None = None,
) -> None:
    """Run ``function(*shared, *args)`` for every ``args`` in ``arguments``; hand each result
    to ``collect`` in this process, in completion order.

    Parameters
    ----------
    function
        A module-level (picklable) function.
    arguments
        Per-task positional arguments.
    collect
        Called with each task's result as it arrives.
    shared
        Leading arguments common to every task (sent to each worker once).
    workers
        1 runs the tasks here, in order; more starts a local dask cluster of that many
        single-threaded worker processes.
    scheduler
        Address of an existing dask scheduler; overrides ``workers``.
    """
    if int(workers) < 1:
        raise ValueError(f"workers must be at least 1, got {workers}")
    if not scheduler and (int(workers) == 1 or len(arguments) <= 1):
        for args in arguments:
            collect(function(*shared, *args))
        return
    from distributed import as_completed

    with dask_client(workers=workers, scheduler=scheduler) as client:
        common = [client.scatter(x, broadcast=True) for x in shared]
        n_workers = max(len(client.scheduler_info().get("workers", {})), 1)
        pending: Iterable[tuple] = iter(arguments)

        def submit(args: tuple):
            return client.submit(function, *common, *args, pure=False, retries=2)

        first = [submit(a) for a in islice(pending, IN_FLIGHT_PER_WORKER * n_workers)]
        queue = as_completed(first, loop=client.loop)
        for future in queue:
            result = future.result()
            future.release()
            for nxt in islice(pending, 1):
                queue.add(submit(nxt))
            collect(result)
