r"""Evaluator modules that diagonalise every block at the evaluation points (layer: emit).

Owns :func:`block_module_source` and :func:`uses_block_evaluator`. Imports numpy, mpmath,
sympy, :mod:`symresp.algebra`, :mod:`symresp.errors`, :mod:`symresp.response`,
:mod:`symresp.spectrum` and the emit modules below it.

A derivation with a semi-closed block (levels that are the roots of a parameter-dependent
factor of degree >= 3, kept as an exact root set) has levels and weights that are known
numerically only: the evaluator must diagonalise that block at every point anyway. Writing
one program line per pair of levels through sympy's printers then costs most of the time
(a single spin S = 10 has 21 levels and up to 210 pairs, 7000 lines and 9 s to write). This
writer does the whole Lehmann sum with stacked arrays instead:

* per block, the exact block matrix :math:`M(\theta)` in the engine's local basis is filled
  at the parameter points and brought to Hermitian form :math:`H_s = R^{-1}MR` with the
  constant :math:`R = G^{-1/2}` of the block's Gram matrix (the rescaling of spin matrix
  elements, or a symmetry sector); ``numpy.linalg.eigh`` of the stacked matrices
  :math:`(\ldots, n, n)` gives the state energies :math:`E_i` and eigenvectors :math:`U`;
* per pair of blocks (X, Y) that A and B connect, with :math:`\tilde A = R_X^{-1}A_{XY}R_Y`
  and :math:`\tilde B = R_Y^{-1}B_{YX}R_X` (constants, computed once when the operators do
  not depend on the parameters),
  :math:`W_{ij} = (U_X^\dagger\tilde AU_Y)_{ij}\,(U_Y^\dagger\tilde BU_X)_{ji}`, two matrix
  products per pair of blocks for all of its state pairs at once;
* the sums run over ordered pairs of states (i, j) of connected blocks, with Boltzmann
  factors relative to the lowest state at each point, :math:`x_i = e^{-\beta(E_i - E_{\min})}`,
  :math:`Z' = \sum_i x_i`, and the pair factor
  :math:`g_{ij} = (p_i - p_j)/(E_j - E_i) = \beta\max(p_i, p_j)\,\varphi(\beta|E_j - E_i|)`,
  :math:`\varphi(y) = (1 - e^{-y})/y`:

  .. math::

      \chi^{\rm isol} = \sum_{|E_j - E_i| > \tau} g_{ij}W_{ij}, \qquad
      \chi^{T} = \sum_{i \ne j} g_{ij}W_{ij} + \beta\,\mathrm{Cov}_p(A_{ii}, B_{ii}),

  with :math:`\tau = 10^{-9}\max_i|E_i|` (levels closer than that count as one) and the
  covariance of the diagonal elements taken relative to those of the lowest state (no
  cancellation at low temperature). Inside a degenerate eigenspace the eigenvectors are
  arbitrary, but :math:`g_{ij} \to \beta p_i` there, so the sums equal the traces
  :math:`\mathrm{Tr}(P_aAP_bB)` over eigenspaces: no basis choice leaks out;
* poles: :math:`\chi(z) = \sum_{ij} (p_i - p_j)W_{ij}/(E_j - E_i - z)` over the pairs with
  :math:`|E_j - E_i| > \tau`, and likewise the broadened spectra, :math:`\chi(t)` and the
  correlation function.

The generated text grows with the number of matrix entries, not with the number of pairs,
and no sympy printing happens per pair. ``energies()`` reports the derivation's levels: the
eigenvalues of each block are assigned to its exact parts (explicit values nearest, implicit
factors where they are smallest, :func:`symresp.spectrum._eigen_numeric._semieig_a`). The
parameter Jacobian is taken by central differences of the values (relative step
:math:`10^{-6}`), as for every semi-closed evaluator.
"""

from __future__ import annotations

import inspect
from collections.abc import Callable

import mpmath
import numpy
import sympy as sp
from sympy.printing.numpy import NumPyPrinter

from ..algebra import describe, sparse_form
from ..errors import InputError
from ..models import checkpoint
from ..response import Derivation
from ..spectrum import LevelRoot
from ..spectrum._eigen_numeric import _semi_matrix, _semieig_a
from ..spectrum._implicit import block_spec
from ._correlation import CORRELATION_RUNTIME
from ._plan import _safe_names, fingerprint
from ._printers import ConstantTable, freeze_constants
from ._runtime import runtime_source

__all__ = ["block_module_source", "uses_block_evaluator"]

#: Digits of the similarity matrices R, R^-1 before they are rounded to floats.
_DIGITS = 40


def uses_block_evaluator(d: Derivation) -> bool:
    """True when ``d`` has a semi-closed block: its evaluator diagonalises the blocks."""
    spec = d.spectrum
    return any(getattr(s, "kind", None) == "semi" for s in getattr(spec, "solutions", ()))


class _Printer(NumPyPrinter):
    """numpy printer of the block evaluators (plain ``numpy.`` calls, integer powers as **)."""

    def _print_Pow(self, expr, rational=False):
        if expr.exp.is_Integer:
            return super(NumPyPrinter, self)._print_Pow(expr, rational=rational)
        return super()._print_Pow(expr, rational=rational)


def _expr(value) -> sp.Expr:
    """A derivation's value as a sympy object (block data holds ints or sympy objects)."""
    return value if isinstance(value, sp.Basic) else sp.Integer(value)


