"""Batch runs (layer: batch): many derivations in parallel, on dask.distributed or in-process.

Public surface:

* :func:`run_batch`: every response of every case file, one task per response, results written
  atomically as they arrive, with a manifest; fresh results are skipped on a rerun;
* :func:`run_task`, :class:`TaskSpec`, :class:`TaskResult`: what one worker does with the text
  of a case file (no sympy objects travel);
* :func:`plan_batch`, :func:`fingerprint`, :func:`file_stem`: the tasks of a batch and the
  names of their results.

Sits above ``cases`` and ``emit`` and below ``cli``. dask is optional and imported only by
:mod:`._cluster`, when a batch runs on a cluster. See docs/batch.md.
"""

from ._plan import FORMAT, CaseFailure, Task, file_stem, fingerprint, plan_batch
from ._progress import ProgressBar
from ._run import MAX_WORKERS, BatchReport, ReportRow, run_batch
from ._store import LOCK, MANIFEST, Store, write_atomic
from ._task import (BAD_INPUT, CANCELLED, ERROR, FAILED, LEVELS, OK, OVER_BUDGET, STATUSES,
                    WORKER_LOST, Describe, TaskResult, TaskSpec, run_task)

__all__ = [
    "run_batch", "BatchReport", "ReportRow", "MAX_WORKERS",
    "run_task", "TaskSpec", "TaskResult", "Describe", "LEVELS",
    "OK", "BAD_INPUT", "OVER_BUDGET", "FAILED", "ERROR", "WORKER_LOST", "CANCELLED", "STATUSES",
    "plan_batch", "Task", "CaseFailure", "fingerprint", "file_stem", "FORMAT",
    "Store", "MANIFEST", "LOCK", "write_atomic", "ProgressBar",
]
