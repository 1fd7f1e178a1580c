r"""The common slips of a hand derivation, each as a test (layer: checks).

Each slip is applied to the derived result (or to the formula) and re-tested at the sample
points of the comparison; :data:`SLIPS` is the order in which they are tried, and the first
that reproduces the formula at every point is reported (docs/checking.md lists them). Imports
sympy, mpmath, :mod:`symresp.errors`, :mod:`symresp.models`, :mod:`symresp.response`.
"""

from __future__ import annotations

import random
from collections.abc import Callable, Mapping
from fractions import Fraction

import mpmath as mp
import sympy as sp

from ..conventions import beta
from ..errors import InputError
from ..response import to_mp
from ._points import PREC_BITS, WORKING_DIGITS, LevelData, draw_parameters, draw_real
from ._sampling import _OMEGA_IM, _OMEGA_RE, _TIME, AGREE_RTOL, _Comparison, _Sample

#: A formula within this relative deviation everywhere (but not within the agreement
#: tolerance) is reported as "agrees only to N digits" (rounded constants).
ROUNDED_RTOL = 1e-3
#: Partition-function and level-energy fits are attempted for at most this many levels.
MAX_FIT_LEVELS = 10
#: Denominators allowed when a fitted energy is written back as a rational combination.
_MAX_DENOMINATOR = 24
#: Factors tested as overall-factor slips, with their names.
_FACTORS = ((sp.Integer(2), "2"), (sp.Rational(1, 2), "1/2"), (sp.Integer(4), "4"),
            (sp.Rational(1, 4), "1/4"), (sp.Integer(-2), "-2"), (sp.Rational(-1, 2), "-1/2"))
#: Coupling conventions: the formula equals ours with p -> k p.
_COUPLINGS = (sp.Integer(2), sp.Rational(1, 2), sp.Integer(-1), sp.Integer(-2), sp.Rational(-1, 2))

Slip = tuple[str, str]  # (code, diagnosis)


def _slip_factor(c: _Comparison) -> Slip | None:
    if c.matches([-v for v in c.ours]):
        return "sign", "overall sign: your expression is minus ours"
    for k, name in _FACTORS:
        kk = to_mp(k).real
        if c.matches([kk * v for v in c.ours]):
            if k < 0:
                return "factor", f"overall sign and factor {name[1:]}: your expression is {name} times ours"
            return "factor", f"overall factor {name}: your expression is {name} times ours"
    return None


def _slip_temperature(c: _Comparison) -> Slip | None:
    if beta not in c.theirs_expr.free_symbols:
        return None
    kB = c.units.k_B if c.units else sp.Integer(1)
    swapped = [c.eval_theirs(s, beta_value=1 / (kB * s.beta)) for s in c.samples]
    if any(v is None for v in swapped):
        return None
    sc = c.scale(c.ours)
    if all(c.close(a, b, sc) for a, b in zip(swapped, c.ours)):
        return "T-beta", ("T and beta swapped: your expression becomes ours when T and beta = 1/T "
                          "are exchanged")
    return None


def _slip_static_kind(c: _Comparison) -> Slip | None:
    if c.quantity not in ("isothermal", "isolated"):
        return None
    other = "isolated" if c.quantity == "isothermal" else "isothermal"
    if not c.matches([c.eval_ours(s, quantity=other) for s in c.samples]):
        return None
    term = sp.sstr(c.d.variance_term())
    if c.quantity == "isothermal":
        return ("isolated-for-isothermal",
                f"your expression is the isolated susceptibility; the isothermal one adds {term}")
    return ("isothermal-for-isolated",
            f"your expression is the isothermal susceptibility; the isolated one (chi(omega -> 0)) "
            f"leaves out {term}")


