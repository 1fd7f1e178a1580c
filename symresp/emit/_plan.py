r"""Structure of a derivation as the emitted evaluators need it (layer: emit).

Owns :class:`Plan`: per level a the energy :math:`E_a` and degeneracy :math:`d_a`; per pair of
levels :math:`a < b` with a non-zero weight the exact spacing :math:`w_{ab} = E_b - E_a` and
the symmetric and antisymmetric weights :math:`S_{ab} = W_{ab} + W_{ba}`,
:math:`D_{ab} = W_{ab} - W_{ba}`; pairs grouped by :math:`|w_{ab}|` (poles at
:math:`\pm r_g`); per level the intra-level fluctuation
:math:`C_a = W_{aa} - \mathrm{Tr}(P_aA)\,\mathrm{Tr}(P_aB)/d_a` and the level means
:math:`\alpha_a = \mathrm{Tr}(P_aA)/d_a`, :math:`\beta_a = \mathrm{Tr}(P_aB)/d_a`.

With these, the Lehmann sums of :mod:`symresp.response` read (:math:`p_a` the population of
each state of level a, :math:`g_{ab} = (p_a - p_b)/w_{ab}`, symmetric in a, b):

.. math::

    \chi^{\rm isol} = \sum_{a<b} g_{ab} S_{ab}, \qquad
    \chi^{\rm T} = \chi^{\rm isol} + \beta\Big[\sum_a p_a C_a
        + \sum_a d_a p_a \alpha_a\beta_a - \Big(\sum_a d_a p_a\alpha_a\Big)
          \Big(\sum_a d_a p_a\beta_a\Big)\Big],

    \chi(z) = \sum_g r_g\,\frac{r_g G_g + H_g z}{(r_g - z)(r_g + z)}, \quad
    G_g = \sum_{ab \in g} g_{ab} S_{ab}, \quad H_g = \sum_{ab \in g} \sigma_{ab}\, g_{ab} D_{ab},

with :math:`w_{ab} = \sigma_{ab} r_g`. The bracket of :math:`\chi^{\rm T}` equals
:math:`\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle` (the covariance of the level means
over :math:`q_a = d_a p_a` plus the intra-level part); it is evaluated with the means shifted
by those of the lowest level, which removes the cancellation between two nearly equal numbers
at low temperature.

Imports: sympy, :mod:`symresp.errors`, :mod:`symresp.response`, :mod:`symresp.spectrum`.
"""

from __future__ import annotations

import builtins
import hashlib
import keyword
import re
from dataclasses import dataclass

import mpmath
import sympy as sp

from ..errors import InputError
from ..models import checkpoint
from ..response import Derivation
from ..spectrum import (BlockWeight, LevelRoot, atoms_outside_roots, clean, freeze_roots,
                        number_value, real_root, replace_outside_roots, root_float)
from ..spectrum._implicit import weight_arrays

__all__ = ["Plan", "Pair", "Group", "RootSet", "build_plan", "fingerprint", "is_zero"]

#: Names a parameter may not take in the generated code (independent variables, modules,
#: keywords of the generated functions).
#: Names a parameter may not have inside the emitted code (kernels and drivers): arguments and
#: locals of the drivers, the modules, every Python builtin and the module's public names.
#: A parameter with such a name is renamed inside (``float`` -> ``float_``); the public
#: functions still take it under its own name (see ``_numpy_module.py``).
PUBLIC_NAMES = ("chi_isothermal", "chi_isolated", "chi_static", "jacobian_static", "chi_omega",
                "chi_spectral", "chi_time", "energies")
_TAKEN = frozenset({"T", "omega", "t", "eta", "kind", "shape", "numpy", "math", "cmath", "np",
                    "grid", "ps", "scalar", "values", "value", "SYMRESP_VERSION", "CONVENTION",
                    "FINGERPRINT", "MODEL", "PARAMETERS", "DEGENERACIES", "ENERGIES"}
                   | set(dir(builtins)) | set(PUBLIC_NAMES))
#: Digits of the numeric keys used to find candidate equal spacings before an exact check.
_KEY_DIGITS = 25
#: |value| below which a high-precision evaluation counts as an exact zero.
_ZERO_CUTOFF = sp.Float("1e-40")


@dataclass(frozen=True, slots=True)
class Pair:
    """Two levels ``a < b`` joined by a non-zero weight."""

    a: int
    b: int
    w: sp.Expr          # E_b - E_a, exact
    S: sp.Expr          # W_ab + W_ba
    D: sp.Expr          # W_ab - W_ba (zero for A = B Hermitian)


