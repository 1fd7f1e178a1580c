"""The ``resonance`` command: ESR fields of a case at a fixed frequency (layer: cli).

Owns :func:`add_resonance_parser` and :func:`run_resonance`. Imports argparse, json, sympy,
the cases layer and :func:`symresp.emit.resonance_fields`.
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable

import sympy as sp

from ..cases import find_case, parse_assignments, read_case, with_values
from ..emit import DEFAULT_FREQUENCY_GHZ, DEFAULT_MAX_FIELD, resonance_fields
from ..errors import InputError
from ..models import Budget

__all__ = ["add_resonance_parser", "run_resonance"]


def _direction(text: str):
    if text in ("x", "y", "z"):
        return text
    parts = text.split(",")
    try:
        values = [float(p) for p in parts]
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r}: write x, y, z or three numbers such as "
                                         f"1,0,1") from None
    if len(values) != 3:
        raise argparse.ArgumentTypeError(f"{text!r}: a direction has three components")
    return values


def add_resonance_parser(sub, common: argparse.ArgumentParser,
                         positive: Callable[[str], float]) -> argparse.ArgumentParser:
    """Add the ``resonance`` sub-command."""
    p = sub.add_parser(
        "resonance", parents=[common],
        help="ESR resonance fields of a case at a fixed microwave frequency",
        description="Resonance fields of the allowed transitions of a case with a [zeeman] "
                    "section at a fixed microwave frequency, with their intensities at a "
                    "temperature; exact where the level spacings are explicit, root-finding "
                    "otherwise.")
    p.add_argument("case", metavar="CASE", help="a case file (path) or a bundled case name")
    p.add_argument("--frequency", type=positive, default=DEFAULT_FREQUENCY_GHZ, metavar="GHZ",
                   help=f"microwave frequency in GHz (default {DEFAULT_FREQUENCY_GHZ})")
    p.add_argument("--temperature", type=positive, default=4.0, metavar="T",
                   help="temperature of the populations, in the case's temperature unit "
                        "(default 4)")
    p.add_argument("--direction", type=_direction, metavar="N",
                   help="field direction: x, y, z or three numbers (default: the [zeeman] "
                        "direction)")
    p.add_argument("--max-field", type=positive, default=DEFAULT_MAX_FIELD, metavar="TESLA",
                   help=f"upper end of the field sweep (default {DEFAULT_MAX_FIELD} T)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    p.add_argument("--budget", type=positive, metavar="SECONDS", default=600.0,
                   help="time limit of the derivation (default: 600)")
    p.set_defaults(run=run_resonance)
    return p


def run_resonance(args: argparse.Namespace, progress) -> int:
    """Run ``symresp resonance``."""
    path = find_case(args.case)
    progress(f"reading {path}")
    case = with_values(read_case(path), parse_assignments(getattr(args, "set", None)))
    mag = case.magnetism
    if mag is None or mag.zeeman is None:
        raise InputError(f"{case.source}: resonance fields need the [zeeman] section (g of each "
                         f"spin site); see docs/case-files.md")
    defaults = case.defaults
    H0 = (case.system.hamiltonian - mag.zeeman.term).subs(defaults)
    handles = {h: g.subs(defaults) for h, g in mag.zeeman.handles().items()}
    missing = sorted({s.name for s in H0.free_symbols} |
                     {s.name for g in handles.values() for s in g.free_symbols})
    if missing:
        raise InputError(f"{case.source}: no value for {', '.join(missing)}; give one in the case "
                         f"file or with --set NAME=VALUE")
    direction = args.direction if args.direction is not None else list(mag.zeeman.direction)
    progress("deriving the levels in the field and solving for the resonances")
    lines = resonance_fields(H0, handles, frequency=args.frequency, temperature=args.temperature,
                             direction=direction, energy_unit=case.energy_unit,
                             temperature_unit=case.temperature_unit, max_field=args.max_field,
                             budget=Budget(seconds=args.budget))
    if args.json:
        print(json.dumps({
            "case": case.name, "frequency_GHz": args.frequency, "temperature": args.temperature,
            "temperature_unit": case.temperature_unit, "energy_unit": case.energy_unit,
            "lines": [{"field_T": r.field, "exact": None if r.exact is None else sp.sstr(r.exact),
                       "levels": [r.lower, r.upper], "energies": list(r.energies),
                       "weight": r.weight, "population_difference": r.population,
                       "intensity": r.intensity, "slope": r.slope, "method": r.method}
                      for r in lines]}, indent=2))
        return 0
    print(f"resonance {case.name}: {args.frequency:g} GHz, T = {args.temperature:g} "
          f"{case.temperature_unit}, fields up to {args.max_field:g} T ({case.source})")
    if not lines:
        print("  no allowed transition resonates in this field range")
        return 0
    print(f"  {'B (T)':>12}  {'levels':>8}  {'W (mu_B^2)':>11}  {'p_a - p_b':>11}  "
          f"{'intensity':>11}  {'dOmega/dB':>10}  method")
    for r in lines:
        print(f"  {r.field:>12.6f}  {f'{r.lower}->{r.upper}':>8}  {r.weight:>11.5g}  "
              f"{r.population:>11.5g}  {r.intensity:>11.5g}  {r.slope:>10.5g}  {r.method}")
    print(f"  (dOmega/dB in {case.energy_unit}/T; intensity = (p_a - p_b) W, per-state "
          f"populations)")
    return 0
