r"""Closed-form linear response from the exact spectrum (layer: response).

Owns :class:`Derivation` (levels, transitions, partition function, static and dynamic
susceptibilities) and the presentable forms. Imports sympy, :mod:`symresp.conventions`,
:mod:`symresp.errors`, :mod:`symresp.algebra`, :mod:`symresp.models`, :mod:`symresp.spectrum`.

Formulas (pinned convention of :mod:`symresp.conventions`; levels a, b with energies
:math:`E_a`, degeneracies :math:`d_a`, populations :math:`p_a = e^{-\beta E_a}/Z` per state and
weights :math:`W_{ab} = \mathrm{Tr}(P_a A P_b B)`):

.. math::

    \chi_{AB}(\omega) = \sum_{a \ne b} \frac{(p_a - p_b) W_{ab}}{E_b - E_a - \omega - i0^+},
    \qquad \chi_{AB}(t) = i \sum_{a\ne b} (p_a - p_b) W_{ab}\, e^{-i(E_b - E_a)t},

    \chi^{\rm isol} = \sum_{a \ne b} \frac{(p_a - p_b) W_{ab}}{E_b - E_a}, \qquad
    \chi^{\rm T} = \chi^{\rm isol} + \beta\Big(\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle\Big).

Boltzmann factors are written relative to a reference level (the lowest one at a sample
parameter point), :math:`x_a = e^{-\beta(E_a - E_{\rm ref})}`, so the formulas read as
physicists write them and stay finite when evaluated.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Literal

import sympy as sp

from ..algebra import Operator, sparse_form
from ..conventions import DEFAULT_CONVENTION, Convention, beta, nu, omega, t
from ..errors import BudgetExceeded, InputError
from ..models import Budget, Clock, System, current_clock
from ..spectrum import (BlockWeight, LadderSpectrum, LevelRoot, Spectrum, clean, is_zero_number,
                        solve, solve_ladder, value_at)
from ._correlation import CorrelationKind, correlation_lines
from ._present import boltzmann_form, hyperbolic_ratio, merge_exponentials

__all__ = ["Level", "Transition", "Derivation", "derive", "StaticKind", "present"]

StaticKind = Literal["isothermal", "isolated"]

#: From this many levels on, static and dynamic susceptibilities are written as one sum over
#: the common Z' (each term of a small model is presented with its own Z', which reads
#: better but repeats Z' in every term: quadratic size in the number of levels).
COMPACT_LEVELS = 24


@dataclass(frozen=True, slots=True)
class Level:
    """An energy level: exact energy, degeneracy and the quantum numbers of its parts."""

    energy: sp.Expr
    degeneracy: int
    quantum_numbers: tuple[tuple[tuple[str, sp.Expr], ...], ...]
    parts: tuple[int, ...]
    implicit: bool = False

    def __repr__(self) -> str:
        qn = "; ".join(", ".join(f"{n}={v}" for n, v in labels) for labels in self.quantum_numbers)
        return f"Level(E={self.energy}, g={self.degeneracy}{', ' + qn if qn else ''})"


@dataclass(frozen=True, slots=True)
class Transition:
    r"""A pole of :math:`\chi(\omega)`: frequency :math:`\Omega = E_b - E_a`, weight
    :math:`w = (p_a - p_b) W_{ab}`, and the bare matrix weight :math:`W_{ab}`."""

    lower: int
    upper: int
    frequency: sp.Expr
    matrix_weight: sp.Expr
    weight: sp.Expr


def _sample_point(params: tuple[sp.Symbol, ...]) -> dict[sp.Symbol, sp.Rational]:
    """A generic point used only to order levels for presentation: positive parameters
    (couplings) of order one, sign-free ones (fields, detunings) small."""
    return {p: (sp.Rational(2, 3) + sp.Rational(k, 7)) if p.is_positive else
            (sp.Rational(1, 10) + sp.Rational(k, 37)) for k, p in enumerate(params)}


def _hyperbolic_form(n: sp.Expr, d: sp.Expr) -> sp.Expr | None:
    """c*tanh(y/2) or c*coth(y/2) when n/d = c*(e^y - 1)/(e^y + 1) (or its inverse) for one e^y."""
    z = sp.Dummy("z", positive=True)
    for E in sorted(d.atoms(sp.exp), key=sp.default_sort_key):
        ratio = sp.cancel((n / d).subs(E, z))
        if ratio.has(sp.exp):
            continue
        for shape, form in (((z - 1) / (z + 1), sp.tanh), ((z + 1) / (z - 1), sp.coth)):
            c = sp.cancel(ratio / shape)
            if not c.has(z):
                return sp.factor(c) * form(E.args[0] / 2)
    return None


#: Share of the time left that presenting one formula may use before the plain form is kept.
PRESENT_SHARE = 0.25
#: Distinct exponentials above which a formula is presented factor by factor (not brought over
#: one common denominator).
MAX_EXPONENTIALS = 8


def present(expr: sp.Expr, *, max_ops: int = 400) -> sp.Expr:
    """Presentable form: common denominator and factored pieces, for expressions of moderate size.

    Inside a budgeted call, presenting one formula may take :data:`PRESENT_SHARE` of the time
    left; beyond that the formula is kept as it is (the plain Lehmann sum) and the clock
    records a note saying so.
    """
    return _within_share(lambda: _present_now(expr, max_ops), expr)


def _within_share(work, plain: sp.Expr) -> sp.Expr:
    """``work()``, or ``plain`` with a note when it would use more than its share of time."""
    clock = current_clock()
    if clock is None:
        return work()
    part = clock.portion(PRESENT_SHARE, "presenting a formula")
    try:
        with part.running():
            return work()
    except BudgetExceeded as err:
        if not Clock.is_fallback(err, part):
            raise
    clock.note("a formula took longer to present than its share of the time budget and is "
               "printed in its plain (unfactored Lehmann) form; raise --budget for the "
               "factored form")
    return plain


def _larger_than(expr: sp.Expr, nodes: int) -> bool:
    """True when ``expr`` has more than ``nodes`` nodes (stops counting there: cheap)."""
    for k, _ in enumerate(sp.preorder_traversal(expr)):
        if k >= nodes:
            return True
    return False


@lru_cache(maxsize=2048)
def _present_now(expr: sp.Expr, max_ops: int) -> sp.Expr:
    # Pure, so cached: the same pole weight is presented for chi(omega), chi(t) and the
    # presentation of a response.
    # count_ops is slow on very large sums (it builds a symbol per operation): a bounded node
    # count screens them out first.
    if _larger_than(expr, 20 * max_ops):
        return expr
    if expr.has(sp.CRootOf, LevelRoot, BlockWeight) or sp.count_ops(expr) > max_ops:
        return expr
    if len(expr.atoms(sp.exp)) > MAX_EXPONENTIALS:
        # A partition function of many levels: a common denominator would multiply every term
        # by the largest Boltzmann factor (longer, and costly to factor); its pieces are
        # presented one by one instead.
        if expr.is_Mul:
            return sp.Mul(*[_present_now(f, max_ops) for f in expr.args])
        return expr
    if any(p.exp.is_Rational and not p.exp.is_Integer and not p.base.free_symbols
           for p in expr.atoms(sp.Pow)):
        # numeric surds: factoring over an algebraic extension costs far more than it tidies
        return expr
    if expr.has(sp.exp):
        # Several Boltzmann factors (fields, several couplings): factored in the exponentials,
        # relative to the lowest level, with cosh/sinh for the +-pairs of a field. One factor
        # alone takes the path below (tanh/coth forms, textbook shapes such as 2b/(3 + e^bJ)).
        nice = boltzmann_form(expr, min_generators=2)
        if nice is None:
            nice = hyperbolic_ratio(expr)
        if nice is not None:
            return nice
    e = sp.together(expr)
    n, d = sp.fraction(e)
    n = sp.factor(sp.powsimp(sp.expand(n), combine="exp"))
    d = sp.factor(sp.powsimp(sp.expand(d), combine="exp"))
    hyper = _hyperbolic_form(n, d) if len(d.atoms(sp.exp)) == 1 else None
    return hyper if hyper is not None else sp.powsimp(n / d, combine="exp")


def present_shortest(expr: sp.Expr, *, max_ops: int = 400) -> sp.Expr:
    """The shorter (printed length) of :func:`present` and the Boltzmann form relative to the
    lowest level, e.g. ``1/(1 + exp(-beta*Delta))`` rather than ``exp(beta*Delta)/(exp(beta*Delta) + 1)``."""
    first = present(expr, max_ops=max_ops)
    if (not expr.has(sp.exp) or expr.has(sp.CRootOf, LevelRoot)
            or sp.count_ops(expr) > max_ops):
        return first
    other = boltzmann_form(expr)
    if other is None:
        return first
    other = merge_exponentials(other)
    return min((first, other), key=lambda e: (len(sp.sstr(e)), sp.count_ops(e)))


@dataclass(frozen=True, slots=True, eq=False)
class Derivation:
    r"""The derived linear response :math:`\chi_{AB}` of a system (see the module docstring).

    Built by :func:`derive`; public access goes through ``symresp.Response``.
    """

    system: System
    A: Operator
    B: Operator
    convention: Convention
    spectrum: Spectrum
    levels: tuple[Level, ...]
    reference: int                                  # index of the reference level
    level_weights: dict                             # (a, b) -> W_ab  (a, b level indices)
    expect_A: dict                                  # a -> Tr(P_a A)
    expect_B: dict
    budget: Budget = Budget()                       # the limits of every later call on it
    notes: tuple[str, ...] = ()                     # route notes (why another route was not used)
    truncation: object = None                       # response._route.Truncation for boson cutoffs
    _memo: dict = field(default_factory=dict, compare=False, repr=False)

    route = "lehmann"

    def describe_route(self) -> str:
        """One line: the route taken (exact diagonalisation), cutoff effects and notes."""
        text = f"exact diagonalisation: Lehmann sums over {len(self.levels)} levels"
        if self.truncation is not None:
            text += "; " + self.truncation.describe()
        return "; ".join([text, *self.notes])

    # ------------------------------------------------------------ thermodynamics
    def boltzmann(self, a: int) -> sp.Expr:
        r""":math:`x_a = e^{-\beta (E_a - E_{\rm ref})}` per state of level a."""
        # Remembered per level: building exp() of a surd-laden exponent costs about 10 ms, and
        # every transition asks for two of them.
        memo = self._memo.setdefault("boltzmann", {})
        x = memo.get(a)
        if x is None:
            dE = self.levels[a].energy - self.levels[self.reference].energy
            dE = sp.expand(dE) if not self.levels[a].implicit else dE
            # exp() of a real exponent never simplifies (no log, no multiple of i pi), but its
            # automatic evaluation asks dozens of assumptions of the exponent (25 ms each with
            # square roots): skipped, with the same expression as the result.
            x = memo[a] = sp.Integer(1) if dE == 0 else sp.exp(-beta * dE, evaluate=False)
        return x

    def _difference(self, a: int, b: int) -> sp.Expr:
        """:math:`x_a - x_b` without automatic evaluation (large derivations: the exponentials
        are distinct, and evaluating asks sympy assumptions of each one), remembered."""
        memo = self._memo.setdefault("differences", {})
        d = memo.get((a, b))
        if d is None:
            d = memo[(a, b)] = sp.Add(self.boltzmann(a), sp.Mul(-1, self.boltzmann(b), evaluate=False),
                                      evaluate=False)
        return d

    def reduced_partition(self) -> sp.Expr:
        r""":math:`Z' = Z\, e^{\beta E_{\rm ref}} = \sum_a d_a x_a`."""
        memo = self._memo.get("reduced_partition")
        if memo is None:
            memo = sp.Add(*[lv.degeneracy * self.boltzmann(a) for a, lv in enumerate(self.levels)])
            self._memo["reduced_partition"] = memo
        return memo

    def partition(self) -> sp.Expr:
        r"""Partition function :math:`Z = \sum_a d_a e^{-\beta E_a}`."""
        memo = self._memo.get("partition")
        if memo is not None:
            return memo
        Eref = self.levels[self.reference].energy
        Zr = self.reduced_partition()
        nice = None if (Zr.has(sp.CRootOf, LevelRoot) or self.is_large()) else _within_share(
            lambda: boltzmann_form(Zr), None)
        out = sp.exp(-beta * Eref) * (Zr if nice is None else nice)
        out = out if nice is None else merge_exponentials(out)
        self._memo["partition"] = out
        return out

    def population(self, a: int) -> sp.Expr:
        r"""Population per state :math:`p_a = x_a / Z'` of level a."""
        return self.boltzmann(a) / self.reduced_partition()

    def expectation(self, which: Literal["A", "B"]) -> sp.Expr:
        r""":math:`\langle A\rangle` or :math:`\langle B\rangle` in the Gibbs state of H."""
        ex = self.expect_A if which == "A" else self.expect_B
        Zr = self.reduced_partition()
        return sum((self.boltzmann(a) * v for a, v in ex.items()), sp.Integer(0)) / Zr

    # ------------------------------------------------------------ transitions
    def transitions(self) -> tuple[Transition, ...]:
        """All pairs of distinct levels with a non-zero matrix weight, in a stable order."""
        memo = self._memo.get("transitions")
        if memo is not None:
            return memo
        out = []
        # 1/Z' built once: dividing by a long sum again for every transition re-derives the
        # assumptions of its reciprocal each time (seconds for a cavity at cutoff 60).
        large = self.is_large()
        inv = (sp.Pow(self.reduced_partition(), -1, evaluate=False) if large
               else 1 / self.reduced_partition())
        for (a, b), W in sorted(self.level_weights.items()):
            if a == b:
                continue
            Om = self.levels[b].energy - self.levels[a].energy
            if not (large or self.levels[a].implicit or self.levels[b].implicit):
                Om = sp.expand(Om)
            if large:
                # Many levels: Z' is a long sum, and multiplying by its reciprocal asks sympy
                # whether every factor is zero (seconds per hundred transitions); the product
                # is kept unevaluated (large derivations sum over the common Z' anyway).
                w = sp.Mul(self._difference(a, b), W, inv, evaluate=False)
            else:
                w = (self.boltzmann(a) - self.boltzmann(b)) * W * inv
            out.append(Transition(a, b, Om, W, w))
        res = tuple(out)
        self._memo["transitions"] = res
        return res

    def poles(self) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Pole table :math:`[(\Omega_k, w_k)]` with :math:`\chi(\omega) = \sum_k w_k/(\Omega_k - \omega - i0^+)`.

        Transitions of equal frequency are merged; weights are exact. Under a non-default
        convention the table is that of the converted function (see ``docs/conventions.md``).
        """
        merged: dict[sp.Expr, sp.Expr] = {}
        order: list[sp.Expr] = []
        s, sig = self.convention.sign, self.convention.frequency_sign
        for tr in self.transitions():
            key = sig * tr.frequency
            if key not in merged:
                merged[key] = sp.Integer(0)
                order.append(key)
            merged[key] += s * sig * tr.weight
        pt = _sample_point(self.system.parameters)
        order.sort(key=lambda k: (value_at(k, pt, 15).real, sp.default_sort_key(k)))
        if self.is_large():
            return [(k, merged[k]) for k in order]
        return [(k, present(merged[k])) for k in order]

    def is_large(self) -> bool:
        """True from COMPACT_LEVELS levels on: sums are then written over the common Z'."""
        return len(self.levels) > COMPACT_LEVELS

    def _numerators(self) -> list[tuple[Transition, sp.Expr]]:
        """(transition, (x_a - x_b) W_ab): the weights times Z'."""
        memo = self._memo.get("numerators")
        if memo is None:
            if self.is_large():      # unevaluated products: no assumption queries per term
                memo = [(tr, sp.Mul(self._difference(tr.lower, tr.upper), tr.matrix_weight,
                                    evaluate=False))
                        for tr in self.transitions()]
            else:
                memo = [(tr, (self.boltzmann(tr.lower) - self.boltzmann(tr.upper)) * tr.matrix_weight)
                        for tr in self.transitions()]
            self._memo["numerators"] = memo
        return memo

    # ------------------------------------------------------------ static
    def static(self, kind: StaticKind = "isothermal") -> sp.Expr:
        r"""Static susceptibility, ``"isothermal"`` (:math:`\partial\langle A\rangle/\partial f` at
        fixed T) or ``"isolated"`` (:math:`\chi(\omega \to 0)`)."""
        if kind not in ("isothermal", "isolated"):
            raise InputError(f"static: kind={kind!r} must be 'isothermal' or 'isolated'")
        key = ("static", kind)
        if key in self._memo:
            return self._memo[key]
        iso = self._isolated_raw()
        if kind == "isolated":
            val = iso
        elif self.is_large():
            # Z' once per sum, not once per term: the expression grows like the number of
            # levels, not its square (a cavity at cutoff 60 gave 1 MB of text otherwise).
            Zr = self.reduced_partition()
            diag = sp.Add(*[self.boltzmann(a) * W for (a, b), W in self.level_weights.items() if a == b])
            mA = sp.Add(*[self.boltzmann(a) * v for a, v in self.expect_A.items()])
            mB = sp.Add(*[self.boltzmann(a) * v for a, v in self.expect_B.items()])
            val = iso + beta * (diag / Zr - mA * mB / Zr**2)
        else:
            Zr = self.reduced_partition()
            diag = sum((self.boltzmann(a) * W for (a, b), W in self.level_weights.items() if a == b),
                       sp.Integer(0)) / Zr
            val = iso + beta * (diag - self.expectation("A") * self.expectation("B"))
        out = self.convention.sign * val if self.is_large() else present(self.convention.sign * val)
        self._memo[key] = out
        return out

    def _isolated_raw(self) -> sp.Expr:
        if self.is_large():
            terms = [sp.Mul(n, sp.Pow(tr.frequency, -1, evaluate=False), evaluate=False)
                     for tr, n in self._numerators()]
            return sp.Mul(sp.Add(*terms), sp.Pow(self.reduced_partition(), -1, evaluate=False),
                          evaluate=False)
        terms = []
        for tr in self.transitions():
            terms.append(tr.weight / tr.frequency)
        return sp.Add(*terms)

    def variance_term(self) -> sp.Expr:
        r"""Isothermal minus isolated: :math:`\beta(\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle)`."""
        return present(self.static("isothermal") - self.static("isolated"))

    # ------------------------------------------------------------ dynamic
    def _pairs(self):
        """Group transitions into (+Omega, -Omega) pairs with opposite weights where possible."""
        trs = list(self.transitions())
        index = {(tr.lower, tr.upper): tr for tr in trs}
        used: set = set()
        paired, single = [], []
        for tr in trs:
            key = (tr.lower, tr.upper)
            if key in used:
                continue
            rev = index.get((tr.upper, tr.lower))
            if rev is not None and _equal_weights(rev.matrix_weight, tr.matrix_weight):
                # w(b->a) = (p_b - p_a) W_ba = -w(a->b) when W_ba = W_ab
                up = tr if self._is_upward(tr) else rev
                paired.append(up)
                used |= {key, (tr.upper, tr.lower)}
            else:
                single.append(tr)
                used.add(key)
        return paired, single

    def _is_upward(self, tr: Transition) -> bool:
        return self._order[tr.upper] > self._order[tr.lower]

    @property
    def _order(self) -> dict[int, int]:
        memo = self._memo.get("order")
        if memo is None:
            memo = _level_ranks(self.levels, self.system.parameters)
            self._memo["order"] = memo
        return memo

    def frequency(self, var: sp.Symbol = omega) -> sp.Expr:
        r""":math:`\chi_{AB}(\omega)` (retarded prescription implied: :math:`\omega \to \omega + i0^+`).

        Pairs of poles at :math:`\pm\Omega` with opposite weights are combined into
        :math:`2\Omega w/(\Omega^2 - \omega^2)`.
        """
        s, sig = self.convention.sign, self.convention.frequency_sign
        w_ = sig * var
        if self.is_large():
            paired, single = self._merged_pairs(numerators=True)
            terms = [2 * w * Om / (Om**2 - w_**2) for Om, w in paired]
            terms += [w / (Om - w_) for Om, w in single]
            return s * sp.Add(*terms) / self.reduced_partition()
        paired, single = self._merged_pairs()
        terms = [present(2 * w) * Om / (Om**2 - w_**2) for Om, w in paired]
        terms += [present(w) / (Om - w_) for Om, w in single]
        return s * sp.Add(*terms)

    def _merged_pairs(self, numerators: bool = False):
        """Paired and single poles with weights summed over equal frequencies (times Z' with
        ``numerators``)."""
        paired, single = self._pairs()
        num = {id(tr): n for tr, n in self._numerators()} if numerators else {}

        def merge(trs):
            acc: dict[sp.Expr, sp.Expr] = {}
            for tr in trs:
                w = num[id(tr)] if numerators else tr.weight
                acc[tr.frequency] = acc.get(tr.frequency, sp.Integer(0)) + w
            return list(acc.items())

        return merge(paired), merge(single)

    def time(self, var: sp.Symbol = t) -> sp.Expr:
        r""":math:`\chi_{AB}(t) = i\sum_k w_k e^{-i\Omega_k t}` for t > 0; paired poles give
        :math:`2 w \sin(\Omega t)`."""
        if self.convention.prescription == "advanced":
            raise InputError(
                "time: the advanced function vanishes for t > 0; derive with the retarded "
                "convention for chi(t)"
            )
        s = self.convention.sign            # chi(t) does not depend on the Fourier sign
        if self.is_large():
            paired, single = self._merged_pairs(numerators=True)
            terms = [2 * w * sp.sin(Om * var) for Om, w in paired]
            terms += [sp.I * w * sp.exp(-sp.I * Om * var) for Om, w in single]
            return s * sp.Add(*terms) / self.reduced_partition()
        paired, single = self._merged_pairs()
        terms = [present(2 * w) * sp.sin(Om * var) for Om, w in paired]
        terms += [sp.I * present(w) * sp.exp(-sp.I * Om * var) for Om, w in single]
        return s * sp.Add(*terms)

    def matsubara(self, var: sp.Symbol = nu) -> sp.Expr:
        r""":math:`\chi(i\nu_n) = \sum_k w_k/(\Omega_k - i\nu_n)` for :math:`\nu_n = 2\pi n/\beta \ne 0`.

        At :math:`\nu_n = 0` the Matsubara function equals the isothermal susceptibility, not
        this expression's limit (which is the isolated one).
        """
        s = self.convention.sign
        if self.is_large():
            return s * sp.Add(*[n / (tr.frequency - sp.I * var) for tr, n in self._numerators()]) \
                / self.reduced_partition()
        return s * sp.Add(*[present(w) / (Om - sp.I * var) for Om, w in self._raw_poles()])

    def _raw_poles(self):
        return [(tr.frequency, tr.weight) for tr in self.transitions()]

    def spectral_lines(self) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Lines of :math:`\chi''(\omega) = \pi\sum_k w_k\,\delta(\omega - \Omega_k)`:
        pairs (position, strength :math:`\pi w_k`)."""
        return [(Om, sp.pi * w) for Om, w in self.poles()]

    def correlation_lines(self, kind: CorrelationKind = "plain") -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Lines :math:`[(\Omega_k, s_k)]` of :math:`S_{AB}(\omega) = 2\pi\sum_k s_k
        \delta(\omega - \Omega_k)` (``kind`` "plain", "symmetrised" or "canonical"; see
        :mod:`._correlation`), ordered like :meth:`poles`, the elastic line at 0 included."""
        key = ("correlation", kind)
        if key not in self._memo:
            self._memo[key] = correlation_lines(
                self, kind, tidy=present_shortest, order_point=_sample_point(self.system.parameters))
        return self._memo[key]

    def zero_temperature(self, kind: StaticKind = "isothermal") -> sp.Expr:
        r"""Static susceptibility at T = 0, with the reference level taken as the ground level.

        With :math:`p_g = 1/d_g` on the ground level g and zero elsewhere,
        :math:`\chi^{\rm isol}(0) = d_g^{-1}\sum_{b \ne g} (W_{gb} + W_{bg})/(E_b - E_g)`; the
        isothermal value adds :math:`\beta(W_{gg}/d_g - \langle A\rangle_g\langle B\rangle_g)`, which
        diverges (Curie term) unless the ground level carries no fluctuation of A and B. Valid on the
        parameter region where the reference level is lowest (it is at the sample point used to
        order levels).
        """
        if kind not in ("isothermal", "isolated"):
            raise InputError(f"zero_temperature: kind={kind!r} must be 'isothermal' or 'isolated'")
        g = self.reference
        dg = self.levels[g].degeneracy
        Eg = self.levels[g].energy
        iso = sp.Integer(0)
        for (a, b), W in self.level_weights.items():
            if a == g and b != g:
                iso += W / (self.levels[b].energy - Eg)
            elif b == g and a != g:
                iso += W / (self.levels[a].energy - Eg)
        iso = present(self.convention.sign * iso / dg)
        if kind == "isolated":
            return iso
        curie = (self.level_weights.get((g, g), sp.Integer(0)) / dg
                 - self.expect_A.get(g, sp.Integer(0)) * self.expect_B.get(g, sp.Integer(0)) / dg**2)
        if not curie.has(BlockWeight) and sp.count_ops(curie) < 200:
            curie = sp.simplify(curie)
        if curie != 0:
            return sp.oo * sp.sign(self.convention.sign * curie)
        return iso


