r"""Code printers of the emitted evaluators (layer: emit).

Two printer subclasses turn the sympy assignments of an evaluator program into Python:

* :class:`ArrayPrinter` (a :class:`sympy.printing.numpy.NumPyPrinter`) for arrays that
  broadcast together;
* :class:`ScalarPrinter` (a :class:`sympy.printing.pycode.PythonCodePrinter`, ``math``
  functions) for the fast path where every input is a single number: a numpy call on a
  0-d value costs about a microsecond, a ``math`` call a few tens of nanoseconds.

Both print the program's special functions (:mod:`symresp.emit._functions`) as calls to the
runtime helpers of the generated module (suffix ``_a`` for arrays, ``_s`` for scalars), and
implicit roots (``CRootOf``, exact constants) as float literals of their value to 30 digits.
Nothing is produced by editing strings: each construct has a ``_print_<Class>`` method.

Imports: sympy and :mod:`._functions`.
"""

from __future__ import annotations

import mpmath
import sympy as sp
from sympy.printing.numpy import NumPyPrinter
from sympy.printing.pycode import PythonCodePrinter

from ..spectrum import ROOT_DIGITS, number_value
from ._functions import (AsComplex, AtMin, BlockEigen, Boltzmann, BoltzmannT, Causal,
                         DegeneracyTol, ExpDiv, ExpDiv2, Keep, LevelMin, RootPick, SemiEigen,
                         SemiWeights)

__all__ = ["ArrayPrinter", "ScalarPrinter", "ConstantTable", "freeze_constants", "DIGITS"]

#: Decimal digits of the literals printed for irrational constants (implicit roots, sqrt(5), ...).
DIGITS = 30


def _float(value: sp.Expr) -> sp.Float:
    return sp.Float(sp.N(value, DIGITS), DIGITS)


class ConstantTable:
    """The irrational constants of one emitted module, each converted to a Float once.

    An evaluator module is several programs (stage P of each kind, energies, correlation)
    built from the same levels and weights; the table converts every exact constant the
    first time it is met and hands the same Float to every later program. ``conversions``
    counts the numerical evaluations made (one per entry of ``values``).
    """

    def __init__(self) -> None:
        self.values: dict[sp.Expr, sp.Expr] = {}
        self.conversions = 0

    def value(self, number: sp.Expr) -> sp.Expr:
        """``number`` (exact, irrational) as a Float, or a Float plus i times a Float."""
        out = self.values.get(number)
        if out is None:
            out = _convert(number)
            self.values[number] = out
            self.conversions += 1
        return out

    def freeze(self, expr: sp.Expr) -> sp.Expr:
        """:func:`freeze_constants` with the conversions shared through this table."""
        return freeze_constants(expr, self)


def _convert(number: sp.Expr) -> sp.Expr:
    if isinstance(number, sp.NumberSymbol):
        return _float(number)
    if number.has(sp.CRootOf):
        # Read off the tree with the stored root values (each polynomial solved once per
        # process); an imaginary part at rounding level of 70 digits is none.
        v = number_value(number)
        if isinstance(v, mpmath.mpc) and abs(v.imag) > abs(v) * mpmath.mpf(10) ** (15 - ROOT_DIGITS):
            return sp.Float(v.real, DIGITS) + sp.I * sp.Float(v.imag, DIGITS)
        return sp.Float(mpmath.re(v), DIGITS)
    value = sp.N(number, DIGITS)
    if value.is_real is False or value.has(sp.I):
        re, im = value.as_real_imag()
        return _float(re) + sp.I * _float(im) if im != 0 else _float(re)
    return _float(value)


