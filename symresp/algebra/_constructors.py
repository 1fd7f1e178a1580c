r"""Site constructors and handles (layer: algebra).

Owns the user-facing constructors :func:`spin`, :func:`nlevel`, :func:`fermion`,
:func:`spinful_fermion`, :func:`boson` and the handles they return. Imports sympy,
:mod:`symresp.errors`, :mod:`._sites`, :mod:`._operators`.

Spin operators use :math:`S^\pm = S^x \pm i S^y`,
:math:`S^+|S,m\rangle = \sqrt{S(S+1) - m(m+1)}\,|S,m+1\rangle`.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import sympy as sp

from .._public import public
from ..errors import InputError
from ._operators import Operator, as_coefficient
from ._operators import dagger as _dagger_of
from ._sites import BOSON, FERMION, LEVEL, SPIN, Site, check_name

__all__ = ["spin", "nlevel", "fermion", "spinful_fermion", "boson", "SpinSite", "LevelSite",
           "SpinVector", "MAX_SPIN", "MAX_LEVELS", "MAX_CUTOFF", "describe"]

#: Largest spin accepted (dimension 2S + 1 = 21).
MAX_SPIN = sp.Integer(10)
#: Largest number of levels of an n-level site.
MAX_LEVELS = 32
#: Largest boson cutoff (highest number state kept in matrix forms).
MAX_CUTOFF = 200


def _spin_value(S: object) -> sp.Rational:
    if isinstance(S, float):
        if (2 * S).is_integer():
            S = Fraction(int(2 * S), 2)
        else:
            raise InputError(f"spin: S={S!r} is not an integer or half-integer")
    if isinstance(S, str):
        try:
            S = Fraction(S.strip())
        except ValueError:
            raise InputError(f"spin: S={S!r} is not a number such as '1/2' or '3/2'") from None
    value = as_coefficient(S, where="spin S")
    if not value.is_Rational or not (2 * value).is_Integer or value <= 0:
        raise InputError(
            f"spin: S={value} must be a positive integer or half-integer (1/2, 1, 3/2, ...)"
        )
    if value > MAX_SPIN:
        raise InputError(f"spin: S={value} is larger than the supported maximum {MAX_SPIN}")
    return sp.Rational(value)


@dataclass(frozen=True, slots=True)
class SpinVector:
    """The vector operator (x, y, z) of a spin; ``u @ v`` is the scalar product.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> (a.vec @ b.vec) == a.x * b.x + a.y * b.y + a.z * b.z
    True
    """

    components: tuple[Operator, Operator, Operator]

    def __matmul__(self, other: SpinVector) -> Operator:
        if not isinstance(other, SpinVector):
            raise InputError("@ takes two spin vectors, e.g. a.vec @ b.vec")
        x = self.components[0] * other.components[0]
        return x + self.components[1] * other.components[1] + self.components[2] * other.components[2]

    def __add__(self, other: SpinVector) -> SpinVector:
        if not isinstance(other, SpinVector):
            raise InputError("a spin vector can only be added to a spin vector")
        c = tuple(p + q for p, q in zip(self.components, other.components))
        return SpinVector(c)  # type: ignore[arg-type]

    def __mul__(self, scalar: object) -> SpinVector:
        return SpinVector(tuple(scalar * c for c in self.components))  # type: ignore[arg-type]

    __rmul__ = __mul__

    def __iter__(self):
        return iter(self.components)


@public
@dataclass(frozen=True, slots=True)
class SpinSite:
    r"""A spin-S site with operators ``x, y, z, plus, minus`` and the vector ``vec``.

    Build it with :func:`spin`.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> s = sr.spin("s", sp.Rational(3, 2))
    >>> s.plus * s.minus - s.minus * s.plus == 2 * s.z
    True
    """

    site: Site

    @property
    def S(self) -> sp.Rational:
        """The spin quantum number."""
        assert self.site.spin is not None
        return self.site.spin

    @property
    def z(self) -> Operator:
        """:math:`S^z`."""
        d = Operator((), frozenset((self.site,)))
        for i in range(self.site.dim):
            m = self.site.m_of(i)
            if m != 0:
                d = d + Operator.local(self.site, ("u", i, i), m)
        return d

    @property
    def plus(self) -> Operator:
        """:math:`S^+ = S^x + i S^y`."""
        S = self.S
        d = Operator((), frozenset((self.site,)))
        for i in range(1, self.site.dim):
            m = self.site.m_of(i)
            c = sp.sqrt(S * (S + 1) - m * (m + 1))
            d = d + Operator.local(self.site, ("u", i - 1, i), c)
        return d

    @property
    def minus(self) -> Operator:
        """:math:`S^- = S^x - i S^y`."""
        S = self.S
        d = Operator((), frozenset((self.site,)))
        for i in range(0, self.site.dim - 1):
            m = self.site.m_of(i)
            c = sp.sqrt(S * (S + 1) - m * (m - 1))
            d = d + Operator.local(self.site, ("u", i + 1, i), c)
        return d

    @property
    def x(self) -> Operator:
        """:math:`S^x = (S^+ + S^-)/2`."""
        return (self.plus + self.minus) * sp.Rational(1, 2)

    @property
    def y(self) -> Operator:
        """:math:`S^y = (S^+ - S^-)/(2i)`."""
        return (self.plus - self.minus) * (-sp.I / 2)

    @property
    def vec(self) -> SpinVector:
        """The vector operator :math:`(S^x, S^y, S^z)`."""
        return SpinVector((self.x, self.y, self.z))

    @property
    def name(self) -> str:
        """Site name."""
        return self.site.name

    def __repr__(self) -> str:
        return f"spin({self.site.name!r}, {self.S})"


@public
@dataclass(frozen=True, slots=True)
class LevelSite:
    r"""An n-level site with transition operators :math:`|i\rangle\langle j|`.

    Build it with :func:`nlevel`.

    Examples
    --------
    >>> import symresp as sr
    >>> q = sr.nlevel("q", 3)
    >>> q.op(0, 1) * q.op(1, 2) == q.op(0, 2)
    True
    >>> q.proj(0) + q.proj(1) + q.proj(2) == 1
    True
    """

    site: Site

    def op(self, i: int, j: int) -> Operator:
        r"""Transition operator :math:`|i\rangle\langle j|`."""
        for v, nm in ((i, "i"), (j, "j")):
            if not isinstance(v, int) or isinstance(v, bool) or not 0 <= v < self.site.dim:
                raise InputError(
                    f"nlevel {self.site.name!r}: level {nm}={v!r} out of range 0..{self.site.dim - 1}"
                )
        return Operator.local(self.site, ("u", i, j))

    def proj(self, i: int) -> Operator:
        r"""Projector :math:`|i\rangle\langle i|`."""
        return self.op(i, i)

    @property
    def n(self) -> int:
        """Number of levels."""
        return self.site.dim

    @property
    def name(self) -> str:
        """Site name."""
        return self.site.name

    def __repr__(self) -> str:
        return f"nlevel({self.site.name!r}, {self.site.dim})"


@public
def spin(name: str, S: object) -> SpinSite:
    r"""A new spin-S site.

    Parameters
    ----------
    name : str
        Site name, unique within a model.
    S : int, sympy.Rational, str or float
        Spin quantum number, a positive integer or half-integer (``sympy.Rational(1, 2)``,
        ``"3/2"``, ``1.5``).

    Returns
    -------
    SpinSite
        Handle with operators ``.x .y .z .plus .minus`` and ``.vec``.

    Raises
    ------
    InputError
        If the name is invalid or S is not a positive half-integer.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> s = sr.spin("s", "5/2")
    >>> s.vec @ s.vec == sp.Rational(35, 4)          # S(S+1)
    True

    See Also
    --------
    nlevel, fermion, boson
    """
    value = _spin_value(S)
    site = Site(check_name(name), SPIN, int(2 * value + 1), spin=value)
    return SpinSite(site)


@public
def nlevel(name: str, n: int) -> LevelSite:
    r"""A new n-level site with levels :math:`|0\rangle \dots |n-1\rangle`.

    Parameters
    ----------
    name : str
        Site name.
    n : int
        Number of levels, 2 or more.

    Returns
    -------
    LevelSite
        Handle with ``.op(i, j)`` = :math:`|i\rangle\langle j|` and ``.proj(i)``.

    Raises
    ------
    InputError
        If ``n`` is not an integer between 2 and ``MAX_LEVELS``.

    Examples
    --------
    >>> import symresp as sr
    >>> q = sr.nlevel("q", 2)
    >>> sr.commutator(q.op(0, 1), q.op(1, 0)) == q.proj(0) - q.proj(1)
    True

    See Also
    --------
    spin
    """
    if not isinstance(n, int) or isinstance(n, bool) or not 2 <= n <= MAX_LEVELS:
        raise InputError(f"nlevel {name!r}: n={n!r} must be an integer from 2 to {MAX_LEVELS}")
    return LevelSite(Site(check_name(name), LEVEL, n))


@public
def fermion(name: str) -> Operator:
    r"""Annihilator :math:`c` of a new fermion mode.

    Modes are ordered by creation; matrix forms use the Jordan–Wigner order
    :math:`|n_1 n_2 \dots\rangle = (c_1^\dagger)^{n_1}(c_2^\dagger)^{n_2}\cdots|0\rangle`.

    Parameters
    ----------
    name : str
        Mode name (e.g. ``"c_up"``).

    Returns
    -------
    Operator
        The annihilator; the creator is ``sr.dagger(c)``.

    Examples
    --------
    >>> import symresp as sr
    >>> c1, c2 = sr.fermion("c1"), sr.fermion("c2")
    >>> sr.anticommutator(c1, sr.dagger(c2)).is_zero
    True
    >>> c1 * c1 == 0
    True

    See Also
    --------
    spinful_fermion, dagger
    """
    return Operator.local(Site(check_name(name), FERMION, 2), ("u", 0, 1))


@public
def spinful_fermion(name: str) -> tuple[Operator, Operator]:
    r"""Annihilators :math:`(c_\uparrow, c_\downarrow)` of a new spinful orbital.

    The two modes are named ``name + "_up"`` and ``name + "_dn"`` and created in that order
    (up before down in the Jordan–Wigner order).

    Parameters
    ----------
    name : str
        Orbital name.

    Returns
    -------
    tuple of Operator
        ``(c_up, c_dn)``.

    Examples
    --------
    >>> import symresp as sr
    >>> up, dn = sr.spinful_fermion("d")
    >>> sr.anticommutator(up, sr.dagger(dn)).is_zero
    True
    """
    return fermion(check_name(name) + "_up"), fermion(name + "_dn")


@public
def boson(name: str, cutoff: int) -> Operator:
    r"""Annihilator :math:`a` of a new boson mode; ``cutoff`` is the highest number state kept.

    The algebra is exact (:math:`[a, a^\dagger] = 1`); the cutoff applies only to matrix
    forms, which use the states :math:`|0\rangle \dots |\mathrm{cutoff}\rangle`.

    Parameters
    ----------
    name : str
        Mode name.
    cutoff : int
        Highest occupation number in matrix forms, 1 to ``MAX_CUTOFF``.

    Returns
    -------
    Operator

    Examples
    --------
    >>> import symresp as sr
    >>> a = sr.boson("a", 4)
    >>> sr.commutator(a, sr.dagger(a)) == 1
    True
    """
    if not isinstance(cutoff, int) or isinstance(cutoff, bool) or not 1 <= cutoff <= MAX_CUTOFF:
        raise InputError(f"boson {name!r}: cutoff={cutoff!r} must be an integer from 1 to {MAX_CUTOFF}")
    return Operator.local(Site(check_name(name), BOSON, cutoff + 1), ("b", 0, 1))


def describe(op: Operator) -> str:
    """Readable form of an operator: a combination of ``s.x``, ``s.y``, ``s.z``, ``n(c)``, ``c``,
    ``adj(c)``, boson ``a``, ``adj(a)`` and ``n(a)`` when it is one, else the canonical form.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.algebra import describe
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", 1)
    >>> describe(a.z + 2 * b.x)
    'a.z + 2*b.x'
    """
    from_dagger = _dagger_of
    names: list[tuple[str, Operator]] = []
    for site in sorted(op.sites, key=lambda s: s.order):
        if site.kind == SPIN:
            h = SpinSite(site)
            names += [(f"{site.name}.x", h.x), (f"{site.name}.y", h.y), (f"{site.name}.z", h.z)]
        elif site.kind in (FERMION, BOSON):
            c = Operator.local(site, ("u", 0, 1) if site.is_fermion else ("b", 0, 1))
            cd = from_dagger(c)
            names += [(site.name, c), (f"adj({site.name})", cd), (f"n({site.name})", cd * c)]
    if not names:
        return repr(op)
    if any(len(m) > 1 for m, _ in op.terms):
        return repr(op)                    # products of sites: no single-site combination
    # The candidates act on one site each, so the coefficients are found site by site, from a
    # few pivot equations (one matrix unit per candidate), then checked on every term. Solving
    # all equations at once would put every spin matrix element sqrt(S(S+1) - m(m+1)) into one
    # number field: for a spin 10 that is a degree-128 extension and minutes of sympy.
    target = {m: c for m, c in op.terms if m != ()}
    values: dict[str, sp.Expr] = {}
    total: dict = {}
    by_site: dict = {}
    for name, cand in names:
        by_site.setdefault(next(iter(cand.sites)), []).append((name, cand))
    for site, group in by_site.items():
        cols = [{m: c for m, c in cand.terms if m != ()} for _, cand in group]
        monos = sorted({m for col in cols for m in col} | {m for m in target if m and m[0][0] == site},
                       key=repr)
        rows: list[list[sp.Expr]] = []
        rhs: list[sp.Expr] = []
        for m in monos:
            row = [col.get(m, sp.Integer(0)) for col in cols]
            trial = sp.Matrix(rows + [row])
            if trial.rank(simplify=True) > len(rows):
                rows.append(row)
                rhs.append(target.get(m, sp.Integer(0)))
            if len(rows) == len(cols):
                break
        if len(rows) < len(cols):
            return repr(op)
        sol = sp.Matrix(rows).LUsolve(sp.Matrix(rhs))
        for (name, cand), v in zip(group, sol):
            v = sp.nsimplify(sp.radsimp(v)) if not v.free_symbols else sp.radsimp(v)  # safe: sympy objects computed here, never user text
            values[name] = v
            for mono, c in cand.terms:
                total[mono] = total.get(mono, sp.Integer(0)) + v * c
    for m in set(target) | {m for m in total if m != ()}:
        if sp.expand(sp.radsimp(total.get(m, sp.Integer(0)) - target.get(m, sp.Integer(0)))) != 0:
            return repr(op)
    parts = []
    const = sp.expand(op.scalar_part() - total.get((), sp.Integer(0)))
    if const != 0:
        parts.append(sp.sstr(const))
    for name, _ in names:
        v = values.get(name, sp.Integer(0))
        if v == 0:
            continue
        parts.append(name if v == 1 else f"-{name}" if v == -1 else f"{sp.sstr(v) if v.is_Atom else '(' + sp.sstr(v) + ')'}*{name}")
    text = " + ".join(parts) if parts else "0"
    return text.replace("+ -", "- ")
