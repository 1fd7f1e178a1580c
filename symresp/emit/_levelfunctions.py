r"""Magnetisation from the closed-form levels of a model in a field (layer: emit).

Owns :class:`LevelFunctions` and :func:`level_functions`. Imports numpy, sympy,
:mod:`symresp.errors`, :mod:`symresp.numeric` (batched polynomial roots),
:mod:`symresp.response` and :mod:`symresp.spectrum` (``LevelRoot``).

A Hamiltonian that is linear in the field components :math:`F_k`,
:math:`H = H_0 + c\sum_k F_k\,X_k` (``c`` the Zeeman constant :math:`\mu_B/E_u`, :math:`X_k` the
moment operators in :math:`\mu_B` with the sign of ``zeeman``), has levels :math:`E_a(F, \theta)`.
By the Hellmann-Feynman theorem the magnetisation per formula unit along a field
:math:`\mathbf B = B\mathbf n` (:math:`F_k = B\,\mathbf n\cdot\mathbf e_k`) is

.. math::

    M = -\frac1c\sum_a q_a\,\partial_B E_a, \qquad
    \frac{\partial M}{\partial B} = -\frac1c\Big[\sum_a q_a\,\partial_B^2E_a
        - \beta\Big(\sum_a q_a(\partial_BE_a)^2 - \Big(\sum_a q_a\partial_BE_a\Big)^2\Big)\Big],

    \frac{\partial M}{\partial\theta} = -\frac1c\Big[\sum_a q_a\,\partial_\theta\partial_BE_a
        - \beta\Big(\sum_a q_a\,\partial_BE_a\,\partial_\theta E_a
        - \sum_a q_a\partial_BE_a\sum_b q_b\partial_\theta E_b\Big)\Big],

with :math:`q_a = d_ae^{-\beta(E_a - E_{\min})}/Z'` the population of level a (all its states).
The derivatives of the levels are exact symbolic derivatives; a level that is an implicit root
of a parameter-dependent factor (``LevelRoot``) is computed per point from the batched roots
of that factor, and differentiated implicitly,
:math:`\partial_\theta\lambda = -f_\theta(\lambda)/f_E(\lambda)` (accurate away from points
where two roots of the factor meet).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import sympy as sp

from ..errors import ClosedFormError, InputError
from ..numeric import real_roots
from ..response import Derivation
from ..spectrum import LevelRoot, freeze_roots
from ._plan import build_plan

__all__ = ["LevelFunctions", "level_functions", "evaluator_parameters"]


def evaluator_parameters(derivation: Derivation) -> tuple[tuple[sp.Symbol, str], ...]:
    """The parameters of the emitted evaluator of ``derivation``, in its signature order, each
    with the Python name the evaluator gives it (a name that is not a safe identifier is
    renamed), so that callers address parameters by name.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.emit import evaluator_parameters
    >>> J, h = sp.symbols("J h", real=True)
    >>> a = sr.spin("a", sp.Rational(1, 2))
    >>> d = sr.Model(h * a.z).response(a.z).derivation
    >>> evaluator_parameters(d)
    ((h, 'h'),)
    """
    plan = build_plan(derivation)
    return tuple(zip(plan.original, plan.names))


class _Implicit:
    """Implicit roots of a set of expressions, each replaced by a symbol with its derivative rule."""

    def __init__(self) -> None:
        self.symbols: dict[LevelRoot, sp.Symbol] = {}
        self.rules: dict[sp.Symbol, tuple[int, tuple[sp.Expr, ...]]] = {}

    def replace(self, expr: sp.Expr) -> sp.Expr:
        for r in sorted(expr.atoms(LevelRoot), key=sp.default_sort_key):
            if r not in self.symbols:
                sym = sp.Symbol(f"_r{len(self.symbols)}", real=True)
                self.symbols[r] = sym
                self.rules[sym] = (int(r.args[0]), tuple(r.args[1:]))
        return expr.xreplace(self.symbols) if self.symbols else expr

    def diff(self, expr: sp.Expr, var: sp.Symbol) -> sp.Expr:
        """Total derivative, the implicit roots depending on ``var`` too."""
        out = sp.diff(expr, var)
        for sym, (_, coeffs) in self.rules.items():
            if not expr.has(sym):
                continue
            n = len(coeffs) - 1
            f_var = sum((sp.diff(c, var) * sym ** (n - i) for i, c in enumerate(coeffs)),
                        sp.Integer(0))
            if f_var == 0:
                continue
            f_E = sum(((n - i) * c * sym ** (n - i - 1) for i, c in enumerate(coeffs[:-1])),
                      sp.Integer(0))
            out += sp.diff(expr, sym) * (-f_var / f_E)
        return out


@dataclass(frozen=True, slots=True, eq=False)
class LevelFunctions:
    """Numeric level energies and their derivatives in the parameters and field components.

    Use :meth:`levels` for the raw arrays, :meth:`magnetisation` for M and its derivatives.
    """

    parameters: tuple[str, ...]
    fields: tuple[str, ...]
    degeneracies: np.ndarray
    zeeman: float
    _roots: tuple
    _function: object

    def levels(self, params: dict[str, object], fields: Sequence[object]):
        """Arrays E (..., L), dE/dF (..., L, K), dE/dtheta (..., L, P), d2E/dF dtheta
        (..., L, K, P) and d2E/dF dF' (..., L, K, K) at broadcast parameters and field components."""
        missing = [p for p in self.parameters if p not in params]
        if missing:
            raise InputError(f"level functions: no value for {', '.join(missing)}")
        args = [np.asarray(params[p], dtype=float) for p in self.parameters]
        args += [np.asarray(f, dtype=float) for f in fields]
        shape = np.broadcast_shapes(*(a.shape for a in args)) if args else ()
        args = [np.broadcast_to(a, shape) for a in args]
        roots = []
        for k, coeff_fn in self._roots:
            cs = [np.broadcast_to(np.asarray(c, dtype=float), shape) for c in coeff_fn(*args)]
            roots.append(_polished_root(cs, k))
        L, K, P = len(self.degeneracies), len(self.fields), len(self.parameters)
        flat = self._function(*args, *roots)   # type: ignore[operator]
        vals = [np.broadcast_to(np.asarray(v, dtype=float), shape) for v in flat]
        pos = 0

        def take(n: int) -> np.ndarray:
            nonlocal pos
            out = np.stack(vals[pos:pos + n], axis=-1) if n else np.zeros(shape + (0,))
            pos += n
            return out

        E = take(L)
        gF = take(L * K).reshape(shape + (L, K))
        gP = take(L * P).reshape(shape + (L, P))
        hFP = take(L * K * P).reshape(shape + (L, K, P))
        hFF = take(L * K * K).reshape(shape + (L, K, K))
        return E, gF, gP, hFP, hFF

    def magnetisation(self, T, params: dict[str, object], B, direction: Sequence[float],
                      basis: Sequence[Sequence[float]]):
        r"""Magnetisation along the field in :math:`\mu_B` per formula unit, its parameter
        derivatives and :math:`\partial M/\partial B`.

        Parameters
        ----------
        T : array_like
            :math:`k_BT` in the energy unit of the model.
        params : dict
            Values of :attr:`parameters` (names), broadcast with ``T`` and ``B``.
        B : array_like
            Field strength in tesla.
        direction : three floats
            Unit vector of the field.
        basis : K unit vectors
            The directions :math:`\mathbf e_k` of the field components :attr:`fields`.

        Returns
        -------
        (M, dM/dtheta (..., P) in the order of :attr:`parameters`, dM/dB)
        """
        T = np.asarray(T, dtype=float)
        B = np.asarray(B, dtype=float)
        n = np.asarray(direction, dtype=float)
        proj = np.array([float(np.dot(n, np.asarray(e, dtype=float))) for e in basis])
        shape = np.broadcast_shapes(T.shape, B.shape, *(np.shape(params[p]) for p in self.parameters))
        T = np.broadcast_to(T, shape)
        fields = [B * proj[k] for k in range(len(proj))]
        E, gF, gP, hFP, hFF = self.levels(params, fields)
        E = np.broadcast_to(E, shape + E.shape[-1:])
        beta = 1.0 / T[..., None]
        x = np.exp(-beta * (E - E.min(axis=-1, keepdims=True))) * self.degeneracies
        q = x / x.sum(axis=-1, keepdims=True)
        t = gF @ proj                                         # dE_a/dB, (..., L)
        s = np.einsum("...lkp,k->...lp", hFP, proj)           # d2E_a/dB dtheta
        h = np.einsum("...lkm,k,m->...l", hFF, proj, proj)    # d2E_a/dB2
        mean_t = (q * t).sum(axis=-1)
        c = self.zeeman
        M = -mean_t / c
        cov = np.einsum("...l,...l,...lp->...p", q, t, gP) - mean_t[..., None] * np.einsum(
            "...l,...lp->...p", q, gP)
        dM = -(np.einsum("...l,...lp->...p", q, s) - beta * cov) / c
        var = (q * t * t).sum(axis=-1) - mean_t ** 2
        dMdB = -((q * h).sum(axis=-1) - beta[..., 0] * var) / c
        return M, dM, dMdB


