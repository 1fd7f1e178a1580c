r"""Evaluator programs: straight-line sympy assignments in three stages (layer: emit).

An evaluator is split by what its values depend on, so that work is done once per call at the
coarsest level possible:

* stage P (parameters only): level energies, exact spacings, weights, level coefficients and
  their parameter derivatives, with shared sub-expressions found by :func:`sympy.cse`;
* stage B (temperature): Boltzmann factors relative to the lowest level, the partition sum,
  the stable thermal pair factors and the static susceptibilities, or the pole coefficients;
* stage W (frequency or time): the pole sum on the grid.

A :class:`Program` is printed once with the array printer and, for stages P and B, once with
the scalar printer (the all-scalar fast path). The Jacobian program is obtained by forward
differentiation of the stage-B program (:func:`differentiate`), using the ``fdiff`` of the
functions in :mod:`._functions`; derivatives of the stage-P quantities are exact symbolic
derivatives.

Imports: sympy, :mod:`._functions`, :mod:`._plan`, :mod:`._printers`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import sympy as sp

from .._tolerances import DEGENERACY_RTOL as _DEGENERACY_RTOL
from ._functions import (AsComplex, AtMin, BlockEigen, Boltzmann, BoltzmannT, Causal, DegeneracyTol, ExpDiv,
                         ExpDiv2, Keep, LevelMin, RootPick)
from ._plan import Pair, Plan
from ._printers import ConstantTable, freeze_constants

__all__ = ["Program", "params_program", "static_program", "jacobian_program",
           "poles_program", "omega_program", "spectral_program", "time_program",
           "energies_program", "differentiate", "freeze_plan", "shared_subexpressions", "BETA",
           "DEGENERACY_RTOL"]

#: Relative level-grouping tolerance of the isolated susceptibility (symresp._tolerances).
DEGENERACY_RTOL = sp.Float(_DEGENERACY_RTOL)

BETA = sp.Symbol("_beta", positive=True)
TEMPERATURE = sp.Symbol("_T", positive=True)
_X = sp.Symbol("_x", real=True)          # omega or t on the grid
_ETA = sp.Symbol("_eta", positive=True)
_Z = sp.Symbol("_z")


def _s(name: str, real: bool = True) -> sp.Symbol:
    return sp.Symbol(name, real=True) if real else sp.Symbol(name)


@dataclass(frozen=True, slots=True)
class Program:
    """A function body: ``lines`` of (symbol, expression), the tuple it unpacks and returns."""

    name: str
    args: tuple[str, ...]
    unpack: tuple[sp.Symbol, ...]            # names unpacked from the argument ``_P``
    lines: tuple[tuple[sp.Symbol, sp.Expr], ...]
    returns: tuple[sp.Expr, ...]
    single: bool = False                     # return returns[0] rather than a tuple


# ---------------------------------------------------------------------------------- symbols
def _E(a): return _s(f"_E{a}")
def _c(a): return sp.Symbol(f"_c{a}", nonnegative=True)
def _w(k): return _s(f"_w{k}")
def _S(k): return _s(f"_S{k}", real=False)
def _D(k): return _s(f"_D{k}", real=False)
def _C(a): return _s(f"_C{a}", real=False)
def _al(a): return _s(f"_al{a}", real=False)
def _be(a): return _s(f"_be{a}", real=False)
def _da(a): return _s(f"_da{a}", real=False)     # alpha_a minus alpha of the lowest level
def _db(a): return _s(f"_db{a}", real=False)
def _x(a): return sp.Symbol(f"_x{a}", positive=True)
def _g(k): return sp.Symbol(f"_g{k}", nonnegative=True)
def _dv(q: sp.Symbol, i: int) -> sp.Symbol:      # d q / d theta_i, stage P (real if q is)
    return _s(f"{q.name}_d{i}", real=bool(q.is_real))


_TOL = _s("_tol")
_EMIN = _s("_emin")


def _freeze(e: sp.Expr) -> sp.Expr:
    return freeze_constants(sp.sympify(e))  # safe: a sympy object or number from symresp, never user text


def freeze_plan(plan: Plan, table: ConstantTable) -> Plan:
    """``plan`` with every irrational constant of its levels, pairs, level coefficients and
    semi-closed blocks converted to a Float through ``table``: the programs of one module
    read the plan many times, and each constant is then converted once for all of them."""
    f = table.freeze

    def pair(p: Pair) -> Pair:
        return Pair(p.a, p.b, f(p.w), f(p.S), f(p.D))

    def block(eb):
        return replace(eb, others=tuple(f(o) for o in eb.others),
                       matrix=tuple(f(e) for e in eb.matrix))

    return replace(plan, energies=tuple(f(e) for e in plan.energies),
                   pairs=tuple(pair(p) for p in plan.pairs),
                   fluctuation=tuple(f(e) for e in plan.fluctuation),
                   mean_a=tuple(f(e) for e in plan.mean_a),
                   mean_b=tuple(f(e) for e in plan.mean_b),
                   eigen=tuple(block(eb) for eb in plan.eigen))


def _flat(e: sp.Expr) -> bool:
    """A number, a symbol, a number times a symbol, or a sum of those."""
    if e.is_Number or e.is_Symbol:
        return True
    if e.is_Mul:
        return len(e.args) == 2 and e.args[0].is_Number and e.args[1].is_Symbol
    if e.is_Add:
        return all(_flat(a) and not a.is_Add for a in e.args)
    return False


def shared_subexpressions(exprs: list) -> tuple[list, list]:
    """:func:`sympy.cse` of ``exprs`` (symbols ``_q0, _q1, ...``), skipped where every
    expression is flat (levels linear in the parameters, numeric weights: the common case of
    a large model with one scale, where cse finds nothing worth a line and costs seconds)."""
    if all(_flat(e) for e in exprs):
        return [], list(exprs)
    return sp.cse(exprs, symbols=sp.numbered_symbols("_q"), order="canonical")


# ---------------------------------------------------------------------------------- stage P
def _root_lines(plan: Plan) -> list[tuple[sp.Symbol, sp.Expr]]:
    """Each semi-closed block diagonalised at the point (``plan.eigen``): its implicit levels
    and the entries of their projectors."""
    lines: list[tuple[sp.Symbol, sp.Expr]] = []
    for eb in plan.eigen:
        lines.append((eb.holder, BlockEigen(eb.deg, eb.mult, len(eb.others), len(eb.R),
                                            *[_freeze(o) for o in eb.others],
                                            *[_freeze(e) for e in eb.matrix], *eb.R, *eb.Rinv)))
        lines += [(sym, RootPick(eb.holder, k)) for sym, k in eb.roots if sym is not None]
        nn = len(eb.projectors[0])
        for k, syms in enumerate(eb.projectors):
            lines += [(x, RootPick(eb.holder, eb.deg + k * nn + i)) for i, x in enumerate(syms)]
    # Semi-closed blocks of any size (_eigen.semi_plan): parts, roots and weights.
    lines += [(sym, _freeze(e)) for sym, e in plan.semi]
    return lines


def _root_derivative_lines(plan: Plan) -> tuple[list, dict]:
    """d lambda / d theta_i per root (implicit differentiation), and the map to their symbols."""
    lines, out = [], {}
    for i, th in enumerate(plan.parameters):
        for rs in plan.roots:
            for sym, _ in rs.picks:
                d = rs.derivative(sym, th)
                if d != 0:
                    dsym = _dv(sym, i)
                    lines.append((dsym, _freeze(d)))
                    out[(sym, i)] = dsym
    return lines, out


def _total_derivative(expr: sp.Expr, i: int, th: sp.Symbol, plan: Plan, droot: dict) -> sp.Expr:
    """d expr / d theta_i, the implicit roots in ``expr`` depending on theta_i too."""
    d = sp.diff(expr, th)
    for rs in plan.roots:
        for sym, _ in rs.picks:
            if (sym, i) in droot and expr.has(sym):
                d += sp.diff(expr, sym) * droot[(sym, i)]
    return d


def params_program(plan: Plan, kind: str) -> Program:
    """Stage P for ``kind`` in {"isothermal", "isolated", "jacobian", "dynamic"}.

    Returns the level offsets ``c_a = E_a - E_min``, the spacings ``w_k``, weights and level
    coefficients (and their derivatives for "jacobian") that stage B reads.
    """
    L = len(plan.energies)
    theta = plan.parameters
    targets: list[tuple[sp.Symbol, sp.Expr]] = [(_E(a), e) for a, e in enumerate(plan.energies)]
    targets += [(_w(k), p.w) for k, p in enumerate(plan.pairs)]
    targets += [(_S(k), p.S) for k, p in enumerate(plan.pairs) if p.S != 0]
    if kind == "dynamic":
        targets += [(_D(k), p.D) for k, p in enumerate(plan.pairs) if p.D != 0]
    elif kind != "isolated":
        targets += [(_C(a), C) for a, C in enumerate(plan.fluctuation) if C != 0]
        if plan.has_covariance:
            targets += [(_al(a), v) for a, v in enumerate(plan.mean_a)]
            targets += [(_be(a), v) for a, v in enumerate(plan.mean_b)]
    derivs: list[tuple[sp.Symbol, sp.Expr]] = []
    head = _root_lines(plan)
    if kind == "jacobian":
        dlines, droot = _root_derivative_lines(plan)
        head += dlines
        for i, th in enumerate(theta):
            for sym, expr in targets:
                if sym.name.startswith("_w"):
                    continue              # spacings are cached values (see ExpDiv)
                d = _total_derivative(expr, i, th, plan, droot)
                if d != 0:
                    derivs.append((_dv(sym, i), d))
    all_targets = targets + derivs
    exprs = [_freeze(e) for _, e in all_targets]
    repl, reduced = shared_subexpressions(exprs)
    lines = head + [(s, e) for s, e in repl] + [(sym, e) for (sym, _), e in zip(all_targets, reduced)]
    energies = [_E(a) for a in range(L)]
    lines.append((_EMIN, LevelMin(*energies)))
    lines += [(_c(a), _E(a) - _EMIN) for a in range(L)]
    out: list[sp.Expr] = [_c(a) for a in range(L)] + [_w(k) for k in range(len(plan.pairs))]
    out += [s for s, _ in targets if s.name.startswith(("_S", "_D", "_C"))]
    if kind in ("isolated", "jacobian"):
        lines.append((_TOL, DegeneracyTol(DEGENERACY_RTOL, *energies)))
        out.append(_TOL)
    if kind in ("isothermal", "jacobian"):
        if plan.has_covariance:
            ref_a = _s("_ala", real=False)
            ref_b = _s("_bea", real=False)
            lines.append((ref_a, AtMin(L, *energies, *[_al(a) for a in range(L)])))
            lines.append((ref_b, AtMin(L, *energies, *[_be(a) for a in range(L)])))
            lines += [(_da(a), _al(a) - ref_a) for a in range(L)]
            lines += [(_db(a), _be(a) - ref_b) for a in range(L)]
            out += [_da(a) for a in range(L)] + [_db(a) for a in range(L)]
    out += [s for s, _ in derivs]
    return Program(f"_params_{kind}", tuple(p.name for p in theta), (), tuple(lines), tuple(out))


def energies_program(plan: Plan) -> Program:
    """Level energies only (for ``energies(*params)``)."""
    exprs = [_freeze(e) for e in plan.energies]
    repl, reduced = shared_subexpressions(exprs)
    lines = _root_lines(plan) + list(repl) + [(_E(a), e) for a, e in enumerate(reduced)]
    return Program("_energies", tuple(p.name for p in plan.parameters), (), tuple(lines),
                   tuple(_E(a) for a in range(len(plan.energies))))


# ---------------------------------------------------------------------------------- stage B
def _thermal_lines(plan: Plan) -> list[tuple[sp.Symbol, sp.Expr]]:
    """Boltzmann factors, partition sum and stable pair factors g~_k = (x_a - x_b)/(beta w)."""
    L = len(plan.energies)
    lines = [(_x(a), Boltzmann(BETA, _c(a))) for a in range(L)]
    Z = sp.Symbol("_Zr", positive=True)
    lines.append((Z, sp.Add(*[d * _x(a) for a, d in enumerate(plan.degeneracies)])))
    for k, p in enumerate(plan.pairs):
        lines.append((_g(k), ExpDiv(_x(p.a), _x(p.b), BETA, _w(k), _c(p.a), _c(p.b))))
    return lines


_ZR = sp.Symbol("_Zr", positive=True)


def _static_lines(plan: Plan, kind: str) -> tuple[list, sp.Symbol]:
    lines = _thermal_lines(plan)
    pair_sum = []
    for k, p in enumerate(plan.pairs):
        if p.S == 0:
            continue
        term = _S(k) * _g(k)
        pair_sum.append(Keep(_w(k), _TOL) * term if kind == "isolated" else term)
    chi = sp.Symbol("_chi", real=False)
    if kind == "isolated":
        N = sp.Add(*pair_sum)
        lines.append((chi, plan.sign * BETA * N / _ZR))
        return lines, chi
    elastic = [_C(a) * _x(a) for a, C in enumerate(plan.fluctuation) if C != 0]
    N = sp.Symbol("_N", real=False)
    if plan.has_covariance:
        elastic += [d * _da(a) * _db(a) * _x(a) for a, d in enumerate(plan.degeneracies)]
        Ma, Mb = sp.Symbol("_Ma", real=False), sp.Symbol("_Mb", real=False)
        lines.append((Ma, sp.Add(*[d * _da(a) * _x(a) for a, d in enumerate(plan.degeneracies)])))
        lines.append((Mb, sp.Add(*[d * _db(a) * _x(a) for a, d in enumerate(plan.degeneracies)])))
        lines.append((N, sp.Add(*pair_sum, *elastic)))
        lines.append((chi, plan.sign * BETA * (N - Ma * Mb / _ZR) / _ZR))
    else:
        lines.append((N, sp.Add(*pair_sum, *elastic)))
        lines.append((chi, plan.sign * BETA * N / _ZR))
    return lines, chi


def _prune(lines: list, outputs: list) -> list:
    """Drop assignments no output depends on (e.g. the partition sum of an empty response)."""
    need = set().union(*[sp.sympify(o).free_symbols for o in outputs]) if outputs else set()  # safe: a sympy object or number from symresp, never user text
    kept = []
    for sym, expr in reversed(lines):
        if sym in need:
            kept.append((sym, expr))
            need |= expr.free_symbols
    return kept[::-1]


def in_temperature(prog: Program) -> Program:
    """``prog`` (a function of ``_beta``) as a function of ``_T``, for the static kernels.

    Where beta appears, besides the Boltzmann factors, in one line only (the final
    ``beta N / Z`` of most susceptibilities), the factors become :class:`BoltzmannT`
    (e^{-c/T}, one division per level, one rounding) and that line is written with 1/T, so the
    grid's reciprocal is never formed. Otherwise a first line ``_beta = 1/_T`` keeps the rest
    as it was (a product by beta is cheaper than a division by T once beta exists). Apply
    after :func:`differentiate`.
    """
    T = TEMPERATURE
    lines = list(prog.lines)
    returns = list(prog.returns)
    users = [i for i, (_, e) in enumerate(lines)
             if e.has(BETA) and not isinstance(e, Boltzmann)]
    in_returns = any(sp.sympify(r).has(BETA) for r in returns)  # safe: sympy objects from symresp, never user text
    if len(users) + in_returns <= 1:
        lines = [(sym, expr.replace(Boltzmann, lambda b, c: BoltzmannT(T, c))
                  if expr.has(Boltzmann) else expr) for sym, expr in lines]
        if users:
            sym, expr = lines[users[0]]
            lines[users[0]] = (sym, expr.subs(BETA, 1 / T))
        else:
            returns = [sp.sympify(r).subs(BETA, 1 / T) for r in returns]  # safe: as above
    else:
        lines.insert(0, (BETA, 1 / T))
    args = tuple("_T" if a == "_beta" else a for a in prog.args)
    return Program(prog.name, args, prog.unpack, tuple(lines), tuple(returns), prog.single)


def static_program(plan: Plan, kind: str, unpack: tuple) -> Program:
    """Stage B: the static susceptibility ``kind`` ("isothermal" or "isolated") at ``_T``.

    ``unpack`` is the output tuple of the stage-P program ``params_program(plan, kind)``.
    """
    lines, chi = _static_lines(plan, kind)
    lines = _prune(lines, [chi])
    return in_temperature(Program(f"_{kind}", ("_beta", "_P"), unpack, tuple(lines), (chi,),
                                  single=True))


def _forward(expr: sp.Expr, d: dict) -> sp.Expr:
    """Directional derivative of ``expr`` given the derivatives ``d`` of its symbols.

    The chain rule is applied node by node (sums, products, integer powers, the program's
    functions through their ``fdiff``), visiting only the arguments that carry a non-zero
    derivative; anything else is left to :func:`sympy.diff`. A program line is a sum of
    hundreds of short products: this costs one pass over it, where ``diff`` rebuilds and
    re-examines every sub-expression per symbol.
    """
    if expr.is_Symbol:
        return d.get(expr, sp.Integer(0))
    if expr.is_Number or not any(d.get(f, 0) != 0 for f in expr.free_symbols):
        return sp.Integer(0)
    if expr.is_Add:
        return sp.Add(*[_forward(a, d) for a in expr.args])
    if expr.is_Mul:
        args = expr.args
        terms = []
        for i, a in enumerate(args):
            da = _forward(a, d)
            if da != 0:
                terms.append(sp.Mul(*args[:i], da, *args[i + 1:]))
        return sp.Add(*terms)
    if expr.is_Pow and expr.exp.is_Integer:
        db = _forward(expr.base, d)
        return expr.exp * expr.base ** (expr.exp - 1) * db
    if isinstance(expr, sp.Function) and type(expr).fdiff is not sp.Function.fdiff:
        terms = []
        for i, a in enumerate(expr.args):
            da = _forward(a, d)
            if da != 0:
                terms.append(expr.fdiff(i + 1) * da)
        return sp.Add(*terms)
    return _forward_by_diff(expr, d)


def _forward_by_diff(expr: sp.Expr, d: dict) -> sp.Expr:
    """:func:`_forward` through :func:`sympy.diff`, symbol by symbol (any other node)."""
    total = sp.Integer(0)
    for f in sorted(expr.free_symbols, key=lambda s: s.name):
        df = d.get(f, 0)
        if df != 0:
            total += sp.diff(expr, f) * df
    return total


def differentiate(lines: list, seeds: dict, tag: str) -> tuple[list, dict]:
    """Forward-mode derivative of a straight-line program.

    ``seeds`` maps input symbols to their derivative symbols; every assigned symbol ``y = f(..)``
    gets ``d y = sum_j (df/dx_j) d x_j`` (sympy ``diff``, with the ``fdiff`` of the special
    functions), named ``<y>_<tag>``. Function values that the program already holds in a symbol
    (the Boltzmann factors) are put back in terms of that symbol.
    """
    held = {expr: sym for sym, expr in lines if isinstance(expr, sp.Function)}
    d = dict(seeds)
    out = []
    for sym, expr in lines:
        total = _forward(expr, d).xreplace(held)
        if total == 0:
            d[sym] = sp.Integer(0)
            continue
        dsym = sp.Symbol(f"{sym.name}_{tag}", **({"real": True} if sym.is_real else {}))
        out.append((dsym, total))
        d[sym] = dsym
    return out, d


def jacobian_program(plan: Plan, kind: str, P_out: tuple) -> Program:
    """Stage B: the derivatives of the static susceptibility with respect to each parameter,
    at ``_T``.

    ``P_out`` is the output tuple of ``params_program(plan, "jacobian")``.
    """
    base, chi = _static_lines(plan, kind)
    base = _prune(base, [chi])
    available = {s.name for s in P_out}
    lines = []
    results = []
    for i, _ in enumerate(plan.parameters):
        seeds = {}
        for a in range(len(plan.energies)):
            name = f"_E{a}_d{i}"
            if name in available:
                seeds[_c(a)] = _s(name)        # levels of a Hermitian H: real
        for q in [_S(k) for k in range(len(plan.pairs))] + [_C(a) for a in range(len(plan.energies))]:
            if f"{q.name}_d{i}" in available:
                seeds[q] = _s(f"{q.name}_d{i}", real=False)
        for a in range(len(plan.energies)):
            if f"_al{a}_d{i}" in available:
                seeds[_da(a)] = _s(f"_al{a}_d{i}", real=False)
            if f"_be{a}_d{i}" in available:
                seeds[_db(a)] = _s(f"_be{a}_d{i}", real=False)
        dlines, dmap = differentiate(base, seeds, f"d{i}")
        lines += dlines
        results.append(dmap.get(chi, sp.Integer(0)))
    lines = base + _hoist_repeated(lines, ExpDiv2, "_h")
    return in_temperature(Program(f"_jacobian_{kind}", ("_beta", "_P"), P_out,
                                  tuple(_share_partials(lines, results)), tuple(results)))


def _hoist_repeated(lines: list, func: type, prefix: str) -> list:
    """Calls of ``func`` that several lines make (the derivative of a pair factor, the same for
    every parameter), computed once in lines of their own put first; their arguments are values
    of the base program."""
    seen: dict = {}
    calls = []
    for _, e in lines:
        found = e.atoms(func)
        calls.append(found)
        for call in found:
            seen[call] = seen.get(call, 0) + 1
    repeated = sorted((c for c, n in seen.items() if n > 1), key=sp.default_sort_key)
    names = {c: sp.Symbol(f"{prefix}{k}", real=True) for k, c in enumerate(repeated)}
    # Only the lines that make such a call are rewritten.
    return [(sym, c) for c, sym in names.items()] + [
        (s, e.xreplace(names) if any(c in names for c in found) else e)
        for (s, e), found in zip(lines, calls)]


#: Size (expression nodes) of the final derivative lines above which they are not searched for
#: shared partials.
SHARED_PARTIALS_NODES = 10000


def _larger_than(exprs: list, limit: int) -> bool:
    """Whether ``exprs`` hold more than ``limit`` nodes (counting stops at the limit)."""
    n = 0
    for e in exprs:
        for _ in sp.preorder_traversal(e):
            n += 1
            if n > limit:
                return True
    return False


def _share_partials(lines: list, results: list) -> list:
    """The lines with the final derivative of each parameter moved to the end and written
    with common sub-expressions shared: the partials of chi (d chi / d Z, Z^2, ...) do not
    depend on the parameter, and forward differentiation repeats them in every one."""
    finals = [r for r in results if isinstance(r, sp.Symbol)]
    if len(finals) < 2:
        return lines
    rest = [(s, e) for s, e in lines if s not in finals]
    exprs = {s: e for s, e in lines if s in finals}
    order = [s for s in finals if s in exprs]
    if _larger_than([exprs[s] for s in order], SHARED_PARTIALS_NODES):
        # Sums over thousands of pairs (a local operator on a large ring): sympy's cse orders
        # every large sum to test its sign (minutes for the 8-site ring); the partials are then
        # written once per parameter instead.
        return lines
    repl, reduced = sp.cse([exprs[s] for s in order], symbols=sp.numbered_symbols("_k"),
                           order="canonical")
    return rest + list(repl) + list(zip(order, reduced))


def poles_program(plan: Plan, what: str, unpack: tuple) -> Program:
    r"""Stage B of the dynamic functions: per group g the pole position r_g and coefficients.

    ``what``: "omega" -> (r^2, r^2 G, r H); "spectral" -> (r, r (G+H)/2, r (H-G)/2);
    "time" -> (r, r G, r H). See :mod:`._plan` for G_g and H_g.
    """
    lines = _thermal_lines(plan)
    out: list[sp.Expr] = []
    for gi, grp in enumerate(plan.groups):
        G = sp.Add(*[_S(k) * _g(k) for k, _ in grp.members if plan.pairs[k].S != 0])
        H = sp.Add(*[sg * _D(k) * _g(k) for k, sg in grp.members if plan.pairs[k].D != 0])
        Gs, Hs = sp.Symbol(f"_G{gi}", real=False), sp.Symbol(f"_H{gi}", real=False)
        r = _w(grp.rep)
        lines.append((Gs, BETA * G / _ZR))
        if H != 0:
            lines.append((Hs, BETA * H / _ZR))
        else:
            Hs = sp.Integer(0)
        if what == "omega":
            out += [r**2, r**2 * Gs, r * Hs]
        elif what == "spectral":
            out += [r, r * (Gs + Hs) / 2, r * (Hs - Gs) / 2]
        else:
            out += [r, r * Gs, r * Hs]
    lines = _prune(lines, out)
    return Program(f"_poles_{what}", ("_beta", "_P"), unpack, tuple(lines), tuple(out))


# ---------------------------------------------------------------------------------- stage W
def _coefficients(plan: Plan) -> list[tuple[sp.Symbol, sp.Symbol, sp.Symbol]]:
    return [(_s(f"_r{g}"), _s(f"_u{g}", real=False), _s(f"_v{g}", real=False))
            for g in range(len(plan.groups))]


def omega_program(plan: Plan) -> Program:
    r""":math:`\chi(z) = s\sum_g (u_g + v_g z)/(r_g^2 - z^2)` at :math:`z = \sigma\omega + i p \eta`.

    The coefficients arrive as (r_g^2, u_g, v_g) and :math:`z^2` is formed once per call, so a
    pole pair costs two array operations and an accumulation. Next to a pole the relative
    rounding error is about :math:`\epsilon\, r_g / |r_g - z|`: the same as that of the pole
    position r_g itself, which is known to a relative :math:`\epsilon` only.
    """
    coeff = _coefficients(plan)
    zz = sp.Symbol("_zz")
    lines = [(_Z, plan.frequency_sign * _X + sp.I * plan.prescription * _ETA), (zz, _Z**2)]
    acc = sp.Symbol("_acc")
    terms = []
    for (r2, u, v), grp in zip(coeff, plan.groups):
        has_d = any(plan.pairs[k].D != 0 for k, _ in grp.members)
        terms.append((u + v * _Z if has_d else u) / (r2 - zz))
    return _accumulate("_omega_w", ("_x", "_eta", "_P"), coeff, lines, terms, plan.sign, acc)


def _accumulate(name, args, coeff, lines, terms, factor, acc, complex_sum=False) -> Program:
    """The pole sum accumulated in place in ``acc``; ``complex_sum`` (a complex response)
    starts it complex, since its first term may be real at run time and a later one not."""
    body = list(lines)
    terms = [t for t in terms if t != 0]
    if not terms:
        return Program(name, args, tuple(s for c in coeff for s in c), tuple(body),
                       (sp.Integer(0) * _X,), single=True)
    for i, term in enumerate(terms):
        first = AsComplex(term) if complex_sum else term
        body.append((acc, first if i == 0 else acc + term))
    return Program(name, args, tuple(s for c in coeff for s in c), tuple(body),
                   (factor * acc if factor != 1 else acc,), single=True)


def spectral_program(plan: Plan, shape: str, complex_sum: bool) -> Program:
    r""":math:`\chi''(\omega) = s\sigma\sum_g [u_g\,L(\sigma\omega - r_g) + v_g\,L(\sigma\omega + r_g)]`,
    L a Lorentzian of half width :math:`\eta` (area :math:`\pi`) or a Gaussian of the same
    half width at half maximum and area."""
    coeff = _coefficients(plan)
    om = sp.Symbol("_om", real=True)
    lines = [(om, plan.frequency_sign * _X)]
    if shape == "lorentzian":
        e2 = sp.Symbol("_eta2", positive=True)
        lines.append((e2, _ETA**2))

        def line(x):
            return _ETA / (x**2 + e2)
    else:
        k = sp.Symbol("_gk", positive=True)       # 1/sigma, sigma = eta / sqrt(2 ln 2)
        norm = sp.Symbol("_gn", positive=True)    # pi / (sigma sqrt(2 pi))
        lines.append((k, sp.sqrt(2 * sp.log(2)) / _ETA))
        lines.append((norm, sp.sqrt(sp.pi / 2) * k))

        def line(x):
            return norm * sp.exp(-(x * k) ** 2 / 2)
    lines = [(s, _freeze(e)) for s, e in lines]
    terms = []
    for r, u, v in coeff:
        terms.append(u * line(om - r) + v * line(om + r))
    acc = sp.Symbol("_acc", real=True)
    return _accumulate(f"_spectral_{shape}_w", ("_x", "_eta", "_P"), coeff, lines, terms,
                       plan.sign * plan.frequency_sign, acc, complex_sum)


def time_program(plan: Plan, complex_sum: bool) -> Program:
    r""":math:`\chi(t) = s\,\theta(t)\sum_g [u_g \sin(r_g t) + i v_g \cos(r_g t)]` (retarded)."""
    coeff = _coefficients(plan)
    terms = []
    for (r, u, v), grp in zip(coeff, plan.groups):
        has_d = any(plan.pairs[k].D != 0 for k, _ in grp.members)
        terms.append(u * sp.sin(r * _X) + (sp.I * v * sp.cos(r * _X) if has_d else 0))
    acc = sp.Symbol("_acc")
    prog = _accumulate("_time_w", ("_x", "_eta", "_P"), coeff, [], terms, plan.sign, acc,
                       complex_sum)
    value = prog.returns[0]
    return Program(prog.name, prog.args, prog.unpack, prog.lines, (Causal(_X, value),), single=True)
