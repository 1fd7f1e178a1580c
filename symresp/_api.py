r"""Public facade types :class:`Model` and :class:`Response` (layer: facade, above cases).

These thin classes give the stable API of DESIGN.md; every method delegates to the layer that
owns the work (models, spectrum, response, numeric). Imports any lower layer; nothing below
imports this module.
"""

from __future__ import annotations

import types
from collections.abc import Mapping, Sequence
from typing import Literal

import numpy as np
import sympy as sp

from . import numeric
from ._public import public
from .algebra import Operator, Site, describe, to_array, to_sympy_matrix
from .cases import find_case, read_case, with_values
from .checks import Report, Verdict, compare, consistency
from .emit import latex_document, numpy_functions, numpy_module_source
from .conventions import DEFAULT_CONVENTION, Convention, nu, omega, t
from .errors import InputError
from .models import Budget, System
from ._evaluation import evaluate_at, numeric_params, reference_at
from ._display import latex_block, picture, results_section, summary_text
from .response import (Derivation, Level, MotionDerivation, Presentation, Quantity, Route,
                       StaticKind, Transition, derive, respond)

__all__ = ["Model", "Response", "load_case"]


@public
class Model:
    r"""A quantum model: a Hamiltonian on sites, optionally in a sector, with named observables.

    Parameters
    ----------
    H : Operator
        Hermitian Hamiltonian built from site operators and sympy parameters (declare them
        ``real=True`` or ``positive=True``).
    sector : mapping, optional
        ``{Q: q}``: restrict to the eigenspace ``Q = q`` of conserved, number-like operators
        (canonical ensemble).
    observables : mapping, optional
        Named operators, usable by name in :meth:`response`.
    name : str
        Label for summaries and emitted code.
    parameters : sequence of Symbol (or names), optional
        The order of the parameters: emitted evaluators take them in this order, and
        :attr:`parameters` lists them so. It must list every symbol of H and of the
        observables. Default: sorted by name.

    Raises
    ------
    NotHermitianError
        If H is not Hermitian for real parameters.
    NotConservedError
        If a sector operator does not commute with H.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> J = sp.Symbol("J", positive=True)
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> model = sr.Model(J * (a.vec @ b.vec))
    >>> [(lv.energy, lv.degeneracy) for lv in model.levels()]
    [(J/4, 3), (-3*J/4, 1)]
    >>> r = model.response(a.z + b.z, a.z + b.z)
    >>> r.static("isothermal")          # Bleaney-Bowers, g mu_B = 1
    2*beta/(exp(J*beta) + 3)

    See Also
    --------
    Response, load_case
    """

    __slots__ = ("_system",)

    def __init__(self, H: object, *, sector: Mapping | None = None,
                 observables: Mapping[str, object] | None = None, name: str = "model",
                 parameters: Sequence | None = None) -> None:
        if sector is not None and not isinstance(sector, Mapping):
            raise InputError(f"Model: sector={sector!r} must be a mapping {{operator: value}}")
        if observables is not None and not isinstance(observables, Mapping):
            raise InputError(f"Model: observables={observables!r} must be a mapping {{name: operator}}")
        if not isinstance(name, str):
            raise InputError(f"Model: name={name!r} must be a string")
        self._system = System.build(H, sector=sector, observables=observables, name=name,
                                    parameters=parameters)
        if parameters is not None:
            listed = {p.name if isinstance(p, sp.Symbol) else p for p in parameters}
            unknown = sorted(listed - {p.name for p in self._system.parameters})
            if unknown:
                raise InputError(f"Model: parameters lists {', '.join(map(repr, unknown))}, which "
                                 f"appear(s) neither in H nor in the observables")

    @classmethod
    def _from_system(cls, system: System) -> Model:
        m = cls.__new__(cls)
        m._system = system
        return m

    # ------------------------------------------------------------ structure
    @property
    def system(self) -> System:
        """The validated model data (immutable)."""
        return self._system

    @property
    def hamiltonian(self) -> Operator:
        """The Hamiltonian H."""
        return self._system.hamiltonian

    @property
    def sites(self) -> tuple[Site, ...]:
        """All sites in site order."""
        return self._system.sites

    @property
    def parameters(self) -> tuple[sp.Symbol, ...]:
        """Symbolic parameters, in the declared order (``parameters=``; default: by name)."""
        return self._system.parameters

    @property
    def observables(self) -> dict[str, Operator]:
        """Named observables (a fresh dict)."""
        return dict(self._system.observables)

    @property
    def dimension(self) -> int:
        """Dimension of the (sector) Hilbert space."""
        return self._system.basis().dimension

    def matrix(self, op: object = None) -> sp.Matrix:
        """Sympy matrix of ``op`` (default: H) on the product basis (restricted to the sector).

        Rows and columns are in the order of :meth:`basis_labels`.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> sr.Model(0 * s.z).matrix(s.x)
        Matrix([
        [  0, 1/2],
        [1/2,   0]])
        """
        system, X = self._resolve(op)
        return to_sympy_matrix(X, system.basis())

    def array(self, op: object = None, *, params: Mapping | None = None) -> np.ndarray:
        """Complex numpy array of ``op`` (default: H) at numeric parameter values ``params``.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> h = sp.Symbol("h", real=True); s = sr.spin("s", 1)
        >>> sr.Model(h * s.z).array(params={"h": 2}).real.diagonal().tolist()
        [2.0, 0.0, -2.0]
        """
        system, X = self._resolve(op)
        return to_array(X, system.basis(), numeric_params(system, params))

    def basis_labels(self) -> list[str]:
        """Kets of the basis in the row order of :meth:`matrix` and :meth:`array`.

        One entry per site, in the order the sites were created: S^z of a spin, the level of
        an n-level site, the occupation of a fermion or boson mode.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s, q = sr.spin("s", sp.Rational(1, 2)), sr.nlevel("q", 2)
        >>> model = sr.Model(s.z * q.proj(1))
        >>> model.basis_labels()
        ['|1/2,0>', '|1/2,1>', '|-1/2,0>', '|-1/2,1>']
        >>> model.matrix().diagonal()
        Matrix([[0, 1/2, 0, -1/2]])
        """
        b = self._system.basis()
        return [b.label(i) for i in range(b.dimension)]

    def _resolve(self, op: object) -> tuple[System, Operator]:
        X = self._system.hamiltonian if op is None else self._system.operator(op, role="matrix")
        return self._system.with_sites(X.sites), X

    # ------------------------------------------------------------ derivation
    def levels(self, *, budget: Budget = Budget()) -> tuple[Level, ...]:
        """Exact energy levels with degeneracies and quantum numbers (see :class:`Level`).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> D = sp.Symbol("D", real=True); s = sr.spin("s", 1)
        >>> [(lv.energy, lv.degeneracy) for lv in sr.Model(D * s.z**2).levels()]
        [(D, 2), (0, 1)]
        """
        zero = Operator((), frozenset())
        return derive(self._system, zero, zero, budget=budget).levels

    def response(self, A: object, B: object | None = None, *,
                 convention: Convention = DEFAULT_CONVENTION, budget: Budget = Budget(),
                 route: Route = "auto") -> Response:
        r"""Derive :math:`\chi_{AB}`: measure ``A``, drive ``B`` (default ``B = A``).

        Parameters
        ----------
        A, B : Operator or str
            Operators or names of observables.
        convention : Convention
            Sign conventions (default: the pinned one of ``docs/conventions.md``).
        budget : Budget
            Limits on the expensive steps.
        route : {"auto", "lehmann", "motion"}
            ``"lehmann"``: exact diagonalisation and Lehmann sums (a boson mode is truncated at
            its cutoff; the result records which levels the cutoff touches and an estimate
            of the truncation error). ``"motion"``: the equations of motion of A and B, where
            they close on a finite operator space (exact, no cutoff, no level spectrum).
            ``"auto"``: ``"motion"`` for models with boson modes where it applies, else
            ``"lehmann"``. :meth:`Response.summary` names the route taken; see
            docs/routes.md.

        Returns
        -------
        Response

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> r = sr.Model(0 * s.z).response(s.z, s.z)     # a free spin
        >>> r.static("isothermal"), r.static("isolated")  # Curie law vs. zero
        (beta/4, 0)
        """
        if not isinstance(convention, Convention):
            raise InputError(f"response: convention={convention!r} must be a symresp Convention")
        if not isinstance(budget, Budget):
            raise InputError(f"response: budget={budget!r} must be a symresp.models.Budget")
        Aop = self._system.operator(A, role="response A")
        Bop = self._system.operator(A if B is None else B, role="response B")
        return Response(respond(self._system, Aop, Bop, route=route, convention=convention,
                                budget=budget))

    def __repr__(self) -> str:
        sites = ", ".join(repr(s) for s in self.sites)
        return f"Model({self._system.name!r}: {sites}; dimension {self.dimension})"


