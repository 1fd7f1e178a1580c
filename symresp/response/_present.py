r"""Presentable forms of thermal expressions (layer: response).

Owns :func:`boltzmann_form`: a sum of exponentials :math:`e^{-\beta(E_a - E_{\rm ref})}` with
exact coefficients, written the way physicists print it. Imports sympy only.

Method
------
1. Every exponent is a sum :math:`\sum_j c_j g_j` of rational multiples of a few *generators*
   :math:`g_j` (``beta*J``, ``beta*h``, ``beta*sqrt(J**2 + h**2)``, ...). A generator that is
   positive under the symbols' assumptions gets a decaying variable
   :math:`u_j = e^{-q_j g_j}`; any other (a field, a detuning) a symmetric one
   :math:`u_j = e^{q_j g_j}`, where :math:`q_j` is the rational gcd of the :math:`c_j` (so a
   g-factor 2.0023 is scaled out rather than turned into powers of :math:`e^{g/10000}`). When
   the powers of some :math:`u_j` would span more than :data:`MAX_SPAN` the expression is
   returned unchanged (``None``): factoring such a polynomial takes minutes.
2. The expression becomes a rational function of the :math:`u_j`; numerator and denominator
   are factored as polynomials (``factor_list``): this finds, e.g., that the denominator of an
   isothermal susceptibility is the square of the reduced partition function.
3. Each factor is shifted by a power of the :math:`u_j`: decaying variables so that the
   lowest power is :math:`u^0` (Boltzmann factors :math:`\le 1` relative to the lowest level),
   symmetric ones so that the powers are centred; then the terms :math:`c\,u^k \pm c\,u^{-k}`
   of the symmetric variables become :math:`2c\cosh(k g)` and :math:`2c\sinh(k g)`, and
   :math:`\sinh(x)\cosh(x)` becomes :math:`\sinh(2x)/2`.

Only targeted polynomial operations are used (no ``simplify``). When an exponent is not linear
in generators the expression is returned unchanged (``None``), and the caller falls back.
"""

from __future__ import annotations

import math
from functools import reduce

import sympy as sp

__all__ = ["boltzmann_form", "merge_exponentials", "hyperbolic_ratio", "MAX_SPAN", "MAX_BOX"]

#: Largest span of powers of one Boltzmann variable u_j in a presented form. Beyond it the
#: polynomial in u_j would be too long to factor (a coefficient 2.0023 next to 2 in the
#: same exponent needs u = e^{g/10000} and powers up to ~20000); the plain form is kept.
MAX_SPAN = 256
#: Largest number of monomials of the box spanned by all the Boltzmann variables together.
MAX_BOX = 4096


def _generators(expr: sp.Expr):
    """(generators, monomials): generator g -> (u, s, decaying), with exp(c g) = u**(c/s), and
    for every exponential its coefficients on the generators; None if not of that shape.

    The generators are a basis of the exponents' span (row echelon form over QQ), so
    parameters that only ever appear in one combination, as in levels 0 and 2(J1 - J2), give
    one generator beta*(J1 - J2) rather than two.
    """
    atoms = sorted(expr.atoms(sp.exp), key=sp.default_sort_key)
    vectors, rests = [], []
    for a in atoms:
        vec: dict[sp.Expr, sp.Rational] = {}
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
    box = 1
    for k, g in enumerate(basis):
        # The step is the rational gcd of the coefficients on g (scaling the energies out):
        # exponents 0, +-20023/10000, +-20023/5000 of a g-factor give powers 0, +-1, +-2 of
        # u = e^{20023 g/10000}, not powers up to 40046 of e^{g/10000}; exact physical
        # constants (a Zeeman coefficient mu_B/E_u) with huge denominators likewise.
        cs = [sp.Rational(t[k]) for t in coords.values() if t[k] != 0]
        step = sp.Rational(reduce(math.gcd, [int(c.p) for c in cs], 0),
                           reduce(sp.ilcm, [int(c.q) for c in cs], 1))
        span = (max(max(cs), 0) - min(min(cs), 0)) / step if cs else 0
        box *= int(span) + 1
        if span > MAX_SPAN or box > MAX_BOX:
            return None                    # a polynomial too large to factor: plain form
        decaying = bool(g.is_positive)
        # Oriented so that the variable is a decaying Boltzmann factor at a generic point.
        value = sp.N(g.subs(point))
        if not value.is_real or value == 0:
            return None                    # not a thermal exponent (e.g. a phase)
        sign = -1 if decaying or value > 0 else 1
        gens[g] = (sp.Dummy(f"u{k}", positive=True), sign * step, decaying)
    return gens, coords


