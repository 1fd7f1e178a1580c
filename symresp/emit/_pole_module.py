r"""Evaluator modules for ladder derivations and for the equations-of-motion route (layer: emit).

Owns :func:`ladder_module_source` and :func:`motion_module_source`. Imports sympy,
:mod:`symresp.errors`, :mod:`symresp.response`, :mod:`symresp.spectrum` and :mod:`._plan`.

Both write a numpy-only module with the same public functions as
:func:`~._numpy_module.numpy_module_source` (``chi_isothermal(T, *p)``, ``chi_isolated``,
``chi_static``, ``jacobian_static``, ``chi_omega(omega, T, *p, eta=)``, ``chi_spectral``,
``chi_time``), all broadcasting together, so a fit or a plot does not care which route a
response took.

*Ladders* (a qubit or spin coupled to an oscillator, hundreds of blocks that are one block
:math:`M(\nu)` at different offsets): the module evaluates the generic energies
:math:`E_i(\nu)` and weights :math:`W_{ij}(\nu)` of each ladder on the array of its offsets,
and the few blocks at the ends explicitly, so its size does not grow with the cutoff. The
Lehmann sums then run over the eigenspaces ("parts") of all blocks:

.. math::

    \chi^{\rm isol} = \sum_{a\ne b,\ E_a \ne E_b} g_{ab}W_{ab}, \qquad
    \chi^{\rm T} = \sum_{a\ne b} g_{ab}W_{ab} + \beta\Big(\sum_a p_aW_{aa}
      - \langle A\rangle\langle B\rangle\Big),

with :math:`g_{ab} = (p_a - p_b)/(E_b - E_a) = \beta p_{\rm low}\,\phi(\beta|E_b - E_a|)`,
:math:`\phi(y) = (1 - e^{-y})/y` (finite at crossings, where it tends to :math:`\beta p_a`),
populations per state relative to the lowest part at each point. The Jacobian differentiates
these sums by the chain rule with the exact derivatives of :math:`E_i(\nu)`, :math:`W(\nu)`.

*Equations of motion*: the pole frequencies :math:`\Omega_k` and weights :math:`w_k` (closed
forms, in :math:`\beta` where Gibbs averages enter) and the static susceptibilities are
printed directly; the Jacobian is the derivative of the printed static forms.
"""

from __future__ import annotations

import sympy as sp
from sympy.printing.numpy import NumPyPrinter

from ..algebra import sparse_form
from ..conventions import beta
from ..errors import InputError
from ..response import Derivation, MotionDerivation
from ..spectrum import LadderSpectrum
from ._plan import _safe_names, fingerprint
from ._printers import freeze_constants

__all__ = ["ladder_module_source", "motion_module_source"]


class _Printer(NumPyPrinter):
    """numpy printer of the pole modules (plain ``numpy.`` calls)."""

    def _print_Pow(self, expr, rational=False):
        if expr.exp.is_Integer:
            return super(NumPyPrinter, self)._print_Pow(expr, rational=rational)
        return super()._print_Pow(expr, rational=rational)


def _code(expr: sp.Expr, rename: dict) -> str:
    e = freeze_constants(sp.sympify(expr).xreplace(rename))  # safe: sympy objects from a derivation
    return _Printer({"fully_qualified_modules": True}).doprint(e)