def _similarity(X) -> tuple[numpy.ndarray, numpy.ndarray] | None:
    """(R, R^-1) as float arrays with R^-1 M R Hermitian (R = G^-1/2), or None for G = 1."""
    n = X.n
    gram = X.gram
    if not len(gram):
        return None
    G = [sp.Rational(g) for g in gram]
    if all(G[i * n + j] == 0 for i in range(n) for j in range(n) if i != j):
        d = numpy.array([float(G[i * n + i]) for i in range(n)])
        return numpy.diag(1.0 / numpy.sqrt(d)), numpy.diag(numpy.sqrt(d))
    with mpmath.workdps(_DIGITS):
        Gm = mpmath.matrix([[mpmath.mpf(int(G[i * n + j].p)) / int(G[i * n + j].q)
                             for j in range(n)] for i in range(n)])
        E, Q = mpmath.eigsy(Gm)
        R = Q * mpmath.diag([1 / mpmath.sqrt(e) for e in E]) * Q.T
        Ri = Q * mpmath.diag([mpmath.sqrt(e) for e in E]) * Q.T
        return (numpy.array([[float(R[i, j]) for j in range(n)] for i in range(n)]),
                numpy.array([[float(Ri[i, j]) for j in range(n)] for i in range(n)]))


def _is_hermitian(form: dict) -> bool:
    for (i, j), v in form.items():
        w = form.get((j, i), sp.Integer(0))
        if sp.expand(v - sp.conjugate(w)) != 0:
            return False
    return True


def _energy_texts(energies) -> tuple[list[str], list[str]]:
    """The lines of ``ENERGIES`` and of ``ROOT_SETS``: an implicit level is named
    ``root{k}_of_P{j}`` (the k-th smallest real root of the j-th polynomial), and each
    polynomial is printed once in ``ROOT_SETS`` (the 21 levels of a spin 10 share one
    polynomial of a few hundred terms)."""
    sets: dict[tuple, int] = {}
    names: dict = {}
    lines = []
    for e in energies:
        # In level order; inside an expression (rare: a shifted root) in order of first
        # appearance in its arguments (a tree walk, no sorting of the long coefficients).
        roots = [e] if isinstance(e, LevelRoot) else \
            [x for x in sp.preorder_traversal(e) if isinstance(x, LevelRoot)]
        for r in roots:
            coeffs = tuple(r.args[1:])
            j = sets.setdefault(coeffs, len(sets))
            names[r] = sp.Symbol(f"root{int(r.args[0])}_of_P{j}")
        lines.append(f"    {sp.sstr(names[e]) if isinstance(e, LevelRoot) else sp.sstr(e.xreplace(names))!r},")
    texts = []
    for coeffs, j in sets.items():
        checkpoint("writing the block evaluator: level polynomials")
        n = len(coeffs) - 1
        size = sum(len(sp.Add.make_args(c)) for c in coeffs)
        if size > _POLYNOMIAL_TERMS:
            # Printing takes seconds and the text would be hundreds of kilobytes: name it.
            names_ = sorted({x.name for c in coeffs for x in c.free_symbols})
            texts.append(f"    {('P' + str(j) + f'(lambda): degree {n}, {size} terms in lambda, ' + ', '.join(names_) + ' (exact in Response.levels)')!r},")
            continue
        terms = []
        for i, c in enumerate(coeffs):
            power = "" if i == n else "lambda" + (f"**{n - i}" if n - i > 1 else "")
            if c == 0:
                continue
            # order="none": the terms in sympy's canonical argument order, without the
            # ordering pass that takes seconds on coefficients of thousands of terms.
            text = sp.sstr(c, order="none")
            terms.append(text if not power else power if c == 1 else f"({text})*{power}")
        texts.append(f"    {('P' + str(j) + '(lambda) = ' + ' + '.join(terms))!r},")
    return lines, texts


#: Level polynomials with more terms than this are named in ROOT_SETS, not printed.
_POLYNOMIAL_TERMS = 2000


def _array_literal(a: numpy.ndarray) -> str:
    """A numpy array as source text (repr of every float: exact round trip)."""
    kind = "complex" if numpy.iscomplexobj(a) else "float"
    flat = ", ".join(repr(complex(v) if kind == "complex" else float(v)) for v in a.reshape(-1))
    return f"numpy.array([{flat}], dtype={kind}).reshape({a.shape!r})"


