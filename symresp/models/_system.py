r"""The physical system: Hamiltonian, sites, sector and named observables (layer: models).

Owns :class:`System`, the validated description of a model that every derivation starts from
(the budget lives in :mod:`._budget`). Imports sympy, :mod:`symresp.errors`,
:mod:`symresp.conventions` and :mod:`symresp.algebra`.

A *sector* restricts the Hilbert space to a joint eigenspace of operators that commute with H
and are diagonal in the product basis (particle numbers, total :math:`S^z`, ...): the
canonical ensemble at fixed values of those quantities.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction

import sympy as sp

from ..algebra import (Basis, Operator, Site, as_coefficient, as_operator, commutator, dagger,
                       sparse_form)
from ..conventions import name_problem
from ..errors import InputError, NotConservedError, NotHermitianError

__all__ = ["System", "is_diagonal"]


def is_diagonal(op: Operator) -> bool:
    """True when ``op`` is diagonal in the product basis (only number-like local factors)."""
    for mono, _ in op.terms:
        for _, key in mono:
            if key[1] != key[2]:
                return False
    return True


def _check_parameters(symbols: Iterable[sp.Symbol], where: str) -> None:
    seen: dict[str, sp.Symbol] = {}
    for s in sorted(symbols, key=lambda x: (x.name, str(x.assumptions0))):
        problem = name_problem(s.name, "parameter name")
        if problem:
            raise InputError(f"{where}: parameter {problem}")
        other = seen.get(s.name)
        if other is not None and other != s:
            raise InputError(
                f"{where}: two different parameters are both named {s.name!r} (declared with "
                f"different assumptions: {_assumptions(other)} and {_assumptions(s)}); use one "
                f"symbol, e.g. sympy.Symbol({s.name!r}, real=True), everywhere")
        seen[s.name] = s


def _assumptions(s: sp.Symbol) -> str:
    keys = [k for k in ("positive", "nonnegative", "real") if s.assumptions0.get(k)]
    return ", ".join(f"{k}=True" for k in keys[:1]) or "no assumptions"


def _parameter_order(order: object, used: set[sp.Symbol], where: str) -> tuple[sp.Symbol, ...]:
    """The declared order of the parameters, checked against the symbols the model uses."""
    if order is None:
        return ()
    if isinstance(order, (str, sp.Basic)) or not isinstance(order, Iterable):
        raise InputError(f"{where}: parameters={order!r} must be a sequence of sympy Symbols (or "
                         f"their names), e.g. parameters=(J, h)")
    by_name = {s.name: s for s in used}
    out: list[sp.Symbol] = []
    for item in order:
        name = item.name if isinstance(item, sp.Symbol) else item
        if not isinstance(name, str):
            raise InputError(f"{where}: parameters: {item!r} is not a sympy Symbol or a name")
        if name in (p.name for p in out):
            raise InputError(f"{where}: parameters: {name!r} is listed twice")
        sym = by_name.get(name)
        if sym is None:
            if isinstance(item, sp.Symbol):
                problem = name_problem(name, "parameter name")
                if problem:
                    raise InputError(f"{where}: parameters: {problem}")
            continue                       # declared but unused: no place in the evaluators
        out.append(sym)
    missing = sorted(s.name for s in used if s not in out)
    if missing:
        raise InputError(f"{where}: parameters={tuple(p.name for p in out)!r} does not list "
                         f"{', '.join(missing)}; list every parameter of the model, in the order "
                         f"the evaluators should take them")
    return tuple(out)


@dataclass(frozen=True, slots=True)
class System:
    """Validated model data: Hamiltonian, all sites, sector and named observables.

    Parameters
    ----------
    hamiltonian : Operator
        Must be Hermitian for all real parameter values.
    sector : tuple of (Operator, value)
        Conserved diagonal operators and the eigenvalue each is fixed to.
    observables : tuple of (name, Operator)
        Named operators, usable by name in responses.
    extra_sites : tuple of Site
        Sites that belong to the model although H may not touch them.
    name : str
        A label used in summaries and emitted code.
    order : tuple of Symbol
        The declared order of the parameters (case-file order, or ``parameters=`` of the
        API); empty for the default order, sorted by name.
    """

    hamiltonian: Operator
    sector: tuple[tuple[Operator, sp.Expr], ...] = ()
    observables: tuple[tuple[str, Operator], ...] = ()
    extra_sites: tuple[Site, ...] = ()
    name: str = "model"
    order: tuple[sp.Symbol, ...] = ()      # declared parameter order (empty: by name)
    _memo: dict = field(default_factory=dict, compare=False, repr=False, hash=False)

    @classmethod
    def build(cls, hamiltonian: object, *, sector: Mapping | None = None,
              observables: Mapping[str, object] | None = None, extra_sites: Iterable[Site] = (),
              name: str = "model", parameters: Iterable | None = None) -> System:
        """Validate the inputs and build a System (see the class docstring)."""
        if isinstance(hamiltonian, (list, tuple, dict, str)):
            raise InputError(
                f"Model: the Hamiltonian must be an operator expression, got {type(hamiltonian).__name__}"
            )
        H = as_operator(hamiltonian)
        _check_parameters(H.free_symbols, "Model")
        if not H.is_hermitian():
            _raise_not_hermitian(H)
        obs: list[tuple[str, Operator]] = []
        for key, val in (observables or {}).items():
            problem = name_problem(key, "observable name")
            if problem:
                raise InputError(f"Model: observable {problem}")
            o = as_operator(val)
            _check_parameters(o.free_symbols | H.free_symbols, f"Model: observable {key!r}")
            obs.append((key, o))
        sec: list[tuple[Operator, sp.Expr]] = []
        for q, val in (sector or {}).items():
            Q = as_operator(q)
            if not is_diagonal(Q):
                raise InputError(
                    f"Model: sector operator {Q} is not diagonal in the product basis; sectors "
                    f"are fixed values of number-like operators (total S^z, particle numbers)"
                )
            if not commutator(H, Q).is_zero:
                raise NotConservedError(
                    f"Model: sector operator {Q} does not commute with the Hamiltonian, so its "
                    f"eigenvalue cannot be fixed; choose a conserved quantity"
                )
            if isinstance(val, str) or not isinstance(val, (int, float, Fraction, sp.Expr)):
                raise InputError(f"Model: sector value {val!r} is not a number; give an int, a "
                                 f"float or a sympy number")
            v = as_coefficient(val, where="Model: sector value")
            if not v.is_number:
                raise InputError(f"Model: sector value {val!r} is not a number")
            sec.append((Q, v))
        extra = set(extra_sites)
        for _, o in obs:
            extra |= o.sites
        for Q, _ in sec:
            extra |= Q.sites
        used = set(H.free_symbols)
        for _, o in obs:
            used |= o.free_symbols
        order = _parameter_order(parameters, used, "Model")
        sys_ = cls(H, tuple(sec), tuple(sorted(obs)), tuple(sorted(extra - H.sites, key=lambda s: s.order)),
                   name, order)
        sys_.check_site_names()
        if sec and sys_.basis().dimension == 0:
            raise InputError(f"Model: the sector {_sector_str(sec)} contains no state")
        return sys_

    # ------------------------------------------------------------ structure
    @property
    def sites(self) -> tuple[Site, ...]:
        """Every site of the model in site order."""
        return tuple(sorted(self.hamiltonian.sites | set(self.extra_sites), key=lambda s: s.order))

    def check_site_names(self) -> None:
        """Raise InputError when two different sites share a name."""
        seen: dict[str, Site] = {}
        for s in self.sites:
            if s.name in seen and seen[s.name] != s:
                raise InputError(
                    f"Model: two different sites are both named {s.name!r}; give each site its own name"
                )
            seen[s.name] = s

    @property
    def parameters(self) -> tuple[sp.Symbol, ...]:
        """Symbols of H and of the observables: in the declared order when there is one
        (:attr:`order`), otherwise sorted by name."""
        syms = set(self.hamiltonian.free_symbols)
        for _, o in self.observables:
            syms |= o.free_symbols
        first = tuple(s for s in self.order if s in syms)
        return first + tuple(sorted(syms - set(first), key=lambda s: s.name))

    def with_sites(self, sites: Iterable[Site]) -> System:
        """The same system, extended by the sites of ``sites`` (identity on them)."""
        new = set(sites) - set(self.sites)
        if not new:
            return self
        extra = tuple(sorted(set(self.extra_sites) | new, key=lambda s: s.order))
        out = System(self.hamiltonian, self.sector, self.observables, extra, self.name, self.order)
        out.check_site_names()
        return out

    def basis(self) -> Basis:
        """The product basis, restricted to the sector when one is set."""
        memo = self._memo.get("basis")
        if memo is not None:
            return memo
        full = Basis.product(self.sites)
        if self.sector:
            keep = list(range(full.dimension))
            for Q, value in self.sector:
                diag = sparse_form(Q, full)
                keep = [i for i in keep if sp.expand(diag.get((i, i), 0) - value) == 0]
            full = full.restrict(keep)
        self._memo["basis"] = full
        return full

    def operator(self, op: object, *, role: str = "operator") -> Operator:
        """Resolve ``op`` (an Operator, a scalar or the name of an observable) to an Operator."""
        if isinstance(op, str):
            for name, o in self.observables:
                if name == op:
                    return o
            known = ", ".join(n for n, _ in self.observables) or "none defined"
            raise InputError(f"{role}: no observable named {op!r} (known: {known})")
        if isinstance(op, Operator):
            for Q, _ in self.sector:
                if not commutator(op, Q).is_zero:
                    raise NotConservedError(
                        f"{role}: {op} changes the sector quantity {Q}; in a fixed sector only "
                        f"operators that conserve it can be measured or driven"
                    )
            return op
        try:
            return as_operator(op)
        except InputError as err:
            raise InputError(f"{role}: {err}") from None


def _sector_str(sec) -> str:
    return ", ".join(f"{Q} = {v}" for Q, v in sec)


def _raise_not_hermitian(H: Operator) -> None:
    diff = H - dagger(H)
    bad = [(m, c) for m, c in diff.terms][:3]
    complex_params = sorted(s.name for s in H.free_symbols if not s.is_real)
    hint = ""
    if complex_params:
        hint = (f" Parameter(s) {', '.join(complex_params)} are not declared real: use "
                f"sympy.Symbol(name, real=True) (or positive=True).")
    shown = " + ".join(f"({c})*{Operator(((m, sp.Integer(1)),), frozenset()).__repr__()}" for m, c in bad)
    raise NotHermitianError(
        f"Model: the Hamiltonian is not Hermitian; H - H^dagger = {shown}{' + ...' if len(diff.terms) > 3 else ''}."
        f"{hint} Add the Hermitian-conjugate terms (e.g. + sr.dagger(term)).")
