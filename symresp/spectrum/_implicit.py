r"""Semi-closed blocks: exact definitions evaluated numerically (layer: spectrum).

Owns :class:`ImplicitBlock` and :class:`BlockWeight`. Imports sympy, mpmath, numpy and
:mod:`._roots`, :mod:`._eigen_numeric`.

A block whose characteristic polynomial has a parameter-dependent irreducible factor of
degree >= 3 has levels without closed form, kept exactly as ``LevelRoot(k, c_n, ..., c_0)``.
For a small block the weights are rational functions of those roots (``_solve``); for a
larger one (a spin 10 with rhombic anisotropy, a Hubbard chain) such expressions would run to
millions of terms. There a weight is kept as what it is,

.. math:: W_{ab} = \mathrm{Tr}(P_a\,L\,P_b\,R),

with :math:`P_a` the projector onto the eigenspace of level a of the exact block matrix: a
:class:`BlockWeight`, exact by definition and evaluated numerically wherever numbers are given
(mpmath at any precision for ``evalf`` and verification, numpy vectorised over parameter
points for curves and emitted evaluators). An expectation value :math:`\mathrm{Tr}(P_a L)` is
the same object with an empty R.

An :class:`ImplicitBlock` holds what that needs: the block matrix :math:`M` in the engine's
local basis (sparse), the Gram matrix :math:`G` of that basis (``()`` for an orthonormal one;
:math:`R^{-1}MR` is Hermitian for :math:`R = G^{-1/2}`), and the parts (energy, number of
states) in a fixed order. Everything is a sympy object, so the weights survive ``subs``,
pickling and printing.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable

import mpmath
import numpy
import sympy as sp

from ._eigen_numeric import _semieig_a, _semiw_a
from ._roots import LevelRoot, real_root, root_float

__all__ = ["ImplicitBlock", "BlockWeight", "block_spec", "weights_numpy", "weights_mp",
           "weight_arrays", "weight_mp", "gram_root", "value_at", "implicit_atoms", "implicit_roots"]


class ImplicitBlock(sp.Atom):
    """Exact data of a block whose weights are evaluated numerically (module docstring).

    ``ImplicitBlock(n, entries, gram, parts)``: ``entries`` are (i, j, value) of the block
    matrix, ``gram`` the n*n entries of G row by row or empty, ``parts`` are (energy, states).

    The data is held as one atom: a block of a spin 10 carries implicit roots whose defining
    polynomials have hundreds of terms, and each of the hundreds of weights of that block
    refers to it; as an atom it is skipped by sympy's tree walks (``atoms``, ``has``,
    ``free_symbols`` are answered from the data once), while ``subs`` and ``xreplace`` still
    reach the parameters inside.
    """

    __slots__ = ("_data", "_free", "_key")
    is_number = False

    def __new__(cls, n, entries, gram, parts):
        obj = sp.Atom.__new__(cls)
        obj._data = (sp.Integer(n), tuple(sp.Tuple(*[_basic(x) for x in e]) for e in entries),
                     tuple(_basic(g) for g in gram),
                     tuple(sp.Tuple(_basic(p[0]), sp.Integer(p[1])) for p in parts))
        obj._free = None
        obj._key = None
        return obj

    def __getnewargs__(self):
        n, entries, gram, parts = self._data
        return (int(n), tuple(tuple(e) for e in entries), gram, tuple(tuple(p) for p in parts))

    def __getstate__(self):
        return None

    def _hashable_content(self):
        return self._data

    @property
    def n(self) -> int:
        return int(self._data[0])

    @property
    def entries(self) -> tuple:
        return self._data[1]

    @property
    def gram(self) -> tuple:
        return self._data[2]

    @property
    def parts(self) -> tuple:
        return self._data[3]

    def _exprs(self):
        yield from (v for _, _, v in self.entries)
        yield from (e for e, _ in self.parts)

    @property
    def free_symbols(self) -> set:
        if self._free is None:
            self._free = set().union(*[e.free_symbols for e in self._exprs()])
        return set(self._free)

    def is_complex(self) -> bool:
        """Whether an entry of the block matrix has an imaginary part."""
        return any(v.has(sp.I) for _, _, v in self.entries)

    def _map(self, f) -> ImplicitBlock:
        entries = [(i, j, f(v)) for i, j, v in self.entries]
        parts = [(f(e), m) for e, m in self.parts]
        if all(a[2] is b[2] for a, b in zip(entries, self.entries)) and \
                all(a[0] is b[0] for a, b in zip(parts, self.parts)):
            return self
        return ImplicitBlock(self.n, entries, self.gram, parts)

    def xreplace(self, rule, hack2=False):
        return self._xreplace(rule)[0]

    def _xreplace(self, rule):
        if self in rule:
            return rule[self], True
        if not rule or all(k.is_Symbol and k not in self.free_symbols for k in rule):
            return self, False
        new = self._memo(("x", frozenset(rule.items())), lambda: self._map(lambda e: e.xreplace(rule)))
        return new, new is not self

    def _eval_subs(self, old, new):
        if not (old.free_symbols & self.free_symbols) and not any(e.has(old) for e in self._exprs()):
            return self
        return self._memo(("s", old, new), lambda: self._map(lambda e: e.subs(old, new)))

    def _memo(self, key, make):
        full = (self, key)
        hit = _BLOCK_MAPS.get(full)
        if hit is None:
            hit = make()
            if len(_BLOCK_MAPS) > 1024:
                _BLOCK_MAPS.clear()
            _BLOCK_MAPS[full] = hit
        return hit

    def dense(self) -> list[sp.Expr]:
        """The n*n entries of M row by row."""
        out = [sp.Integer(0)] * (self.n * self.n)
        for i, j, v in self.entries:
            out[int(i) * self.n + int(j)] = v
        return out

    def digest(self) -> str:
        """A stable text key of the data (deterministic order of generated code)."""
        if self._key is None:
            self._key = hashlib.sha256(sp.srepr(sp.Tuple(*self._data[:2], sp.Tuple(*self._data[2]),
                                                        sp.Tuple(*self._data[3]))).encode()).hexdigest()
        return self._key

    def sort_key(self, order=None):
        return (self.class_key(), (1, (self.digest(),)), sp.S.One.sort_key(), sp.S.One)

    def compare(self, other) -> int:
        # The data holds plain tuples of sympy objects, which Basic.compare would order with
        # ``<`` (a relational, not a bool); blocks are ordered by their digest instead.
        if not isinstance(other, ImplicitBlock):
            return super().compare(other)
        a, b = self.digest(), other.digest()
        return (a > b) - (a < b)

    def _sympystr(self, printer) -> str:
        return f"<block of {self.n} states>"


def _basic(x) -> sp.Basic:
    """A sympy object from symresp's own data (a sympy object or an int), never from text."""
    if isinstance(x, sp.Basic):
        return x
    if isinstance(x, int) and not isinstance(x, bool):
        return sp.Integer(x)
    raise TypeError(f"ImplicitBlock: expected a sympy object or an int, got {type(x).__name__}")


