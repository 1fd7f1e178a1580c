r"""Symbolic building blocks of the emitted evaluators (layer: emit).

The evaluator is written as a straight-line program of sympy assignments. A few of its steps
are not plain elementary functions, because the plain form would be numerically unsafe; each
such step is a small :class:`sympy.Function` subclass here, with its defining formula, its
partial derivatives (``fdiff``, so the Jacobian program is obtained by differentiation), and a
stable numeric implementation printed by :mod:`symresp.emit._printers`.

Notation: :math:`c_a = E_a - E_{\min} \ge 0` is the energy of level a above the lowest level at
the evaluation point, :math:`x_a = e^{-\beta c_a}` its Boltzmann factor per state, and for a
pair of levels :math:`w_{ab} = E_b - E_a`.

Imports: sympy only.
"""

from __future__ import annotations

import sympy as sp

__all__ = ["Boltzmann", "BoltzmannT", "AsComplex", "ExpDiv", "ExpDiv2", "Keep", "LevelMin",
           "AtMin", "DegeneracyTol", "Causal", "BlockEigen", "RootPick", "SemiEigen", "SemiWeights",
           "CACHE_ONLY"]


class Boltzmann(sp.Function):
    r"""``Boltzmann(beta, c)`` :math:`= e^{-\beta c}` (c >= 0: never overflows).

    Printed as a helper that skips the exponential of the lowest level (c = 0 exactly).
    """

    nargs = 2

    def fdiff(self, argindex: int = 1) -> sp.Expr:
        beta, c = self.args
        if argindex == 1:
            return -c * self
        if argindex == 2:
            return -beta * self
        raise sp.ArgumentIndexError(self, argindex)


class BoltzmannT(sp.Function):
    r"""``BoltzmannT(T, c)`` :math:`= e^{-c/T}`: :class:`Boltzmann` at :math:`\beta = 1/T`.

    A printing form only, put in after differentiation (no ``fdiff``): a static kernel that
    takes T needs no reciprocal of the grid when beta appears in its Boltzmann factors alone,
    and one division is one rounding where ``(1/T) * c`` is two.
    """

    nargs = 2


class AsComplex(sp.Function):
    """``AsComplex(x)``: x as a complex array. Starts a pole sum that is accumulated in place
    when its first term may be real at run time but a later one complex."""

    nargs = 1


#: Argument positions (1-based) of :class:`ExpDiv` that only carry cached values: the function
#: does not depend on them beyond the true arguments, so their partial derivative is zero.
CACHE_ONLY = {1, 2, 4}


class ExpDiv(sp.Function):
    r"""``ExpDiv(x_a, x_b, beta, w, c_a, c_b)``: the thermal pair factor

    .. math:: \frac{x_a - x_b}{\beta w_{ab}} = \frac{e^{u_a} - e^{u_b}}{u_a - u_b},
              \qquad u_a = -\beta c_a,\; w_{ab} = c_b - c_a,

    the divided difference of the exponential. Its true arguments are ``beta, c_a, c_b``;
    ``x_a, x_b`` (the Boltzmann factors) and ``w`` (the exact level spacing) are cached values
    passed so the printed code neither recomputes an exponential nor loses digits in
    :math:`c_b - c_a`. Stable form: :math:`\max(x_a, x_b)\,\varphi(\beta|w|)` with
    :math:`\varphi(y) = (1 - e^{-y})/y`, :math:`\varphi(0) = 1`: the removable singularity at
    :math:`w \to 0` (accidental degeneracy) tends to :math:`x_a`.
    """

    nargs = 6

    def fdiff(self, argindex: int = 1) -> sp.Expr:
        xa, xb, beta, w, ca, cb = self.args
        e_ab = ExpDiv2(xa, xb, beta, w)      # d/du_a
        e_ba = ExpDiv2(xb, xa, beta, -w)     # d/du_b
        if argindex in CACHE_ONLY:
            return sp.Integer(0)
        if argindex == 3:
            return -ca * e_ab - cb * e_ba
        if argindex == 5:
            return -beta * e_ab
        if argindex == 6:
            return -beta * e_ba
        raise sp.ArgumentIndexError(self, argindex)


