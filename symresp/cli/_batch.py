"""The ``batch`` command's outputs and report (layer: cli).

Owns :func:`describe_outputs` (the summary and JSON files of one result: exactly what ``symresp
derive CASE -r LABEL`` and ``... --json`` print, which a test checks byte for byte) and
:func:`report_lines`. The work itself is :func:`symresp.batch.run_batch`. Imports
:mod:`symresp.batch`, :mod:`symresp.cases`, :mod:`symresp.response` and :mod:`._format`.
"""

from __future__ import annotations

from ..batch import OK, BatchReport
from ..cases import Case, case_json, present_case
from ..response import Derivation
from ._format import describe_case, describe_presentations

__all__ = ["describe_outputs", "report_lines"]


def describe_outputs(case: Case, label: str, derivation: Derivation) -> tuple[tuple[str, str], ...]:
    """The text files of one result: the summary (``txt``) and the JSON document (``json``),
    as ``symresp derive`` prints them for a case reduced to this response.

    Runs on the workers; they find it by its module and name.
    """
    quantities = () if label == "levels" else case.response(label).quantities
    lines = describe_case(case)
    lines.append(f"  convention:  {derivation.convention.describe()}")
    presented = present_case(case, [(label, derivation, quantities)])
    lines += describe_presentations(presented)
    document = case_json(case, presented)
    return (("txt", "\n".join(lines) + "\n"), ("json", document + "\n"))


def _indent(message: str) -> str:
    return message.replace("\n", "\n" + " " * 16)


def report_lines(report: BatchReport) -> list[str]:
    """The final report: a line per task that ran (sorted by key), then the totals."""
    rows = sorted(report.rows, key=lambda r: r.key)
    width = max([len(r.key) for r in rows] + [len(k) for k in report.fresh] + [4])
    lines = []
    for r in rows:
        if r.status == OK:
            lines.append(f"  {r.status:<12}  {r.key:<{width}}  {r.seconds:7.1f} s  "
                         f"{len(r.files)} files")
            lines += [f"  {'':<12}  {'':<{width}}  note: {note}" for note in r.notes]
        else:
            lines.append(f"  {r.status:<12}  {r.key:<{width}}  {_indent(r.message)}")
    lines += [f"  {'fresh':<12}  {key}" for key in sorted(report.fresh)]
    ran = len(report.rows)
    failed = len(report.failures)
    lines.append(f"batch: {ran - failed} derived, {len(report.fresh)} fresh (not derived again), "
                 f"{failed} failed; results and manifest.json in {report.out}")
    return lines