def _slip_prescription(c: _Comparison) -> Slip | None:
    if c.quantity == "frequency":
        if c.matches([c.eval_ours(s, z=c.z(s, -c.half)) for s in c.samples]):
            if c.half > 0:
                return "advanced", ("advanced instead of retarded: your expression is ours at "
                                    "omega - i0+ (the complex conjugate for A = B^dagger); the "
                                    "retarded function is analytic for Im omega > 0")
            return "advanced", ("retarded instead of advanced: your expression is ours at omega + i0+, "
                                "while the convention of this derivation puts the physical branch "
                                "at omega - i0+")
        if c.matches([c.eval_ours(s, z=-c.z(s)) for s in c.samples]):
            return "omega-reversed", ("advanced instead of retarded (omega -> -omega): your expression "
                                      "is ours with omega replaced by -omega (reversed Fourier sign)")
    if c.quantity == "time":
        if c.matches([c.eval_ours(s, time=-to_mp(s.t).real) for s in c.samples]):
            return "t-reversed", "time reversed: your expression is ours with t -> -t"
    return None


def _groups(c: _Comparison) -> dict[int, list[int]]:
    out: dict[int, list[int]] = {}
    for i, s in enumerate(c.samples):
        out.setdefault(s.group, []).append(i)
    return out


def _exp_shift(c: _Comparison, ratios: list[mp.mpc | None]) -> list[tuple[dict, mp.mpf]] | None:
    """If ratio_i = exp(-beta_i c_g) with one real c_g per parameter point g, the list of (params, c_g)."""
    out = []
    for g, idx in _groups(c).items():
        if len(idx) < 2:
            continue
        cs = []
        for i in idx:
            r = ratios[i]
            if r is None or abs(r.imag) > AGREE_RTOL * abs(r) or not r.real > 0:
                return None
            cs.append(-mp.log(r.real) / to_mp(c.samples[i].beta).real)
        ref = cs[0]
        if any(abs(x - ref) > 1e-12 * (1 + abs(ref)) for x in cs[1:]):
            return None
        out.append((c.samples[idx[0]].params, ref))
    return out or None


def _reduced_z(c: _Comparison, s: _Sample) -> mp.mpf:
    return c.data(s.params).reduced_partition(to_mp(s.beta).real)


def _slip_partition(c: _Comparison) -> Slip | None:
    """Missing or extra partition function, or (for Z itself) a shifted energy zero."""
    if any(abs(v) == 0 for v in c.ours) or any(abs(v) == 0 for v in c.theirs):
        return None
    ratio = [a / b for a, b in zip(c.theirs, c.ours)]
    if c.quantity == "partition":
        shift = _exp_shift(c, ratio)
        if shift and any(abs(x) > 1e-12 for _, x in shift):
            cexpr = _identify(c, shift)
            return "energy-zero", (f"an overall factor exp(-beta*c): energy zero shifted by "
                                   f"c = {cexpr} (Z depends on it, the susceptibilities do not)")
        return None
    zr = [_reduced_z(c, s) for s in c.samples]
    Z = sp.sstr(c.d.partition())
    if _exp_shift(c, [r / z for r, z in zip(ratio, zr)]):
        return "partition-missing", (f"missing partition function: your expression is ours times Z; "
                                     f"divide by Z = {Z}")
    if _exp_shift(c, [r * z for r, z in zip(ratio, zr)]):
        return "partition-extra", f"your expression is ours divided by Z = {Z} once more"
    shift = _exp_shift(c, ratio)
    if shift and any(abs(x) > 1e-12 for _, x in shift):
        cexpr = _identify(c, shift)
        return "energy-zero", (f"differs by a factor exp(-beta*c) with c = {cexpr}: numerator and Z "
                               f"use different energy zeros")
    return None


def _slip_coupling(c: _Comparison) -> Slip | None:
    for p in c.params:
        for k in _COUPLINGS:
            values = []
            for s in c.samples:
                params = dict(s.params)
                params[p] = k * params[p]
                values.append(c.eval_ours(s, params=params))
            if c.matches(values):
                new = sp.sstr(k * p)
                return "coupling", (f"coupling convention: your expression is ours with {p.name} -> {new}; "
                                    f"it belongs to the Hamiltonian with {new} in place of {p.name}")
    return None