@dataclass(frozen=True, slots=True)
class Group:
    """Pairs with the same |spacing|: ``w = sign * w_rep`` for each member."""

    rep: int                                 # index (into Plan.pairs) of the representative
    members: tuple[tuple[int, int], ...]     # (pair index, sign)


@dataclass(frozen=True, slots=True)
class RootSet:
    r"""The real roots of one parameter-dependent characteristic factor (a semi-closed block).

    ``coeffs`` (highest power first, in the code-safe parameters) define
    :math:`f(E) = \sum_i c_i E^{n-i}`; ``picks`` are the roots the response uses, as
    (symbol, k) with k the ascending position. Their values come from the diagonalised block
    (``_eigen.py``); ``coeffs`` give their derivatives.
    """

    coeffs: tuple[sp.Expr, ...]
    picks: tuple[tuple[sp.Symbol, int], ...]

    def derivative(self, root: sp.Symbol, theta: sp.Symbol) -> sp.Expr:
        r""":math:`\partial\lambda/\partial\theta = -f_\theta(\lambda)/f_E(\lambda)` at a root."""
        n = len(self.coeffs) - 1
        f_theta = sum((sp.diff(c, theta) * root ** (n - i) for i, c in enumerate(self.coeffs)),
                      sp.Integer(0))
        if f_theta == 0:
            return sp.Integer(0)
        f_E = sum(((n - i) * c * root ** (n - i - 1) for i, c in enumerate(self.coeffs[:-1])),
                  sp.Integer(0))
        return -f_theta / f_E


@dataclass(frozen=True, slots=True)
class Plan:
    """Everything the code generator reads from a derivation (see the module docstring)."""

    parameters: tuple[sp.Symbol, ...]        # code-safe symbols, in signature order
    original: tuple[sp.Symbol, ...]          # the model's symbols, same order
    energies: tuple[sp.Expr, ...]
    degeneracies: tuple[int, ...]
    pairs: tuple[Pair, ...]
    groups: tuple[Group, ...]
    fluctuation: tuple[sp.Expr, ...]         # C_a per level
    mean_a: tuple[sp.Expr, ...]              # alpha_a per level
    mean_b: tuple[sp.Expr, ...]              # beta_a per level
    sign: int                                # convention: perturbation sign
    frequency_sign: int                      # convention: Fourier sign
    prescription: int                        # +1 retarded, -1 advanced
    roots: tuple[RootSet, ...] = ()          # semi-closed blocks, solved numerically per point
    eigen: tuple = ()                        # the same blocks diagonalised (see _eigen.py)
    block_weights: tuple = ()                # (symbol, BlockWeight): weights known numerically
    semi: tuple = ()                         # stage-P lines computing those and the roots

    @property
    def numeric_weights(self) -> bool:
        """True when some weight is known only numerically (semi-closed blocks): the Jacobian
        is then taken by central differences."""
        return bool(self.block_weights)

    @property
    def has_covariance(self) -> bool:
        return any(v != 0 for v in self.mean_a) and any(v != 0 for v in self.mean_b)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.parameters)

    def is_complex(self, *exprs: sp.Expr) -> bool:
        values = [sp.sympify(e) for e in exprs]  # safe: derivation values are already sympy objects
        return any(e.has(sp.I) or any(x.is_real is False for x in e.free_symbols) for e in values)


def _sample(symbols, k: int) -> dict:
    # Irrational-looking rationals, fixed: deterministic numeric keys and zero tests.
    return {s: sp.Rational(1000 + 37 * (i + 1) * (k + 2), 997 + 13 * i + 5 * k) for i, s in enumerate(symbols)}


def _named_point(symbols, k: int) -> dict:
    """Fixed irrational-looking rational values that depend on each symbol's name only, so
    numeric values of implicit atoms can be shared between expressions."""
    out = {}
    for s in symbols:
        h = sum((i + 1) * ord(c) for i, c in enumerate(s.name))
        out[s] = sp.Rational(1000 + 37 * (h % 97 + 1) * (k + 2), 997 + 13 * (h % 89) + 5 * k)
    return out