_RUNTIME = r'''
_F64 = numpy.dtype(float)
#: Level-grouping tolerance of the isolated susceptibility, relative to max(1, max|E|).
_DEGENERACY_RTOL = 1e-9


def _real(name, value):
    try:
        arr = numpy.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name}={value!r} must be real numbers") from None
    return arr


def _inputs(T, params, extra=()):
    """T (checked > 0), the parameters and extra grids, broadcast to one shape."""
    T = _real("T", T)
    if T.size and not (T > 0).all():
        raise ValueError("T must be > 0 (and not nan) everywhere")
    ps = []
    for name, value in zip(PARAMETERS, params):
        v = _real(name, value)
        if not numpy.isfinite(v).all():
            raise ValueError(f"parameter {name} must be finite")
        ps.append(v)
    arrays = numpy.broadcast_arrays(T, *ps, *extra)
    return arrays[0], tuple(arrays[1:1 + len(ps)]), tuple(arrays[1 + len(ps):])


def _width(eta):
    eta = _real("eta", eta)
    if eta.ndim or not (eta > 0 and numpy.isfinite(eta)):
        raise ValueError(f"eta={eta!r} must be one finite number > 0")
    return float(eta)


def _result(value):
    """A 0-d result as a Python number, float where it is real."""
    if numpy.ndim(value) == 0:
        value = complex(value) if numpy.iscomplexobj(value) else float(value)
        if isinstance(value, complex) and _REAL:
            return value.real
        return value
    if _REAL and numpy.iscomplexobj(value):
        return value.real.copy()
    return value


def _phi(y):
    """(1 - exp(-y))/y for y >= 0, 1 at y = 0."""
    small = y < 1e-8
    safe = numpy.where(small, 1.0, y)
    return numpy.where(small, 1.0 - y / 2, -numpy.expm1(-safe) / safe)


def _phi_prime(y):
    """d phi / dy = (exp(-y)(1 + y) - 1)/y**2, series near 0."""
    small = y < 1e-3
    safe = numpy.where(small, 1.0, y)
    exact = (numpy.exp(-safe) * (1.0 + safe) - 1.0) / safe**2
    series = -0.5 + y / 3 - y**2 / 8 + y**3 / 30
    return numpy.where(small, series, exact)
'''

_LADDER_RUNTIME = r'''

def _populations(beta, E):
    """Populations per state relative to the lowest part at each point, and Z'."""
    x = numpy.exp(-beta * (E - E.min(axis=0)))
    Z = numpy.tensordot(_DEG, x, axes=1)
    return x / Z


def _static(T, ps, kind, jac=False):
    beta = 1.0 / T
    E, dE, pairs, diag, means = _spectrum(ps, jac)
    p = _populations(beta, E)
    ia, ib, W, dW = pairs
    gap = E[ib] - E[ia]
    low = gap >= 0
    plow = numpy.where(low, p[ia], p[ib])
    y = beta * numpy.abs(gap)
    g = beta * plow * _phi(y)
    if kind == "isolated":
        scale = numpy.maximum(1.0, numpy.abs(E).max(axis=0))
        keep = numpy.abs(gap) > _DEGENERACY_RTOL * scale
    else:
        keep = numpy.ones(gap.shape, dtype=bool)
    value = (numpy.where(keep, g * W, 0.0)).sum(axis=0)
    di, Wd, dWd = diag
    ka, eA, deA, kb, eB, deB = means
    if kind == "isothermal":
        mA = (p[ka] * eA).sum(axis=0)
        mB = (p[kb] * eB).sum(axis=0)
        value = value + beta * ((p[di] * Wd).sum(axis=0) - mA * mB)
    if not jac:
        return value
    out = []
    for j in range(len(PARAMETERS)):
        dEj = dE[j]
        mean = numpy.tensordot(_DEG, p * dEj, axes=1)
        dp = -beta * p * (dEj - mean)
        dgap = dEj[ib] - dEj[ia]
        dplow = numpy.where(low, dp[ia], dp[ib])
        sgn = numpy.where(low, 1.0, -1.0)
        dg = beta * (dplow * _phi(y) + plow * _phi_prime(y) * beta * sgn * dgap)
        d = numpy.where(keep, dg * W + g * dW[j], 0.0).sum(axis=0)
        if kind == "isothermal":
            dmA = (dp[ka] * eA + p[ka] * deA[j]).sum(axis=0)
            dmB = (dp[kb] * eB + p[kb] * deB[j]).sum(axis=0)
            d = d + beta * ((dp[di] * Wd + p[di] * dWd[j]).sum(axis=0) - dmA * mB - mA * dmB)
        out.append(d)
    return numpy.stack(out, axis=-1)


def _pole_terms(T, ps):
    """(frequency, weight) arrays of the ordered pairs a != b: E_b - E_a, (p_a - p_b) W_ab."""
    E, _, pairs, _, _ = _spectrum(ps, False)
    p = _populations(1.0 / T, E)
    ia, ib, W, _ = pairs
    return E[ib] - E[ia], (p[ia] - p[ib]) * W
'''

_MOTION_RUNTIME = r'''

def _static(T, ps, kind, jac=False):
    beta = 1.0 / T
    if jac:
        return numpy.stack(numpy.broadcast_arrays(*_jacobian(beta, ps, kind)), axis=-1)
    return _isothermal(beta, ps) if kind == "isothermal" else _isolated(beta, ps)


def _pole_terms(T, ps):
    beta = 1.0 / T
    return _poles(beta, ps)
'''