def _level_ranks(levels, params) -> dict[int, int]:
    """Rank of each level's energy at the presentation sample point (0 = lowest)."""
    pt = _sample_point(params)
    vals = [value_at(lv.energy, pt, 30).real for lv in levels]
    return {a: r for r, a in enumerate(sorted(range(len(vals)), key=lambda i: vals[i]))}


def _equal_weights(x: sp.Expr, y: sp.Expr) -> bool:
    if x == y:
        return True
    diff = x - y
    if diff.has(BlockWeight):
        # Numerically known weights: equal when they are the same definition (A = B).
        return diff == 0
    if diff.free_symbols:
        return sp.expand(diff) == 0
    return is_zero_number(diff)


def _group_levels(spec: Spectrum) -> tuple[list[Level], list[int]]:
    groups: dict[sp.Expr, list[int]] = {}
    order: list[sp.Expr] = []
    for i, p in enumerate(spec.parts):
        key = p.energy
        if key not in groups:
            groups[key] = []
            order.append(key)
        groups[key].append(i)
    levels, part_level = [], [0] * len(spec.parts)
    blocks = [sol.block for sol in spec.solutions]
    for li, key in enumerate(order):
        idx = groups[key]
        for i in idx:
            part_level[i] = li
        deg = sum(spec.parts[i].multiplicity for i in idx)
        qn = tuple(blocks[spec.parts[i].block].labels for i in idx)
        levels.append(Level(key, deg, qn, tuple(idx), any(spec.parts[i].implicit for i in idx)))
    return levels, part_level