def _fit_samples(c: _Comparison, n: int, params: Mapping | None = None) -> list[_Sample]:
    """n inverse temperatures spread over [1/5, 3] (with random frequencies / times) at one point."""
    rng = random.Random(len(c.samples) * 7919 + n)
    base = c.samples[0]
    params = base.params if params is None else params
    out = []
    for k in range(n):
        # spread beta deterministically so that the exponential fits are well posed
        b = sp.Rational(1, 5) + sp.Rational(k * 14, 5 * max(n - 1, 1))
        out.append(_Sample(-1, params, b, draw_real(rng, *_OMEGA_RE), draw_real(rng, *_OMEGA_IM),
                           draw_real(rng, *_TIME)))
    return out


def _level_text(c: _Comparison, a: int) -> str:
    lv = c.d.levels[a]
    return f"E = {sp.sstr(lv.energy)} (degeneracy {lv.degeneracy})"


def _their_partition(c: _Comparison, params: Mapping, n: int) -> list[tuple[mp.mpf, mp.mpc]] | None:
    r"""The reduced partition function hidden in the formula at ``n`` inverse temperatures.

    For Z itself :math:`Y = Z_{\rm yours}\,e^{\beta E_0}`; for a susceptibility, assuming the
    numerator is right, :math:`Y = Z'\,\chi_{\rm ours}/\chi_{\rm yours}` (a shifted energy zero
    cancels in the ratio). :math:`E_0` is the lowest level at this point.
    """
    data = c.data(params)
    out = []
    for s in _fit_samples(c, n, params):
        b = to_mp(s.beta).real
        th = c.eval_theirs(s)
        if th is None or th == 0:
            return None
        if c.quantity == "partition":
            y = th * mp.exp(b * min(data.energies))
        elif c.quantity == "isothermal":
            y = _isothermal_partition(data, b, th)
            if y is None:
                return None
        else:
            ours = c.eval_ours(s)
            if ours is None or ours == 0:
                return None
            y = data.reduced_partition(b) * ours / th
        out.append((b, y))
    return out


def _isothermal_partition(data: LevelData, b: mp.mpf, theirs: mp.mpc) -> mp.mpc | None:
    r"""Solve :math:`\chi_T = s(T_1 u - T_2 u^2)` for :math:`u = 1/Y`.

    With :math:`x_a` the Boltzmann factors, :math:`T_1 = \sum_{a\ne b}(x_a - x_b)W_{ab}/(E_b - E_a)
    + \beta\sum_a x_a W_{aa}` and :math:`T_2 = \beta(\sum_a x_a\langle A\rangle_a)
    (\sum_a x_a\langle B\rangle_a)`; of the two roots the one nearer :math:`1/Z'` is taken.
    """
    E = data.energies
    x = data.boltzmann(b)
    t1 = mp.fsum((x[i] - x[j]) * W / (E[j] - E[i]) for (i, j), W in data.weights if i != j)
    t1 += b * mp.fsum(x[i] * W for (i, j), W in data.weights if i == j)
    t2 = b * mp.fsum(x[i] * v for i, v in data.expect_A) * mp.fsum(x[i] * v for i, v in data.expect_B)
    target = theirs / data.sign
    if t2 == 0:
        return None if target == 0 else t1 / target
    disc = mp.sqrt(t1 * t1 - 4 * t2 * target)
    roots = [(t1 + disc) / (2 * t2), (t1 - disc) / (2 * t2)]
    u0 = 1 / data.reduced_partition(b)
    u = min(roots, key=lambda r: abs(r - u0))
    return None if u == 0 else 1 / u


def _single_exponential(values: list[tuple[mp.mpf, mp.mpc]]) -> tuple[mp.mpf, mp.mpf] | None:
    """(g, E) when every value equals g exp(-beta E) with real g != 0 and real E."""
    if len(values) < 3 or any(abs(v.imag) > 1e-20 * (1 + abs(v)) for _, v in values):
        return None
    (b0, r0), (b1, r1) = values[0], values[1]
    r0, r1 = r0.real, r1.real
    if r0 == 0 or r1 == 0 or (r0 > 0) != (r1 > 0):
        return None
    E = -mp.log(r1 / r0) / (b1 - b0)
    g = r0 * mp.exp(b0 * E)
    for b, r in values[2:]:
        if abs(g * mp.exp(-b * E) - r) > 1e-12 * (1 + abs(r)):
            return None
    return g, E