def freeze_constants(expr: sp.Expr, table: ConstantTable | None = None) -> sp.Expr:
    r"""Replace every irrational constant sub-expression by a 30-digit Float.

    A weight such as :math:`(7r^2 - 3r + 1)/20` with an implicit root :math:`r` is a single
    exact number; evaluating it once at high precision is both faster and more accurate than
    evaluating the polynomial in double precision at run time. Rational numbers stay exact
    (printed as ``p/q``, folded by the Python compiler); Floats are kept as they are (an
    expression frozen once is not converted again). With a ``table``, each constant is
    converted once for all the expressions frozen through it.
    """
    if isinstance(expr, sp.Float):
        return expr
    if not isinstance(expr, sp.Basic) or expr.is_Atom:
        if isinstance(expr, sp.NumberSymbol):
            return table.value(expr) if table is not None else _convert(expr)
        return expr
    if expr.is_number:
        if expr.is_Rational:
            return expr
        if not expr.has(*_EXACT_ATOMS) and not expr.atoms(sp.Function, sp.NumberSymbol):
            # Floats and rationals only (a frozen constant times a rational, say): sympy has
            # folded it already, or it is a sum such as Float + I*Float.
            return expr
        return table.value(expr) if table is not None else _convert(expr)
    if isinstance(expr, (sp.Mul, sp.Add)):
        numbers = [a for a in expr.args if a.is_number]
        others = [freeze_constants(a, table) for a in expr.args if not a.is_number]
        if len(numbers) > 1 or (numbers and not numbers[0].is_Rational):
            numbers = [freeze_constants(expr.func(*numbers), table)]
        return expr.func(*numbers, *others)
    return expr.func(*[freeze_constants(a, table) for a in expr.args])


#: Exact irrational pieces a constant may hold (anything else numeric is Floats and rationals).
_EXACT_ATOMS = (sp.Pow, sp.CRootOf)