def block_module_source(d: Derivation, *, version: str, name: str | None = None,
                        arguments: Callable[[tuple[str, ...]], tuple[str, ...]] = tuple) -> str:
    """Source of the evaluator module of a derivation with semi-closed blocks (module docstring).

    The module has the public functions and constants of
    :func:`~symresp.emit._numpy_module.numpy_module_source`; ``arguments`` turns the
    parameters' names into the names of the public signatures (the caller's rule for names
    that are arguments of the functions already, such as ``kind``).
    """
    if not isinstance(d, Derivation) or not uses_block_evaluator(d):
        raise InputError("block_module_source: the derivation has no semi-closed block")
    spec = d.spectrum
    nblocks = len(spec.solutions)
    blocks = [spec.implicit_block(bi) for bi in range(nblocks)]
    basis = spec.structure.basis
    formA = sparse_form(d.A, basis)
    formB = formA if d.B == d.A else sparse_form(d.B, basis)
    As = spec.split(formA)
    Bs = As if formB is formA else spec.split(formB)
    checkpoint("writing the block evaluator: operators")

    # Parameters: the declared ones first, then any other symbol of H, A or B by name.
    exprs = [v for X in blocks for _, _, v in X.entries]
    exprs += [v for blk in As.values() for v in blk.values()]
    exprs += [v for blk in Bs.values() for v in blk.values()]
    symbols = set(d.system.parameters)
    for e in exprs:
        symbols |= _expr(e).free_symbols
    rank = {p: k for k, p in enumerate(d.system.parameters)}
    original = tuple(sorted(symbols, key=lambda s: (rank.get(s, len(rank)), s.name)))
    safe = _safe_names(original)
    rename = dict(zip(original, safe))
    table = ConstantTable()
    printer = _Printer({"fully_qualified_modules": True})

    def code(expr) -> str:
        e = freeze_constants(_expr(expr).xreplace(rename), table)
        return printer.doprint(e)

    real_data = not any(_expr(e).has(sp.I) for e in exprs)
    hermitian = _is_hermitian(formA) and (formB is formA or _is_hermitian(formB))
    static_real = hermitian
    wave_real = hermitian and (formB is formA or real_data)

    # ---------------------------------------------------------------- constants
    sizes = [X.n for X in blocks]
    offsets = [0]
    for n in sizes:
        offsets.append(offsets[-1] + n)
    sims = [_similarity(X) for X in blocks]
    L: list[str] = []
    L.append(f"_SIZES = {tuple(sizes)!r}")
    L.append(f"_OFFSETS = {tuple(offsets)!r}")
    L.append(f"_STATES = {offsets[-1]}")
    for bi, S in enumerate(sims):
        if S is not None:
            L.append(f"_R{bi} = {_array_literal(S[0])}")
            L.append(f"_RI{bi} = {_array_literal(S[1])}")
        else:
            L.append(f"_R{bi} = _RI{bi} = None")
    L.append("_SIMILAR = (" + "".join(f"(_RI{bi}, _R{bi}), " for bi in range(nblocks)) + ")")

    # Pairs of blocks (X, Y) with A_XY and B_YX both non-zero; diagonal blocks of A and B.
    links = sorted(k for k in As if (k[1], k[0]) in Bs)
    ia, ib = [], []
    for X, Y in links:
        for i in range(sizes[X]):
            for j in range(sizes[Y]):
                ia.append(offsets[X] + i)
                ib.append(offsets[Y] + j)
    where = {pair: k for k, pair in enumerate(zip(ia, ib))}
    partner = [where.get((j, i), -1) for i, j in zip(ia, ib)]
    L.append(f"_LINKS = {tuple(links)!r}")
    L.append(f"_PARTNER = numpy.array({partner!r}, dtype=numpy.intp)")
    L.append(f"_IA = numpy.array({ia!r}, dtype=numpy.intp)")
    L.append(f"_IB = numpy.array({ib!r}, dtype=numpy.intp)")
    diag_a = sorted(X for X, Y in As if X == Y)
    diag_b = sorted(X for X, Y in Bs if X == Y)
    L.append(f"_DIAG_A = {tuple(diag_a)!r}")
    L.append(f"_DIAG_B = {tuple(diag_b)!r}")

    def dense(n: int, m: int, entries) -> str:
        items = ", ".join(f"({int(i)}, {int(j)}, {code(v)})" for (i, j), v in sorted(entries.items())
                          if v != 0)
        return f"_dense({n}, {m}, ({items}{',' if items else ''}))"

    args = ", ".join(s.name for s in safe)
    unpack = f"    ({''.join(s.name + ', ' for s in safe)}) = _ps" if safe else "    del _ps"

    # ---------------------------------------------------------------- stage P: matrices
    body = ["", "", "def _matrices(_ps):",
            '    """The block matrices (..., n, n) at the parameters, in the local bases."""',
            unpack, "    return ("]
    for bi, X in enumerate(blocks):
        checkpoint("writing the block evaluator: block matrices")
        ent = {(int(i), int(j)): v for i, j, v in X.entries}
        body.append(f"        {dense(X.n, X.n, ent)},")
    body.append("    )")
    op_symbols = set()
    for blk in list(As.values()) + list(Bs.values()):
        for v in blk.values():
            op_symbols |= _expr(v).free_symbols
    body += ["", "", "def _operators(_ps):",
             '    """(A~_XY, B~_YX) of every linked pair of blocks, and the diagonal blocks of A and',
             '    B, in the Hermitian coordinates of the blocks (with A = B the same arrays)."""',
             unpack]
    made: set = set()

    def block(tag: str, forms: dict, X: int, Y: int) -> str:
        tag = "a" if forms is As or Bs is As else tag
        var = f"_{tag}{X}_{Y}"
        if var not in made:
            made.add(var)
            body.append(f"    {var} = _similar({dense(sizes[X], sizes[Y], forms[(X, Y)])}, "
                        f"_RI{X}, _R{Y})")
        return var

    pairs = [(block("a", As, X, Y), block("b", Bs, Y, X)) for X, Y in links]
    da_vars = [block("a", As, X, X) for X in diag_a]
    db_vars = [block("b", Bs, X, X) for X in diag_b]
    body.append("    links = (" + "".join(f"({u}, {v}), " for u, v in pairs) + ")")
    body.append("    da = (" + "".join(f"{u}, " for u in da_vars) + ")")
    body.append("    db = (" + "".join(f"{u}, " for u in db_vars) + ")")
    body.append("    return links, da, db")
    body.append("")
    body.append(f"_OPERATORS_VARY = {bool(op_symbols)!r}")
    body.append("_OPERATORS = None if _OPERATORS_VARY else _operators((0.0,) * len(PARAMETERS))")

    # ---------------------------------------------------------------- energies of the levels
    checkpoint("writing the block evaluator: levels")
    part_pos = {}
    for bi in range(nblocks):
        for pos, k in enumerate(spec.block_parts(bi)):
            part_pos[k] = (bi, pos)
    level_src = [(part_pos[lv.parts[0]]) for lv in d.levels]
    body += ["", "", "def _level_energies(_ps):",
             '    """Energies of the levels (..., L): each block\'s eigenvalues assigned to its',
             '    exact parts (explicit values nearest, implicit factors where smallest)."""',
             unpack, "    _mats = _matrices(_ps)", "    parts = []"]
    for bi, X in enumerate(blocks):
        bspec, explicit, factors = block_spec(X)
        # The last implicit factor takes the eigenvalues left: its coefficients are not needed.
        last = max((f for kind, _, f, _ in bspec if kind == 1), default=-1)
        coeffs = ", ".join(
            ("(" + ", ".join(code(c) for c in cs) + ",)") if fi != last else "()"
            for fi, cs in enumerate(factors))
        expl = ", ".join(code(e) for e in explicit)
        body.append(f"    parts.append(_parts({X.n}, {tuple(tuple(s) for s in bspec)!r}, "
                    f"({expl}{',' if explicit else ''}), ({coeffs}{',' if factors else ''}), "
                    f"_mats[{bi}], _RI{bi}, _R{bi}))")
    body.append(f"    return numpy.stack([parts[b][k] for b, k in {tuple(level_src)!r}], axis=-1)")

    # ---------------------------------------------------------------- module text
    fp = fingerprint(d)
    title = name if name is not None else d.system.name
    user = tuple(o.name for o in original)
    signature = tuple(arguments(user))
    conv = d.convention
    degeneracies = tuple(lv.degeneracy for lv in d.levels)
    header = "\n".join([
        f"Linear-response evaluators for model {title!r}, generated by symresp {version}.",
        "",
        "Do not edit: regenerate with symresp.emit.numpy_module_source(...).",
        "",
        f"Measured operator A = {describe(d.A)}",
        f"Driving operator  B = {describe(d.B)}",
        f"Convention: {conv.describe()}",
        f"Model fingerprint (sha256 of H, sector, sites, A, B): {fp}",
        "",
        "Units: hbar = k_B = 1. The temperature T, the parameters, the frequency omega and the",
        "broadening eta are in one and the same energy unit; t is in the inverse of that unit.",
        "",
        f"Parameters, in the order every function takes them after its grid: "
        f"{', '.join(signature) or '(none)'}",
        "Arguments broadcast together; any of them may be a dask array.",
        f"Levels: {len(d.levels)} (energies with degeneracies, see ENERGIES and DEGENERACIES).",
        "",
        "Semi-closed form: the exact block matrices are diagonalised at every point",
        f"(blocks of {', '.join(str(n) for n in sizes)} states; numpy.linalg.eigh",
        "on the stacked matrices), the weights W_ij = A_ij B_ji of the eigenstates come from",
        "matrix products, and the Lehmann sums run over pairs of states i, j:",
        "",
        "    chi_isolated   = sum_{|E_j - E_i| > tau} g_ij W_ij",
        "    chi_isothermal = sum_{i != j} g_ij W_ij + beta (sum_i p_i W_ii - <A><B>)",
        "    chi(omega)     = sum_{i != j} (p_i - p_j) W_ij / (E_j - E_i - z),  z = omega + i eta",
        "",
        "g_ij = (p_i - p_j)/(E_j - E_i) = beta max(p_i, p_j) (1 - exp(-y))/y, y = beta|E_j - E_i|",
        "(limit beta p_i where levels meet); tau = 1e-9 max|E_i| at the point. The parameter",
        "Jacobian is taken by central differences.",
    ])
    literal = '"""' + header + '\n"""' if '"""' not in header and "\\" not in header else repr(header)
    src = [literal, "", "import cmath", "import math", "", "import numpy", "",
           "__all__ = ['chi_isothermal', 'chi_isolated', 'chi_static', 'jacobian_static', "
           "'chi_omega', 'chi_spectral', 'chi_time', 'energies', 'correlation_spectral']", "",
           f"SYMRESP_VERSION = {version!r}", f"CONVENTION = {conv.describe()!r}",
           f"FINGERPRINT = {fp!r}", f"MODEL = {title!r}", f"PARAMETERS = {user!r}",
           f"DEGENERACIES = {degeneracies!r}", "ENERGIES = ("]
    energy_texts, root_sets = _energy_texts([lv.energy for lv in d.levels])
    src += energy_texts
    src += [")", "ROOT_SETS = (", *root_sets, ")", f"_SIGN = {conv.sign}", f"_FSIGN = {conv.frequency_sign}",
            f"_FREQUENCY_SIGN = {conv.frequency_sign}",
            f"_PRESCRIPTION = {1 if conv.prescription == 'retarded' else -1}",
            f"_STATIC_REAL = {static_real!r}", f"_WAVE_REAL = {wave_real!r}"]
    src += runtime_source().splitlines()
    src += CORRELATION_RUNTIME.splitlines()
    src += ["", ""] + inspect.getsource(_semi_matrix).splitlines()
    src += ["", ""] + inspect.getsource(_semieig_a).splitlines()
    src += _BLOCK_RUNTIME.splitlines()
    src += L + body
    src += _public(signature, conv.prescription == "retarded").splitlines()
    while src and src[-1] == "":
        src.pop()
    return "\n".join(src) + "\n"