def _slip_partition_fit(c: _Comparison) -> Slip | None:
    r"""Recognise a wrong partition function inside the formula.

    With :math:`x_a = e^{-\beta(E_a - E_0)}` and :math:`Z' = \sum_a d_a x_a`: an exact fit of
    :math:`Y = Z' + \sum_a \delta_a x_a` (missing level, wrong degeneracy), a constant
    :math:`Y` (Z replaced by a number), or :math:`Y - Z' + d_a x_a` a single exponential
    (level a at a wrong energy in Z only, or an extra term at an energy not in the spectrum).
    """
    L = len(c.d.levels)
    if L > MAX_FIT_LEVELS:
        return None
    params = c.samples[0].params
    values = _their_partition(c, params, L + 3)
    if values is None:
        return None
    data = c.data(params)
    zr = [data.reduced_partition(b) for b, _ in values]
    X = [data.boltzmann(b) for b, _ in values]
    found = _degeneracy_fit(c, values, zr, X)
    if found is not None:
        return found
    y0 = values[0][1]
    if L > 1 and all(abs(y - y0) <= 1e-12 * abs(y0) for _, y in values):
        n = _rational_text(y0.real) if abs(y0.imag) <= 1e-20 else None
        total = sum(lv.degeneracy for lv in c.d.levels)
        what = f"the constant {n or mp.nstr(y0, 12)}"
        if n is not None and sp.Rational(n) == total:
            what += " (its infinite-temperature value, the number of states)"
        return "partition-constant", f"wrong partition function: your expression uses {what} for Z"
    e0 = min(data.energies)
    for a in [None, *range(L)]:
        res = [(b, y - z + (0 if a is None else data.degeneracies[a] * x[a]))
               for (b, y), z, x in zip(values, zr, X)]
        fit = _single_exponential(res)
        if fit is None:
            continue
        g, E = fit
        E_abs = E + e0
        if any(abs(E_abs - e) <= 1e-12 * (1 + abs(e)) for e in data.energies):
            continue
        energy = _identify_energy(c, a, E_abs)
        if a is not None and abs(g - data.degeneracies[a]) <= 1e-12 * abs(g):
            return "level-energy", (f"wrong level energy in Z: your partition function has the level "
                                    f"{_level_text(c, a)} at E = {energy}")
        gq = _rational_text(g) or mp.nstr(g, 12)
        term = "exp(-beta*E)" if gq == "1" else f"{gq}*exp(-beta*E)"
        return "partition-extra-term", (f"wrong partition function: your Z has an extra term "
                                        f"{term} with E = {energy}, not an energy of the "
                                        f"spectrum" + ("" if a is None else
                                                       f", in place of the level {_level_text(c, a)}"))
    return None


def _identify_energy(c: _Comparison, a: int | None, first: mp.mpf) -> str:
    """Repeat the single-exponential fit at further parameter points and write E as a formula."""
    found = [(c.samples[0].params, first)]
    for _ in range(len(c.params) + 1):
        params = draw_parameters(c.rng, c.params)
        values = _their_partition(c, params, 3)
        if values is None:
            break
        data = c.data(params)
        res = [(b, y - data.reduced_partition(b) + (0 if a is None else data.degeneracies[a] * data.boltzmann(b)[a]))
               for b, y in values]
        fit = _single_exponential(res)
        if fit is None:
            break
        found.append((params, fit[1] + min(data.energies)))
    return _identify(c, found)