def _polished_root(coeffs: list[np.ndarray], k: int) -> np.ndarray:
    """Root k (ascending) of the polynomial, from the companion matrix, polished by two Newton
    steps (the companion eigenvalues lose digits when the coefficients differ in scale)."""
    r = real_roots(coeffs)[..., k]
    for _ in range(2):
        f = np.zeros_like(r)
        fp = np.zeros_like(r)
        for i, c in enumerate(coeffs):
            fp = fp * r + f
            f = f * r + c
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.where(fp != 0, f / np.where(fp != 0, fp, 1.0), 0.0)
        # only accept steps that stay small (a double root has fp ~ 0)
        ok = np.abs(step) <= 1e-6 * (1.0 + np.abs(r))
        r = np.where(ok, r - step, r)
    return r


def level_functions(derivation: Derivation, parameters: Sequence[sp.Symbol],
                    fields: Sequence[sp.Symbol], zeeman: float) -> LevelFunctions:
    r"""Numeric level functions of a derivation whose Hamiltonian is linear in ``fields``.

    Parameters
    ----------
    derivation : Derivation
        Any response of the model (only its levels are used).
    parameters : sequence of Symbol
        The parameters the functions take (every other symbol must be absent).
    fields : sequence of Symbol
        Field components :math:`F_k` (tesla) in the Hamiltonian.
    zeeman : float
        :math:`c = \mu_B/E_u` of the model's energy unit.

    Returns
    -------
    LevelFunctions

    Examples
    --------
    A spin 1/2 with g = 2 in a field along z (energies in kelvin): :math:`M = \tanh(\mu_BB/k_BT)`.

    >>> import math, sympy as sp, symresp as sr
    >>> from symresp.emit import level_functions, zeeman_constant
    >>> F = sp.Symbol("F", real=True)
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> d = sr.Model(sr.zeeman({s: 2}, F)).response(s.z).derivation
    >>> c = float(zeeman_constant("K"))
    >>> lf = level_functions(d, [], [F], c)
    >>> M, _, _ = lf.magnetisation(2.0, {}, 1.5, (0, 0, 1), [(0, 0, 1)])
    >>> round(float(M), 12) == round(math.tanh(c * 1.5 / 2.0), 12)
    True
    """
    params = tuple(parameters)
    fs = tuple(fields)
    known = set(params) | set(fs)
    imp = _Implicit()
    energies = []
    for lv in derivation.levels:
        e = sp.sympify(lv.energy)  # safe: a sympy object of the derivation
        e = freeze_roots(e)
        extra = e.free_symbols - known
        if extra:
            raise InputError(f"level functions: the level {lv.energy} depends on "
                             f"{', '.join(sorted(map(str, extra)))}, which is neither a parameter "
                             f"nor a field component")
        energies.append(imp.replace(e))
    for sym, (_, coeffs) in imp.rules.items():
        if len(coeffs) - 1 > 4:
            raise ClosedFormError("level functions: an implicit level of degree > 4; give numbers "
                                  "to more parameters")
    exprs: list[sp.Expr] = list(energies)
    exprs += [imp.diff(e, f) for e in energies for f in fs]
    exprs += [imp.diff(e, p) for e in energies for p in params]
    dF = [[imp.diff(e, f) for f in fs] for e in energies]
    exprs += [imp.diff(dF[a][k], p) for a in range(len(energies)) for k in range(len(fs))
              for p in params]
    exprs += [imp.diff(dF[a][k], f) for a in range(len(energies)) for k in range(len(fs))
              for f in fs]
    arg_syms = [sp.Symbol(f"_p{i}", real=True) for i in range(len(params))]
    arg_syms += [sp.Symbol(f"_f{i}", real=True) for i in range(len(fs))]
    rename = dict(zip((*params, *fs), arg_syms))
    root_syms = list(imp.rules)
    exprs = [sp.sympify(e).xreplace(rename) for e in exprs]  # safe: sympy objects
    fn = sp.lambdify(arg_syms + root_syms, exprs, modules="numpy", cse=True)
    roots = []
    for sym in root_syms:
        k, coeffs = imp.rules[sym]
        cfn = sp.lambdify(arg_syms, [sp.sympify(c).xreplace(rename) for c in coeffs],  # safe: sympy objects computed here, never user text
                          modules="numpy")
        roots.append((k, cfn))
    degeneracies = np.array([lv.degeneracy for lv in derivation.levels], dtype=float)
    return LevelFunctions(tuple(p.name for p in params), tuple(f.name for f in fs), degeneracies,
                          float(zeeman), tuple(roots), fn)