_PUBLIC = r'''

def chi_isothermal(T, *params):
    """Isothermal static susceptibility d<A>/df at fixed T (T and the parameters broadcast)."""
    T, ps, _ = _inputs(T, _args(params))
    return _result(_SIGN * _static(T, ps, "isothermal"))


def chi_isolated(T, *params):
    """Isolated (Kubo) static susceptibility chi(omega -> 0)."""
    T, ps, _ = _inputs(T, _args(params))
    return _result(_SIGN * _static(T, ps, "isolated"))


def chi_static(T, *params, kind="isothermal"):
    """Static susceptibility of the given kind ("isothermal" or "isolated")."""
    if kind not in ("isothermal", "isolated"):
        raise ValueError(f"kind={kind!r} must be 'isothermal' or 'isolated'")
    T, ps, _ = _inputs(T, _args(params))
    return _result(_SIGN * _static(T, ps, kind))


def jacobian_static(T, *params, kind="isothermal"):
    """Analytic derivatives d chi_static / d parameter, stacked along the last axis (PARAMETERS order)."""
    if kind not in ("isothermal", "isolated"):
        raise ValueError(f"kind={kind!r} must be 'isothermal' or 'isolated'")
    T, ps, _ = _inputs(T, _args(params))
    value = _SIGN * _static(T, ps, kind, jac=True)
    return value.real.copy() if _REAL and numpy.iscomplexobj(value) else value


def chi_omega(omega, T, *params, eta):
    """chi(omega + i eta) = sum_k w_k / (Omega_k - omega - i eta) (complex)."""
    eta = _width(eta)
    T, ps, (om,) = _inputs(T, _args(params), (_real("omega", omega),))
    freq, weight = _pole_terms(T, ps)
    z = _FSIGN * om + 1j * _PRESCRIPTION * eta
    value = _SIGN * (weight / (freq - z)).sum(axis=0)
    return complex(value) if numpy.ndim(value) == 0 else value


def chi_spectral(omega, T, *params, eta, shape="lorentzian"):
    """Broadened chi''(omega) = sum_k w_k L(omega - Omega_k), L a Lorentzian eta/(x^2 + eta^2) or
    the Gaussian of the same half width at half maximum and the same area pi."""
    if shape not in ("lorentzian", "gaussian"):
        raise ValueError(f"shape={shape!r} must be 'lorentzian' or 'gaussian'")
    eta = _width(eta)
    T, ps, (om,) = _inputs(T, _args(params), (_real("omega", omega),))
    freq, weight = _pole_terms(T, ps)
    x = _FSIGN * om - freq
    if shape == "lorentzian":
        line = eta / (x**2 + eta**2)
    else:
        k = math.sqrt(2 * math.log(2)) / eta
        line = math.sqrt(math.pi / 2) * k * numpy.exp(-(x * k) ** 2 / 2)
    return _result(_SIGN * _FSIGN * (weight * line).sum(axis=0))


def chi_time(t, T, *params):
    """chi(t) = i theta(t) <[A(t), B]> = i sum_k w_k exp(-i Omega_k t) for t >= 0, 0 for t < 0."""
    if _PRESCRIPTION < 0:
        raise ValueError("chi(t) of the advanced convention vanishes for t > 0; derive with "
                         "the retarded convention")
    T, ps, (tt,) = _inputs(T, _args(params), (_real("t", t),))
    freq, weight = _pole_terms(T, ps)
    value = _SIGN * 1j * (weight * numpy.exp(-1j * freq * tt)).sum(axis=0)
    value = numpy.where(tt >= 0, value, 0.0)
    return _result(value)


def _args(params):
    if len(params) != len(PARAMETERS):
        raise TypeError(f"expected the {len(PARAMETERS)} parameters {', '.join(PARAMETERS)}, "
                        f"got {len(params)}")
    return params
'''


def _header(d, kind: str, fp: str, version: str, name: str, names: tuple[str, ...], extra: str) -> str:
    return "\n".join([
        f"Linear-response evaluators for model {name!r}, generated by symresp {version}.",
        "",
        "Do not edit: regenerate with symresp.emit.numpy_module_source(...).",
        "",
        f"Route: {kind}.",
        f"Convention: {d.convention.describe()}",
        f"Model fingerprint (sha256 of H, sector, sites, A, B): {fp}",
        "",
        "Units: hbar = k_B = 1; T, the parameters, omega and eta share one energy unit.",
        f"Parameters, in the order every function takes them after its grid: {', '.join(names) or '(none)'}",
        "",
        extra,
    ])