def _substitute(expr: sp.Expr, gens: dict, coords: dict) -> sp.Expr:
    items = list(gens.values())

    def monomial(a: sp.exp) -> sp.Expr:
        return sp.Mul(*[u ** (t / s) for t, (u, s, _) in zip(coords[a], items)])
    return expr.xreplace({a: monomial(a) for a in coords})


def _exponent(powers, items) -> sp.Expr:
    return sp.Add(*[k * s * rest for k, (rest, (_, s, _d)) in zip(powers, items)])


def _is_even_or_odd(terms, j: int) -> bool:
    """Whether a polynomial is even or odd under u_j -> 1/u_j about its centre (a field
    reversal), so that centring it gives pure cosh or pure sinh terms in that variable."""
    ks = [m[j] for m, _ in terms]
    top = min(ks) + max(ks)
    table = {m: c for m, c in terms}
    for parity in (1, -1):
        if all(sp.expand(table.get(m[:j] + (top - m[j],) + m[j + 1:], 0) - parity * c) == 0
               for m, c in terms):
            return True
    return False


def _factor_form(F: sp.Expr, items: list, centre: bool = True) -> tuple[sp.Expr, sp.Expr]:
    """(prefactor e^{...}, body) with F = prefactor * body in Boltzmann / hyperbolic form.

    Sign-free generators are centred (for cosh/sinh) only where that produces a +- pair;
    otherwise every variable is shifted to start at power 0.
    """
    us = [u for _, (u, _s, _d) in items]
    terms = sp.Poly(F, *us).terms()
    symmetric = [j for j, (_, (_u, _s, d)) in enumerate(items)
                 if not d and _is_even_or_odd(terms, j)] if centre else []
    shift = []
    for j, (_, (_u, _s, decaying)) in enumerate(items):
        ks = [m[j] for m, _ in terms]
        mid = j in symmetric
        shift.append(sp.Rational(min(ks) + max(ks), 2) if mid else sp.Integer(min(ks)))
    table = {tuple(sp.Integer(k) - s for k, s in zip(m, shift)): c for m, c in terms}
    done: set = set()
    out = []
    for mon, c in table.items():
        if mon in done:
            continue
        done.add(mon)
        mirror = tuple(-k if j in symmetric else k for j, k in enumerate(mon))
        sym_part = tuple(k if j in symmetric else 0 for j, k in enumerate(mon))
        rest = tuple(0 if j in symmetric else k for j, k in enumerate(mon))
        if mirror != mon and mirror in table and mirror not in done:
            c2 = table[mirror]
            x = _exponent(sym_part, items)
            if c == c2 or sp.expand(c - c2) == 0:
                out.append(2 * c * sp.exp(_exponent(rest, items)) * sp.cosh(x))
                done.add(mirror)
                continue
            if c == -c2 or sp.expand(c + c2) == 0:
                out.append(2 * c * sp.exp(_exponent(rest, items)) * sp.sinh(x))
                done.add(mirror)
                continue
        out.append(c * sp.exp(_exponent(mon, items)))
    body = sp.Add(*out)
    if centre and symmetric and not body.has(sp.cosh, sp.sinh):
        return _factor_form(F, items, centre=False)
    decays = sorted({e for e in body.atoms(sp.exp)}, key=sp.default_sort_key)
    if decays:
        body = sp.collect(body, decays)
    return sp.exp(_exponent(shift, items)), sp.factor_terms(body)


