"""One batch task: derive one response of one case file and render its outputs (layer: batch).

Owns :class:`TaskSpec`, :class:`TaskResult`, :func:`run_task` and the status names. This is the
code a worker runs: it receives the *text* of the case file and a few options, never sympy
objects (see docs/batch.md for why), and returns the rendered files as strings, so workers on
other machines need no shared file system. It never raises: every failure becomes a result
with a status and a message. Imports the standard library, :mod:`symresp.cases`,
:mod:`symresp.emit`, :mod:`symresp.models` and :mod:`symresp.errors`; not dask.
"""

from __future__ import annotations

import dataclasses
import os
import resource
import socket
import sys
import time
import traceback
from collections.abc import Callable
from dataclasses import dataclass

from ..cases import Case, derive_case, parse_case, with_values
from ..emit import latex_document, numpy_module_source, symresp_version
from ..errors import BudgetExceeded, InputError, SymrespError
from ..models import Budget
from ..response import Derivation

__all__ = ["TaskSpec", "TaskResult", "run_task", "Describe", "OK", "BAD_INPUT", "OVER_BUDGET",
           "FAILED", "ERROR", "WORKER_LOST", "CANCELLED", "STATUSES", "LEVELS"]

#: Statuses of a task, as written in the manifest.
OK = "ok"
BAD_INPUT = "bad input"          # the case file (or a --set value) is malformed
OVER_BUDGET = "over budget"      # the time budget ran out
FAILED = "failed"                # no closed form, or another refusal of symresp
ERROR = "error"                  # an internal error (a bug) or a worker that cannot run symresp
WORKER_LOST = "worker lost"      # the worker process died (and retries were used up)
CANCELLED = "cancelled"          # interrupted (Ctrl-C) before it finished
STATUSES = (OK, BAD_INPUT, OVER_BUDGET, FAILED, ERROR, WORKER_LOST, CANCELLED)

#: The label of the only task of a case that asks for no [[response]].
LEVELS = "levels"

#: Renders the text outputs of one derived response: ``describe(case, label, derivation)`` ->
#: ``((suffix, text), ...)``. Given by the caller (the command line passes its summary and JSON
#: writers) and sent to workers by reference (module and name), so it must be a module-level
#: function.
Describe = Callable[[Case, str, Derivation], tuple[tuple[str, str], ...]]


@dataclass(frozen=True, slots=True)
class TaskSpec:
    """Everything a worker needs to derive one response: plain text and numbers.

    Attributes
    ----------
    key : str
        ``"<case name>/<label>"``, unique in one batch.
    case_name : str
        Name of the case (the file name without ``.toml``).
    source : str
        The case file as the user named it (shown in messages and in the summary).
    text : str
        The text of the case file.
    label : str
        The response label, or ``"levels"`` for a case without responses.
    budget : float
        Seconds for the derivation and its outputs.
    describe : callable or None
        Writer of the text outputs (see :data:`Describe`); None writes only LaTeX and the
        evaluator.
    settings : tuple of (name, value text)
        Parameters fixed at exact values, as ``--set NAME=VALUE`` does
        (:func:`symresp.cases.with_values`).
    """

    key: str
    case_name: str
    source: str
    text: str
    label: str
    budget: float
    describe: Describe | None = None
    settings: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True, slots=True)
class TaskResult:
    """What a worker sends back: status, message and the rendered files.

    Attributes
    ----------
    key : str
    status : str
        One of :data:`STATUSES`.
    message : str
        Empty when ``status == "ok"``; otherwise the error, naming the place and the fix.
    outputs : tuple of (suffix, text)
        The files of the response (``txt``, ``json``, ``tex``, ``py``), when ``ok``.
    notes : tuple of str
        Outputs that could not be made although the derivation succeeded (e.g. no evaluator
        for a level without closed form).
    seconds : float
        Wall-clock time of the task on the worker.
    version : str
        symresp version of the worker.
    worker : str
        ``host:pid`` of the process that ran the task.
    peak_rss_mb : float
        Peak resident memory of that process so far (MiB): an upper bound for the task.
    """

    key: str
    status: str
    message: str = ""
    outputs: tuple[tuple[str, str], ...] = ()
    notes: tuple[str, ...] = ()
    seconds: float = 0.0
    version: str = ""
    worker: str = ""
    peak_rss_mb: float = 0.0