def _parameters(symbols, declared) -> tuple[tuple[sp.Symbol, ...], dict]:
    """The parameters in their declared order (the model's), any others after them by name."""
    rank = {p: k for k, p in enumerate(declared)}
    original = tuple(sorted(symbols, key=lambda s: (rank.get(s, len(rank)), s.name)))
    safe = _safe_names(original)
    return safe, dict(zip(original, safe))


def _assemble(d, header: str, fp: str, version: str, title: str, names, real: bool,
              body: list[str], runtime: str) -> str:
    literal = '"""' + header + '\n"""' if '"""' not in header and "\\" not in header else repr(header)
    conv = d.convention
    src = [literal, "", "import math", "", "import numpy", "",
           "__all__ = ['chi_isothermal', 'chi_isolated', 'chi_static', 'jacobian_static', "
           "'chi_omega', 'chi_spectral', 'chi_time']", "",
           f"SYMRESP_VERSION = {version!r}", f"CONVENTION = {conv.describe()!r}",
           f"FINGERPRINT = {fp!r}", f"MODEL = {title!r}", f"PARAMETERS = {tuple(names)!r}",
           f"_SIGN = {conv.sign}", f"_FSIGN = {conv.frequency_sign}",
           f"_PRESCRIPTION = {1 if conv.prescription == 'retarded' else -1}",
           f"_REAL = {real!r}"]
    src += _RUNTIME.splitlines() + runtime.splitlines() + [""] + body + _PUBLIC.splitlines()
    while src and src[-1] == "":
        src.pop()
    return "\n".join(src) + "\n"