def _degeneracy_fit(c: _Comparison, values, zr, X) -> Slip | None:
    L = len(c.d.levels)
    if L < 2:
        return None
    with mp.workdps(WORKING_DIGITS + 10):
        rhs = [y - z for (_, y), z in zip(values, zr)]
        try:
            delta = mp.lu_solve(mp.matrix(X[:L]), mp.matrix(rhs[:L]))
        except ZeroDivisionError:
            return None
        for r, y in zip(X[L:], rhs[L:]):
            pred = mp.fsum(d * x for d, x in zip(delta, r))
            if abs(pred - y) > 1e-12 * (1 + abs(y)):
                return None
        ints = []
        for dval in delta:
            n = int(mp.nint(dval.real))
            if abs(dval - n) > 1e-10:
                return None
            ints.append(n)
    changed = [(a, n) for a, n in enumerate(ints) if n != 0]
    if not changed or len(changed) == L:
        # every level re-weighted is an overall factor in disguise, not a partition-function slip
        return None
    parts, missing = [], True
    for a, n in changed:
        g = c.d.levels[a].degeneracy
        if g + n == 0:
            parts.append(f"leaves out the level {_level_text(c, a)}")
        else:
            missing = False
            parts.append(f"counts the level E = {sp.sstr(c.d.levels[a].energy)} with degeneracy "
                         f"{g + n} instead of {g}")
    if missing:
        return "partition-level-missing", "a level is missing from Z: your partition function " + "; ".join(parts)
    return "partition-degeneracy", "wrong partition function: your Z " + "; ".join(parts)


def _solve_energies(c: _Comparison, fit: list[_Sample], moved: Callable[[list, mp.mpf], list],
                    origin: Callable[[list], mp.mpf]) -> mp.mpf | None:
    """The value x for which the levels ``moved(E, x)`` make ours reproduce the formula at every
    sample of ``fit`` (None if there is none); ``origin(E)`` is the x that leaves them as they are.

    One real unknown, found by a secant search from starting points on both sides of the origin
    at growing distances (multiples of the energy spread); the origin itself does not count.
    """
    data = c.data(fit[0].params)
    E = list(data.energies)
    th = [c.eval_theirs(s) for s in fit]
    if any(v is None for v in th):
        return None
    spread = max(abs(e) for e in E) + 1
    x0 = origin(E)

    def ours(x, s):
        return c.eval_ours(s, energies=moved(E, x))

    def f(x):
        v = ours(x, fit[0])
        if v is None:
            return mp.mpf(1e30)
        diff = v - th[0]
        return diff.real + diff.imag

    sc = max([abs(v) for v in th] + [mp.mpf(1e-30)])
    for step in (0.5, -0.5, 1, -1, 2, -2, 4, -4):
        try:
            x = mp.findroot(f, x0 + step * spread, verify=False)
        except (ValueError, ZeroDivisionError):
            continue
        x = mp.mpf(x.real) if isinstance(x, mp.mpc) else x
        if abs(x - x0) < 1e-10 * spread:
            continue
        vals = [ours(x, s) for s in fit]
        if all(v is not None and c.close(v, w, sc) for v, w in zip(vals, th)):
            return x
    return None


def _solve_level(c: _Comparison, a: int, fit: list[_Sample]) -> mp.mpf | None:
    """Energy of level ``a`` that makes ours reproduce the formula at every sample of ``fit``."""

    def with_level(E, eps):
        energies = list(E)
        energies[a] = eps
        return energies

    return _solve_energies(c, fit, with_level, lambda E: E[a])


def _at_further_points(c: _Comparison, fit: list[_Sample], first: mp.mpf,
                       solve: Callable[[list[_Sample]], mp.mpf | None]) -> list[tuple[dict, mp.mpf]]:
    """``first`` (the solution at the parameters of ``fit``) and the solutions of ``solve`` at
    further random parameter points with the same temperatures and frequencies, so that
    :func:`_identify` can write the solution as a formula; stops at the first point without one.
    """
    found = [(fit[0].params, first)]
    for _ in range(len(c.params) + 1):
        params = draw_parameters(c.rng, c.params)
        value = solve([_Sample(-1, params, s.beta, s.x, s.y, s.t) for s in fit])
        if value is None:
            break
        found.append((params, value))
    return found


def _mean_product(c: _Comparison, s: _Sample) -> mp.mpc | None:
    r""":math:`s\beta\langle A\rangle\langle B\rangle` at a sample (the term the isothermal
    susceptibility subtracts)."""
    try:
        data = c.data(s.params)
    except (ZeroDivisionError, ValueError, InputError):
        return None
    b = to_mp(s.beta).real
    with mp.workprec(PREC_BITS):
        x = data.boltzmann(b)
        zr = mp.fsum(d * xa for d, xa in zip(data.degeneracies, x))
        mA = mp.fsum(x[a] * v for a, v in data.expect_A) / zr
        mB = mp.fsum(x[a] * v for a, v in data.expect_B) / zr
        return mp.mpc(data.sign * b * mA * mB)


