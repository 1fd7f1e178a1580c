r"""Linear response from the equations of motion on a closed operator space (layer: response).

Owns :class:`MotionDerivation` and :func:`derive_motion`. Imports sympy,
:mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.algebra`,
:mod:`symresp.models`, :mod:`symresp.spectrum` and :mod:`._derive`.

When repeated commutators of A and B (and their adjoints) with H span a finite operator space
V (:func:`symresp.algebra.close_under`), the Heisenberg motion closes on V:
:math:`\dot X = i\mathcal{L}X` with :math:`\mathcal{L}X = [H, X]`, a d x d matrix L on V. With
A = sum_j a_j b_j and :math:`e_j = \langle [b_j, B]\rangle`,

.. math::

    \chi_{AB}(t) = i\theta(t)\,\langle[A(t), B]\rangle = i\theta(t)\, e^T e^{iLt} a,
    \qquad \chi_{AB}(\omega) = -e^T (L + \omega)^{-1} a

(pinned convention, :math:`\chi(\omega) = \int dt\, e^{i\omega t}\chi(t)`, retarded). This is a
rational function of :math:`\omega`: exact, with no truncation of any boson mode, and the
temperature enters only through the d numbers :math:`e_j`. For linear boson operators in a
quadratic (and displaced) Hamiltonian the commutators :math:`[b_j, B]` are c-numbers and
:math:`\chi` does not depend on temperature at all; for a finite model (a spin in a field) the
:math:`e_j` are Gibbs averages (:math:`\langle S^z\rangle` ...), computed exactly from the
spectrum of H.

Poles and weights: after cancelling common factors, the denominator D(omega) is factored over
the field of the parameters; a simple root :math:`\Omega_k` gives the weight
:math:`w_k = -N(\Omega_k)/D'(\Omega_k)` (:math:`\chi = \sum_k w_k/(\Omega_k - \omega)`). An even
factor :math:`q(\omega^2)` (a pair of poles :math:`\pm\Omega`, :math:`\Omega^2 = Y` a root of q:
normal modes) gives the term :math:`(\alpha + \beta\omega)/(Y - \omega^2)` with
:math:`\alpha = -[R(\Omega) + R(-\Omega)]/(2q'(Y))`,
:math:`\beta = -[R(\Omega) - R(-\Omega)]/(2\Omega q'(Y))` and R = N/(D/f): both even in
:math:`\Omega`, hence rational in Y, so only the roots of q (degree <= 2) are needed. A factor of
higher degree, a repeated pole or a pole at zero frequency (no Gibbs state, or motion that
grows in time) means the route does not apply.

Static susceptibilities: the component :math:`A_0` of A in the kernel of L (its part that
commutes with H) does not move; :math:`\langle [A_0, B]\rangle = 0` in the Gibbs state, and
:math:`A_0 = \lim_{\omega\to 0}\omega(L + \omega)^{-1}A` is the part of A diagonal in energy. So

.. math::

    \chi^{\rm isol} = \chi(\omega = 0) = N(0)/D(0), \qquad
    \chi^{\rm T} = \chi^{\rm isol} + \beta\,(\langle A_0B_0\rangle - \langle A_0\rangle\langle B_0\rangle),

and the elastic (Curie) term vanishes when :math:`A_0, B_0` are c-numbers: the oscillator's
:math:`\chi_{xx} = 1/(m\omega_0^2)` at every temperature (Landau & Lifshitz, Statistical
Physics, from memory). Correlation lines follow from detailed balance,
:math:`s_k = w_k/(1 - e^{-\beta\Omega_k})`, and the elastic line
:math:`s_0 = \langle A_0 B_0\rangle`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import sympy as sp
from sympy.polys.matrices import DomainMatrix

from ..algebra import Operator, OperatorSpace, close_under, commutator, coordinates, site_kind
from ..conventions import DEFAULT_CONVENTION, Convention, beta, nu, omega, t
from ..errors import ClosedFormError, InputError
from ..models import Budget, Clock, System
from ..spectrum import clean
from ._derive import StaticKind, derive, present

__all__ = ["MotionDerivation", "derive_motion", "Gibbs"]

_s = sp.Dummy("s")        # a pole frequency Omega
_y = sp.Dummy("y")        # Omega^2


class Gibbs:
    """Gibbs averages of operators, where the model allows them exactly.

    * c-numbers: themselves;
    * models without boson modes (finite Hilbert space): from the exact spectrum of H (the
      Lehmann engine), in the model's sector if it has one;
    * otherwise unknown (None): the route then does not apply.
    """

    def __init__(self, system: System, budget: Budget) -> None:
        self.system = system
        self.budget = budget
        self.finite = all(site_kind(s).finite for s in system.sites)
        self.used = False                 # True once a non-scalar average was needed

    def expect(self, Y: Operator) -> sp.Expr | None:
        if all(m == () for m, _ in Y.terms):
            return Y.scalar_part()
        if not self.finite:
            return None
        self.used = True
        zero = Operator((), frozenset())
        d = derive(self.system.with_sites(Y.sites), Y, zero, budget=self.budget)
        return sp.factor(d.expectation("A"))


@dataclass(frozen=True, slots=True)
class PolePair:
    r"""Two poles at :math:`\pm\Omega`, :math:`\Omega^2 = Y`: the term
    :math:`(\alpha + \beta\omega)/(Y - \omega^2)` of :math:`\chi(\omega)`."""

    Y: sp.Expr
    alpha: sp.Expr
    beta: sp.Expr

    @property
    def frequency(self) -> sp.Expr:
        """:math:`\\Omega = \\sqrt{Y}`."""
        return sp.sqrt(self.Y)

    def weights(self) -> tuple[sp.Expr, sp.Expr]:
        """:math:`(w_+, w_-)` at :math:`+\\Omega` and :math:`-\\Omega`."""
        Om = self.frequency
        return (present(self.beta / 2 + self.alpha / (2 * Om)),
                present(self.beta / 2 - self.alpha / (2 * Om)))


@dataclass(frozen=True, slots=True, eq=False)
class MotionDerivation:
    r"""The linear response :math:`\chi_{AB}` from the equations of motion (module docstring).

    Built by :func:`derive_motion`; public access goes through ``symresp.Response``, which
    offers the same methods as for the Lehmann route where they make sense.
    """

    system: System
    A: Operator
    B: Operator
    convention: Convention
    space: OperatorSpace
    singles: tuple[tuple[sp.Expr, sp.Expr], ...]      # (Omega, w)
    pairs: tuple[PolePair, ...]
    isolated_raw: sp.Expr
    elastic: sp.Expr                                   # <A_0 B_0>
    mean_A: sp.Expr                                    # <A> = <A_0>
    mean_B: sp.Expr
    kernel_A: Operator                                 # A_0
    kernel_B: Operator
    gibbs: str                                         # how the Gibbs averages were obtained
    budget: Budget = Budget()                          # the limits of every later call on it
    _memo: dict = field(default_factory=dict, compare=False, repr=False)

    route = "motion"

    # ------------------------------------------------------------ description
    def describe_route(self) -> str:
        """One line: the route taken and why it is exact."""
        return (f"equations of motion: the commutators with H close on {self.space.dimension} "
                f"operators ({self.space.commutators} commutators); exact, no truncation; "
                f"{self.gibbs}")

    @property
    def is_temperature_independent(self) -> bool:
        """True when no weight depends on temperature (c-number commutators)."""
        exprs = [w for _, w in self.singles] + [x for p in self.pairs for x in (p.alpha, p.beta)]
        return not any(sp.sympify(e).has(beta) for e in exprs)  # safe: sympy objects

    # ------------------------------------------------------------ poles
    def _raw_poles(self) -> list[tuple[sp.Expr, sp.Expr]]:
        out = list(self.singles)
        for p in self.pairs:
            wp, wm = p.weights()
            out += [(p.frequency, wp), (-p.frequency, wm)]
        return [(Om, w) for Om, w in out if w != 0]

    def poles(self) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Pole table :math:`[(\Omega_k, w_k)]`, :math:`\chi(\omega) = \sum_k w_k/(\Omega_k - \omega - i0^+)`."""
        s, sig = self.convention.sign, self.convention.frequency_sign
        pt = _sample(self.system.parameters)
        out = [(sig * Om, present(s * sig * w)) for Om, w in self._raw_poles()]
        out.sort(key=lambda kv: (complex(sp.N(kv[0].subs(pt), 15)).real, sp.default_sort_key(kv[0])))
        return out

    def spectral_lines(self) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Lines of :math:`\chi''(\omega) = \pi\sum_k w_k\delta(\omega - \Omega_k)` as (position, strength)."""
        return [(Om, sp.pi * w) for Om, w in self.poles()]

    def correlation_lines(self, kind: Literal["plain", "symmetrised", "canonical"] = "plain"
                          ) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Lines of :math:`S_{AB}(\omega) = 2\pi\sum_k s_k\delta(\omega - \Omega_k)` (pinned convention,
        docs/conventions.md section 9) from detailed balance: plain
        :math:`s_k = w_k/(1 - e^{-\beta\Omega_k})`, symmetrised
        :math:`\tfrac12 w_k\coth(\beta\Omega_k/2)`, canonical :math:`w_k/(\beta\Omega_k)`; the
        elastic line :math:`s_0 = \langle A_0B_0\rangle` in every kind."""
        if kind not in ("plain", "symmetrised", "canonical"):
            raise InputError(f"correlation_lines: kind={kind!r} must be 'plain', 'symmetrised' "
                             "or 'canonical'")
        out = []
        if self.elastic != 0:
            out.append((sp.Integer(0), self.elastic))
        for Om, w in self._raw_poles():
            if kind == "plain":
                s_k = w / (1 - sp.exp(-beta * Om))
            elif kind == "symmetrised":
                s_k = w * (1 + sp.exp(-beta * Om)) / (2 * (1 - sp.exp(-beta * Om)))
            else:
                s_k = w / (beta * Om)
            out.append((Om, present(s_k)))
        return out

    # ------------------------------------------------------------ no level spectrum
    def _no_levels(self, what: str) -> ClosedFormError:
        return ClosedFormError(
            f"{what}: the equations-of-motion route has no level spectrum (its result is exact "
            f"without one); derive with route='lehmann' for levels, transitions, Z and the "
            f"pictures and checks that use them")

    @property
    def levels(self):
        """Not available on this route (raises :class:`symresp.errors.ClosedFormError`)."""
        raise self._no_levels("levels")

    @property
    def spectrum(self):
        """Not available on this route (raises :class:`symresp.errors.ClosedFormError`)."""
        raise self._no_levels("spectrum")

    def transitions(self):
        """Not available on this route (raises :class:`symresp.errors.ClosedFormError`)."""
        raise self._no_levels("transitions")

    def partition(self):
        """Not available on this route (raises :class:`symresp.errors.ClosedFormError`)."""
        raise self._no_levels("partition function")

    # ------------------------------------------------------------ static
    def static(self, kind: StaticKind = "isothermal") -> sp.Expr:
        r"""``"isolated"``: :math:`\chi(\omega\to 0)`; ``"isothermal"`` adds
        :math:`\beta(\langle A_0B_0\rangle - \langle A_0\rangle\langle B_0\rangle)`."""
        if kind not in ("isothermal", "isolated"):
            raise InputError(f"static: kind={kind!r} must be 'isothermal' or 'isolated'")
        key = ("static", kind)
        if key not in self._memo:
            val = self.isolated_raw
            if kind == "isothermal":
                val = val + beta * self.variance_bracket()
            self._memo[key] = present(self.convention.sign * val)
        return self._memo[key]

    def variance_bracket(self) -> sp.Expr:
        r""":math:`\langle A_0B_0\rangle - \langle A_0\rangle\langle B_0\rangle` (zero for c-numbers)."""
        return sp.factor(self.elastic - self.mean_A * self.mean_B)

    def variance_term(self) -> sp.Expr:
        """Isothermal minus isolated."""
        return present(self.convention.sign * beta * self.variance_bracket())

    def expectation(self, which: Literal["A", "B"]) -> sp.Expr:
        r""":math:`\langle A\rangle` or :math:`\langle B\rangle` in the Gibbs state of H."""
        return self.mean_A if which == "A" else self.mean_B

    def zero_temperature(self, kind: StaticKind = "isothermal") -> sp.Expr:
        """Static susceptibility at T = 0 (temperature-independent weights only)."""
        if not self.is_temperature_independent or self.variance_bracket().has(beta):
            raise InputError("zero_temperature: the weights of this response depend on temperature "
                             "through Gibbs averages; take the limit of static(...) in beta")
        iso = present(self.convention.sign * self.isolated_raw)
        if kind == "isolated" or self.variance_bracket() == 0:
            return iso
        return sp.oo * sp.sign(self.convention.sign * self.variance_bracket())

    # ------------------------------------------------------------ dynamic
    def frequency(self, var: sp.Symbol = omega) -> sp.Expr:
        r""":math:`\chi_{AB}(\omega)`, retarded prescription implied; pole pairs as
        :math:`(\alpha + \beta\omega)/(\Omega^2 - \omega^2)`."""
        s, sig = self.convention.sign, self.convention.frequency_sign
        w_ = sig * var
        terms = [(present(p.alpha) + present(p.beta) * w_) / (p.Y - w_**2) for p in self.pairs]
        terms += [present(w) / (Om - w_) for Om, w in self.singles]
        return s * sp.Add(*terms)

    def time(self, var: sp.Symbol = t) -> sp.Expr:
        r""":math:`\chi_{AB}(t)` for t > 0: :math:`\alpha\sin(\Omega t)/\Omega + i\beta\cos(\Omega t)` per pair."""
        if self.convention.prescription == "advanced":
            raise InputError("time: the advanced function vanishes for t > 0; derive with the "
                             "retarded convention for chi(t)")
        s = self.convention.sign
        terms = []
        for p in self.pairs:
            Om = p.frequency
            terms.append(present(p.alpha) * sp.sin(Om * var) / Om)
            if p.beta != 0:
                terms.append(sp.I * present(p.beta) * sp.cos(Om * var))
        terms += [sp.I * present(w) * sp.exp(-sp.I * Om * var) for Om, w in self.singles]
        return s * sp.Add(*terms)

    def matsubara(self, var: sp.Symbol = nu) -> sp.Expr:
        r""":math:`\chi(i\nu_n)` for :math:`\nu_n \ne 0`."""
        s = self.convention.sign
        terms = [(present(p.alpha) + present(p.beta) * sp.I * var) / (p.Y + var**2) for p in self.pairs]
        terms += [present(w) / (Om - sp.I * var) for Om, w in self.singles]
        return s * sp.Add(*terms)