@public
class Response:
    r"""The derived linear response :math:`\chi_{AB}` of a model, in closed form.

    Conventions: those of :mod:`symresp.conventions` unless another :class:`Convention` was
    asked for; the result records it in :attr:`convention`.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> Delta = sp.Symbol("Delta", positive=True)
    >>> q = sr.spin("q", sp.Rational(1, 2))
    >>> r = sr.Model(Delta * q.z).response(2 * q.x)        # two-level system, A = B = sigma_x
    >>> r.poles()
    [(-Delta, -tanh(Delta*beta/2)), (Delta, tanh(Delta*beta/2))]
    >>> sp.simplify(r.frequency() - 2*Delta*sp.tanh(sr.beta*Delta/2)/(Delta**2 - sr.omega**2))
    0
    """

    __slots__ = ("_d",)

    def __init__(self, derivation: Derivation) -> None:
        if not isinstance(derivation, (Derivation, MotionDerivation)):
            raise InputError("Response: build responses with Model.response(A, B)")
        self._d = derivation

    def _budgeted(self):
        """One clock for this call, with the budget the response was derived with."""
        return self._d.budget.start().running()

    @property
    def derivation(self) -> Derivation | MotionDerivation:
        """The underlying derivation (levels, weights, spectrum; or the closed operator space
        of the equations-of-motion route)."""
        return self._d

    @property
    def convention(self) -> Convention:
        """The convention this result was derived under."""
        return self._d.convention

    @property
    def model(self) -> Model:
        """The model (extended by the sites of A and B)."""
        return Model._from_system(self._d.system)

    @property
    def levels(self) -> tuple[Level, ...]:
        """Energy levels."""
        return self._d.levels

    @property
    def transitions(self) -> tuple[Transition, ...]:
        """Transitions between distinct levels with non-zero weight."""
        return self._d.transitions()

    @property
    def is_closed_form(self) -> bool:
        """False when some level is an implicit root (semi-closed form)."""
        return self._d.spectrum.is_closed_form

    def static(self, kind: StaticKind = "isothermal") -> sp.Expr:
        r"""Static susceptibility in ``sr.beta`` and the parameters.

        ``"isothermal"``: :math:`\partial\langle A\rangle/\partial f` at fixed temperature;
        ``"isolated"``: :math:`\chi(\omega\to 0)`. They differ by
        :math:`\beta(\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle)`.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(3, 2))
        >>> sr.Model(0 * s.z).response(s.z).static("isothermal")   # beta S(S+1)/3
        5*beta/4
        """
        with self._budgeted():
            return self._d.static(kind)

    def frequency(self) -> sp.Expr:
        r""":math:`\chi_{AB}(\omega)` in ``sr.omega``, retarded prescription implied.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> h = sp.Symbol("h", positive=True); s = sr.spin("s", sp.Rational(1, 2))
        >>> r = sr.Model(h * s.z).response(s.x)
        >>> sp.simplify(r.frequency().subs(sr.omega, 0) - r.static("isolated"))
        0
        """
        with self._budgeted():
            return self._d.frequency(omega)

    def time(self) -> sp.Expr:
        r""":math:`\chi_{AB}(t)` for t > 0 in ``sr.t``.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> h = sp.Symbol("h", positive=True); s = sr.spin("s", sp.Rational(1, 2))
        >>> sr.Model(h * s.z).response(s.x).time()
        sin(h*t)*tanh(beta*h/2)/2
        """
        with self._budgeted():
            return self._d.time(t)

    def poles(self) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Pole table :math:`[(\Omega_k, w_k)]`: :math:`\chi(\omega) = \sum_k w_k/(\Omega_k - \omega - i0^+)`.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> sr.Model(0 * s.z).response(s.z).poles()    # a free spin has no transitions
        []
        """
        with self._budgeted():
            return self._d.poles()

    def spectral_lines(self) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Lines of :math:`\chi''(\omega) = \pi \sum_k w_k \delta(\omega - \Omega_k)` as (position, strength).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> h = sp.Symbol("h", positive=True); s = sr.spin("s", sp.Rational(1, 2))
        >>> sr.Model(h * s.z).response(s.x).spectral_lines()[-1]
        (h, pi*tanh(beta*h/2)/4)
        """
        with self._budgeted():
            return self._d.spectral_lines()

    def correlation_lines(self, kind: Literal["plain", "symmetrised", "canonical"] = "plain"
                          ) -> list[tuple[sp.Expr, sp.Expr]]:
        r"""Lines :math:`[(\Omega_k, s_k)]` of the correlation function
        :math:`S_{AB}(\omega) = \int dt\, e^{i\omega t}\langle A(t) B\rangle
        = 2\pi\sum_k s_k\,\delta(\omega - \Omega_k)`.

        :math:`s_k = \sum_{E_m - E_n = \Omega_k} p_n A_{nm} B_{mn}`; the pairs inside a
        degenerate level give the elastic line at :math:`\Omega = 0`. ``kind="symmetrised"``
        gives :math:`\tfrac12\langle\{A(t), B\}\rangle` (weights
        :math:`\tfrac12(p_n + p_m)A_{nm}B_{mn}`), ``kind="canonical"`` Kubo's canonical
        correlation (weights :math:`(p_n - p_m)A_{nm}B_{mn}/(\beta\Omega_k)`, elastic as plain).
        Fluctuation-dissipation: :math:`w_k = (1 - e^{-\beta\Omega_k}) s_k` for the poles
        :math:`w_k` of :meth:`poles`; see docs/conventions.md, section 9.

        Examples
        --------
        Two-level system, :math:`A = B = \sigma_x` (detailed balance):

        >>> import sympy as sp, symresp as sr
        >>> Delta = sp.Symbol("Delta", positive=True); q = sr.spin("q", sp.Rational(1, 2))
        >>> r = sr.Model(Delta * q.z).response(2 * q.x)
        >>> r.correlation_lines()
        [(-Delta, 1/(exp(Delta*beta) + 1)), (Delta, 1/(1 + exp(-Delta*beta)))]
        >>> r.correlation_lines("symmetrised")
        [(-Delta, 1/2), (Delta, 1/2)]
        """
        if kind not in ("plain", "symmetrised", "canonical"):
            raise InputError(f"correlation_lines: kind={kind!r} must be 'plain', 'symmetrised' "
                             "or 'canonical'")
        return self._d.correlation_lines(kind)

    def matsubara(self) -> sp.Expr:
        r""":math:`\chi(i\nu_n)` in ``sr.nu`` for :math:`\nu_n \ne 0` (at :math:`\nu_n = 0` use the isothermal value).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> h = sp.Symbol("h", positive=True); s = sr.spin("s", sp.Rational(1, 2))
        >>> r = sr.Model(h * s.z).response(s.x)
        >>> sp.simplify(r.matsubara().subs(sr.nu, 0) - r.static("isolated"))
        0
        """
        with self._budgeted():
            return self._d.matsubara(nu)

    def zero_temperature(self, kind: StaticKind = "isothermal") -> sp.Expr:
        r"""Static susceptibility at T = 0 (ground level = the lowest level at the sample point).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> D = sp.Symbol("D", positive=True); s = sr.spin("s", 1)
        >>> sr.Model(D * s.z**2).response(s.x).zero_temperature()     # Van Vleck: 2/D
        2/D
        >>> sr.Model(0 * s.z).response(s.z).zero_temperature()        # Curie term diverges
        oo
        """
        with self._budgeted():
            return self._d.zero_temperature(kind)

    def partition_function(self) -> sp.Expr:
        r"""Partition function :math:`Z = \sum_a d_a e^{-\beta E_a}`.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", 1)
        >>> sr.Model(0 * s.z).response(s.z).partition_function()
        3
        """
        with self._budgeted():
            return self._d.partition()

    def expectation(self, which: Literal["A", "B"] = "A") -> sp.Expr:
        r"""Thermal average :math:`\langle A\rangle` (or :math:`\langle B\rangle`) in the Gibbs state of H.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", 1)
        >>> sr.Model(0 * s.z).response(s.z * s.z).expectation()
        2/3
        """
        if which not in ("A", "B"):
            raise InputError(f"expectation: which={which!r} must be 'A' or 'B'")
        with self._budgeted():
            return sp.factor(self._d.expectation(which))

    def evaluate(self, quantity: Quantity, *, params: Mapping | None = None, T: float | None = None,
                 omega_value: complex | None = None, time_value: float | None = None) -> complex:
        """Evaluate a quantity at numbers (slow sympy route, meant for checks).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> round(sr.Model(0 * s.z).response(s.z).evaluate("isothermal", T=0.5).real, 12)
        0.5
        """
        with self._budgeted():
            return evaluate_at(self._d, quantity, params=params, T=T, omega_value=omega_value,
                               time_value=time_value)

    def reference(self, *, params: Mapping | None = None, T: float) -> numeric.NumericResponse:
        """The numeric reference (exact diagonalisation) at numbers, for comparison.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> round(sr.Model(0 * s.z).response(s.z).reference(T=0.5).isothermal.real, 12)
        0.5
        """
        return reference_at(self._d, params=params, T=T)

    def check(self, formula: object, quantity: Quantity = "isothermal", *, samples: int = 9,
              seed: int = 0, units: Mapping | None = None) -> Verdict:
        """Compare a hand-derived formula with this result and name the slip if they differ
        (see ``symresp.checks.compare`` and docs/checking.md).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> print(sr.Model(0 * s.z).response(s.z).check("beta/4"))
        agrees (exact)
        >>> sr.Model(0 * s.z).response(s.z).check("beta/4", "isolated").slip
        'isothermal-for-isolated'
        """
        with self._budgeted():
            return compare(self._d, formula, quantity, samples=samples, seed=seed, units=units)

    def consistency(self, *, points: int = 3, seed: int = 0) -> Report:
        """Run the physical consistency checks (sum rules, Kramers-Kronig, fluctuation-dissipation,
        positivity, Onsager, high-temperature limit, numeric reference); see docs/checking.md.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> h = sp.Symbol("h", positive=True); s = sr.spin("s", sp.Rational(1, 2))
        >>> sr.Model(h * s.z).response(s.x).consistency(points=1).ok
        True
        """
        with self._budgeted():
            return consistency(self._d, points=points, seed=seed)

    def numpy(self) -> types.ModuleType:
        """Compiled numpy evaluators of this response (no sympy at run time); see docs/evaluators.md.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> sr.Model(0 * s.z).response(s.z).numpy().chi_isothermal(0.5)
        0.5
        """
        with self._budgeted():
            return numpy_functions(self._d)

    def evaluator_source(self, *, name: str | None = None) -> str:
        """Source of the standalone numpy module (write it to a file, import it anywhere).

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> "import sympy" in sr.Model(0 * s.z).response(s.z).evaluator_source()
        False
        """
        with self._budgeted():
            return numpy_module_source(self._d, name=name)

    def latex_document(self, *, substitutions: Mapping | None = None,
                       symbol_names: Mapping | None = None) -> str:
        """Paper-ready LaTeX (aligned): Z, levels, poles, chi(omega), static chi.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> "begin{aligned}" in sr.Model(0 * s.z).response(s.z).latex_document()
        True
        """
        with self._budgeted():
            return latex_document(self._d, substitutions=substitutions, symbol_names=symbol_names)

    def presented(self, quantities: object = ("isothermal", "isolated", "frequency", "time"), *,
                  point: Mapping | None = None, budget: Budget = Budget(seconds=60.0)) -> Presentation:
        r"""The response as a results section prints it: levels sorted by energy, transitions,
        formulas in their shortest measured form and the where-list of the names they use
        (radicals, Z, populations, means, pole frequencies and weights); see docs/output.md.

        The formulas equal those of :meth:`static`, :meth:`frequency` and :meth:`time`
        (``presented().value(q)`` substitutes the where-list back); this is an additional
        view, the sympy expressions of those methods do not change.

        Parameters
        ----------
        quantities : sequence of str
            Any of "isothermal", "isolated", "frequency", "time", "correlation".
        point : mapping, optional
            Parameter values (by name or symbol) that order the levels (default: a generic
            point, positive parameters of order one and sign-free ones small).
        budget : Budget
            Time for choosing forms; past it, cheaper forms are used and a note says so.

        Returns
        -------
        symresp.response.Presentation

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> J = sp.Symbol("J", positive=True)
        >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
        >>> p = sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z).presented(["isothermal"])
        >>> print(p.text())
          levels (2), lowest first: energy E_i, degeneracy g, quantum numbers
            E1 = -3*J/4  g = 1   Sz=0, S=0
            E2 = J/4     g = 3   Sz in {1, 0, -1}, S=1
          transitions: none (A and B only connect states within levels)
          chi_isothermal = 2*beta/(exp(J*beta) + 3)
          where
            Z = 1 + 3*exp(-J*beta)
        >>> sp.simplify(p.value("isothermal") - 2*sr.beta/(3 + sp.exp(sr.beta*J)))
        0
        """
        return results_section(self._d, quantities, point=point, budget=budget)

    def plot(self, kind: Literal["levels", "sweep", "spectrum", "map", "static"], *,
             params: Mapping | None = None, T: float | None = None, eta: float | None = None,
             parameter: str | None = None, values: object = None,
             temperatures: object = None, kinds: tuple[str, ...] = ("chi", "chiT", "inverse"),
             log_T: bool = False, data: object = None, data_kind: str = "chi",
             path: object = None):
        r"""A picture of the response as a matplotlib Figure (saved to ``path``, .png or .svg,
        when given); needs the ``plot`` extra. See docs/pictures.md.

        ``kind``: ``"levels"`` (levels in columns by quantum number, transitions as arrows
        whose width is the weight :math:`(p_a - p_b)W_{ab}` at ``T``), ``"sweep"`` (levels
        against ``parameter`` over ``values``, crossings marked), ``"spectrum"`` (lines
        :math:`\pi w_k` and the broadened :math:`\chi''(\omega)` at ``T``, half width ``eta``),
        ``"map"`` (:math:`\chi''(\omega, T)` over ``temperatures``), ``"static"`` (chi, chi*T
        and 1/chi against ``temperatures``, ``kinds`` choosing the panels, measured ``data``
        as (T, values) of ``data_kind`` overlaid). ``params`` gives every parameter by name.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> J = sp.Symbol("J", positive=True)
        >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
        >>> r = sr.Model(J * (a.vec @ b.vec) + (a.z - b.z) / 4).response(a.x + b.x)
        >>> fig = r.plot("levels", params={"J": 1.0}, T=0.5)
        >>> len(fig.axes[0].patches)        # one arrow per transition with weight
        2
        """
        return picture(self._d, kind, params=params, T=T, eta=eta, parameter=parameter,
                       values=values, temperatures=temperatures, kinds=kinds, log_T=log_T,
                       data=data, data_kind=data_kind, path=path)

    def summary(self) -> str:
        """A readable derivation summary: levels, transitions, Z, static and dynamic chi.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> print(sr.Model(0 * s.z).response(s.z).summary().splitlines()[0])
        Linear response chi_AB of model 'model'
        """
        with self._budgeted():
            return summary_text(self._d)

    @property
    def route(self) -> str:
        """The route taken: ``"lehmann"`` (exact diagonalisation) or ``"motion"`` (equations of
        motion on a closed operator space); see :meth:`Model.response`."""
        return self._d.route

    def latex(self) -> str:
        r"""LaTeX ``aligned`` block (math mode): the static susceptibilities and
        :math:`\chi(\omega)` as :meth:`summary` prints them, with their where-list (Z,
        radicals, populations, poles). ``symresp derive --latex`` writes a whole document.

        Examples
        --------
        >>> import sympy as sp, symresp as sr
        >>> s = sr.spin("s", sp.Rational(1, 2))
        >>> print(sr.Model(0 * s.z).response(s.z).latex())
        \begin{aligned}
        \chi^{T}_{AB} &= \frac{\beta}{4} \\
        \chi^{\mathrm{isol}}_{AB} &= 0 \\
        \chi_{AB}(\omega) &= 0 \\
        Z &= 2
        \end{aligned}
        """
        with self._budgeted():
            return latex_block(self._d)

    def _repr_latex_(self) -> str:
        return "$$" + self.latex() + "$$"

    def __repr__(self) -> str:
        d = self._d
        size = (f"operators={d.space.dimension}" if isinstance(d, MotionDerivation)
                else f"levels={len(d.levels)}")
        return f"Response(A={describe(d.A)}, B={describe(d.B)}, route={d.route}, {size})"


@public
def load_case(path: object, *, params: Mapping | None = None) -> Model:
    """Load a case file (a path, or the name of a bundled case) as a :class:`Model`.

    The model carries the case's named observables, so ``model.response("M")`` works.
    ``params={"h": 0}`` fixes parameters at exact values (numbers, or text such as ``"3/2"``;
    decimals are read exactly), as ``--set h=0`` does on the command line: the model then has
    the number in place of the name.

    Examples
    --------
    >>> import symresp as sr
    >>> m = sr.load_case("dimer")
    >>> m.dimension, sorted(m.observables)
    (4, ['M'])
    >>> sr.load_case("dimer", params={"h": 0}).parameters
    (J,)
    """
    if params is not None and not isinstance(params, Mapping):
        raise InputError(f"load_case: params={params!r} must be a mapping {{name: value}}")
    return Model._from_system(with_values(read_case(find_case(path)), params,
                                          option="params").system)
