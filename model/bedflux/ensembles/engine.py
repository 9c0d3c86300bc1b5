"""Running members on dask.distributed: a local cluster, or any cluster by its scheduler address.

Without an address the engine starts a ``LocalCluster`` of one single-threaded worker process
per core, with the BLAS thread pools pinned to one thread (``OMP_NUM_THREADS`` and its kin in
the workers' environment), so N workers run N solves side by side without oversubscribing the
cores. With an address (``tcp://host:8786``: a cluster started with ``dask scheduler`` and
``dask worker``, or any dask deployment) it connects a ``Client`` to it; the workers there need
bedflux installed, and pinning their BLAS threads is their owner's business (set the same
variables before ``dask worker``).

The ensemble's description is sent to every worker once; members are then submitted as tasks,
at most a *window* of them in flight (bounded memory at the client and on the workers), and
each finished member is handed back as soon as it is done (``as_completed``), in any order.
Members quicker than a few tenths of a second go several to a task (:func:`chunk_size`), so that
the scheduler's cost per task does not outweigh them. A
member whose task dies with its worker is recorded as failed, like a member whose run failed.
"""
from __future__ import annotations

import itertools
import logging
import os
import uuid
from typing import Iterable, Iterator

from bedflux.errors import InputError
from bedflux.ensembles.members import MemberResult, run_member
from bedflux.ensembles.spec import EnsembleSpec, MemberDraw

#: environment of local workers: one BLAS thread each
SINGLE_THREAD_ENV = {name: "1" for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                                            "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")}
#: tasks in flight per worker thread
WINDOW_PER_WORKER = 4
#: a task of quick members runs about this long (s)
TASK_SECONDS = 0.25
#: most members in one task
CHUNK_MAX = 64


class Engine:
    """A dask client for the ensemble's members (and anything else that maps tasks).

    Use as a context manager; a cluster and client it started are closed on leaving.

    Parameters
    ----------
    scheduler
        Address of a running scheduler; None starts a local cluster.
    workers
        Worker processes of the local cluster (default: the number of cores); 0 runs the members
        in this process, one after another, without dask (``client`` stays None).
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
                self.client = Client(self.scheduler, timeout="20s")
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


def run_chunk(spec: EnsembleSpec, draws: list[MemberDraw]) -> list[MemberResult]:
    """Run several members in one task (for members so quick that a task each would cost more in
    scheduling than in running)."""
    return [run_member(spec, d) for d in draws]


def chunk_size(member_seconds: float) -> int:
    """Members per task: enough to make a task last about :data:`TASK_SECONDS` (at most
    :data:`CHUNK_MAX`), one for members that take that long by themselves."""
    return int(min(CHUNK_MAX, max(1, TASK_SECONDS // max(member_seconds, 1e-6))))


def run_members(spec: EnsembleSpec, indices: Iterable[int], client=None, window: int | None = None,
                chunk: int = 1) -> Iterator[MemberResult]:
    """Run the members ``indices`` and yield each result as it finishes.

    Without a client the members run one after another in this process (the same numbers: a
    member's draws depend on the seed and its index only). With one, each task runs ``chunk``
    members and at most ``window`` tasks are in flight.
    """
    if client is None:
        for i in indices:
            yield run_member(spec, spec.draw(i))
        return
    from distributed import as_completed

    window = window or WINDOW_PER_WORKER * worker_threads(client)
    shared = client.scatter(spec, broadcast=True, hash=False)
    todo = iter(indices)
    chunks: dict[str, list[MemberDraw]] = {}
    pending = as_completed()

    def submit() -> bool:
        draws = [spec.draw(i) for i in itertools.islice(todo, chunk)]
        if not draws:
            return False
        future = client.submit(run_chunk, shared, draws, pure=False,
                               key=f"bedflux-members-{draws[0].index}-{uuid.uuid4().hex[:8]}")
        chunks[future.key] = draws
        pending.add(future)
        return True

    for _ in range(window):
        if not submit():
            break
    for future in pending:
        draws = chunks.pop(future.key)
        try:
            results = future.result()
        except Exception as err:  # the task itself died (a worker lost, a result that would not travel)
            results = [MemberResult(d.index, d.values, failure=f"{type(err).__name__}: {err}") for d in draws]
        future.release()
        yield from results
        submit()