# Substituted blocks (immutable keys; the values are pure functions of them).
_BLOCK_MAPS: dict = {}


def block_spec(X: ImplicitBlock) -> tuple[tuple, list[sp.Expr], list[tuple[sp.Expr, ...]]]:
    """(spec, explicit energies, implicit factor coefficients) as ``_semieig_a`` takes them."""
    spec, explicit, factors = [], [], []
    keys: list[tuple] = []
    for energy, mult in X.parts:
        if isinstance(energy, LevelRoot):
            key = tuple(energy.args[1:])
            if key not in keys:
                keys.append(key)
                factors.append(key)
            spec.append((1, int(mult), keys.index(key), int(energy.args[0])))
        else:
            spec.append((0, int(mult), -1, 0))
            explicit.append(energy)
    return tuple(spec), explicit, factors


def _offsets(X: ImplicitBlock) -> tuple[int, ...]:
    out = [0]
    for _, mult in X.parts:
        out.append(out[-1] + int(mult))
    return tuple(out)


def gram_root(X: ImplicitBlock, dps: int = 0):
    """(R, R^-1) with R = G^(-1/2): flat float tuples (dps = 0) or mpmath matrices; () if G = 1."""
    if not len(X.gram):
        return ()
    n = X.n
    if dps == 0:
        G = numpy.array([float(g) for g in X.gram]).reshape(n, n)
        E, Q = numpy.linalg.eigh(G)
        R = (Q / numpy.sqrt(E)) @ Q.T
        Ri = (Q * numpy.sqrt(E)) @ Q.T
        return tuple(R.ravel()), tuple(Ri.ravel())
    G = mpmath.matrix([[mpmath.mpf(int(g.p)) / int(g.q) for g in X.gram[i * n:(i + 1) * n]]
                       for i in range(n)])
    E, Q = mpmath.eigsy(G)
    R = Q * mpmath.diag([1 / mpmath.sqrt(e) for e in E]) * Q.T
    Ri = Q * mpmath.diag([mpmath.sqrt(e) for e in E]) * Q.T
    return R, Ri


