"""The ``fit`` command: parsing, printing and the picture (layer: cli).

Owns :func:`add_fit_parser`, :func:`fit_text` and :func:`fit_json`. Imports argparse, json
and the cases layer; the picture comes from :mod:`._plot`.

``symresp fit CASE DATA --vary J,g [--set NAME=VALUE ...] [--json]``: fit the varied
parameters of CASE to the measured table DATA (``docs/fitting.md``).
"""

from __future__ import annotations

import argparse
import io
import json
import math
import sys
from collections.abc import Callable
from pathlib import Path

from ..cases import FitResult, find_case, fit_case, parse_assignments, read_case, read_data
from .._files import write_file
from ..errors import InputError
from ..models import Budget
from ._plot import HAVE_MATPLOTLIB, fit_figure

__all__ = ["add_fit_parser", "fit_text", "fit_json", "run_fit"]


def _names(text: str) -> list[str]:
    names = [n.strip() for n in text.split(",") if n.strip()]
    if not names:
        raise argparse.ArgumentTypeError(f"{text!r}: name the parameters to fit, e.g. J,g")
    return names


def add_fit_parser(sub, common: argparse.ArgumentParser,
                   budget_type: Callable[[str], float]) -> argparse.ArgumentParser:
    """Add the ``fit`` sub-command to the sub-parsers ``sub``."""
    p = sub.add_parser(
        "fit", parents=[common], help="fit parameters of a case to measured magnetometry data",
        description="Fit the varied parameters of a case (with a [zeeman] section) to a table of "
                    "measured chi, chiT or M against T (and B); print the values with standard "
                    "errors, the correlation matrix and chi^2/dof, and write a picture of data, "
                    "fit and residuals.",
        epilog="DATA is a CSV or whitespace table whose header names its columns: T, one of chi, "
               "chiT, M, optionally B (tesla) and sigma. See docs/fitting.md.")
    p.add_argument("case", metavar="CASE",
                   help="a case file (path) or the name of a bundled case, e.g. dinuclear")
    p.add_argument("data", metavar="DATA", help="the data table (CSV or whitespace separated)")
    p.add_argument("--vary", required=True, type=_names, metavar="NAMES",
                   help="comma-separated parameters to fit, e.g. J,g")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    p.add_argument("--picture", metavar="FILE",
                   help="where to write the picture (default: fit-CASE.png in the current "
                        "directory)")
    p.add_argument("--no-picture", action="store_true", help="do not write a picture")
    p.add_argument("--force", action="store_true",
                   help="overwrite an existing picture file (never an input file)")
    p.add_argument("--budget", type=budget_type, metavar="SECONDS", default=600.0,
                   help="time limit of the derivations and the fit (default: 600)")
    p.set_defaults(run=run_fit)
    return p


def _fmt(x: float, digits: int = 6) -> str:
    return f"{x:.{digits}g}" if math.isfinite(x) else "inf"


def fit_text(result: FitResult, picture: str | None) -> str:
    """The text report of a fit."""
    d = result.data
    sigma = "sigma from the data" if result.weighted else \
        "no sigma column: unit weights, errors scaled by sqrt(chi^2/dof)"
    units = dict(result.units)
    lines = [f"fit {result.case}: {result.quantity} ({result.unit}) from {d.source}, "
             f"{len(d)} points, {sigma}",
             f"  model: {result.description}",
             "",
             f"  {'parameter':<12}{'value':>14}{'error':>12}"]
    for n, v, e in zip(result.names, result.values, result.errors):
        unit = f"  {units[n]}" if n in units else ""
        lines.append(f"  {n:<12}{_fmt(v, 8):>14}{_fmt(e, 3):>12}{unit}")
    if result.fixed:
        lines.append("  fixed: " + ", ".join(
            f"{n} = {_fmt(v)}" + (f" {units[n]}" if n in units else "") for n, v in result.fixed))
    lines += ["", "  correlation:"]
    width = max(8, max(len(n) for n in result.names) + 2)
    lines.append("  " + " " * width + "".join(f"{n:>{width}}" for n in result.names))
    for n, row in zip(result.names, result.correlation):
        lines.append(f"  {n:<{width}}" + "".join(f"{x:>{width}.3f}" for x in row))
    lines += ["",
              f"  chi^2/dof = {_fmt(result.reduced_chi2, 4)} (chi^2 = {_fmt(result.chi2, 5)}, "
              f"dof = {result.dof})"]
    if not result.success:
        lines.append(f"  warning: the optimiser did not converge: {result.message}")
    if picture:
        lines.append(f"  picture: {picture}")
    return "\n".join(lines)


def fit_json(result: FitResult, picture: str | None) -> str:
    """One JSON object: {"parameters": {name: {"value": ..., "error": ...}}, ...}."""
    out = result.as_dict()
    out["picture"] = picture
    return json.dumps(out, indent=2)


def _picture_bytes(result: FitResult, target: Path) -> bytes:
    """The picture of ``result`` encoded in the format of ``target``'s suffix (PNG by default)."""
    fmt = target.suffix[1:].lower() or "png"
    buf = io.BytesIO()
    try:
        fit_figure(result).savefig(buf, format=fmt, dpi=120)
    except ValueError as err:  # an unknown image format suffix
        raise InputError(f"--picture {target}: {err}") from None
    return buf.getvalue()


def run_fit(args: argparse.Namespace, progress) -> int:
    """Run ``symresp fit`` (exit 0 on a converged fit, 1 otherwise)."""
    path = find_case(args.case)
    progress(f"reading {path}")
    case = read_case(path)
    data = read_data(args.data)
    values = parse_assignments(getattr(args, "set", None))
    result = fit_case(case, data, args.vary, values=values, budget=Budget(seconds=args.budget),
                      progress=progress)
    picture: str | None = None
    if not args.no_picture:
        if HAVE_MATPLOTLIB:
            target = Path(args.picture) if args.picture else Path(f"fit-{case.name}.png")
            write_file(target, _picture_bytes(result, target), force=args.force,
                       inputs=[case.source, Path(args.data)], option="--picture")
            picture = str(target)
        else:
            print("note: no picture: matplotlib is not installed (pip install symresp[plot])",
                  file=sys.stderr)
    print(fit_json(result, picture) if args.json else fit_text(result, picture))
    return 0 if result.success else 1