# ----------------------------------------------------------------------------- ladders
def ladder_module_source(d: Derivation, *, version: str, name: str | None = None) -> str:
    """Source of the evaluator module of a derivation solved by ladders (module docstring)."""
    spec = d.spectrum
    if not isinstance(spec, LadderSpectrum):
        raise InputError("ladder_module_source: the derivation was not solved by ladders")
    basis = spec.structure.basis
    As, Bs = sparse_form(d.A, basis), sparse_form(d.B, basis)
    wt = spec.weight_table(d.A, d.B, As, Bs)
    ta, tb = spec.expectation_table(d.A, As), spec.expectation_table(d.B, Bs)
    nu = spec.nu
    exprs = [p.energy for p in spec.parts]
    for F in spec.families:
        exprs += list(F.eigen.roots)
    for t in (wt, ta, tb):
        for entries in t.generic.values():
            exprs += list(entries.values())
        exprs += list(t.explicit.values())
    symbols = set(d.system.parameters)
    for e in exprs:
        symbols |= sp.sympify(e).free_symbols - {nu}  # safe: sympy objects from a derivation
    safe, rename = _parameters(symbols, d.system.parameters)
    nu_sym = sp.Symbol("ladder_n", real=True)  # the offset array of the generated code
    rename = dict(rename)
    rename[nu] = nu_sym
    P = len(safe)
    real = not any(sp.sympify(e).has(sp.I) for e in exprs)  # safe: sympy objects
    dtype = "float" if real else "complex"
    L: list[str] = []
    nparts = len(spec.parts)
    L.append(f"_DEG = numpy.array({[p.multiplicity for p in spec.parts]!r}, dtype=float)")
    # Members of each ladder: their solution indices and offsets, and the parts of each root.
    member_parts = {}
    for fi, F in enumerate(spec.families):
        sols = sorted((k for k, (f, _) in spec.member.items() if f == fi), key=lambda k: spec.member[k][1])
        offs = [spec.member[k][1] for k in sols]
        L.append(f"_NU{fi} = numpy.array({offs!r}, dtype=float)")
        for r in range(len(F.eigen.roots)):
            idx = [spec.part_of(k, r) for k in sols]
            L.append(f"_PARTS{fi}_{r} = numpy.array({idx!r}, dtype=int)")
        member_parts[fi] = sols

    def deriv(e):
        e = sp.sympify(e).xreplace(rename)  # safe: sympy objects from a derivation
        return [sp.diff(e, s) for s in safe]

    ladder_roots = set()
    for fi in member_parts:
        for r in range(len(spec.families[fi].eigen.roots)):
            ladder_roots |= {spec.part_of(k, r) for k in member_parts[fi]}
    body = ["", "", "def _spectrum(_ps, _jac):",
            "    (" + "".join(f"{s.name}, " for s in safe) + ") = _ps",
            "    _shape = numpy.shape(_ps[0]) if _ps else ()",
            "    _lead = (1,) * len(_shape)",
            f"    _E = numpy.empty(({nparts},) + _shape)",
            f"    _dE = numpy.zeros(({P}, {nparts}) + _shape) if _jac else None"]
    for fi, F in enumerate(spec.families):
        body.append(f"    ladder_n = _NU{fi}.reshape((-1,) + _lead)")
        for r, root in enumerate(F.eigen.roots):
            body.append(f"    _E[_PARTS{fi}_{r}] = {_code(root, rename)} + 0 * ladder_n")
            body.append("    if _jac:")
            for j, de in enumerate(deriv(root)):
                if de != 0:
                    body.append(f"        _dE[{j}, _PARTS{fi}_{r}] = {_code(de, {})} + 0 * ladder_n")
    for k, part in enumerate(spec.parts):
        if k in ladder_roots:
            continue
        body.append(f"    _E[{k}] = {_code(part.energy, rename)}")
        ders = deriv(part.energy)
        if any(x != 0 for x in ders):
            body.append("    if _jac:")
            for j, de in enumerate(ders):
                if de != 0:
                    body.append(f"        _dE[{j}, {k}] = {_code(de, {})}")

    def table_code(t, tag):
        """Code filling lists of (ia, ib, values, derivatives) from a WeightTable."""
        out = [f"    _{tag} = []"]
        for ki, (key, entries) in enumerate(sorted(t.generic.items())):
            f1, f2, delta = key
            mem = sorted(t.members[key], key=lambda m: m[2])
            offs = [m[2] for m in mem]
            body_name = f"_{tag.upper()}NU{ki}"
            L.append(f"{body_name} = numpy.array({offs!r}, dtype=float)")
            out.append(f"    ladder_n = {body_name}.reshape((-1,) + _lead)")
            for (ra, rb), w in sorted(entries.items()):
                ia = [spec.part_of(bi, ra) for bi, _, _ in mem]
                ib = [spec.part_of(bj, rb) for _, bj, _ in mem]
                L.append(f"_{tag.upper()}I{ki}_{ra}_{rb} = numpy.array({ia!r}, dtype=int)")
                L.append(f"_{tag.upper()}J{ki}_{ra}_{rb} = numpy.array({ib!r}, dtype=int)")
                ders = deriv(w)
                dcode = "[" + ", ".join(f"({_code(x, {})}) + 0 * ladder_n" for x in ders) + "]"
                out.append(f"    _{tag}.append((_{tag.upper()}I{ki}_{ra}_{rb}, "
                           f"_{tag.upper()}J{ki}_{ra}_{rb}, ({_code(w, rename)}) + 0 * ladder_n, "
                           f"{dcode} if _jac else None))")
        for (pa, pb), w in sorted(t.explicit.items()):
            ders = deriv(w)
            dcode = "[" + ", ".join(f"numpy.full((1,) + _shape, {_code(x, {})}, dtype={dtype})"
                                    for x in ders) + "]"
            out.append(f"    _{tag}.append((numpy.array([{pa}]), numpy.array([{pb}]), "
                       f"numpy.full((1,) + _shape, {_code(w, rename)}, dtype={dtype}), "
                       f"{dcode} if _jac else None))")
        return out

    body += table_code(wt, "w")
    body += table_code(ta, "a")
    body += table_code(tb, "b")
    body += [
        "    _pairs = _collect(_w, _shape, _jac, off=True)",
        "    _diag = _collect(_w, _shape, _jac, off=False)",
        "    _ma, _mb = _collect(_a, _shape, _jac, off=False), _collect(_b, _shape, _jac, off=False)",
        "    return (_E, _dE, (_pairs[0], _pairs[1], _pairs[2], _pairs[3]), (_diag[0], _diag[2], _diag[3]),",
        "            (_ma[0], _ma[2], _ma[3], _mb[0], _mb[2], _mb[3]))",
        "",
        "",
        "def _collect(items, shape, jac, off):",
        "    \"\"\"Concatenate (ia, ib, values, derivatives) entries: pairs a != b or a == b.\"\"\"",
        "    ia, ib, vs, ds = [], [], [], []",
        "    for i, j, v, d in items:",
        "        v = numpy.broadcast_to(v, (len(i),) + shape)",
        "        sel = (i != j) if off else (i == j)",
        "        if not sel.any():",
        "            continue",
        "        ia.append(i[sel]); ib.append(j[sel]); vs.append(v[sel])",
        "        if jac:",
        "            ds.append([numpy.broadcast_to(x, (len(i),) + shape)[sel] for x in d])",
        "    if not ia:",
        f"        z = numpy.zeros((0,) + shape, dtype={dtype})",
        "        e = numpy.zeros(0, dtype=int)",
        f"        return e, e, z, [z] * {P}",
        "    V = numpy.concatenate(vs)",
        f"    D = [numpy.concatenate([d[j] for d in ds]) for j in range({P})] if jac else None",
        "    return numpy.concatenate(ia), numpy.concatenate(ib), V, D",
    ]
    fp = fingerprint(d)
    title = name if name is not None else d.system.name
    names = tuple(s.name for s in safe)
    extra = ("Solved by ladders: the energies and weights of each ladder of blocks are evaluated\n"
             f"on the array of its offsets ({', '.join(f'{len(m)} blocks' for m in member_parts.values())});\n"
             "the Lehmann sums run over the eigenspaces of all blocks (docs/engine.md).")
    header = _header(d, "exact diagonalisation, ladders solved once", fp, version, title, names, extra)
    return _assemble(d, header, fp, version, title, names, real, L + body, _LADDER_RUNTIME)