def _weights_vanish(expr: sp.Expr, cache: dict) -> bool:
    """Zero test of an expression holding semi-closed weights (:class:`BlockWeight`).

    The weights are algebraic functions of the parameters, evaluated at two generic points from
    the diagonalised blocks in double precision (one decomposition per block and point, in
    ``cache``); values far from zero decide at once, values at rounding level count as zero,
    and the narrow range between is decided at 40 digits.
    """
    syms = sorted(expr.free_symbols, key=lambda s: s.name)
    for k in range(2):
        checkpoint("planning the evaluator: zero test of semi-closed weights")
        pt = _named_point(syms, k)
        store = cache.setdefault(k, {})

        def num(e, pt=pt):
            return complex(e.xreplace(pt)) if e.free_symbols else complex(e)
        vals = {w: complex(weight_arrays(w, num, store)) for w in expr.atoms(BlockWeight)}
        size = sum(abs(v) for v in vals.values()) or 1.0
        for r in expr.atoms(sp.CRootOf, LevelRoot):
            vals[r] = complex(_root_at(r, pt, 20))
        e = expr.xreplace({a: sp.Float(v.real, 17) + sp.I * sp.Float(v.imag, 17)
                           for a, v in vals.items()}).xreplace(pt)
        value = abs(complex(sp.N(e, 20)))
        if value >= 1e-6 * size:
            return False
        if value >= 1e-12 * size and abs(complex(sp.N(expr.xreplace(pt), 40))) > 1e-25 * size:
            return False
    return True


def _root_at(r: sp.Expr, point: dict, digits: int) -> sp.Float:
    """An implicit root at a point of the parameters, as a Float (a parametric LevelRoot at a
    rational point would become a CRootOf, which sympy isolates again on every evalf)."""
    if isinstance(r, sp.CRootOf):
        return root_float(r)
    key = (r, tuple(sorted(point.items(), key=lambda kv: kv[0].name)), digits)
    hit = _ROOTS_AT.get(key)
    if hit is None:
        k, *coeffs = r.args
        with mpmath.workdps(digits + 10):
            value = real_root(int(k), [sp.N(c.xreplace(point), digits + 10) for c in coeffs],
                              extra=2 * digits)
            hit = sp.Float(value, digits)
        if len(_ROOTS_AT) > 4096:
            _ROOTS_AT.clear()
        _ROOTS_AT[key] = hit
    return hit


# Values of implicit roots at the fixed sample points (immutable keys; pure function values).
_ROOTS_AT: dict = {}


def is_zero(expr: sp.Expr, cache: dict | None = None) -> bool:
    """Exact zero test: expansion, then high-precision evaluation at fixed points (expressions
    with semi-closed weights: see :func:`_weights_vanish`; ``cache`` keeps their
    decompositions between calls)."""
    expr = sp.sympify(expr)  # safe: derivation values are already sympy objects
    if expr == 0:
        return True
    # (not ``has``: it walks the polynomial of every exact root, see atoms_outside_roots)
    if atoms_outside_roots(expr, BlockWeight):
        return _weights_vanish(expr, {} if cache is None else cache)
    if not expr.free_symbols:
        return abs(number_value(expr)) < mpmath.mpf(_ZERO_CUTOFF)
    if expr.is_rational_function():
        # Rational in the parameters: cancellation decides exactly.
        return sp.cancel(expr) == 0
    if not expr.has(LevelRoot) and sp.expand(expr) == 0:
        # (Expanding products of implicit roots costs far more than the numeric test below.)
        return True
    syms = sorted(expr.free_symbols, key=lambda s: s.name)
    expr = freeze_roots(expr)
    for k in range(3):
        pt = _sample(syms, k)
        roots = {r: _root_at(r, pt, 60) for r in expr.atoms(LevelRoot)}
        value = sp.N(expr.xreplace(roots).xreplace(pt), 50)
        if abs(value) >= _ZERO_CUTOFF:
            return False
    return True


def _tidy(expr: sp.Expr, implicit: bool) -> sp.Expr:
    expr = sp.sympify(expr)  # safe: derivation values are already sympy objects
    return expr if implicit else clean(expr)


def _spacing(Ea: sp.Expr, Eb: sp.Expr, implicit: bool, params: tuple) -> sp.Expr:
    """E_b - E_a, exact: expanded where both levels are polynomials in the parameters (their
    difference is then already in lowest terms), tidied otherwise."""
    if not implicit and Ea.is_polynomial(*params) and Eb.is_polynomial(*params):
        return sp.expand(Eb - Ea)
    return _tidy(Eb - Ea, implicit)


def _safe_names(symbols: tuple[sp.Symbol, ...]) -> tuple[sp.Symbol, ...]:
    """Python identifiers for the parameters inside the emitted code, as close to the physics
    names as possible and distinct from every name the code itself uses (:data:`_TAKEN`)."""

    def fits(name: str) -> bool:
        return (name.isidentifier() and name.isascii() and not name.startswith("_")
                and not keyword.iskeyword(name) and name not in _TAKEN)

    used = {s.name for s in symbols if fits(s.name)}
    out = []
    for s in symbols:
        name = s.name
        if not fits(name):
            name = re.sub(r"\W", "_", name.encode("ascii", "backslashreplace").decode())
            if not name or name[0].isdigit() or name.startswith("_"):
                name = "p" + name
            name += "_"
            while not fits(name) or name in used:
                name += "_"
            used.add(name)
        out.append(sp.Symbol(name, **s.assumptions0))
    return tuple(out)