def _sample(params) -> dict:
    return {p: (sp.Rational(2, 3) + sp.Rational(k, 7)) if p.is_positive else
            (sp.Rational(1, 10) + sp.Rational(k, 37)) for k, p in enumerate(params)}


def _tidy(e: sp.Expr) -> sp.Expr:
    e = sp.sympify(e)  # safe: sympy objects built here
    if not e.free_symbols:
        return sp.radsimp(sp.expand(e))
    return clean(e)


def _even_in_y(expr: sp.Expr) -> sp.Expr:
    """An even rational function of _s written in _y = _s**2."""
    num, den = sp.fraction(sp.cancel(expr))
    pn, pd = sp.Poly(num, _s), sp.Poly(den, _s)
    if pn.is_zero:
        return sp.Integer(0)
    lo = min(m[0] for m in pn.monoms() + pd.monoms())
    if lo:
        pn = sp.Poly(sp.expand(num / _s**lo), _s)
        pd = sp.Poly(sp.expand(den / _s**lo), _s)

    def to_y(P):
        out = sp.Integer(0)
        for (k,), c in P.terms():
            if k % 2:
                raise ArithmeticError("not even")
            out += c * _y ** (k // 2)
        return out

    return to_y(pn) / to_y(pd)


def _rationalising(entries: list[sp.Expr]):
    """Substitutions p -> r**2, sqrt(p) -> r (and back) for the square roots of parameters.

    A square root of a symbol p is replaced by a new symbol r together with p itself (p = r**2),
    which keeps every relation exact; a square root of any other expression (or of a number)
    by a new symbol alone, which is exact too (the result is mapped back) but may leave
    cancellations undone.
    """
    roots = set()
    for x in entries:
        for pw in sp.sympify(x).atoms(sp.Pow):  # safe: sympy objects built here
            if pw.exp.is_Rational and pw.exp.q == 2:
                roots.add(pw.base)
    forward, backward = {}, {}
    for base in sorted(roots, key=sp.default_sort_key):
        if base.is_Symbol:
            r = sp.Dummy(f"r_{base.name}", positive=True) if base.is_positive else \
                sp.Dummy(f"r_{base.name}")
            forward[base] = r**2
            forward[sp.sqrt(base)] = r
            backward[r] = sp.sqrt(base)
        else:
            r = sp.Dummy("r", positive=True) if base.is_positive else sp.Dummy("r")
            forward[sp.sqrt(base)] = r
            backward[r] = sp.sqrt(base)
    # Powers p**(k/2) (k odd) become r**k: rewrite them through sqrt first.
    def fwd(x):
        x = sp.sympify(x).replace(  # safe: sympy objects built here
            lambda e: e.is_Pow and e.exp.is_Rational and e.exp.q == 2 and sp.sqrt(e.base) in forward,
            lambda e: forward[sp.sqrt(e.base)] ** int(2 * e.exp))
        return x.xreplace({k: v for k, v in forward.items() if k.is_Symbol})
    return fwd, backward


def _back(e: sp.Expr, backward: dict) -> sp.Expr:
    if not backward:
        return e
    return _tidy(sp.sympify(e).xreplace(backward))  # safe: sympy objects built here


def derive_motion(system: System, A: Operator, B: Operator, *,
                  convention: Convention = DEFAULT_CONVENTION, budget: Budget = Budget(),
                  clock: Clock | None = None) -> tuple[MotionDerivation | None, str]:
    """The response from the equations of motion, or ``(None, reason)`` where the route does
    not apply (see the module docstring for the exact conditions).

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.models import System
    >>> from symresp.response import derive_motion
    >>> w, m = sp.symbols("w m", positive=True)
    >>> a = sr.boson("a", 10)
    >>> x = (a + sr.dagger(a)) / sp.sqrt(2 * m * w)          # position of an oscillator
    >>> d, _ = derive_motion(System.build(w * sr.dagger(a) * a), x, x)
    >>> d.frequency()                                        # 1/(m (w0^2 - omega^2))
    1/(m*(-omega**2 + w**2))
    >>> d.static("isothermal")                               # no temperature dependence
    1/(m*w**2)
    """
    clock = clock or budget.start()
    system = system.with_sites(A.sites | B.sites)
    H = system.hamiltonian

    def tick() -> None:
        clock.check("closing the operator space under commutators with H")

    space, reason = close_under(H, [A, B], check=tick)
    if space is None:
        return None, reason
    a = coordinates(A, space)
    b = coordinates(B, space)
    if a is None or b is None:           # cannot happen: the seeds are in the space
        return None, "the operators are not in their own closure (internal inconsistency)"
    gibbs = Gibbs(system, budget)
    e = []
    for bj in space.basis:
        value = gibbs.expect(commutator(bj, B))
        if value is None:
            return None, ("the commutators with B are operators whose Gibbs averages need the "
                          "full spectrum of a model with boson modes")
        e.append(value)
    clock.check("Gibbs averages of the commutators")
    d = space.dimension
    L = space.matrix()
    av, ev = sp.Matrix(a), sp.Matrix(e)
    # Square roots of parameters (sqrt(m w) in x = (a + a^+)/sqrt(2 m w)) become new symbols
    # r with p = r**2, so the linear algebra runs over a field of rational functions.
    forward, backward = _rationalising(list(L) + list(av) + list(ev))
    Lr, avr, evr = L.applyfunc(forward), av.applyfunc(forward), ev.applyfunc(forward)
    M = DomainMatrix.from_Matrix(Lr + omega * sp.eye(d))
    if M.domain.is_EX:
        return None, "the Liouvillian has entries outside a field of rational functions"
    adj, det = M.adj_det()
    adjm = adj.to_Matrix()
    det = M.domain.to_sympy(det)
    N = sp.expand(-(evr.T * adjm * avr)[0, 0])
    clock.check("the resolvent of the Liouvillian")
    num, den = sp.fraction(sp.cancel(N / det))
    Pd = sp.Poly(den, omega)
    lead = Pd.LC()
    num, den = sp.expand(num / lead), sp.expand(den / lead)
    Pd = sp.Poly(den, omega)
    if sp.cancel(den.subs(omega, 0)) == 0:
        return None, ("chi(omega) has a pole at zero frequency: no Gibbs state, or motion that "
                      "grows in time (a free particle); use the Lehmann route")
    # A_0 = lim_{omega -> 0} omega (L + omega)^{-1} a: the part of A that commutes with H.
    kernels = []
    for v in (avr, sp.Matrix(b).applyfunc(forward)):
        x = adjm * v
        comp = []
        for j in range(d):
            r = sp.cancel(omega * x[j] / det)
            rn, rd = sp.fraction(r)
            if sp.cancel(rd.subs(omega, 0)) == 0:
                return None, "the Liouvillian is not diagonalisable at zero frequency (secular motion)"
            comp.append(sp.cancel(rn.subs(omega, 0) / rd.subs(omega, 0)))
        kernels.append(sum((c.xreplace(backward) * bj for c, bj in zip(comp, space.basis) if c != 0),
                           Operator((), frozenset())))
    A0, B0 = kernels
    mean_A, mean_B = gibbs.expect(A0), gibbs.expect(B0)
    elastic = gibbs.expect(A0 * B0)
    if mean_A is None or mean_B is None or elastic is None:
        return None, ("the parts of A and B that commute with H are operators whose Gibbs "
                      "averages need the full spectrum of a model with boson modes")
    _, factors = sp.factor_list(den, omega)
    singles: list[tuple[sp.Expr, sp.Expr]] = []
    pairs: list[PolePair] = []
    dden = sp.diff(den, omega)
    for f, mult in factors:
        P = sp.Poly(f, omega)
        if P.degree() == 0:
            continue
        if mult > 1:
            return None, "chi(omega) has a repeated pole (the motion grows in time)"
        cs = P.all_coeffs()
        deg = P.degree()
        even = all(c == 0 for c in cs[-2::-2])       # only even powers of omega
        if even and deg in (2, 4):
            q = sp.Poly(sum((c * _y ** ((deg - i) // 2) for i, c in enumerate(cs) if (deg - i) % 2 == 0),
                            sp.Integer(0)), _y)
            rest = sp.cancel(num / sp.cancel(den / f))
            R_plus, R_minus = rest.subs(omega, _s), rest.subs(omega, -_s)
            try:
                ev_part = _even_in_y(R_plus + R_minus)
                od_part = _even_in_y((R_plus - R_minus) / _s)
            except (ArithmeticError, sp.PolynomialError):
                return None, "a pole pair whose weights are not rational in Omega^2 (internal)"
            dq = q.diff(_y).as_expr()
            for Y in sp.roots(q, multiple=True):
                Y = _tidy(Y)
                alpha = _tidy((-ev_part / (2 * dq)).subs(_y, Y))
                beta_ = _tidy((-od_part / (2 * dq)).subs(_y, Y))
                if alpha != 0 or beta_ != 0:
                    pairs.append(PolePair(Y, alpha, beta_))
            clock.check("weights of the normal modes")
            continue
        if deg > 2:
            return None, (f"the poles of chi(omega) are the roots of an irreducible polynomial "
                          f"of degree {deg} in omega, which has no closed form")
        for Om in sp.roots(P, multiple=True):
            Om = _tidy(Om)
            w = _tidy(-num.subs(omega, Om) / dden.subs(omega, Om))
            if w != 0:
                singles.append((Om, w))
    singles = [(_back(Om, backward), _back(w, backward)) for Om, w in singles]
    pairs = [PolePair(_back(p.Y, backward), _back(p.alpha, backward), _back(p.beta, backward))
             for p in pairs]
    # Poles at +-Omega from two linear factors are one pair as well (a normal mode).
    left = list(singles)
    singles = []
    while left:
        Om, w = left.pop(0)
        partner = next((k for k, (O2, _) in enumerate(left) if sp.expand(Om + O2) == 0), None)
        if partner is None:
            singles.append((Om, w))
            continue
        _, w2 = left.pop(partner)
        pairs.append(PolePair(_tidy(Om**2), _tidy((w - w2) * Om), _tidy(w + w2)))
    isolated = _back(sp.factor(sp.cancel(num.subs(omega, 0) / den.subs(omega, 0))), backward)
    how = ("the weights are c-numbers (no temperature dependence)"
           if not gibbs.used else "Gibbs averages from the exact spectrum of H")
    out = MotionDerivation(system, A, B, convention, space, tuple(singles), tuple(pairs), isolated,
                           sp.factor(elastic), sp.factor(mean_A), sp.factor(mean_B), A0, B0, how, budget)
    return out, ""
