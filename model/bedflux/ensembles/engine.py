"""Running members on dask.distributed: a local cluster, or any cluster by its scheduler address
(:class:`bedflux.calibration.cluster.Engine`, shared with ``fit`` and ``plan``).

The ensemble's description is sent to every worker once; members are then submitted as tasks,
at most a *window* of them in flight (bounded memory at the client and on the workers), and
each finished member is handed back as soon as it is done (``as_completed``), in any order.
Members quicker than a few tenths of a second go several to a task (:func:`chunk_size`), so that
the scheduler's cost per task does not outweigh them. A
member whose task dies with its worker is recorded as failed, like a member whose run failed.
"""
from __future__ import annotations

import itertools
import uuid
from typing import Iterable, Iterator

from bedflux.calibration.cluster import SINGLE_THREAD_ENV, Engine, worker_threads  # noqa: F401 (the engine's names)
from bedflux.ensembles.members import MemberResult, run_member
from bedflux.ensembles.spec import EnsembleSpec, MemberDraw

#: tasks in flight per worker thread
WINDOW_PER_WORKER = 4
#: a task of quick members runs about this long (s)
TASK_SECONDS = 0.25
#: most members in one task
CHUNK_MAX = 64


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
