"""Wall time of models with decimal and large coefficients, against the earlier presentation rule.

Run::

    python tests/perf/bench_hardening.py            # baseline capped at 120 s per model
    python tests/perf/bench_hardening.py --quick    # baseline capped at 20 s

Models (fixed inputs): the spin-1/2 dimer J S_a.S_b + c h (S_a^z + S_b^z) with c = 2.0023 (a
g-factor typed as a decimal), c = 10007 (a large integer), and 2.0023 h S_a^z + 2 h S_b^z
(incommensurate coefficients). For each, the time of ``Model.response`` plus the presented
isothermal and isolated susceptibilities, chi(omega) and Z:

* ``now``       the presentation rule of symresp (Boltzmann variables step by the rational gcd
                of their coefficients; forms whose powers would span more than MAX_SPAN keep
                the plain form);
* ``baseline``  the earlier rule, restored in a child process: the variable of a generator
                is e^{g/L} with L the lcm of the coefficients' denominators, and every
                polynomial is factored whatever its degree. The child is stopped after N s and
                reported as "> N s" (the time goes into one call of the compiled factoring
                routine, which no timer inside a process can interrupt).

The last line reads::

    summary: dimer_2.0023_seconds=<s> baseline_seconds=<s or '>N'> ratio=<baseline/now or '>x'>
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time
from functools import reduce

import sympy as sp

import symresp as sr
from symresp.models import Budget
from symresp.response import _derive, _present


def _old_generators(expr):
    """The generator rule before decimals were scaled out (for the baseline only)."""
    atoms = sorted(expr.atoms(sp.exp), key=sp.default_sort_key)
    vectors, rests = [], []
    for a in atoms:
        vec = {}
        for term in sp.Add.make_args(sp.expand(a.args[0])):
            c, rest = term.as_coeff_Mul()
            if not c.is_Rational or rest.is_number or rest.has(sp.exp):
                return None
            vec[rest] = vec.get(rest, sp.Integer(0)) + c
            if rest not in rests:
                rests.append(rest)
        vectors.append(vec)
    if not rests:
        return None
    rests.sort(key=sp.default_sort_key)
    R, pivots = sp.Matrix([[v.get(r, 0) for r in rests] for v in vectors]).rref()
    basis = [sp.Add(*[R[i, j] * rests[j] for j in range(len(rests))]) for i in range(len(pivots))]
    coords = {a: [v.get(rests[p], sp.Integer(0)) for p in pivots] for a, v in zip(atoms, vectors)}
    symbols = sorted(expr.free_symbols, key=lambda x: x.name)
    point = {x: (sp.Rational(2, 3) + sp.Rational(k, 7)) if x.is_positive else
             (sp.Rational(1, 10) + sp.Rational(k, 37)) for k, x in enumerate(symbols)}
    gens = {}
    for k, g in enumerate(basis):
        L = reduce(sp.ilcm, [sp.Rational(t[k]).q for t in coords.values()], 1)
        decaying = bool(g.is_positive)
        value = sp.N(g.subs(point))
        if not value.is_real or value == 0:
            return None
        sign = -1 if decaying or value > 0 else 1
        gens[g] = (sp.Dummy(f"u{k}", positive=True), sp.Rational(sign, L), decaying)
    return gens, coords


def _models():
    J = sp.Symbol("J", positive=True)
    h = sp.Symbol("h", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    base = J * (a.vec @ b.vec)
    return [("dimer_2.0023", base + 2.0023 * h * (a.z + b.z), a.z + b.z),
            ("dimer_10007", base + 10007 * h * (a.z + b.z), a.z + b.z),
            ("dimer_2.0023_and_2", base + 2.0023 * h * a.z + 2 * h * b.z, a.z + b.z)]


def _run(H, A, seconds: float) -> float:
    start = time.perf_counter()
    r = sr.Model(H).response(A, budget=Budget(seconds=seconds))
    with Budget(seconds=seconds).start().running():
        r.derivation.static("isothermal")
        r.derivation.static("isolated")
        r.derivation.frequency()
        r.derivation.partition()
    return time.perf_counter() - start


def _baseline_in_child(name: str, cap: float) -> float | None:
    """Seconds of the earlier rule in a child process, or None when it exceeds ``cap``.

    A child, because the earlier rule spends its time in one call of the compiled factoring
    routine, which no timer inside the process can interrupt.
    """
    try:
        done = subprocess.run([sys.executable, __file__, "--baseline-one", name],
                              capture_output=True, text=True, timeout=cap)
    except subprocess.TimeoutExpired:
        return None
    if done.returncode != 0:
        raise RuntimeError(done.stderr)
    return float(done.stdout.split()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="cap the baseline at 20 s per model")
    ap.add_argument("--baseline-one", metavar="MODEL", help=argparse.SUPPRESS)
    args = ap.parse_args()
    models = {name: (H, A) for name, H, A in _models()}
    if args.baseline_one:
        _present._generators = _old_generators
        _derive.PRESENT_SHARE = 1.0          # no plain-form fallback: time the factoring itself
        print(_run(*models[args.baseline_one], 10**6))
        return
    cap = 20.0 if args.quick else 120.0
    print("decimal and large coefficients: Model.response + presented chi_T, chi_isol, "
          "chi(omega), Z")
    print(f"{'model':<22} {'now (s)':>9} {'baseline (s)':>14} {'ratio':>8}")
    summary = None
    for name, (H, A) in models.items():
        now = _run(H, A, 600.0)
        old = _baseline_in_child(name, cap)
        shown = f"{old:.2f}" if old is not None else f"> {cap:g}"
        ratio = f"{old / now:.0f}" if old is not None else f"> {cap / now:.0f}"
        print(f"{name:<22} {now:>9.2f} {shown:>14} {ratio:>8}", flush=True)
        if summary is None:
            summary = (now, old)
    now, old = summary
    print(f"summary: dimer_2.0023_seconds={now:.2f} baseline_seconds="
          f"{'%.2f' % old if old is not None else '>%g' % cap} ratio="
          f"{'%.0f' % (old / now) if old is not None else '>%.0f' % (cap / now)}")


if __name__ == "__main__":
    main()