def _slip_mean_product(c: _Comparison) -> Slip | None:
    r"""The isothermal susceptibility without its :math:`-\beta\langle A\rangle\langle B\rangle`
    term: invisible in zero field (where :math:`\langle A\rangle = 0` by symmetry), wrong in a
    field."""
    if c.quantity != "isothermal":
        return None
    terms = [_mean_product(c, s) for s in c.samples]
    if any(t is None for t in terms) or all(t == 0 for t in terms):
        return None
    if not c.matches([v + t for v, t in zip(c.ours, terms)]):
        return None
    mean_a = sp.sstr(sp.factor(c.d.expectation("A")))
    return ("mean-product-missing",
            f"missing -beta*<A>*<B>: your expression is beta*(<AB> + ...) without subtracting "
            f"beta*<A>*<B>; it vanishes only where <A> = 0 (zero field), here <A> = {mean_a}")


def _multiplets(c: _Comparison) -> list[tuple[int, ...]]:
    """Groups of levels that form one multiplet: the same quantum numbers apart from the
    magnetic one (Sz), or levels that coincide when one parameter (a field) is zero."""
    levels = c.d.levels
    groups: list[tuple[int, ...]] = []
    by_label: dict[tuple, list[int]] = {}
    for k, lv in enumerate(levels):
        keys = {tuple(sorted((n, v) for n, v in lab if n != "Sz")) for lab in lv.quantum_numbers}
        if len(keys) == 1 and next(iter(keys)):
            by_label.setdefault(next(iter(keys)), []).append(k)
    groups += [tuple(v) for v in by_label.values()]
    for p in c.params:
        by_zero: dict[sp.Expr, list[int]] = {}
        for k, lv in enumerate(levels):
            if lv.implicit or p not in lv.energy.free_symbols:
                continue
            by_zero.setdefault(sp.expand(lv.energy.subs(p, 0)), []).append(k)
        groups += [tuple(v) for v in by_zero.values()]
    out = []
    for g in groups:
        if 2 <= len(g) < len(levels) and g not in out:
            out.append(g)
    return out


def _solve_shift(c: _Comparison, group: tuple[int, ...], fit: list[_Sample]) -> mp.mpf | None:
    """Common shift of the levels of ``group`` that makes ours reproduce the formula at every
    sample of ``fit`` (None if there is none)."""

    def shifted(E, delta):
        return [e + delta if k in group else e for k, e in enumerate(E)]

    return _solve_energies(c, fit, shifted, lambda E: 0)


def _multiplet_name(c: _Comparison, group: tuple[int, ...]) -> str:
    """`` S=1, ...``: the quantum numbers (apart from Sz) the levels of ``group`` share, or ''."""
    labels = {tuple((n, v) for n, v in lab if n != "Sz") for k in group
              for lab in c.d.levels[k].quantum_numbers}
    if len(labels) == 1 and next(iter(labels)):
        return " " + ", ".join(f"{n}={v}" for n, v in next(iter(labels)))
    return ""


def _slip_multiplet_energy(c: _Comparison) -> Slip | None:
    """A whole multiplet (all its Zeeman components) placed at a wrong energy."""
    L = len(c.d.levels)
    if L < 3 or L > MAX_FIT_LEVELS:
        return None
    fit = _fit_samples(c, 4)
    for group in _multiplets(c):
        delta = _solve_shift(c, group, fit)
        if delta is None:
            continue
        found = _at_further_points(c, fit, delta, lambda more: _solve_shift(c, group, more))
        shift = _identify(c, found)
        lv = c.d.levels
        energies = ", ".join(sp.sstr(lv[k].energy) for k in group)
        name = _multiplet_name(c, group)
        rest = tuple(k for k in range(L) if k not in group)
        also = ""
        if len(rest) == 1:
            also = (f"; equivalently the level E = {sp.sstr(lv[rest[0]].energy)} moved the "
                    f"other way (only differences of levels enter)")
        elif rest in _multiplets(c):
            oname = _multiplet_name(c, rest)
            also = (f"; equivalently the other multiplet{oname} moved the other way (only "
                    f"differences of levels enter)")
        return "multiplet-energy", (f"wrong multiplet energy: your expression matches ours with "
                                    f"the whole multiplet{name} ({len(group)} levels, E = "
                                    f"{energies}) shifted by {shift}{also}")
    return None