def _public(names: tuple[str, ...], has_time: bool) -> str:
    """The public functions with explicit signatures (curve_fit counts the parameters)."""
    sig = "".join(f", {n}" for n in names)
    tup = "(" + "".join(f"{n}, " for n in names) + ")"
    pnames = ", ".join(names) or "(none)"
    time_body = (f"    return _time(t, T, {tup})" if has_time else
                 "    raise ValueError('chi(t) of the advanced convention vanishes for t > 0; '\n"
                 "                     'derive with the retarded convention')")
    return f'''

def chi_isothermal(T{sig}):
    """Isothermal static susceptibility d<A>/df at fixed T.

    chi_T = sum_{{i != j}} g_ij W_ij + beta (sum_i p_i W_ii - <A><B>) over the eigenstates of
    the blocks, continuous where levels cross.

    Parameters
    ----------
    T : float or array_like
        Temperature(s) > 0, in the energy unit of the parameters.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.

    Returns
    -------
    float or ndarray
    """
    return _static("isothermal", T, {tup})


def chi_isolated(T{sig}):
    """Isolated (Kubo) static susceptibility chi(omega -> 0).

    Sum over pairs of states that differ in energy of g_ij W_ij; states closer than
    1e-9 max|E| at the evaluation point count as one level.

    Parameters
    ----------
    T : float or array_like
        Temperature(s) > 0.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.

    Returns
    -------
    float or ndarray
    """
    return _static("isolated", T, {tup})


def chi_static(T{sig}, *, kind="isothermal"):
    """Static susceptibility of the given kind ("isothermal" or "isolated")."""
    if kind not in ("isothermal", "isolated"):
        raise ValueError(f"kind={{kind!r}} must be 'isothermal' or 'isolated'")
    return _static(kind, T, {tup})


def jacobian_static(T{sig}, *, kind="isothermal"):
    """Derivatives d chi_static / d parameter (central differences), stacked along the last axis.

    Parameters
    ----------
    T : float or array_like
        Temperature(s) > 0.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.
    kind : {{"isothermal", "isolated"}}

    Returns
    -------
    ndarray, shape broadcast(T, params) + ({len(names)},)
        In parameter order ({pnames}). Suitable as ``jac=`` of scipy.optimize.curve_fit.
    """
    if kind not in ("isothermal", "isolated"):
        raise ValueError(f"kind={{kind!r}} must be 'isothermal' or 'isolated'")
    return _jacobian(kind, T, {tup})


def chi_omega(omega, T{sig}, *, eta):
    """Dynamical susceptibility chi(omega + i eta) (complex).

    chi(z) = sum_{{i != j}} (p_i - p_j) W_ij / (E_j - E_i - z), z = omega + i eta.

    Parameters
    ----------
    omega : float or array_like
        Real frequencies.
    T : float or array_like
        Temperature(s) > 0.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.
    eta : float
        Broadening > 0 (half width of each line), keyword only.

    Returns
    -------
    complex or ndarray of complex
    """
    return _wave("omega", omega, T, {tup}, _width(eta), "lorentzian")


def chi_spectral(omega, T{sig}, *, eta, shape="lorentzian"):
    """Broadened spectral function chi''(omega).

    chi''(omega) = sum_{{i != j}} (p_i - p_j) W_ij L(omega - (E_j - E_i)), L the Lorentzian
    eta/(x^2 + eta^2) or the Gaussian of the same half width at half maximum and area pi.

    Parameters
    ----------
    omega : float or array_like
        Real frequencies.
    T : float or array_like
        Temperature(s) > 0.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.
    eta : float
        Half width at half maximum > 0, keyword only.
    shape : {{"lorentzian", "gaussian"}}

    Returns
    -------
    float or ndarray
    """
    if shape not in ("lorentzian", "gaussian"):
        raise ValueError(f"shape={{shape!r}} must be 'lorentzian' or 'gaussian'")
    return _wave("spectral", omega, T, {tup}, _width(eta), shape)


def chi_time(t, T{sig}):
    """Retarded response function chi(t) = i theta(t) <[A(t), B]>.

    chi(t) = i sum_{{i != j}} (p_i - p_j) W_ij exp(-i (E_j - E_i) t) for t >= 0, zero for t < 0.

    Parameters
    ----------
    t : float or array_like
        Times, in the inverse energy unit (hbar = 1).
    T : float or array_like
        Temperature(s) > 0.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.

    Returns
    -------
    float or ndarray (complex when the response is not real)
    """
{time_body}


def energies({", ".join(names)}):
    """Level energies E_a at the parameters, stacked along the last axis (see DEGENERACIES)."""
    return _energies({tup})


def correlation_spectral(omega, T{sig}, *, eta, shape="lorentzian", kind="plain"):
    """Broadened correlation function S_AB(omega) = int dt exp(i omega t) <A(t) B>.

    S(omega) = 2 sum_k s_k L(omega - Omega_k), the lines s_k of
    Response.correlation_lines(kind) broadened by L (Lorentzian eta/(x^2 + eta^2) or
    the Gaussian of the same half width at half maximum, area pi); the elastic line
    sum_a p_a W_aa sits at omega = 0.

    Parameters
    ----------
    omega : float or array_like
        Real frequencies.
    T : float or array_like
        Temperature(s) > 0.
    {pnames} : float or array_like
        Model parameters; all arguments broadcast together.
    eta : float
        Half width at half maximum > 0, keyword only.
    shape : {{"lorentzian", "gaussian"}}
    kind : {{"plain", "symmetrised", "canonical"}}

    Returns
    -------
    float or ndarray (complex when the response is not real)
    """
    if kind not in ("plain", "symmetrised", "canonical"):
        raise ValueError(f"kind={{kind!r}} must be 'plain', 'symmetrised' or 'canonical'")
    if shape not in ("lorentzian", "gaussian"):
        raise ValueError(f"shape={{shape!r}} must be 'lorentzian' or 'gaussian'")
    return _wave("correlation_" + kind, omega, T, {tup}, _width(eta), shape)
'''


