"""A dask.distributed client for work that splits into independent runs: a local cluster, or
any cluster by its scheduler address.

Without an address :class:`Engine` starts a ``LocalCluster`` of one single-threaded worker
process per core, with the BLAS thread pools pinned to one thread (``OMP_NUM_THREADS`` and its
kin in the workers' environment), so N workers run N solves side by side without
oversubscribing the cores. With an address (``tcp://host:8786``: a cluster started with
``dask scheduler`` and ``dask worker``, or any dask deployment) it connects a ``Client`` to it;
the workers there need bedflux installed, and pinning their BLAS threads is their owner's
business (set the same variables before ``dask worker``).

The ensembles' members, the starts of a multi-start fit, the walkers of the posterior sampler
(:class:`TaskPool`) and the perturbed runs of a planning target (:func:`task_map`) all go
through such a client; each task gets its own copy of the forward model, so the numbers are
those of a run in this process.
"""
from __future__ import annotations

import argparse
import contextlib
import logging
import os
from typing import Any, Callable, Iterable

from bedflux.errors import InputError

#: environment of local workers: one BLAS thread each
SINGLE_THREAD_ENV = {name: "1" for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                                            "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")}
#: how long to try reaching a scheduler given by its address
CONNECT_TIMEOUT = "20s"


class Engine:
    """A dask client (``.client``) for independent runs.

    Use as a context manager; a cluster and client it started are closed on leaving.

    Parameters
    ----------
    scheduler
        Address of a running scheduler; None starts a local cluster.
    workers
        Worker processes of the local cluster (default: the number of cores); 0 runs the work
        in this process, one run after another, without dask (``client`` stays None).
    """

    def __init__(self, scheduler: str | None = None, workers: int | None = None):
        if workers is not None and workers < 0:
            raise InputError(f"--workers {workers}: give the number of worker processes (0: none, the members "
                             "run in this process)", where="--workers")
        if scheduler is not None and workers is not None:
            raise InputError("--workers sets the size of a local cluster; with --scheduler the cluster's "
                             "own workers run the members (leave out --workers)", where="--workers")
        self.scheduler = scheduler
        self.workers = (os.cpu_count() or 1) if workers is None else workers
        self.client = None
        self._cluster = None

    def __enter__(self) -> "Engine":
        from distributed import Client, LocalCluster

        if not self.scheduler and self.workers == 0:
            return self
        if self.scheduler:
            try:
                self.client = Client(self.scheduler, timeout=CONNECT_TIMEOUT)
            except (OSError, TimeoutError, ValueError) as err:
                raise InputError(f"cannot reach a dask scheduler at {self.scheduler!r} ({err}); start one "
                                 "with 'dask scheduler' and give its address, e.g. tcp://127.0.0.1:8786",
                                 where="--scheduler") from None
        else:
            # silence_logs: the workers' start and stop chatter stays out of the command's output
            self._cluster = LocalCluster(n_workers=self.workers, threads_per_worker=1, processes=True,
                                         dashboard_address=None, env=dict(SINGLE_THREAD_ENV),
                                         silence_logs=logging.ERROR)
            self.client = Client(self._cluster)
        return self

    def __exit__(self, *exc) -> None:
        if self.client is not None:
            self.client.close()
        if self._cluster is not None:
            self._cluster.close()


def worker_threads(client) -> int:
    """Threads of all the client's workers (at least 1)."""
    return max(1, sum(client.nthreads().values()))


def optional_engine(scheduler: str | None, workers: int | None) -> contextlib.AbstractContextManager:
    """The engine of ``--scheduler`` / ``--workers`` for ``fit`` and ``plan``: none of the two
    runs everything in this process (a context whose value has ``client`` None)."""
    if workers is not None and workers < 1:
        raise InputError(f"--workers {workers}: give at least 1 worker process (leave out --workers and "
                         "--scheduler to run in this process, without a cluster)", where="--workers")
    if scheduler is None and workers is None:
        return contextlib.nullcontext(argparse.Namespace(client=None))
    return Engine(scheduler, workers)


def add_engine_options(parser: argparse.ArgumentParser, runs: str) -> None:
    """Add ``--scheduler`` and ``--workers`` to a verb whose ``runs`` may go to a cluster."""
    parser.add_argument("--scheduler", metavar="ADDRESS", default=None,
                        help=f"run the {runs} on a running dask scheduler (e.g. tcp://10.0.0.5:8786)")
    parser.add_argument("--workers", metavar="N", type=int, default=None,
                        help=f"run the {runs} on a local cluster of N single-threaded worker processes "
                             "(default, without --scheduler: in this process, one after another)")


def _apply(function: Callable, shared: tuple, items: list) -> list:
    return [function(*shared, item) for item in items]


def task_map(client, function: Callable, shared: tuple, items: Iterable) -> list:
    """``[function(*shared, item) for item in items]``, in order, on the client's workers when
    there is a client (``shared`` sent to every worker once; the items split into one task per
    worker thread)."""
    items = list(items)
    if client is None or not items:
        return _apply(function, shared, items)
    sent = tuple(client.scatter(list(shared), broadcast=True, hash=False)) if shared else ()
    return _mapped(client, function, sent, items)


def _mapped(client, function: Callable, sent: tuple, items: list) -> list:
    n = min(len(items), worker_threads(client))
    bounds = [len(items) * k // n for k in range(n + 1)]
    futures = [client.submit(_apply, function, sent, items[a:b], pure=False)
               for a, b in zip(bounds[:-1], bounds[1:])]
    return [value for part in client.gather(futures) for value in part]


class TaskPool:
    """A pool for emcee (anything with a ``map`` method): maps over the client's workers, the
    mapped function sent to them once."""

    def __init__(self, client):
        self.client = client
        self._function: Any = None
        self._sent: Any = None

    def map(self, function: Callable, items: Iterable) -> list:
        """``[function(item) for item in items]``, in order."""
        items = list(items)
        if not items:
            return []
        if function is not self._function:
            self._function = function
            self._sent = self.client.scatter([function], broadcast=True, hash=False)[0]
        return _mapped(self.client, _call, (self._sent,), items)


def _call(function: Callable, item: Any) -> Any:
    return function(item)