def fingerprint(d: Derivation) -> str:
    """sha256 of a canonical text of the model (H, sector, sites) and of A and B."""
    system = d.system
    parts = [
        "H=" + repr(system.hamiltonian),
        "sites=" + repr(tuple(system.sites)),
        "sector=" + repr(tuple((repr(op), sp.srepr(v)) for op, v in system.sector)),
        "A=" + repr(d.A),
        "B=" + repr(d.B),
        "parameters=" + repr(tuple((p.name, sorted(p.assumptions0.items())) for p in system.parameters)),
    ]
    return hashlib.sha256("\n".join(parts).encode()).hexdigest()


def build_plan(d: Derivation) -> Plan:
    """Read levels, pairs, groups and level coefficients off a :class:`Derivation`."""
    levels = d.levels
    L = len(levels)
    symbols: set[sp.Symbol] = set(d.system.parameters)
    for lv in levels:
        symbols |= lv.energy.free_symbols
    for v in (*d.level_weights.values(), *d.expect_A.values(), *d.expect_B.values()):
        symbols |= sp.sympify(v).free_symbols  # safe: derivation values are already sympy objects
    # Declared order (case file, or parameters= of the API), then any other symbol by name.
    declared = tuple(p for p in d.system.parameters if p in symbols)
    original = declared + tuple(sorted(symbols - set(declared), key=lambda s: s.name))
    safe = _safe_names(original)
    rename = dict(zip(original, safe))

    def sub(e: sp.Expr) -> sp.Expr:
        return replace_outside_roots(sp.sympify(e), rename)  # safe: derivation values are sympy objects

    energies = tuple(sub(lv.energy) for lv in levels)
    implicit = tuple(lv.implicit for lv in levels)
    W = {k: sub(v) for k, v in d.level_weights.items()}

    same = d.A == d.B
    pairs: list[Pair] = []
    numeric: dict = {}                  # decompositions of semi-closed blocks at sample points
    for a in range(L):
        checkpoint("planning the evaluator: pairs of levels", f"level {a + 1} of {L}")
        for b in range(a + 1, L):
            wab, wba = W.get((a, b), sp.Integer(0)), W.get((b, a), sp.Integer(0))
            if wab == 0 and wba == 0:
                continue
            imp = implicit[a] or implicit[b]
            if same or wab == wba:
                # A = B: Tr(P_a A P_b A) = Tr(P_b A P_a A), and the derivation's weights are
                # already tidied; nothing to simplify or test.
                w = wab if wab != 0 else wba
                # A number in exact roots stays one product (2*(sum) would distribute the 2
                # over thousands of terms and evaluate each again).
                S = sp.Mul(2, w, evaluate=False) if w.is_Add and not w.free_symbols else 2 * w
                D = sp.Integer(0)
            else:
                S = _tidy(wab + wba, imp)
                D = _tidy(wab - wba, imp)
            if D != 0 and is_zero(D, numeric):
                D = sp.Integer(0)
            if is_zero(S, numeric) and D == 0:
                continue
            pairs.append(Pair(a, b, _spacing(energies[a], energies[b], imp, safe), S, D))

    groups = _group_pairs(pairs, safe)

    eA = {a: sub(v) for a, v in d.expect_A.items()}
    eB = {a: sub(v) for a, v in d.expect_B.items()}
    fluct, mean_a, mean_b = [], [], []
    for a, lv in enumerate(levels):
        g = lv.degeneracy
        ea, eb = eA.get(a, sp.Integer(0)), eB.get(a, sp.Integer(0))
        C = _tidy(W.get((a, a), sp.Integer(0)) - ea * eb / g, implicit[a])
        fluct.append(sp.Integer(0) if is_zero(C, numeric) else C)
        mean_a.append(_tidy(ea / g, implicit[a]))
        mean_b.append(_tidy(eb / g, implicit[a]))

    conv = d.convention
    # Weights of semi-closed blocks become symbols computed numerically per point (_eigen.py).
    bweights, wmap = _weight_symbols([*(e for p in pairs for e in (p.S, p.D)), *fluct, *mean_a,
                                      *mean_b])
    # Semi-closed blocks: each implicit root becomes a symbol computed numerically per point.
    roots, rmap = _root_sets([*energies, *(e for p in pairs for e in (p.w, p.S, p.D)),
                              *fluct, *mean_a, *mean_b])

    def r(e: sp.Expr) -> sp.Expr:
        e = replace_outside_roots(e, wmap) if wmap else e
        return replace_outside_roots(e, rmap) if rmap else e

    pairs = [Pair(p.a, p.b, r(p.w), r(p.S), r(p.D)) for p in pairs]
    return Plan(safe, original, tuple(r(e) for e in energies),
                tuple(lv.degeneracy for lv in levels), tuple(pairs), groups,
                tuple(r(e) for e in fluct), tuple(r(e) for e in mean_a),
                tuple(r(e) for e in mean_b), conv.sign, conv.frequency_sign,
                1 if conv.prescription == "retarded" else -1, roots, block_weights=bweights)