def _slip_level_energy(c: _Comparison) -> Slip | None:
    L = len(c.d.levels)
    if L < 2 or L > MAX_FIT_LEVELS:
        return None
    fit = _fit_samples(c, 4)
    for a in range(L):
        eps = _solve_level(c, a, fit)
        if eps is None:
            continue
        found = _at_further_points(c, fit, eps, lambda more: _solve_level(c, a, more))
        new = _identify(c, found)
        return "level-energy", (f"wrong level energy: your expression matches ours with the level "
                                f"{_level_text(c, a)} moved to E = {new}")
    return None


def _identify(c: _Comparison, values: list[tuple[dict, mp.mpf]]) -> str:
    """Write values known at parameter points as a rational linear combination of the parameters.

    Falls back to the number at the first point when the values do not fit such a form.
    """
    n = len(c.params)
    first = values[0]
    numeric = f"{float(first[1]):.10g} at " + ", ".join(f"{p.name} = {float(v):.6g}" for p, v in first[0].items())
    if n == 0:
        return _rational_text(first[1]) or numeric
    if len(values) < n + 2:
        return numeric
    with mp.workdps(WORKING_DIGITS + 10):
        rows = [[to_mp(params[p]).real for p in c.params] + [mp.mpf(1)] for params, _ in values]
        rhs = [v for _, v in values]
        try:
            coef = mp.lu_solve(mp.matrix(rows[:n + 1]), mp.matrix(rhs[:n + 1]))
        except ZeroDivisionError:
            return numeric
        for r, y in zip(rows[n + 1:], rhs[n + 1:]):
            if abs(mp.fsum(a * b for a, b in zip(coef, r)) - y) > 1e-15 * (1 + abs(y)):
                return numeric
    expr = sp.Integer(0)
    for k, sym in enumerate(list(c.params) + [sp.Integer(1)]):
        q = _rational(coef[k])
        if q is None:
            return numeric
        expr += q * sym
    return sp.sstr(expr)


def _rational(x: mp.mpf) -> sp.Rational | None:
    frac = Fraction(str(mp.nstr(x, WORKING_DIGITS))).limit_denominator(_MAX_DENOMINATOR)
    if abs(x - mp.mpf(frac.numerator) / frac.denominator) > 1e-15 * (1 + abs(x)):
        return None
    return sp.Rational(frac.numerator, frac.denominator)


def _rational_text(x: mp.mpf) -> str | None:
    q = _rational(x)
    return None if q is None else sp.sstr(q)


def _slip_rounded(c: _Comparison) -> Slip | None:
    worst = mp.mpf(0)
    for a, b in zip(c.theirs, c.ours):
        m = max(abs(a), abs(b))
        if m == 0:
            continue
        worst = max(worst, abs(a - b) / m)
    if 0 < worst < ROUNDED_RTOL:
        digits = int(mp.floor(-mp.log10(worst)))
        return "rounded", (f"agrees to about {digits} digits only: rounded constants in your "
                           f"expression?")
    return None


def _slip_partial(c: _Comparison) -> Slip | None:
    sc = c.scale(c.ours)
    good = sum(c.close(a, b, sc) for a, b in zip(c.theirs, c.ours))
    if 0 < good < len(c.samples):
        return "partial", (f"agrees at {good} of {len(c.samples)} random points only: a formula valid "
                           f"on part of the parameter domain (sign of a coupling, ordering of levels)?")
    return None


#: Slips in the order they are tested; the first that reproduces the formula is reported.
SLIPS: tuple[Callable[[_Comparison], Slip | None], ...] = (
    _slip_factor, _slip_temperature, _slip_static_kind, _slip_mean_product, _slip_prescription,
    _slip_partition, _slip_coupling, _slip_multiplet_energy, _slip_partition_fit,
    _slip_level_energy, _slip_rounded, _slip_partial,
)
