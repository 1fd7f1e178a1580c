"""The ``symresp`` command: argument parsing, dispatch and exit codes (layer: cli).

Owns :func:`main` and :func:`build_parser`. Imports argparse and the layers below (cases,
checks, response, emit, models, text, errors); printing lives in :mod:`._format`, plots in
:mod:`._plot`.

Exit codes: 0 success; 1 a verification mismatch, a hand formula that differs from the derived
one (``check``), a failed consistency check, a derivation that hit its budget or has no
closed form, or an internal error (a bug: the message asks for a report; ``--debug`` shows
the traceback); 2 bad input (malformed case file or formula, unknown case, bad option), with
``error: <message>`` on stderr and no traceback.
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
import time
import traceback
from collections.abc import Callable, Sequence
from importlib import metadata
from pathlib import Path

from ..batch import MAX_WORKERS, run_batch
from ..cases import (QUANTITIES, Case, bundled_cases, case_directories, case_json, case_summary,
                     derive_case, find_case, parse_assignments, present_case, read_case,
                     read_columns, verify_case, with_values)
from ..checks import QUANTITIES as CHECKED_QUANTITIES
from ..checks import compare, consistency
from .._files import read_text_file, read_text_stream, write_file, write_files
from ..emit import latex_report, numpy_module_source
from ..errors import InputError, SymrespError
from ..models import DEFAULT_SECONDS, Budget, checkpoint
from ..response import Derivation
from ..text import MAX_LENGTH, ParseError
from ._batch import describe_outputs, report_lines
from ._fit import add_fit_parser
from ._resonance import add_resonance_parser
from ._format import describe_case, describe_presentations, verification_table
from ._plot import HAVE_MATPLOTLIB, PlotOptions, render_plots

__all__ = ["main", "build_parser", "EXIT_OK", "EXIT_FAILURE", "EXIT_BAD_INPUT"]

#: Largest formula file (bytes); the formula text itself is limited to symresp.text.MAX_LENGTH
#: characters.
MAX_FORMULA_BYTES = 4 * MAX_LENGTH

EXIT_OK = 0
EXIT_FAILURE = 1
EXIT_BAD_INPUT = 2

try:
    _VERSION = metadata.version("symresp")
except metadata.PackageNotFoundError:  # running from a source tree that was never installed
    _VERSION = "(not installed)"

_REPORT_HINT = ("this is a bug in symresp; please report it together with the case file and the "
                "command line (run again with --debug to see the traceback)")


class _Progress:
    """Stage messages on stderr, with the elapsed time; silent with --quiet."""

    def __init__(self, quiet: bool) -> None:
        self.quiet = quiet
        self.start = time.monotonic()

    def __call__(self, message: str) -> None:
        # Each stage is also a check of the command's time budget (naming the stage).
        checkpoint(message)
        if not self.quiet:
            print(f"[{time.monotonic() - self.start:6.1f} s] {message}", file=sys.stderr,
                  flush=True)


def _positive_float(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not (v > 0 and v < float("inf")):
        raise argparse.ArgumentTypeError(f"{text!r} must be a positive number")
    return v


def _interval(text: str) -> tuple[float, float]:
    """``"TMIN:TMAX"`` with 0 < TMIN < TMAX."""
    lo, sep, hi = text.partition(":")
    try:
        a, b = float(lo), float(hi)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} must be TMIN:TMAX, two numbers") from None
    if not sep or not (0 < a < b < float("inf")):
        raise argparse.ArgumentTypeError(f"{text!r} must be TMIN:TMAX with 0 < TMIN < TMAX")
    return a, b


def _sweep(text: str) -> tuple[str, float, float]:
    """``"NAME=START:STOP"`` with START != STOP."""
    name, sep, rest = text.partition("=")
    start, sep2, stop = rest.partition(":")
    try:
        a, b = float(start), float(stop)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} must be NAME=START:STOP") from None
    if not sep or not sep2 or not name.strip() or a == b or not all(
            abs(x) < float("inf") for x in (a, b)):
        raise argparse.ArgumentTypeError(f"{text!r} must be NAME=START:STOP with START != STOP")
    return name.strip(), a, b


def _whole_number(low: int, high: int | None = None) -> Callable[[str], int]:
    """An argparse type: a whole number from ``low`` to ``high`` (no upper end if None)."""
    wanted = f"from {low} to {high}" if high is not None else (
        "zero or positive" if low == 0 else f"at least {low}")

    def parse(text: str) -> int:
        try:
            v = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
        if v < low or (high is not None and v > high):
            raise argparse.ArgumentTypeError(f"{text!r} must be {wanted}")
        return v
    return parse


def _case_parent(common: argparse.ArgumentParser, response_help: str) -> argparse.ArgumentParser:
    """Options of the commands that work on one case: CASE, --response, --budget."""
    with_case = argparse.ArgumentParser(add_help=False, parents=[common])
    with_case.add_argument("case", metavar="CASE",
                           help="a case file (path) or the name of a bundled case, e.g. dimer")
    with_case.add_argument("--response", "-r", metavar="LABEL", help=response_help)
    with_case.add_argument("--budget", type=_positive_float, metavar="SECONDS",
                           default=DEFAULT_SECONDS,
                           help="time limit of the whole command: reading, derivation, "
                                "presentation, printing, writing and checks (default: 600)")
    return with_case


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``symresp`` command."""
    common = _common_parent()
    with_case = _case_parent(common, "only the response with this label (default: all)")
    one_response = _case_parent(common, "the response to compare with; needed when the case has "
                                        "several (not for --quantity partition)")
    parser = argparse.ArgumentParser(
        prog="symresp",
        description="Closed-form linear-response (Kubo) susceptibilities of small quantum models, "
                    "from TOML case files.",
        epilog="Bundled cases are searched in the directories of SYMRESP_CASES, then in the "
               "cases/ directory of symresp. See docs/command-line.md.")
    parser.add_argument("--version", action="version", version=f"symresp {_VERSION}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    _add_list(sub, common)
    _add_derive(sub, with_case)
    _add_verify(sub, with_case)
    _add_check(sub, one_response)
    _add_consistency(sub, with_case)
    _add_plot(sub, with_case)
    _add_emit(sub, with_case)
    add_fit_parser(sub, common, _positive_float)
    add_resonance_parser(sub, common, _positive_float)
    _add_batch(sub, common)
    return parser


def _common_parent() -> argparse.ArgumentParser:
    """Options of every command: --quiet, --debug, --set."""
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--quiet", "-q", action="store_true",
                        help="do not print progress stages on stderr")
    common.add_argument("--debug", action="store_true",
                        help="show the Python traceback of an internal error")
    common.add_argument("--set", action="append", metavar="NAME=VALUE",
                        help="give parameter NAME the exact value VALUE (repeatable); the model "
                             "then has the number in place of the name")
    return common


