"""Batch tasks on dask.distributed (layer: batch; the only module that imports dask).

Owns :func:`execute`. Each task is one ``client.submit(run_task, spec)``: the spec holds the
case *text* and options, the result the rendered files as strings, so nothing but plain data
travels and workers need no shared file system. Without a scheduler address a
``LocalCluster`` of worker processes (one thread each: sympy holds the GIL) is started on the
loopback interface and stopped at the end. A worker that dies is replaced and its task
retried by the scheduler (``distributed.scheduler.allowed-failures``); past that the task is
reported as ``worker lost``. A task with no answer long after its budget is reported as
``over budget`` and abandoned. On Ctrl-C the tasks not yet finished are cancelled.
"""

from __future__ import annotations

import contextlib
import logging
import time
import uuid
from collections.abc import Callable, Iterator, Sequence

try:  # optional dependency (the cluster extra): execute() says how to install it
    import dask
    from distributed import Client, Future, KilledWorker, LocalCluster, as_completed
except ImportError:  # pragma: no cover - depends on the installation
    dask = None

from ..emit import symresp_version
from ..errors import InputError, SymrespError
from ._plan import Task
from ._store import utc_now
from ._task import ERROR, OVER_BUDGET, WORKER_LOST, TaskResult, run_task

__all__ = ["execute", "abandon_after", "CONNECT_TIMEOUT"]

#: Seconds to wait for a scheduler given by address.
CONNECT_TIMEOUT = 10.0
#: How often the client looks for finished tasks, and how often it asks what is running (s).
_POLL = 0.25
_WATCH = 1.0


def abandon_after(budget: float) -> float:
    """Seconds after a task reaches a worker at which the client gives up on it.

    The task checks its own budget and normally stops itself; this is the safety net for a
    step that does not look at the clock. A worker may hold one queued task besides the running
    one (a scheduler not started by symresp), hence twice the budget.
    """
    return 2.0 * budget + 60.0


@contextlib.contextmanager
def _quiet_logs() -> Iterator[None]:
    """dask's own log lines (worker restarts, retries) would break the progress bar; every
    outcome is in the manifest and the final report instead."""
    loggers = [logging.getLogger(name) for name in ("distributed", "tornado")]
    levels = [lg.level for lg in loggers]
    for lg in loggers:
        lg.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        for lg, level in zip(loggers, levels):
            lg.setLevel(level)


@contextlib.contextmanager
def _client(scheduler: str | None, workers: int) -> Iterator[Client]:
    if scheduler is not None:
        try:
            client = Client(scheduler, timeout=CONNECT_TIMEOUT, set_as_default=False)
        except (OSError, TimeoutError, ValueError, TypeError) as err:
            raise InputError(f"--scheduler {scheduler}: no dask scheduler answers there ({err}); "
                             f"start one with 'dask scheduler' and its workers with 'dask worker "
                             f"ADDRESS' (see docs/batch.md)") from None
        try:
            yield client
        finally:
            client.close()
        return
    # One task per worker at a time: tasks take seconds to minutes, so a second one queued on
    # a busy worker would only wait there while another worker may fall idle.
    try:
        with dask.config.set({"distributed.scheduler.worker-saturation": 1.0}):
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                   host="127.0.0.1", dashboard_address=None,
                                   silence_logs=logging.CRITICAL)
    except Exception as err:  # ports, process limits: nothing symresp can fix
        raise SymrespError(f"batch: cannot start a local dask cluster of {workers} workers "
                           f"({type(err).__name__}: {_text(err)}); try fewer --workers, or "
                           f"--workers 0 to run in this process") from None
    try:
        client = Client(cluster, set_as_default=False)
        try:
            yield client
        finally:
            client.close()
    finally:
        cluster.close()


def _text(err: BaseException) -> str:
    """str(err), which some exceptions of dask cannot always make."""
    try:
        return str(err)
    except (TypeError, ValueError, AttributeError, KeyError, RecursionError):
        return repr(err.args)