def _is_real_weight(w: BlockWeight) -> bool:
    """Whether a semi-closed weight is real for real parameters: real blocks and operators, or
    Tr(P_a L P_b L^+) (A = B Hermitian), or the expectation of a Hermitian L."""
    kind, X, a, Y, b, L, R = w.args
    if not (X.is_complex() or Y.is_complex() or L.has(sp.I) or R.has(sp.I)):
        return True
    adj = {(i, j): sp.conjugate(v) for j, i, v in L}
    if kind == 0:
        return adj == {(i, j): v for i, j, v in R}
    return X == Y and adj == {(i, j): v for i, j, v in L}


def _weight_symbols(exprs: list[sp.Expr]) -> tuple[tuple, dict]:
    """A symbol for each semi-closed weight (:class:`BlockWeight`) in ``exprs``."""
    atoms: set = set()
    for e in exprs:
        atoms |= atoms_outside_roots(sp.sympify(e), BlockWeight)  # safe: derivation values are sympy objects
    out, wmap = [], {}
    for k, w in enumerate(sorted(atoms, key=sp.default_sort_key)):
        sym = sp.Symbol(f"_bw{k}", real=True) if _is_real_weight(w) else sp.Symbol(f"_bw{k}", real=False)
        wmap[w] = sym
        out.append((sym, w))
    return tuple(out), wmap


def _root_sets(exprs: list[sp.Expr]) -> tuple[tuple[RootSet, ...], dict]:
    """Symbols for the implicit roots in ``exprs``, grouped by their defining polynomial."""
    atoms: set = set()
    for e in exprs:
        atoms |= atoms_outside_roots(sp.sympify(e), LevelRoot)  # safe: derivation values are sympy objects
    by_poly: dict[tuple, list] = {}
    for a in atoms:
        by_poly.setdefault(tuple(a.args[1:]), []).append(a)
    sets, rmap = [], {}
    for g, coeffs in enumerate(sorted(by_poly, key=sp.default_sort_key)):
        picks = []
        for a in sorted(by_poly[coeffs], key=lambda a: int(a.args[0])):
            k = int(a.args[0])
            sym = sp.Symbol(f"_lam{g}_{k}", real=True)
            rmap[a] = sym
            picks.append((sym, k))
        sets.append(RootSet(coeffs, tuple(picks)))
    return tuple(sets), rmap


def _group_pairs(pairs: list[Pair], symbols: tuple[sp.Symbol, ...]) -> tuple[Group, ...]:
    """Group pairs whose spacings agree up to sign (one pole pair +-r_g per group)."""
    point = _sample(symbols, 0)
    buckets: dict[str, list[int]] = {}
    groups: list[list[tuple[int, int]]] = []
    # Each implicit root evaluated once (CRootOf isolates its root again on every evalf).
    atoms = set().union(*[atoms_outside_roots(p.w, sp.CRootOf, LevelRoot) for p in pairs]) \
        if pairs else set()
    roots = {a: _root_at(a, point, 50) for a in atoms}
    for k, p in enumerate(pairs):
        checkpoint("planning the evaluator: grouping pole pairs", f"pair {k + 1} of {len(pairs)}")
        value = sp.N(replace_outside_roots(replace_outside_roots(p.w, roots), point), 40)
        if value.has(sp.I) or not value.is_real:
            raise InputError(f"emit: level spacing {p.w} is not real")
        key = sp.Float(abs(value), 40).__format__(f".{_KEY_DIGITS}e")
        placed = False
        for gi in buckets.get(key, []):
            rep = pairs[groups[gi][0][0]].w
            for sign in (1, -1):
                if is_zero(p.w - sign * rep):
                    groups[gi].append((k, sign))
                    placed = True
                    break
            if placed:
                break
        if not placed:
            buckets.setdefault(key, []).append(len(groups))
            groups.append([(k, 1)])
    return tuple(Group(g[0][0], tuple(g)) for g in groups)