def derive(system: System, A: Operator, B: Operator, *, convention: Convention = DEFAULT_CONVENTION,
           budget: Budget = Budget(), symmetry: bool = True) -> Derivation:
    """Derive the linear response of ``A`` to a field coupling to ``B`` in ``system``.

    Parameters
    ----------
    system : System
    A, B : Operator
        Measured and driving operators.
    convention : Convention
    budget : Budget
    symmetry : bool
        Use ring-translation and total-spin sectors where H has them (default); False solves
        the blocks of the product basis as they are (same results, for cross-checks).

    Returns
    -------
    Derivation

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.models import System
    >>> from symresp.response import derive
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> d = derive(System.build(0 * s.z), s.z, s.z)
    >>> d.static("isothermal"), d.static("isolated")
    (beta/4, 0)
    """
    if not isinstance(budget, Budget):
        raise InputError(f"derive: budget={budget!r} must be a symresp.models.Budget")
    with budget.start().running() as clock:
        clock.check("solving the model")
        system = system.with_sites(A.sites | B.sites)
        # A ladder (one boson mode, conserved excitation number) is solved once for all its
        # blocks.
        spec = solve_ladder(system, clock=clock) if symmetry else None
        if spec is None:
            spec = solve(system, clock=clock, max_symbolic_block=budget.max_symbolic_block,
                         max_block=budget.max_block, symmetry=symmetry)
        basis = spec.structure.basis
        As = sparse_form(A, basis)
        Bs = As if B == A else sparse_form(B, basis)
        ladder = isinstance(spec, LadderSpectrum)
        if ladder:
            W = spec.operator_weights(A, B, As, Bs, clock)
        else:
            # Each operator is carried into the symmetry sectors once (and once only when
            # A = B), then shared by the weights and the expectations.
            As_split = spec.split(As)
            Bs_split = As_split if Bs is As else spec.split(Bs)
            W = spec.split_weights(As_split, Bs_split, clock)
        levels, part_level = _group_levels(spec)
        lw: dict[tuple[int, int], sp.Expr] = {}
        count: dict[tuple[int, int], int] = {}
        for (pa, pb), w in W.items():
            key = (part_level[pa], part_level[pb])
            lw[key] = lw.get(key, sp.Integer(0)) + w
            count[key] = count.get(key, 0) + 1
        # A weight from a single pair of parts is already in the engine's tidy form (factored
        # coefficients of the block's square roots); only sums over merged parts are cleaned.
        # Cleaning a single weight again rationalises and factors it as a whole, which costs
        # seconds per weight between two blocks with different square roots (a qubit and a
        # cavity: minutes at cutoff 40) and shortens nothing.
        tidy: dict[tuple[int, int], sp.Expr] = {}
        for k, v in lw.items():
            clock.check("tidying the transition weights", f"levels {k[0]} -> {k[1]}")
            if count[k] > 1 and not (levels[k[0]].implicit or levels[k[1]].implicit):
                v = clean(v)
            if v != 0:
                tidy[k] = v
        lw = tidy

        def level_expect(ex: dict[int, sp.Expr]) -> dict[int, sp.Expr]:
            out: dict[int, sp.Expr] = {}
            for p, v in ex.items():
                out[part_level[p]] = out.get(part_level[p], sp.Integer(0)) + v
            return {k: v for k, v in out.items()
                    if (v != 0 if v.has(BlockWeight) else sp.expand(v) != 0)}

        if ladder:
            eA = level_expect(spec.operator_expectations(A, As))
            eB = level_expect(spec.operator_expectations(B, Bs))
        else:
            eA = level_expect(spec.split_expectations(As_split))
            eB = eA if Bs_split is As_split else level_expect(spec.split_expectations(Bs_split, "B"))
        ranks = _level_ranks(levels, system.parameters)
        ref = min(ranks, key=ranks.__getitem__)
        return Derivation(system, A, B, convention, spec, tuple(levels), ref, lw, eA, eB, budget,
                          {"order": ranks})