def _add_random_points(p: argparse.ArgumentParser, option: str, low: int, high: int,
                       default: int) -> None:
    """The number of random points (``option``, from ``low`` to ``high``) and their --seed, for
    the commands that draw random points."""
    p.add_argument(option, type=_whole_number(low, high), default=default, metavar="N",
                   help=f"number of random points ({low}-{high}, default {default})")
    p.add_argument("--seed", type=_whole_number(0), default=0, metavar="S",
                   help="seed of the random points (default 0)")


def _add_list(sub, common: argparse.ArgumentParser) -> None:
    p = sub.add_parser("list", parents=[common], help="list the bundled cases",
                       description="List the bundled cases with one-line descriptions.")
    p.add_argument("--paths", action="store_true", help="also print the file of each case")
    p.set_defaults(run=_cmd_list)


def _add_derive(sub, with_case: argparse.ArgumentParser) -> None:
    p = sub.add_parser("derive", parents=[with_case], help="derive and print the response formulas",
                       description="Derive levels, transitions, Z and the requested "
                                   "susceptibilities of a case and print them.")
    p.add_argument("--quantity", action="append", choices=QUANTITIES, metavar="Q",
                   help=f"print this quantity ({', '.join(QUANTITIES)}); repeatable; default: "
                        f"those the case asks for")
    fmt = p.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print one JSON document instead of text")
    fmt.add_argument("--latex", action="store_true",
                     help="print a complete LaTeX document (compiles as it is)")
    fmt.add_argument("--latex-body", action="store_true",
                     help="print the LaTeX body alone, for \\input into a paper")
    p.set_defaults(run=_cmd_derive)