class _ProgramPrinting:
    """``_print_<Class>`` methods shared by both printers; ``_suffix`` selects the helpers."""

    _suffix = "_a"

    def __init__(self, settings: dict | None = None) -> None:
        # Terms and factors in the order the expression holds them (sympy's canonical order,
        # the same on every run): sorting them for display cost a third of the printing time
        # of a large evaluator, measured, and the code reads no worse.
        super().__init__({"order": "none", **(settings or {})})
        # Texts already printed by this printer (one module prints the same level energies,
        # spacings and weights in several programs).
        self._texts: dict = {}

    def doprint(self, expr, assign_to=None) -> str:
        """The code of one expression; the plain case (no assignment target, nothing to declare
        or to comment on) skips the general machinery of :meth:`CodePrinter.doprint` (a full
        tree replacement per call, a fifth of the printing time of a large evaluator)."""
        if assign_to is not None or not isinstance(expr, sp.Basic) \
                or expr.has(sp.UnevaluatedExpr):
            return super().doprint(expr, assign_to)
        text = self._texts.get(expr)
        if text is not None:
            return text
        self._not_supported = set()
        self._number_symbols = set()
        text = self._print(expr)
        plain = not (self._not_supported or self._number_symbols or "\n" in text)
        self._not_supported = set()
        self._number_symbols = set()
        if not plain:
            return super().doprint(expr)
        self._texts[expr] = text
        return text

    def _helper(self, name: str, *args: sp.Expr) -> str:
        return f"_{name}{self._suffix}({', '.join(self._print(a) for a in args)})"

    def _print_Boltzmann(self, expr: Boltzmann) -> str:
        return self._helper("bexp", *expr.args)

    def _print_AsComplex(self, expr: AsComplex) -> str:
        return self._helper("cplx", *expr.args)

    def _print_BoltzmannT(self, expr: BoltzmannT) -> str:
        return self._helper("bexpt", *expr.args)

    def _print_ExpDiv(self, expr: ExpDiv) -> str:
        xa, xb, beta, w, _ca, _cb = expr.args
        return self._helper("expdiv", xa, xb, beta, w)

    def _print_ExpDiv2(self, expr: ExpDiv2) -> str:
        return self._helper("expdiv2", *expr.args)

    def _print_Keep(self, expr: Keep) -> str:
        return self._helper("keep", *expr.args)

    def _print_LevelMin(self, expr: LevelMin) -> str:
        return self._helper("lmin", *expr.args)

    def _print_AtMin(self, expr: AtMin) -> str:
        n = int(expr.args[0])
        energies = "(" + ", ".join(self._print(e) for e in expr.args[1:1 + n]) + ",)"
        values = "(" + ", ".join(self._print(v) for v in expr.args[1 + n:]) + ",)"
        return f"_atmin{self._suffix}({energies}, {values})"

    def _print_DegeneracyTol(self, expr: DegeneracyTol) -> str:
        return self._helper("degtol", *expr.args)

    def _print_Causal(self, expr: Causal) -> str:
        return self._helper("causal", *expr.args)

    def _print_BlockEigen(self, expr: BlockEigen) -> str:
        deg, mult, n_other, n_R = (int(x) for x in expr.args[:4])
        rest = expr.args[4:]
        others, rest = rest[:n_other], rest[n_other:]
        R, Rinv = rest[len(rest) - 2 * n_R:len(rest) - n_R], rest[len(rest) - n_R:]
        entries = rest[:len(rest) - 2 * n_R]

        def tup(xs) -> str:
            return "(" + "".join(f"{self._print(x)}, " for x in xs) + ")"
        return (f"_blockeig{self._suffix}({deg}, {mult}, {tup(others)}, {tup(entries)}, "
                f"{tup(R)}, {tup(Rinv)})")

    def _tuple(self, xs) -> str:
        return "(" + "".join(f"{self._print(x) if isinstance(x, sp.Basic) else repr(x)}, "
                             for x in xs) + ")"

    def _print_SemiEigen(self, expr: SemiEigen) -> str:
        n, spec, explicit, coeffs, entries, R, Rinv = expr.args
        spec_text = "(" + "".join(f"({', '.join(str(int(v)) for v in row)}), " for row in spec) + ")"
        T = f"({self._tuple(R)}, {self._tuple(Rinv)})" if len(R) else "()"
        return (f"_semieig{self._suffix}({int(n)}, {spec_text}, {self._tuple(explicit)}, "
                f"({''.join(self._tuple(c) + ', ' for c in coeffs)}), {self._tuple(entries)}, {T})")

    def _print_SemiWeights(self, expr: SemiWeights) -> str:
        U, V, offU, offV, nU, nV, L, R, TU, TV, real = expr.args
        ints = (lambda xs: "(" + "".join(f"{int(x)}, " for x in xs) + ")")

        def T(t) -> str:
            return f"({self._tuple(t[0])}, {self._tuple(t[1])})" if len(t) else "()"
        return (f"_semiw{self._suffix}({self._print(U)}, {self._print(V)}, {ints(offU)}, "
                f"{ints(offV)}, {int(nU)}, {int(nV)}, {self._tuple(L)}, {self._tuple(R)}, "
                f"{T(TU)}, {T(TV)}, {bool(real)})")

    def _print_RootPick(self, expr: RootPick) -> str:
        roots, k = expr.args
        return f"{self._print(roots)}[{int(k)}]"

    def _print_ComplexRootOf(self, expr: sp.Expr) -> str:
        # An implicit root has rational coefficients: an exact constant, printed as its value.
        if expr.free_symbols:
            raise ValueError(f"cannot print the parameter-dependent root {expr}")
        return self._print(_float(expr))

    _print_CRootOf = _print_ComplexRootOf
    _print_RootOf = _print_ComplexRootOf

    def _print_ImaginaryUnit(self, expr: sp.Expr) -> str:
        return "1j"

    def _print_Pow(self, expr: sp.Pow, rational: bool = False) -> str:
        # Square roots in level energies are roots of discriminants of Hermitian blocks, >= 0
        # exactly; rounding can push an expanded one (a^2 - 2ac + c^2 + 4b^2 at a = c, b = 0)
        # a few ulps below zero, where math.sqrt raises and numpy.sqrt returns nan.
        if expr.exp == sp.Rational(1, 2) and not expr.base.has(sp.I):
            return self._helper("sqrt", expr.base)
        if expr.exp == -sp.Rational(1, 2) and not expr.base.has(sp.I):
            return f"1/{self._helper('sqrt', expr.base)}"
        return self._print_Pow_default(expr, rational=rational)


class ArrayPrinter(_ProgramPrinting, NumPyPrinter):
    """numpy printer for the array path (functions broadcast over their arguments)."""

    _suffix = "_a"

    def _print_Pow_default(self, expr: sp.Pow, rational: bool = False) -> str:
        # The program's values are floats, never integer arrays, so integer exponents may stay
        # integers: ``1/x`` and ``x**2`` take numpy's fast paths, ``x**(-1.0)`` does not.
        if expr.exp.is_Integer:
            return PythonCodePrinter._print_Pow(self, expr, rational=rational)
        return NumPyPrinter._print_Pow(self, expr, rational=rational)


class ScalarPrinter(_ProgramPrinting, PythonCodePrinter):
    """``math`` printer for the all-scalar fast path."""

    _suffix = "_s"

    def _print_Pow_default(self, expr: sp.Pow, rational: bool = False) -> str:
        return PythonCodePrinter._print_Pow(self, expr, rational=rational)
