"""Running a batch: plan, skip fresh results, execute, record (layer: batch).

Owns :func:`run_batch`, :class:`BatchReport` and :class:`ReportRow`. Tasks run in this
process one after the other (``workers=0``) or on dask.distributed (:mod:`._cluster`, imported
only when used: dask is an optional dependency and takes half a second to import). Results are
written by :class:`~._store.Store` as they arrive. Imports the standard library and the batch
modules.
"""

from __future__ import annotations

import importlib
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TextIO

from ..errors import InputError
from ._plan import Task, plan_batch
from ._progress import ProgressBar
from ._store import Store, utc_now
from ._task import BAD_INPUT, OK, Describe, TaskResult, run_task

__all__ = ["run_batch", "BatchReport", "ReportRow", "MAX_WORKERS"]

#: Largest number of worker processes of the local cluster.
MAX_WORKERS = 256

#: Called after each recorded result with the task key and its result.
OnResult = Callable[[str, TaskResult], None]


@dataclass(frozen=True, slots=True)
class ReportRow:
    """One line of the final report."""

    key: str
    status: str
    message: str
    seconds: float
    files: tuple[str, ...]
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class BatchReport:
    """What a batch run did.

    Attributes
    ----------
    out : pathlib.Path
        The output directory (it holds ``manifest.json``).
    rows : tuple of ReportRow
        The tasks that ran and the case files that failed, in the order they finished.
    fresh : tuple of str
        Keys of the results that were fresh and not derived again.
    """

    out: Path
    rows: tuple[ReportRow, ...]
    fresh: tuple[str, ...]

    @property
    def ok(self) -> bool:
        """True when every task that ran succeeded (fresh results count as successes)."""
        return all(r.status == OK for r in self.rows)

    @property
    def failures(self) -> tuple[ReportRow, ...]:
        """The rows whose status is not ``ok``."""
        return tuple(r for r in self.rows if r.status != OK)


def _execute_serially(tasks: Sequence[Task],
                      handle: Callable[[Task, TaskResult, str | None], None],
                      tick: Callable[[int], None]) -> None:
    for task in tasks:
        tick(1)
        started = utc_now()
        handle(task, run_task(task.spec), started)


def run_batch(names: Sequence[str], out: str | Path, *, scheduler: str | None = None,
              workers: int | None = None, budget: float = 600.0, force: bool = False,
              describe: Describe | None = None, settings: Mapping[str, str] | None = None,
              progress: bool = True, stream: TextIO | None = None,
              on_result: OnResult | None = None) -> BatchReport:
    """Derive every response of every case file, one task per response, and write the results.

    Parameters
    ----------
    names : sequence of str
        Case files (paths) or names of bundled cases.
    out : str or pathlib.Path
        Output directory: ``<case>/<label>.<suffix>`` per result and ``manifest.json``.
    scheduler : str, optional
        Address of a running dask scheduler (``tcp://host:8786``). Default: a local cluster of
        ``workers`` processes, started and stopped here.
    workers : int, optional
        Worker processes of the local cluster (default: the number of CPUs); 0 runs the tasks
        in this process, one after the other, without dask.
    budget : float
        Seconds for each task (derivation and outputs).
    force : bool
        Derive again even the results that are fresh.
    describe : callable, optional
        Writer of the text outputs of a response (see :data:`~._task.Describe`); the command
        line passes its summary and JSON writers.
    settings : mapping, optional
        ``{name: value}`` parameters fixed at exact values in every case (``--set``).
    progress : bool
        Draw a progress bar on ``stream`` if it is a terminal.
    stream : text stream, optional
        Where the progress bar goes (default: stderr).
    on_result : callable, optional
        ``on_result(key, result)`` after each result is recorded.

    Returns
    -------
    BatchReport

    Raises
    ------
    InputError
        For a bad ``out``, ``workers`` or ``budget``, ``workers`` together with ``scheduler``,
        an unreachable scheduler, or dask missing. A malformed case file is not an error here:
        it gets its own manifest entry and the other files go on.
    KeyboardInterrupt
        After Ctrl-C: the tasks still running are cancelled, the manifest lists them, and only
        complete files are left.

    Examples
    --------
    >>> import json, pathlib, tempfile
    >>> from symresp.batch import run_batch
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> case = folder / "spin.toml"
    >>> _ = case.write_text('[model]\\nhamiltonian = "-h*q.z"\\n[parameters]\\nh = {}\\n'
    ...                     '[sites]\\nq = "spin 1/2"\\n[[response]]\\nlabel = "mz"\\nA = "q.z"\\n')
    >>> report = run_batch([str(case)], folder / "out", workers=0)
    >>> [(row.key, row.status) for row in report.rows]
    [('spin/mz', 'ok')]
    >>> sorted(p.name for p in (folder / "out" / "spin").iterdir())
    ['mz.py', 'mz.tex']
    >>> manifest = json.loads((folder / "out" / "manifest.json").read_text())
    >>> manifest["results"]["spin/mz"]["status"]
    'ok'
    >>> run_batch([str(case)], folder / "out", workers=0).fresh    # nothing changed: nothing to do
    ('spin/mz',)
    """
    if scheduler is not None and not isinstance(scheduler, str):
        raise InputError(f"batch: scheduler={scheduler!r} must be an address string such as "
                         f"tcp://127.0.0.1:8786")
    if workers is not None:
        if not isinstance(workers, int) or isinstance(workers, bool) or not (
                0 <= workers <= MAX_WORKERS):
            raise InputError(f"batch: workers={workers!r} must be a whole number from 0 to "
                             f"{MAX_WORKERS}")
        if scheduler is not None:
            raise InputError("batch: give either a scheduler address or a number of local "
                             "workers, not both (the workers of a running scheduler are "
                             "started with its own commands)")
    if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not (
            0 < budget < float("inf")):
        raise InputError(f"batch: budget={budget!r} must be a positive number of seconds")
    if isinstance(names, str) or not all(isinstance(n, str) for n in names):
        raise InputError(f"batch: names={names!r} must be a list of case files or case names")
    if not names:
        raise InputError("batch: no case files given")

    store = Store(out)
    try:
        return _run(store, names, scheduler=scheduler, workers=workers, budget=float(budget),
                    force=force, describe=describe, settings=settings, progress=progress,
                    stream=stream, on_result=on_result)
    finally:
        store.close()