def _add_verify(sub, with_case: argparse.ArgumentParser) -> None:
    p = sub.add_parser("verify", parents=[with_case],
                       help="compare every derived quantity with exact diagonalisation",
                       description="Evaluate every derived quantity at random parameter points "
                                   "and temperatures and compare it with exact numerical "
                                   "diagonalisation; exit status 1 on any mismatch.")
    _add_random_points(p, "--points", 1, 100, 3)
    p.set_defaults(run=_cmd_verify)


def _add_check(sub, one_response: argparse.ArgumentParser) -> None:
    p = sub.add_parser("check", parents=[one_response],
                       help="compare a hand-derived formula with the derived one",
                       description="Compare a hand-derived formula with the derived quantity at "
                                   "random points (and symbolically when it agrees there); when "
                                   "they differ, name the common slip that explains it and show "
                                   "a point with both values. Exit status 0 if it agrees, 1 if "
                                   "it differs.",
                       epilog="The formula may use the model parameters, beta and T (T = 1/beta), "
                              "omega and eta for frequency, t for time, and the functions of the "
                              "case-file language (exp, cosh, tanh, sqrt, ...). A formula that "
                              "begins with '-' is given as --formula=-... . See docs/checking.md.")
    source = p.add_mutually_exclusive_group(required=True)
    source.add_argument("--formula", metavar="TEXT",
                        help="the formula, e.g. '2*beta/(3 + exp(J/T))'")
    source.add_argument("--formula-file", metavar="PATH",
                        help="read the formula from this file ('-': standard input); it may span "
                             "several lines")
    p.add_argument("--quantity", choices=CHECKED_QUANTITIES, default="isothermal", metavar="Q",
                   help=f"what the formula is: {', '.join(CHECKED_QUANTITIES)} (default: "
                        f"isothermal)")
    _add_random_points(p, "--samples", 3, 100, 9)
    p.set_defaults(run=_cmd_check)


def _add_consistency(sub, with_case: argparse.ArgumentParser) -> None:
    p = sub.add_parser("consistency", parents=[with_case],
                       help="run the physical consistency checks of each response",
                       description="Run every consistency check that applies to each response "
                                   "(sum rules, Kramers-Kronig, fluctuation-dissipation, "
                                   "positivity, Onsager reciprocity, high-temperature limit, "
                                   "agreement with exact diagonalisation) at random points and "
                                   "print a table per response; exit status 1 if any check "
                                   "fails.")
    _add_random_points(p, "--points", 1, 50, 3)
    p.set_defaults(run=_cmd_consistency)


def _add_plot(sub, with_case: argparse.ArgumentParser) -> None:
    p = sub.add_parser("plot", parents=[with_case],
                       help="draw the pictures of each response (PNG or SVG)",
                       description="Draw, for each response at the default parameter values of "
                                   "the case: the energy-level diagram with the transitions as "
                                   "arrows (width: weight at the temperature), the stick "
                                   "spectrum with the broadened chi''(omega), the "
                                   "chi''(omega, T) map, chi(T), chi*T and 1/chi against T, and "
                                   "with --sweep the levels against one parameter (needs "
                                   "matplotlib). See docs/pictures.md.")
    p.add_argument("--out", required=True, metavar="DIR",
                   help="directory for the pictures (created if missing)")
    p.add_argument("--force", action="store_true",
                   help="overwrite pictures that exist already (never the case file)")
    p.add_argument("--format", choices=("png", "svg"), default="png",
                   help="file format (default: png)")
    p.add_argument("--temperature", type=_positive_float, metavar="T",
                   help="temperature of the level diagram and the spectrum (default: the case's "
                        "energy scale)")
    p.add_argument("--eta", type=_positive_float, metavar="ETA",
                   help="Lorentzian half width of the spectrum (default: 2%% of the highest "
                        "transition frequency)")
    p.add_argument("--T-range", dest="T_range", metavar="TMIN:TMAX", type=_interval,
                   help="temperature range of chi(T), chi*T, 1/chi and the map")
    p.add_argument("--log-T", dest="log_T", action="store_true",
                   help="logarithmic temperature axis")
    p.add_argument("--data", metavar="FILE",
                   help="measured points to overlay: two columns, T and the value")
    p.add_argument("--data-kind", dest="data_kind", choices=("chi", "chiT", "inverse"),
                   default="chi", help="what the second column of --data is (default: chi)")
    p.add_argument("--sweep", metavar="NAME=START:STOP", type=_sweep,
                   help="also draw the levels against parameter NAME from START to STOP")
    p.set_defaults(run=_cmd_plot)