_BLOCK_RUNTIME = r'''

# ------------------------------------------------------------------------------------------
# Blocks diagonalised at every point: stacked eigh, weights by matrix products, Lehmann sums
# over pairs of eigenstates.
# ------------------------------------------------------------------------------------------

#: Elements per temporary of the kernels: 8192 complex numbers (128 KiB) stay below the
#: allocator's trim threshold, so a temporary is not handed back to the system and
#: page-faulted afresh at every step (see _CHUNK).
_PAIR_BUDGET = 1 << 13
#: Relative step of the central differences of the Jacobian (truncation ~1e-12, rounding
#: ~1e-10 of the value's scale).
_FD_STEP = 1e-6


def _dense(n, m, entries):
    """An (..., n, m) matrix from (i, j, value) entries whose values broadcast together."""
    values = [v for _, _, v in entries]
    shape = numpy.broadcast_shapes(*[numpy.shape(v) for v in values]) if values else ()
    cplx = any(numpy.iscomplexobj(v) for v in values)
    M = numpy.zeros(shape + (n, m), dtype=complex if cplx else float)
    for i, j, v in entries:
        M[..., i, j] = v
    return M


def _similar(M, left, right):
    """left @ M @ right, a factor None standing for the identity."""
    if left is not None:
        M = left @ M
    if right is not None:
        M = M @ right
    return M


def _parts(n, spec, explicit, coeffs, M, Rinv, R):
    """Energies of the parts of one block (see _semieig_a), each of shape M.shape[:-2]."""
    T = () if R is None else (tuple(R.reshape(-1)), tuple(Rinv.reshape(-1)))
    entries = [M[..., i, j] for i in range(n) for j in range(n)]
    return _semieig_a(n, spec, explicit, coeffs, entries, T)[:-1]


def _spectrum(ps):
    """State energies E (..., N) and weights W (..., K) of the pairs (_IA, _IB) at the
    parameters, and the diagonal elements a, b (..., N) of A and B in the eigenstates."""
    with numpy.errstate(divide="ignore", invalid="ignore", over="ignore"):
        mats = _matrices(ps)
        ops = _OPERATORS if _OPERATORS is not None else _operators(ps)
    shape = numpy.broadcast_shapes(*[m.shape[:-2] for m in mats])
    evs, vecs = [], []
    for b, M in enumerate(mats):
        H = _similar(M, *_SIMILAR[b])
        H = numpy.broadcast_to(H, shape + H.shape[-2:])
        if not numpy.isfinite(H).all():
            raise ValueError(f"the Hamiltonian is not finite at the parameters "
                             f"{dict(zip(PARAMETERS, ps))}; evaluate at a point nearby")
        H = 0.5 * (H + numpy.conj(numpy.swapaxes(H, -1, -2)))
        ev, U = numpy.linalg.eigh(H)
        evs.append(ev)
        vecs.append(U)
    E = numpy.concatenate(evs, axis=-1)
    links, da, db = ops
    seen = {}

    def product(M, X, Y):
        """U_X^+ M U_Y, once per operator block (with A = B the same for both)."""
        key = (id(M), X, Y)
        if key not in seen:
            seen[key] = numpy.conj(numpy.swapaxes(vecs[X], -1, -2)) @ M @ vecs[Y]
        return seen[key]

    blocks = []
    for (X, Y), (La, Rb) in zip(_LINKS, links):
        w = product(La, X, Y) * numpy.swapaxes(product(Rb, Y, X), -1, -2)
        blocks.append(w.reshape(w.shape[:-2] + (-1,)))
    W = numpy.concatenate(blocks, axis=-1) if blocks else numpy.zeros(shape + (0,))
    W = numpy.broadcast_to(W, shape + W.shape[-1:])
    a = numpy.zeros(shape + (_STATES,), dtype=complex)
    b = numpy.zeros(shape + (_STATES,), dtype=complex)
    for X, M in zip(_DIAG_A, da):
        a[..., _OFFSETS[X]:_OFFSETS[X + 1]] = numpy.diagonal(product(M, X, X), axis1=-2, axis2=-1)
    for X, M in zip(_DIAG_B, db):
        b[..., _OFFSETS[X]:_OFFSETS[X + 1]] = numpy.diagonal(product(M, X, X), axis1=-2, axis2=-1)
    if _STATIC_REAL:
        a, b = a.real, b.real
    if _WAVE_REAL:
        W = W.real
    return E, W, a, b


_LAST = {}


def _spectrum_at(ps, scalar):
    """_spectrum, remembered for the last float parameters (a fit asks again for the same)."""
    if not scalar:
        return _spectrum(ps)
    key = tuple(ps)
    last = _LAST.get("p")
    if last is not None and last[0] == key and 0.0 not in key:
        return last[1]
    value = _spectrum(key)
    _LAST["p"] = (key, value)
    return value


def _phi(y):
    """(1 - exp(-y))/y for y >= 0, 1 at y = 0."""
    small = y < 1e-8
    safe = numpy.where(small, 1.0, y)
    return numpy.where(small, 1.0 - y / 2, -numpy.expm1(-safe) / safe)


def _thermal(beta, E):
    """Boltzmann factors relative to the lowest state, x (m, N), and Z' (m,)."""
    x = numpy.exp(-beta[:, None] * (E - E.min(axis=-1, keepdims=True)))
    return x, x.sum(axis=-1)


def _static_kernel(kind, T, P):
    """chi at temperatures T (m,) and spectra P (one point, or m points), pair by pair."""
    E, W, a, b = P
    beta = 1.0 / T
    x, Z = _thermal(beta, E)
    gap = E[..., _IB] - E[..., _IA]
    y = beta[:, None] * numpy.abs(gap)
    g = numpy.maximum(x[:, _IA], x[:, _IB]) * _phi(y)
    if kind == "isolated":
        scale = numpy.abs(E).max(axis=-1, keepdims=True)
        g = numpy.where(numpy.abs(gap) > _DEGENERACY_RTOL * scale, g, 0.0)
    else:
        g = numpy.where(_IA == _IB, 0.0, g)      # the diagonal enters through the covariance
    value = (g * W).sum(axis=-1) * beta / Z
    return value + _covariance(kind, beta, x, Z, E, a, b)


def _covariance(kind, beta, x, Z, E, a, b):
    """beta (sum_i p_i a_i b_i - <A><B>) of the isothermal kind (0 for the isolated one),
    with a and b taken relative to the lowest state (no cancellation at low T)."""
    if kind != "isothermal":
        return 0.0
    low = numpy.argmin(E, axis=-1)[..., None]
    da = a - numpy.take_along_axis(a, low, axis=-1)
    db = b - numpy.take_along_axis(b, low, axis=-1)
    p = x / Z[:, None]
    ma, mb = (p * da).sum(axis=-1), (p * db).sum(axis=-1)
    return beta * ((p * da * db).sum(axis=-1) - ma * mb)


#: A pair of states counts as far apart on a grid of temperatures when beta |E_j - E_i| is
#: at least this at every temperature: its term W (x_i - x_j)/(E_j - E_i) is then split into
#: x_i W/(E_j - E_i) - x_j W/(E_j - E_i) with a relative rounding error of at most about
#: 1e-16 / _FAR = 1e-13, and summed over pairs before the grid is touched.
_FAR = 1e-3


def _static_grid(kind, T, P):
    """chi at temperatures T (m,) for one spectrum P: far pairs through the temperature-free
    coefficients c_i = sum_j W_ij/(E_j - E_i) (a product with the Boltzmann factors), the
    others pair by pair."""
    E, W, a, b = P
    beta = 1.0 / T
    x, Z = _thermal(beta, E)
    gap = E[_IB] - E[_IA]
    far = numpy.abs(gap) * beta.min() >= _FAR
    if kind == "isolated":
        near = ~far & (numpy.abs(gap) > _DEGENERACY_RTOL * numpy.abs(E).max())
    else:
        near = ~far & (_IA != _IB)
    value = 0.0
    if far.any():
        q = W[far] / gap[far]
        c = numpy.zeros(len(E), dtype=q.dtype)
        numpy.add.at(c, _IA[far], q)
        numpy.add.at(c, _IB[far], -q)
        value = numpy.einsum("ij,j->i", x, c) / Z
    if near.any():
        ia, ib = _IA[near], _IB[near]
        g = numpy.maximum(x[:, ia], x[:, ib]) * _phi(beta[:, None] * numpy.abs(gap[near]))
        value = value + numpy.einsum("ij,j->i", g, W[near]) * beta / Z
    return value + _covariance(kind, beta, x, Z, E, a, b)


def _points(T, ps, extra=()):
    """T and the parameters checked, and everything broadcast and flattened: (shape, T,
    parameters, extra grids, scalar) with scalar True when every parameter is one number."""
    T = _temperature(T)
    ps, scalar = _parameters(ps)
    extra = [_real_input(name, v) for name, v in extra]
    shape = numpy.broadcast_shapes(numpy.shape(T), *(numpy.shape(p) for p in ps),
                                   *(numpy.shape(v) for v in extra))
    flat = lambda v: numpy.broadcast_to(numpy.asarray(v, dtype=float), shape).reshape(-1)
    fps = ps if scalar else [flat(p) for p in ps]
    return shape, flat(T), fps, [flat(v) for v in extra], scalar


def _steps(n, width):
    """Slices of the points with at most _PAIR_BUDGET elements of width values each."""
    size = max(1, _PAIR_BUDGET // max(1, width))
    for i in range(0, n, size):
        yield slice(i, min(n, i + size))


def _finish(out, shape, real):
    if real and numpy.iscomplexobj(out):
        out = out.real
    out = out.reshape(shape)
    if shape == ():
        return out.item()
    return out


def _static(kind, T, params):
    if _is_lazy((T, *params)):
        return _over_blocks(lambda T, *ps: _static(kind, T, ps), (T, *params),
                            numpy.dtype(float if _STATIC_REAL else complex))
    shape, Ts, ps, _, scalar = _points(T, params)
    out = numpy.empty(Ts.size, dtype=float if (_STATIC_REAL and _WAVE_REAL) else complex)
    if scalar:
        P = _spectrum_at(ps, True)
        for s in _steps(Ts.size, len(P[0])):
            out[s] = _static_grid(kind, Ts[s], P)
        return _finish(out, shape, _STATIC_REAL)
    for s in _steps(Ts.size, len(_IA)):
        out[s] = _static_kernel(kind, Ts[s], _spectrum([p[s] for p in ps]))
    return _finish(out, shape, _STATIC_REAL)


def _jacobian(kind, T, params):
    """d chi / d parameter by central differences of the values, stacked along the last axis."""
    if not params:
        return numpy.zeros(numpy.shape(_static(kind, T, params)) + (0,))
    cols = []
    for i, p in enumerate(params):
        p = numpy.asarray(_real_input(PARAMETERS[i], p), dtype=float)
        step = _FD_STEP * (1.0 + numpy.abs(p))
        up, down = list(params), list(params)
        up[i], down[i] = p + step, p - step
        cols.append((numpy.asarray(_static(kind, T, up)) - numpy.asarray(_static(kind, T, down)))
                    / (2 * step))
    return numpy.stack(numpy.broadcast_arrays(*cols), axis=-1)


def _line(x, eta, shape):
    """Lorentzian eta/(x^2 + eta^2), or the Gaussian of the same half width and area pi."""
    if shape == "lorentzian":
        return eta / (x * x + eta * eta)
    k = math.sqrt(2 * math.log(2)) / eta
    return math.sqrt(math.pi / 2) * k * numpy.exp(-(x * k) ** 2 / 2)


def _lines(what, beta, P):
    """Frequencies and coefficients of the pole or line sum: (K,) for one spectrum at one
    temperature (pairs that cannot contribute left out), (m, K) for m points."""
    E, W, a, b = P
    beta = numpy.asarray(beta, dtype=float)
    emin = E.min(axis=-1, keepdims=True)
    x = numpy.exp(-beta[..., None] * (E - emin))
    Z = x.sum(axis=-1)[..., None]
    freq = E[..., _IB] - E[..., _IA]
    xi, xj = x[..., _IA], x[..., _IB]
    if what.startswith("correlation_"):
        kind = what[len("correlation_"):]
        if kind == "plain":
            c = xi
        elif kind == "symmetrised":
            c = (xi + xj) / 2
        else:               # (x_i - x_j)/(beta Omega) = x_lower phi(beta |Omega|), -> x_i at 0
            c = numpy.where(freq >= 0, xi, xj) * _phi(beta[..., None] * numpy.abs(freq))
        coef = 2.0 * c * W / Z
    else:
        scale = numpy.abs(E).max(axis=-1, keepdims=True)
        apart = numpy.abs(freq) > _DEGENERACY_RTOL * scale
        coef = numpy.where(apart, (xi - xj) * W, 0.0) / Z
    if coef.ndim == 1:
        keep = coef != 0
        return freq[keep], coef[keep]
    return freq, coef


def _grid(what, X, freq, coef, eta, shape):
    """The pole or line sum at the grid points X (m,) (see _lines)."""
    if what == "omega":
        z = _FSIGN * X + 1j * _PRESCRIPTION * eta
        terms = 1.0 / (freq - z[:, None])
        factor = _SIGN
    elif what == "time":
        terms = numpy.exp(-1j * freq * X[:, None])
        factor = _SIGN * 1j
    else:
        terms = _line(_FSIGN * X[:, None] - freq, eta, shape)
        factor = _SIGN * _FSIGN if what == "spectral" else 1.0
    if coef.ndim == 1:
        # einsum, not BLAS: a matrix-vector product of this size is 0.1 ms in einsum and up to
        # 15 ms in a threaded BLAS on a loaded machine (measured on 2 cores).
        value = factor * numpy.einsum("ij,j->i", terms, coef)
    else:
        value = factor * (terms * coef).sum(axis=-1)
    if what == "time":
        value = numpy.where(X >= 0, value, 0.0)
    return value


def _pole_pairs(beta, P, eta):
    """chi(omega) of one spectrum at one temperature as pole pairs +-Omega_k, Omega_k > 0:
    w+/(Omega - z) + w-/(-Omega - z) = ((w+ - w-) Omega + (w+ + w-) z)/(Omega^2 - z^2).
    Returns (Omega^2, u, v) with u = (w+ - w-) Omega, v = w+ + w-."""
    E, W, a, b = P
    x = numpy.exp(-beta * (E - E.min()))
    freq = E[_IB] - E[_IA]
    apart = numpy.abs(freq) > _DEGENERACY_RTOL * numpy.abs(E).max()
    w = numpy.where(apart, (x[_IA] - x[_IB]) * W, 0.0) / x.sum()
    up = numpy.flatnonzero(freq > 0)
    mate = _PARTNER[up]
    down = numpy.where(mate >= 0, w[numpy.maximum(mate, 0)], 0.0)
    lone = numpy.flatnonzero((freq < 0) & (_PARTNER < 0))    # a pole at -Omega alone
    om = numpy.concatenate([freq[up], -freq[lone]])
    wp = numpy.concatenate([w[up], numpy.zeros(len(lone), dtype=w.dtype)])
    wm = numpy.concatenate([down, w[lone]])
    u, v = (wp - wm) * om, wp + wm
    # Pole pairs whose weights are below 1e-17 of the largest (Boltzmann factors of high
    # levels, rounding of zero weights) change no digit, also at a pole: relative to the
    # largest term there they are below 1e-17 (largest |Omega|)/eta, and the threshold
    # scales with eta.
    size = numpy.maximum(numpy.abs(wp), numpy.abs(wm))
    limit = _POLE_CUT * size.max(initial=0.0) * min(1.0, eta / max(om.max(initial=0.0), 1e-300))
    keep = size > limit
    return om[keep] ** 2, u[keep], v[keep]


#: Relative size below which a pole pair is left out of chi(omega) on a grid (see _pole_pairs).
_POLE_CUT = 1e-17


def _omega_pairs(X, eta, om2, u, v):
    z = _FSIGN * X + 1j * _PRESCRIPTION * eta
    d = 1.0 / (om2 - (z * z)[:, None])
    return _SIGN * (numpy.einsum("ij,j->i", d, u) + z * numpy.einsum("ij,j->i", d, v))


def _wave(what, X, T, params, eta, shape):
    name = "t" if what == "time" else "omega"
    real = _WAVE_REAL and what != "omega"
    if _is_lazy((X, T, *params)):
        return _over_blocks(lambda X, T, *ps: _wave(what, X, T, ps, eta, shape), (X, T, *params),
                            numpy.dtype(float if real else complex))
    shape_, Ts, ps, (Xs,), scalar = _points(T, params, ((name, X),))
    out = numpy.empty(Ts.size, dtype=complex)
    if scalar and numpy.ndim(T) == 0:
        # One spectrum at one temperature: its lines once, then the grid.
        if what == "omega":
            om2, u, v = _pole_pairs(1.0 / float(T), _spectrum_at(ps, True), eta)
            for s in _steps(Xs.size, len(om2)):
                out[s] = _omega_pairs(Xs[s], eta, om2, u, v)
            return _finish(out, shape_, False)
        freq, coef = _lines(what, 1.0 / float(T), _spectrum_at(ps, True))
        for s in _steps(Xs.size, len(freq)):
            out[s] = _grid(what, Xs[s], freq, coef, eta, shape)
    else:
        P = _spectrum_at(ps, True) if scalar else None
        for s in _steps(Ts.size, len(_IA)):
            Ps = P if scalar else _spectrum([p[s] for p in ps])
            freq, coef = _lines(what, 1.0 / Ts[s], Ps)
            out[s] = _grid(what, Xs[s], freq, coef, eta, shape)
    return _finish(out, shape_, real)


def _time(t, T, params):
    return _wave("time", t, T, params, 0.0, "lorentzian")


def _energies(params):
    if _is_lazy(params):
        return _over_blocks(_energies_blocks, params, _F64, len(DEGENERACIES))
    ps, scalar = _parameters(params)
    with numpy.errstate(divide="ignore", invalid="ignore", over="ignore"):
        shape = numpy.broadcast_shapes(*(numpy.shape(p) for p in ps))
        value = _level_energies([numpy.broadcast_to(p, shape) if not scalar else p for p in ps])
    return numpy.real(value)


def _energies_blocks(*params):
    return _energies(params)
'''