class ExpDiv2(sp.Function):
    r"""``ExpDiv2(x_a, x_b, beta, w)`` :math:`= \partial_{u_a}\,\frac{e^{u_a} - e^{u_b}}{u_a - u_b}`,
    the second divided difference :math:`\exp[u_a, u_a, u_b]`.

    Stable form with :math:`y = \beta|w|`: :math:`-x_a\,\psi(y)` if :math:`w \ge 0` (level a
    lower), :math:`x_b\,(\psi(y) + \varphi(y))` otherwise, where
    :math:`\psi(y) = (1 - e^{-y} - y)/y^2 \to -1/2` at :math:`y \to 0`. Used only in Jacobians
    (no derivative of its own).
    """

    nargs = 4


class Keep(sp.Function):
    r"""``Keep(w, tol)``: 1 if :math:`|w| > \mathrm{tol}` else 0 (piecewise constant, derivative 0).

    Drops pairs of levels that coincide at the evaluation point from the isolated
    susceptibility, which excludes degenerate pairs by definition.
    """

    nargs = 2

    def fdiff(self, argindex: int = 1) -> sp.Expr:
        return sp.Integer(0)


class LevelMin(sp.Function):
    """``LevelMin(E_0, ..., E_{L-1})``: the lowest level energy at the evaluation point."""


class AtMin(sp.Function):
    """``AtMin(L, E_0..E_{L-1}, v_0..v_{L-1})``: ``v_k`` of the lowest level ``k`` at the point."""


class DegeneracyTol(sp.Function):
    r"""``DegeneracyTol(rtol, E_0, ...)`` :math:`= \mathrm{rtol}\cdot\max(1, \max_a |E_a|)`,
    the level-grouping tolerance of :mod:`symresp.numeric`."""


class Causal(sp.Function):
    """``Causal(t, value)``: value for t >= 0, zero before the perturbation (retarded chi(t))."""

    nargs = 2


class BlockEigen(sp.Function):
    r"""``BlockEigen(deg, mult, n_other, n_R, others..., entries..., R..., R^-1...)``: a
    semi-closed block diagonalised at the point (see :mod:`symresp.emit._eigen`); each of its
    ``deg`` implicit levels has ``mult`` states. The value is a tuple: the implicit levels
    ascending, then for each of them the n*n entries of its local projector
    :math:`R\,(\sum uu^\dagger) R^{-1}`, read with :class:`RootPick`.
    """


class SemiEigen(sp.Function):
    r"""``SemiEigen(n, spec, explicit, coeffs, entries, R, Rinv)``: a semi-closed block
    diagonalised at the point (``_semieig`` of :mod:`symresp.spectrum._eigen_numeric`). Its
    value is a tuple: the energy of each part in ``spec`` order, then the eigenvectors with the
    columns of each part together, read with :class:`RootPick`. ``spec`` holds
    (kind, states, factor, k) per part; ``explicit`` the exact energies of explicit parts;
    ``coeffs`` the coefficients of each implicit factor; ``entries`` the block matrix row by
    row; R and R^-1 the constant similarity to Hermitian form (empty for the identity).
    """


class SemiWeights(sp.Function):
    r"""``SemiWeights(U, V, offU, offV, nU, nV, L, R, TU, TV, real)``: the weights
    :math:`\mathrm{Tr}(P_a L P_b R)` between the parts of two diagonalised blocks (eigenvectors
    U, V with part column offsets), row by row, read with :class:`RootPick`."""


class RootPick(sp.Function):
    """``RootPick(values, k)``: entry k of a :class:`BlockEigen` value (a tuple)."""

    nargs = 2