def _peak_rss_mb() -> float:
    # ru_maxrss is in KiB on Linux and in bytes on macOS.
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return round(peak / (1024 * 1024 if sys.platform == "darwin" else 1024), 1)


def _one_response(case: Case, label: str) -> Case:
    if label == LEVELS and not case.responses:
        return case
    return dataclasses.replace(case, responses=(case.response(label),))


def _outputs(spec: TaskSpec, case: Case, label: str, d: Derivation,
             deadline: float) -> tuple[list[tuple[str, str]], list[str]]:
    """Render the files of one derived response, checking the budget between them."""
    def check(step: str) -> None:
        if time.monotonic() > deadline:
            raise BudgetExceeded(f"{spec.key}: the outputs ran out of the time budget "
                                 f"({spec.budget:g} s) before {step}; raise --budget")
    out: list[tuple[str, str]] = []
    notes: list[str] = []
    if spec.describe is not None:
        check("the summary")
        out += list(spec.describe(case, label, d))
    if label == LEVELS:
        return out, notes      # no response: no chi to write as LaTeX or as an evaluator
    for suffix, what, writer in (("tex", "the LaTeX document", latex_document),
                                 ("py", "the evaluator module", numpy_module_source)):
        check(what)
        try:
            out.append((suffix, writer(d)))
        except BudgetExceeded:
            raise
        except SymrespError as err:
            notes.append(f"no {what}: {err}")
    return out, notes


def run_task(spec: TaskSpec) -> TaskResult:
    """Derive the response ``spec.label`` of the case text ``spec.text`` and render its files.

    Never raises for a problem of the case (bad input, budget, no closed form, or a bug of
    symresp): the result carries the status and the message. Only an interrupt
    (``KeyboardInterrupt``) goes through.

    Parameters
    ----------
    spec : TaskSpec

    Returns
    -------
    TaskResult

    Examples
    --------
    >>> from symresp.batch import TaskSpec, run_task
    >>> text = '[model]\\nhamiltonian = "D*q.z"\\n[parameters]\\nD = {}\\n[sites]\\nq = "spin 1/2"\\n'
    >>> r = run_task(TaskSpec("q/levels", "q", "q.toml", text, "levels", 60.0))
    >>> r.status, [suffix for suffix, _ in r.outputs]
    ('ok', [])
    >>> run_task(TaskSpec("q/x", "q", "q.toml", text, "x", 60.0)).message
    "q.toml: no response labelled 'x' (known: none)"
    """
    start = time.monotonic()
    deadline = start + float(spec.budget)
    version = symresp_version()
    worker = f"{socket.gethostname()}:{os.getpid()}"

    def result(status: str, message: str = "", outputs=(), notes=()) -> TaskResult:
        return TaskResult(spec.key, status, message, tuple(outputs), tuple(notes),
                          round(time.monotonic() - start, 3), version, worker, _peak_rss_mb())

    try:
        case = parse_case(spec.text, source=spec.source, name=spec.case_name)
        case = _one_response(with_values(case, dict(spec.settings)), spec.label)
        (label, d), = derive_case(case, budget=Budget(seconds=float(spec.budget)))
        outputs, notes = _outputs(spec, case, label, d, deadline)
    except InputError as err:
        return result(BAD_INPUT, str(err))
    except BudgetExceeded as err:
        return result(OVER_BUDGET, str(err))
    except SymrespError as err:
        return result(FAILED, str(err))
    except RecursionError as err:
        return result(ERROR, f"internal error: RecursionError: {err}")
    except Exception as err:  # a bug: keep the place, so it can be reported
        where = traceback.extract_tb(err.__traceback__)[-1]
        return result(ERROR, f"internal error: {type(err).__name__}: {err} (at "
                             f"{os.path.basename(where.filename)}:{where.lineno}); this is a bug "
                             f"in symresp, please report it with the case file")
    return result(OK, "", outputs, notes)