# ----------------------------------------------------------------------------- motion
def motion_module_source(d: MotionDerivation, *, version: str, name: str | None = None) -> str:
    """Source of the evaluator module of a response from the equations of motion."""
    if not isinstance(d, MotionDerivation):
        raise InputError("motion_module_source: not a response from the equations of motion")
    iso_T, iso = d.static("isothermal"), d.static("isolated")
    poles = d._raw_poles()
    s = d.convention.sign
    exprs = [iso_T, iso] + [x for pw in poles for x in pw]
    symbols = set(d.system.parameters)
    for e in exprs:
        symbols |= sp.sympify(e).free_symbols - {beta}  # safe: sympy objects from a derivation
    safe, rename = _parameters(symbols, d.system.parameters)
    bsym = beta
    rename = dict(rename)
    rename[beta] = bsym
    real = not any(sp.sympify(e).has(sp.I) for e in exprs)  # safe: sympy objects
    unpack = "    (" + "".join(f"{x.name}, " for x in safe) + ") = _ps"
    body = ["", "", "def _isothermal(beta, _ps):", unpack,
            f"    return ({_code(s * iso_T, rename)}) + 0 * beta",
            "", "", "def _isolated(beta, _ps):", unpack,
            f"    return ({_code(s * iso, rename)}) + 0 * beta",
            "", "", "def _jacobian(beta, _ps, _kind):", unpack,
            "    if _kind == 'isothermal':"]
    for first, e in ((True, iso_T), (False, iso)):   # iso_T may be the same object as iso
        ee = (s * e).xreplace(rename)
        ders = [sp.diff(ee, x) for x in safe]
        body.append("        return [" + ", ".join(f"({_code(x, {})}) + 0 * beta" for x in ders) + "]")
        if first:
            body.append("    else:")
    body += ["", "", "def _poles(beta, _ps):", unpack,
             "    freq = [" + ", ".join(f"({_code(Om, rename)}) + 0 * beta" for Om, _ in poles) + "]",
             "    weight = [" + ", ".join(f"({_code(w, rename)}) + 0 * beta" for _, w in poles) + "]",
             "    if not freq:",
             "        z = numpy.zeros((0,) + numpy.shape(beta))",
             "        return z, z",
             "    return numpy.array(numpy.broadcast_arrays(*freq)), "
             "numpy.array(numpy.broadcast_arrays(*weight))"]
    # The printed forms are sign-free (s * s = 1); the public functions apply _SIGN once.
    fp = fingerprint(d)
    title = name if name is not None else d.system.name
    names = tuple(x.name for x in safe)
    extra = ("From the equations of motion: " + d.describe_route() + ".\n"
             "chi(omega) = sum_k w_k/(Omega_k - omega - i eta) over the poles below.")
    header = _header(d, "equations of motion (no truncation)", fp, version, title, names, extra)
    return _assemble(d, header, fp, version, title, names, real, body, _MOTION_RUNTIME)