class BlockWeight(sp.Function):
    r"""An eigenspace weight of semi-closed blocks, exact by definition (module docstring).

    ``BlockWeight(kind, X, a, Y, b, L, R)``: kind 0 is :math:`\mathrm{Tr}(P_a L P_b R)` for part
    a of block X and part b of block Y (L: X x Y, R: Y x X, sparse (i, j, value)); kind 1
    and 2 are the expectations :math:`\mathrm{Tr}(P_a L)` of A and of B (Y = X, b = a, R empty).

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.spectrum import BlockWeight, ImplicitBlock
    >>> X = ImplicitBlock(2, [(0, 1, 1), (1, 0, 1)], (), [(-1, 1), (1, 1)])   # sigma_x
    >>> L = [(0, 0, 1), (1, 1, -1)]                                         # sigma_z
    >>> w = BlockWeight(0, X, 0, X, 1, L, L)                # |<-|sigma_z|+>|^2
    >>> round(float(w.evalf(20)), 12)
    1.0
    """

    nargs = 7

    def __new__(cls, kind, X, a, Y, b, L, R, **options):
        return super().__new__(cls, kind, X, a, Y, b, sp.Tuple(*[sp.Tuple(*e) for e in L]),
                               sp.Tuple(*[sp.Tuple(*e) for e in R]), **options)

    @classmethod
    def eval(cls, *args):  # safe: sympy Function API (automatic evaluation), not Python eval
        return None

    @property
    def kind(self) -> int:
        return int(self.args[0])

    def energies(self) -> tuple[sp.Expr, sp.Expr]:
        """Energies of the two parts."""
        kind, X, a, Y, b, _, _ = self.args
        return X.parts[int(a)][0], Y.parts[int(b)][0]

    def _eval_evalf(self, prec):
        if self.free_symbols:
            return None
        dps = 15 * (1 + (mpmath.libmp.prec_to_dps(prec) + 10) // 15)  # shared by nearby precisions
        value = weight_mp(self, lambda e: mpmath.mpmathify(sp.N(e, dps)), dps)
        re, im = float(value.real), float(value.imag)
        out = sp.Float(value.real, dps)
        if im != 0 and abs(im) > 1e-30 * max(1.0, abs(re)):
            out = out + sp.I * sp.Float(value.imag, dps)
        return out

    def _sympystr(self, printer) -> str:
        ea, eb = (printer._print(e) for e in self.energies())
        if self.kind == 0:
            return f"Tr(P[{ea}]*A*P[{eb}]*B)"
        return f"Tr(P[{ea}]*{'A' if self.kind == 1 else 'B'})"

    def _latex(self, printer, exp=None):
        ea, eb = (printer._print(e) for e in self.energies())
        if self.kind == 0:
            base = rf"\operatorname{{Tr}}\left(P_{{{ea}}} A P_{{{eb}}} B\right)"
        else:
            base = rf"\operatorname{{Tr}}\left(P_{{{ea}}} {'A' if self.kind == 1 else 'B'}\right)"
        return base if exp is None else rf"{base}^{{{exp}}}"


def _dense(entries, rows: int, cols: int) -> list[sp.Expr]:
    out = [sp.Integer(0)] * (rows * cols)
    for i, j, v in entries:
        out[int(i) * cols + int(j)] = v
    return out


# ------------------------------------------------------------------------- numpy (arrays)
def _eig_numpy(X: ImplicitBlock, evaluate: Callable, cache: dict):
    key = ("eig", X)
    if key not in cache:
        spec, explicit, factors = block_spec(X)
        # (the last implicit factor takes the eigenvalues left: its coefficients are not read)
        cache[key] = _semieig_a(X.n, spec, [evaluate(e) for e in explicit],
                                [[evaluate(c) for c in f] for f in factors[:-1]] + [[]] * bool(factors),
                                [evaluate(e) for e in X.dense()], gram_root(X))[-1]
    return cache[key]


def weights_numpy(X, Y, L, R, evaluate: Callable, cache: dict | None = None) -> tuple:
    """All weights Tr(P_a L P_b R) between the parts of X and Y (row by row), numpy arrays;
    ``evaluate`` maps a sympy expression of the parameters to an array."""
    cache = {} if cache is None else cache
    key = ("weights", X, Y, L, R)
    if key in cache:
        return cache[key]
    U = _eig_numpy(X, evaluate, cache)
    V = U if Y == X else _eig_numpy(Y, evaluate, cache)
    Lv = [evaluate(e) for e in _dense(L, X.n, Y.n)]
    Rv = [evaluate(e) for e in _dense(R, Y.n, X.n)] if len(R) else ()
    out = _semiw_a(U, V, _offsets(X), _offsets(Y), X.n, Y.n, Lv, Rv, gram_root(X),
                   gram_root(Y), False)
    cache[key] = out
    return out


def weight_arrays(w: BlockWeight, evaluate: Callable, cache: dict | None = None):
    """One weight with numpy arrays (see :func:`weights_numpy`)."""
    kind, X, a, Y, b, L, R = w.args
    values = weights_numpy(X, Y, L, R, evaluate, cache)
    return values[int(a) * len(Y.parts) + int(b)]


# ------------------------------------------------------------------------- mpmath (precise)
def _eig_mp(X: ImplicitBlock, evaluate: Callable, dps: int, cache: dict):
    key = ("eig", X, dps)
    if key in cache:
        return cache[key]
    n = X.n
    M = mpmath.matrix(n, n)
    for i, j, v in X.entries:
        M[int(i), int(j)] = evaluate(v)
    T = gram_root(X, dps)
    if T:
        M = T[1] * M * T[0]
    H = (M + M.transpose_conj()) / 2
    if all(mpmath.im(H[i, j]) == 0 for i in range(n) for j in range(n)):
        ev, U = mpmath.eigsy(mpmath.matrix([[mpmath.re(H[i, j]) for j in range(n)]
                                            for i in range(n)]))
    else:
        ev, U = mpmath.eighe(H)
    ev = [ev[i] for i in range(n)]
    order = sorted(range(n), key=lambda i: ev[i])
    free = list(order)
    spec, explicit, factors = block_spec(X)
    picks: list[list[int] | None] = [None] * len(spec)
    values = iter(explicit)
    for p, (kind, mult, _, _) in enumerate(spec):
        if kind == 0:
            target = mpmath.re(evaluate(next(values)))
            chosen = sorted(free, key=lambda i: abs(ev[i] - target))[:mult]
            for i in chosen:
                free.remove(i)
            picks[p] = chosen
    groups = sorted({f for kind, _, f, _ in spec if kind == 1})
    for gi, f in enumerate(groups):
        members = sorted((k, p) for p, (kind, _, g, k) in enumerate(spec) if kind == 1 and g == f)
        count = sum(spec[p][1] for _, p in members)
        if gi == len(groups) - 1:
            chosen = free[:count]
        else:
            cs = [mpmath.re(evaluate(c)) for c in factors[f]]

            def score(i):
                value = size = mpmath.mpf(0)
                for c in cs:
                    value = value * ev[i] + c
                    size = size * abs(ev[i]) + abs(c)
                return abs(value) / max(size, mpmath.mpf(10) ** (-dps))
            chosen = sorted(free, key=score)[:count]
        chosen = sorted(chosen, key=lambda i: ev[i])
        for i in chosen:
            free.remove(i)
        start = 0
        for _, p in members:
            picks[p] = chosen[start:start + spec[p][1]]
            start += spec[p][1]
    out = (picks, U, T)
    cache[key] = out
    return out


def weights_mp(X, Y, L, R, evaluate: Callable, dps: int, cache: dict | None = None) -> list:
    """All weights between the parts of X and Y with mpmath at ``dps`` digits (row by row)."""
    if cache is None:
        # Parameter-free blocks (evalf) share the module cache; blocks with symbols depend on
        # the caller's values, so they get a cache of their own.
        cache = _MP_CACHE if not (X.free_symbols or Y.free_symbols or L.free_symbols
                                  or R.free_symbols) else {}
    key = ("weights", X, Y, L, R, dps)
    if key in cache:
        return cache[key]
    with mpmath.workdps(dps):
        pu, U, TU = _eig_mp(X, evaluate, dps, cache)
        pv, V, TV = (pu, U, TU) if Y == X else _eig_mp(Y, evaluate, dps, cache)
        nU, nV = X.n, Y.n

        def between(entries, rows, cols, TL, TR):
            """The operator's block (rows x cols) in the eigenbases' frame."""
            m = mpmath.matrix(rows, cols)
            for i, j, v in entries:
                m[int(i), int(j)] = evaluate(v)
            if TL:
                m = TL[1] * m
            if TR:
                m = m * TR[0]
            return m

        Xm = U.transpose_conj() * between(L, nU, nV, TU, TV) * V
        if len(R):
            Ym = V.transpose_conj() * between(R, nV, nU, TV, TU) * U
        out = []
        for a in pu:
            for b in pv:
                if len(R):
                    out.append(mpmath.fsum(Xm[i, j] * Ym[j, i] for i in a for j in b))
                else:
                    out.append(mpmath.fsum(Xm[i, i] for i in a) if a is b else mpmath.mpf(0))
        if len(_MP_CACHE) > 256:
            _MP_CACHE.clear()
        cache[key] = out
        return out


def weight_mp(w: BlockWeight, evaluate: Callable, dps: int, cache: dict | None = None):
    """One weight with mpmath at ``dps`` digits; ``evaluate`` maps a sympy expression to an
    mpmath number."""
    kind, X, a, Y, b, L, R = w.args
    return weights_mp(X, Y, L, R, evaluate, dps, cache)[int(a) * len(Y.parts) + int(b)]


# Eigen-decompositions of parameter-free blocks (immutable keys; values are pure functions of
# them), so the weights of one block at one point share one decomposition.
_MP_CACHE: dict = {}


def implicit_atoms(expr: sp.Basic) -> list:
    """The LevelRoot, CRootOf and BlockWeight atoms of ``expr`` in order of first appearance
    (deterministic), without walking into them (a LevelRoot of a large block carries
    polynomials of hundreds of terms)."""
    out: dict = {}
    stack = [expr]
    seen: set = set()
    while stack:
        e = stack.pop()
        if isinstance(e, (LevelRoot, sp.CRootOf, BlockWeight)):
            out.setdefault(e, None)
        elif e.args and e not in seen:
            seen.add(e)
            stack.extend(reversed(e.args))
    return list(out)


def implicit_roots(expr: sp.Basic) -> list:
    """The implicit roots (LevelRoot, CRootOf) of ``expr``, also those that a semi-closed weight
    refers to through the energies of its two levels, in order of first appearance."""
    out: dict = {}
    for a in implicit_atoms(expr):
        if isinstance(a, BlockWeight):
            for e in a.energies():
                for r in implicit_atoms(e):
                    if not isinstance(r, BlockWeight):
                        out.setdefault(r, None)
        else:
            out.setdefault(a, None)
    return list(out)


def value_at(expr: sp.Expr, point: dict, dps: int = 30) -> complex:
    """``expr`` at a point of its parameters (rationals), with every implicit atom evaluated
    once: a ``LevelRoot`` from its polynomial (substituting a rational point first would make it
    a ``CRootOf``, which sympy isolates again on every evaluation), a ``CRootOf`` once, and the
    semi-closed weights from one decomposition per block."""
    values = {}
    cache: dict = {}
    key_point = tuple(sorted(point.items(), key=lambda kv: kv[0].name))
    with mpmath.workdps(dps + 10):
        for r in implicit_atoms(expr):
            if isinstance(r, LevelRoot):
                k, *coeffs = r.args
                ckey = (tuple(coeffs), key_point, dps)
                cs = _COEFFS.get(ckey)
                if cs is None:
                    cs = [sp.N(c.xreplace(point), dps + 10) for c in coeffs]
                    if len(_COEFFS) > 1024:
                        _COEFFS.clear()
                    _COEFFS[ckey] = cs
                values[r] = sp.Float(real_root(int(k), cs, extra=2 * dps), dps)
            elif isinstance(r, sp.CRootOf):
                # (a block with an imaginary scale i*J has imaginary roots)
                values[r] = root_float(r)
            else:
                v = complex(weight_mp(r, lambda e: mpmath.mpmathify(sp.N(e.xreplace(point), dps + 10)),
                                      dps, cache))
                values[r] = sp.Float(v.real, dps) + sp.I * sp.Float(v.imag, dps)
    return complex(sp.N(expr.xreplace(values).xreplace(point), dps))


# Numeric coefficients of implicit roots at points (immutable keys; pure function values).
_COEFFS: dict = {}