def _run(store: Store, names: Sequence[str], *, scheduler: str | None, workers: int | None,
         budget: float, force: bool, describe: Describe | None,
         settings: Mapping[str, str] | None, progress: bool, stream: TextIO | None,
         on_result: OnResult | None) -> BatchReport:
    tasks, failures = plan_batch(names, budget=budget, describe=describe, settings=settings)
    rows: list[ReportRow] = []
    for failure in failures:
        store.record_failure(failure, BAD_INPUT)
        rows.append(ReportRow(failure.key, BAD_INPUT, failure.message, 0.0, ()))
    store.forget_other_labels(tasks)
    fresh = tuple(t.key for t in tasks if not force and store.is_fresh(t))
    todo = [t for t in tasks if t.key not in fresh]
    # Larger models first: the longest tasks should not start last.
    todo.sort(key=lambda t: -t.dimension)
    bar = ProgressBar(len(todo), len(fresh), stream=stream, enabled=progress)
    finished: set[str] = set()

    def handle(task: Task, result: TaskResult, started: str | None) -> None:
        written = store.record(task, result, started)
        finished.add(task.key)
        rows.append(ReportRow(task.key, result.status, result.message, result.seconds,
                              tuple(written), result.notes))
        bar.finished(result.status == OK)
        if on_result is not None:
            on_result(task.key, result)

    def tick(running: int) -> None:
        bar.update(running=running)

    try:
        if not todo:
            pass
        elif workers == 0:
            _execute_serially(todo, handle, tick)
        else:
            cluster = _cluster_module()
            cluster.execute(todo, handle, tick, scheduler=scheduler,
                            workers=workers if workers is not None else os.cpu_count() or 1)
    except KeyboardInterrupt:
        bar.close()
        store.record_cancelled([t for t in todo if t.key not in finished])
        raise
    finally:
        bar.close()
    return BatchReport(store.out, tuple(rows), fresh)


def _cluster_module():
    """The dask executor, imported on first use (dask is optional; see DEVELOPERS.md)."""
    try:
        return importlib.import_module("symresp.batch._cluster")
    except ImportError as err:
        raise InputError(f"batch: running on a cluster needs dask.distributed, which is not "
                         f"installed ({err}); install it with pip install 'symresp[cluster]', "
                         f"or run in this process with --workers 0") from None