def _add_emit(sub, with_case: argparse.ArgumentParser) -> None:
    p = sub.add_parser("emit", parents=[with_case],
                       help="write a standalone numpy evaluator module",
                       description="Write the standalone numpy evaluator of one response to a "
                                   "Python file.")
    p.add_argument("--out", required=True, metavar="FILE", help="the Python file to write")
    p.add_argument("--force", action="store_true",
                   help="overwrite FILE if it exists (never the case file)")
    p.set_defaults(run=_cmd_emit)


def _add_batch(sub, common: argparse.ArgumentParser) -> None:
    p = sub.add_parser("batch", parents=[common],
                       help="derive every response of many case files in parallel",
                       description="Derive every response of every case file, one task per "
                                   "response, on a local dask cluster or on a running dask "
                                   "scheduler, and write each result (summary, JSON, LaTeX, "
                                   "evaluator) and a manifest into DIR. Results whose case file "
                                   "and symresp version are unchanged are not derived again.",
                       epilog="See docs/batch.md (running on a cluster, what travels to the "
                              "workers, memory per worker).")
    p.add_argument("files", nargs="+", metavar="FILE",
                   help="case files (paths) or names of bundled cases")
    p.add_argument("--out", required=True, metavar="DIR", help="directory of the results")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--scheduler", metavar="ADDRESS",
                       help="address of a running dask scheduler, e.g. tcp://10.0.0.5:8786 "
                            "(default: start a local cluster)")
    where.add_argument("--workers", type=_whole_number(0, MAX_WORKERS), metavar="N",
                       help="worker processes of the local cluster (default: one per CPU); 0 "
                            "runs every task in this process, without dask")
    p.add_argument("--budget", type=_positive_float, metavar="SECONDS", default=600.0,
                   help="time limit of each task (derivation and outputs; default: 600)")
    p.add_argument("--force", action="store_true",
                   help="derive again even the results that are fresh")
    p.set_defaults(run=_cmd_batch)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``symresp`` command with ``argv`` (default: ``sys.argv[1:]``); return the exit code.

    Examples
    --------
    >>> from symresp.cli import main
    >>> main(["derive", "no-such-case", "--quiet"])
    2
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:  # argparse reports usage errors (status 2) and --help (0)
        return stop.code if isinstance(stop.code, int) else EXIT_BAD_INPUT
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_BAD_INPUT
    run: Callable[[argparse.Namespace, _Progress], int] = args.run
    clock = Budget(seconds=getattr(args, "budget", DEFAULT_SECONDS)).start()
    try:
        with clock.running():
            code = run(args, _Progress(args.quiet))
        for note in clock.notes:
            print(f"note: {note}", file=sys.stderr)
        return code
    except InputError as err:
        print(f"error: {err}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except SymrespError as err:  # budget exhausted, no closed form: not a bug, not bad input
        print(f"error: {err}", file=sys.stderr)
        return EXIT_FAILURE
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # output piped into a command that stopped reading (e.g. head)
        return EXIT_FAILURE
    except Exception as err:  # anything else is a bug: short message, traceback on request
        if args.debug:
            traceback.print_exc()
        print(f"internal error: {type(err).__name__}: {err}\n{_REPORT_HINT}", file=sys.stderr)
        return EXIT_FAILURE


# ---------------------------------------------------------------- commands

def _load(args: argparse.Namespace, progress: _Progress) -> Case:
    path = find_case(args.case)
    progress(f"reading {path}")
    case = with_values(read_case(path), parse_assignments(args.set))
    if args.response is not None:
        # keep only the chosen response (InputError for an unknown label)
        case = dataclasses.replace(case, responses=(case.response(args.response),))
    return case


def _derive(case: Case, args: argparse.Namespace,
            progress: _Progress) -> list[tuple[str, Derivation]]:
    derived = list(derive_case(case, budget=Budget(seconds=args.budget), progress=progress))
    progress("derivation done")
    return derived


def _quantities_of(case: Case, label: str, override: list[str] | None) -> tuple[str, ...]:
    if override:
        return tuple(q for q in QUANTITIES if q in override)
    if label == "levels":
        return ()
    return case.response(label).quantities


def _no_response(case: Case, what: str) -> InputError:
    """The error of a command that needs a response, on a case that asks for none."""
    return InputError(f"{case.source}: the case asks for no [[response]]; there is nothing to "
                      f"{what}")


def _several_responses(case: Case) -> InputError:
    """The error of a command that works on one response, on a case with several."""
    labels = ", ".join(r.label for r in case.responses)
    return InputError(f"{case.source}: the case has {len(case.responses)} responses ({labels}); "
                      f"choose one with --response LABEL")


def _cmd_list(args: argparse.Namespace, progress: _Progress) -> int:
    if args.set:
        raise InputError("--set has nothing to set in 'list'; use it with a command that reads a "
                         "case")
    paths = bundled_cases()
    if not paths:
        dirs = ", ".join(str(d) for d in case_directories()) or "none"
        print(f"error: no case files found (searched: {dirs}); set SYMRESP_CASES to a directory "
              f"of case files", file=sys.stderr)
        return EXIT_BAD_INPUT
    summaries = [case_summary(p) for p in paths]
    width = max(len(p.stem) for p in paths)
    for p, s in zip(paths, summaries):
        line = f"{p.stem:<{width}}  {s.description}"
        print(line + (f"\n{'':<{width}}  {p}" if args.paths else ""))
    return EXIT_OK


def _cmd_derive(args: argparse.Namespace, progress: _Progress) -> int:
    case = _load(args, progress)
    derived = _derive(case, args, progress)
    items = [(label, d, _quantities_of(case, label, args.quantity)) for label, d in derived]
    progress("simplifying and printing")
    presented = present_case(case, items)       # within the command's running budget
    if args.json:
        print(case_json(case, presented))
        return EXIT_OK
    header = describe_case(case)
    if derived:
        header.append(f"  convention:  {derived[0][1].convention.describe()}")
    if args.latex or args.latex_body:
        title, *rest = header
        responses = [(label, a, b, p) for label, a, b, _d, p in presented]
        print(latex_report(title, [line.strip() for line in rest], responses,
                           body_only=args.latex_body), end="")
        return EXIT_OK
    print("\n".join(header + describe_presentations(presented)))
    return EXIT_OK


def _cmd_verify(args: argparse.Namespace, progress: _Progress) -> int:
    case = _load(args, progress)
    derived = tuple(_derive(case, args, progress))
    result = verify_case(case, points=args.points, seed=args.seed, derivations=derived,
                         progress=progress)
    print(f"verify {case.name}: derived formulas against exact diagonalisation "
          f"({case.source})")
    print("\n".join(verification_table(result)))
    return EXIT_OK if result.ok else EXIT_FAILURE


def _formula_text(args: argparse.Namespace) -> tuple[str, str]:
    """The formula of ``check`` and the name of its source (for parse errors).

    Trailing whitespace of a file is dropped, so that a fault at the end of the formula (a
    missing ')') points at its last line rather than at the empty line after the final newline;
    positions before it are unchanged.
    """
    if args.formula is not None:
        return args.formula, "<formula>"
    path = args.formula_file
    if path == "-":
        stream = getattr(sys.stdin, "buffer", None)
        if stream is None:                 # a text stream in place of stdin (tests)
            text = sys.stdin.read(MAX_FORMULA_BYTES + 1)
            if len(text) > MAX_FORMULA_BYTES:
                raise InputError(f"--formula-file -: more than the limit of {MAX_FORMULA_BYTES} "
                                 f"bytes (see docs/limits.md)")
            return text.rstrip(), "<stdin>"
        return read_text_stream(stream, limit=MAX_FORMULA_BYTES, what="--formula-file -").rstrip(), "<stdin>"
    return read_text_file(path, limit=MAX_FORMULA_BYTES, what="--formula-file").rstrip(), path


def _response_header(case: Case, label: str) -> str:
    if label == "levels":
        return "levels only (the case asks for no [[response]])"
    r = case.response(label)
    return f"response '{label}' (A = {r.A_text}, B = {r.B_text})"


def _cmd_check(args: argparse.Namespace, progress: _Progress) -> int:
    formula, source = _formula_text(args)
    case = _load(args, progress)
    if not case.responses and args.quantity != "partition":
        raise InputError(f"{case.source}: the case asks for no [[response]]; only "
                         f"--quantity partition can be checked")
    if len(case.responses) > 1:
        if args.quantity != "partition":
            raise _several_responses(case)
        # Z depends on H alone: any one response carries it
        case = dataclasses.replace(case, responses=case.responses[:1])
    label, d = _derive(case, args, progress)[0]
    progress(f"comparing the formula with the {args.quantity} quantity of '{label}'")
    try:
        verdict = compare(d, formula, args.quantity, samples=args.samples, seed=args.seed)
    except ParseError as err:
        if source == "<formula>" or err.source != "<formula>":
            raise
        raise ParseError(err.reason, source=source, line=err.line, column=err.column,
                         excerpt=err.excerpt) from None
    print(f"check {case.name}: {_response_header(case, label)}, quantity {args.quantity} "
          f"({case.source})")
    print(verdict.text())
    return EXIT_OK if verdict.agrees else EXIT_FAILURE


def _cmd_consistency(args: argparse.Namespace, progress: _Progress) -> int:
    case = _load(args, progress)
    if not case.responses:
        raise _no_response(case, "check")
    derived = _derive(case, args, progress)
    print(f"consistency {case.name}: physical checks of the derived responses ({case.source})")
    failed = []
    for label, d in derived:
        progress(f"checking '{label}'")
        report = consistency(d, points=args.points, seed=args.seed)
        print(f"\n== {_response_header(case, label)}")
        print(report.table())
        failed += [f"'{label}': {name}" for name in report.failed]
    print()
    if failed:
        print(f"FAILED: {'; '.join(failed)}")
        return EXIT_FAILURE
    print(f"all applicable checks pass for {len(derived)} response(s) (seed {args.seed}, "
          f"{args.points} point(s))")
    return EXIT_OK


def _cmd_plot(args: argparse.Namespace, progress: _Progress) -> int:
    if not HAVE_MATPLOTLIB:
        print("error: the plot command needs matplotlib, which is not installed; install it with "
              "pip install symresp[plot]", file=sys.stderr)
        return EXIT_BAD_INPUT
    case = _load(args, progress)
    data = read_columns(args.data) if args.data is not None else None
    derived = _derive(case, args, progress)
    if derived and derived[0][0] == "levels":
        raise _no_response(case, "plot")
    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: exists and is not a directory")
    options = PlotOptions(temperature=args.temperature, eta=args.eta, fmt=args.format,
                          T_range=args.T_range, log_T=args.log_T, data=data,
                          data_kind=args.data_kind, sweep=args.sweep)
    pictures = []
    for label, d in derived:
        progress(f"drawing '{label}'")
        pictures += render_plots(case, label, d, options)
    progress("writing the plots")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise InputError(f"--out {out}: cannot create the directory ({err.strerror or err})") from None
    inputs = [case.source] + ([args.data] if args.data is not None else [])
    for path in write_files([(out / name, data) for name, data in pictures], force=args.force,
                            inputs=inputs):
        print(path)
    return EXIT_OK


def _cmd_emit(args: argparse.Namespace, progress: _Progress) -> int:
    case = _load(args, progress)
    if not case.responses:
        raise _no_response(case, "emit")
    if len(case.responses) > 1:
        raise _several_responses(case)
    derived = _derive(case, args, progress)
    label, d = derived[0]
    progress(f"writing the evaluator of '{label}'")
    source = numpy_module_source(d)
    print(write_file(args.out, source, force=args.force, inputs=[case.source]))
    return EXIT_OK


def _cmd_batch(args: argparse.Namespace, progress: _Progress) -> int:
    report = run_batch(args.files, args.out, scheduler=args.scheduler, workers=args.workers,
                       budget=args.budget, force=args.force, describe=describe_outputs,
                       settings=parse_assignments(args.set), progress=not args.quiet)
    print("\n".join(report_lines(report)))
    return EXIT_OK if report.ok else EXIT_FAILURE