def _result(future: Future, task: Task, version: str) -> TaskResult:
    """The TaskResult of a finished future, or one that says why there is none."""
    key = task.key
    if future.status == "finished":
        try:
            result = future.result()
        except Exception as err:  # the result could not be sent back
            return TaskResult(key, ERROR, f"the result could not be received from the worker "
                                          f"({type(err).__name__}: {err})")
        if not isinstance(result, TaskResult):
            return TaskResult(key, ERROR, "the worker returned something other than a result")
        if result.version != version:
            return TaskResult(key, ERROR, f"the worker ({result.worker}) runs symresp "
                                          f"{result.version}, this client {version}; install the "
                                          f"same version everywhere",
                              seconds=result.seconds, worker=result.worker)
        return result
    if future.status == "error":
        err = future.exception()
        if isinstance(err, KilledWorker):
            tries = getattr(err, "allowed_failures", None)
            tried = f" (tried on {tries + 1} workers)" if isinstance(tries, int) else ""
            return TaskResult(key, WORKER_LOST, f"the worker process running it died, and so "
                                                f"did the workers it was retried on{tried}; "
                                                f"the model may need more memory than a worker "
                                                f"has (see docs/batch.md)")
        return TaskResult(key, ERROR, f"the worker could not run the task "
                                      f"({type(err).__name__}: {_text(err)}); every worker "
                                      f"needs symresp {version} installed")
    return TaskResult(key, ERROR, f"the scheduler dropped the task (status {future.status})")


def execute(tasks: Sequence[Task], handle: Callable[[Task, TaskResult, str | None], None],
            tick: Callable[[int], None], *, scheduler: str | None, workers: int) -> None:
    """Run ``tasks`` on dask and call ``handle(task, result, started)`` as each finishes.

    ``tick(running)`` is called a few times a second with the number of running tasks.
    """
    if dask is None:
        raise InputError("batch: running on a cluster needs dask.distributed, which is not "
                         "installed; install it with pip install 'symresp[cluster]', or run in "
                         "this process with --workers 0")
    version = symresp_version()
    with _quiet_logs(), _client(scheduler, workers) as client:
        run = uuid.uuid4().hex[:8]
        pending: dict[Future, Task] = {}
        for i, task in enumerate(tasks):
            # Larger models get a higher priority, so they start first.
            future = client.submit(run_task, task.spec, key=f"symresp-derive-{run}-{i}",
                                   priority=task.dimension)
            pending[future] = task
        try:
            _collect(client, pending, handle, tick, version)
        except BaseException:
            client.cancel(list(pending))
            raise


def _collect(client: Client, pending: dict[Future, Task],
             handle: Callable[[Task, TaskResult, str | None], None],
             tick: Callable[[int], None], version: str) -> None:
    seen: dict[Future, tuple[float, str]] = {}   # first seen on a worker: monotonic, UTC
    last_watch = 0.0
    arrivals = as_completed(list(pending), loop=client.loop)
    while pending:
        done = [f for f in arrivals.next_batch(block=False) if f in pending]
        if not done:
            time.sleep(_POLL)
        for future in done:
            task = pending.pop(future)
            handle(task, _result(future, task, version), seen.get(future, (0.0, None))[1])
        now = time.monotonic()
        if pending and now - last_watch >= _WATCH:
            last_watch = now
            busy = {key for keys in client.processing().values() for key in keys}
            for future in pending:
                if future not in seen and future.key in busy:
                    seen[future] = (now, utc_now())
            for future, task in list(pending.items()):
                limit = abandon_after(task.spec.budget)
                if future in seen and now - seen[future][0] > limit:
                    del pending[future]
                    future.cancel()
                    handle(task, TaskResult(task.key, OVER_BUDGET,
                                            f"no result {limit:g} s after it reached a worker "
                                            f"(budget {task.spec.budget:g} s); abandoned"),
                           seen[future][1])
        tick(sum(1 for future in pending if future in seen))