def _double_angle(expr: sp.Expr) -> sp.Expr:
    """sinh(x) cosh(x) -> sinh(2x)/2 inside products."""
    def fold(m: sp.Mul) -> sp.Expr:
        args = list(m.args)
        for s in [a for a in args if isinstance(a, sp.sinh)]:
            partner = sp.cosh(s.args[0])
            if partner in args and s in args:
                args.remove(s)
                args.remove(partner)
                args.append(sp.sinh(2 * s.args[0]) / 2)
        return sp.Mul(*args)
    return expr.replace(lambda e: e.is_Mul and e.has(sp.sinh) and e.has(sp.cosh), fold)


def boltzmann_form(expr: sp.Expr, *, min_generators: int = 1) -> sp.Expr | None:
    """``expr`` (a rational expression in exponentials of linear forms) in Boltzmann form.

    Returns None when the exponents are not linear in generators or there are fewer than
    ``min_generators`` of them.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.conventions import beta as b
    >>> J, h = sp.Symbol("J", positive=True), sp.Symbol("h", real=True)
    >>> Zr = 1 + sp.exp(-b * (J - h)) + sp.exp(-b * J) + sp.exp(-b * (J + h))
    >>> boltzmann_form(b * (sp.exp(b * h) - sp.exp(-b * h)) * sp.exp(-b * J) / Zr)
    2*beta*exp(-J*beta)*sinh(beta*h)/((2*cosh(beta*h) + 1)*exp(-J*beta) + 1)
    """
    found = _generators(expr)
    if found is None or len(found[0]) < min_generators:
        return None
    gens, coords = found
    items = list(gens.items())
    us = [u for _, (u, _s, _d) in items]
    n, d = sp.fraction(sp.together(_substitute(expr, gens, coords)))
    out = sp.Integer(1)
    plain = sp.Integer(1)              # the parts free of exponentials, cancelled together
    for poly, sign in ((n, 1), (d, -1)):
        content, factors = sp.factor_list(poly, *us)
        if content.has(*us):
            # sympy leaves a polynomial with irrational coefficients (sqrt(2) of a level)
            # unfactored and returns it whole as the content: it is one factor.
            content, factors = sp.Integer(1), [(content, 1), *factors]
        plain *= content**sign
        for F, k in factors:
            if F.has(*us):
                pre, body = _factor_form(F.as_expr(), items)
                out *= (pre * body) ** (sign * k)
            else:
                plain *= F.as_expr() ** (sign * k)
    return merge_exponentials(_double_angle(sp.factor(sp.cancel(plain)) * out))


def merge_exponentials(expr: sp.Expr) -> sp.Expr:
    """One exponential per product, its exponent expanded: exp(a)*exp(b) -> exp(a + b)."""
    merged = sp.powsimp(expr, combine="exp")
    return merged.xreplace({e: sp.exp(sp.expand(e.args[0])) for e in merged.atoms(sp.exp)})


def hyperbolic_ratio(expr: sp.Expr) -> sp.Expr | None:
    """``c*tanh(k g/2)`` or ``c*coth(k g/2)`` when ``expr`` has one exponent generator g and
    equals ``c (e^{kg} - 1)/(e^{kg} + 1)`` (or its inverse) with c free of exponentials.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.conventions import beta as b
    >>> J1, J2 = sp.symbols("J1 J2", positive=True)
    >>> x = sp.exp(-b * (J1 - J2))
    >>> hyperbolic_ratio((1 - x**2) / (2 * (J1 - J2) * (1 + x**2)))
    tanh(beta*(J1 - J2))/(2*(J1 - J2))
    """
    found = _generators(expr)
    if found is None or len(found[0]) != 1:
        return None
    gens, coords = found
    (g, (u, s, _)), = gens.items()
    ratio = sp.cancel(_substitute(expr, gens, coords))
    for k in (1, 2, 3, 4):
        for shape, form in (((u**k - 1) / (u**k + 1), sp.tanh), ((u**k + 1) / (u**k - 1), sp.coth)):
            c = sp.cancel(ratio / shape)
            if not c.has(u):
                return sp.factor(c) * form(sp.factor(k * s * g / 2))
    return None
