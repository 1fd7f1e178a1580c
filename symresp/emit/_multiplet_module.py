r"""Compact evaluator modules for large spectra of total-spin multiplets (layer: emit).

Owns :func:`is_compact_derivation` and :func:`multiplet_module_source`. Imports sympy,
mpmath, :mod:`symresp.errors`, :mod:`symresp.response`, :mod:`symresp.spectrum` and the
runtime of :mod:`._pole_module`.

An isotropic spin cluster in a field has one level per multiplet and M (hundreds for four
S = 5/2 ions), and every energy is :math:`E_a = \sum_j C_{aj}\,\phi_j` with a few monomials
:math:`\phi_j` of the parameters (J, h) and exact numbers :math:`C_{aj}` (the multiplet's
root of its rational block, M), while the weights :math:`W_{ab}` and the level expectations do
not depend on the parameters at all (the projectors of a scaled block are rational in its
roots). The module then holds these numbers as arrays (each exact constant evaluated to 20
digits once) and evaluates :math:`E = C\phi` and the Lehmann sums vectorised over the levels,
with the same runtime as the ladder modules: populations per state relative to the lowest
level, :math:`g_{ab} = \beta p_{\rm low}\,(1 - e^{-\beta|E_b - E_a|})/(\beta|E_b - E_a|)`,
finite where levels cross, and the Jacobian :math:`\partial E/\partial\theta = C\,
\partial\phi/\partial\theta` (the weights have no derivative). Its size grows with the number
of levels as data, not as code, so writing it takes a fraction of a second where the
per-level programs of :mod:`._numpy_module` take seconds.

It offers ``chi_isothermal``, ``chi_isolated``, ``chi_static``, ``jacobian_static``,
``chi_omega``, ``chi_spectral``, ``chi_time`` and ``energies`` with the standard signatures,
and the constants ``PARAMETERS``, ``DEGENERACIES``, ``ENERGIES``; not (yet)
``correlation_spectral``.
"""

from __future__ import annotations

import sympy as sp

from ..models import checkpoint
from ..response import Derivation
from ..spectrum import LevelRoot
from ._plan import fingerprint
from ._pole_module import _LADDER_RUNTIME, _assemble, _code, _header, _parameters

__all__ = ["is_compact_derivation", "multiplet_module_source", "COMPACT_LEVELS"]

#: Spectra of recoupled multiplets with more levels than this get the compact module; smaller
#: ones keep the per-level programs (their extra functions: dask arrays, the correlation
#: function).
COMPACT_LEVELS = 64
#: Digits of the evaluation of each exact constant.
_DIGITS = 20


def _linear_form(E: sp.Expr, syms: tuple[sp.Symbol, ...]) -> dict[sp.Expr, sp.Expr] | None:
    """{parameter monomial: exact number} with E = sum, or None if E is not of that form."""
    E = sp.expand(E)
    out: dict[sp.Expr, sp.Expr] = {}
    if E == 0:
        return out
    for term in sp.Add.make_args(E):
        num, mono = term.as_independent(*syms, as_Add=False) if syms else (term, sp.Integer(1))
        if not num.is_number or mono.has(LevelRoot):
            return None
        if mono != 1 and not all(f.is_Symbol or (f.is_Pow and f.base.is_Symbol and f.exp.is_Integer
                                                 and f.exp > 0) for f in sp.Mul.make_args(mono)):
            return None
        out[mono] = out.get(mono, sp.Integer(0)) + num
    return out


def is_compact_derivation(d: Derivation) -> bool:
    """Whether ``d`` gets the compact module: a recoupled spectrum of more than COMPACT_LEVELS
    levels, energies linear in monomials of the parameters with number coefficients, and
    weights and expectations that are numbers."""
    if not isinstance(d, Derivation) or len(d.levels) <= COMPACT_LEVELS:
        return False
    if d.system._memo.get("recoupled-spectrum") is not d.spectrum:
        return False
    syms = tuple(d.system.parameters)
    for lv in d.levels:
        if _linear_form(lv.energy, syms) is None:
            return False
    values = list(d.level_weights.values()) + list(d.expect_A.values()) + list(d.expect_B.values())
    return all(sp.sympify(v).is_number for v in values)  # safe: sympy objects of a derivation


def _number(e: sp.Expr, cache: dict) -> complex:
    hit = cache.get(e)
    if hit is None:
        hit = cache[e] = complex(sp.N(e, _DIGITS))
        checkpoint("compact evaluator: constants")
    return hit


def _array(values: list, real: bool) -> str:
    if real:
        return "numpy.array([" + ", ".join(repr(v.real) for v in values) + "], dtype=float)"
    return "numpy.array([" + ", ".join(repr(v) for v in values) + "], dtype=complex)"


def multiplet_module_source(d: Derivation, *, version: str, name: str | None = None) -> str:
    """Source of the compact evaluator module of ``d`` (see the module docstring)."""
    syms = tuple(d.system.parameters)
    forms = [_linear_form(lv.energy, syms) for lv in d.levels]
    atoms = sorted({m for f in forms for m in f}, key=sp.default_sort_key)
    safe, rename = _parameters(set(syms), syms)
    cache: dict = {}
    coeffs = [[_number(f.get(m, sp.Integer(0)), cache).real for m in atoms] for f in forms]
    pairs = sorted((a, b) for (a, b) in d.level_weights if a != b)
    diag = sorted(a for (a, b) in d.level_weights if a == b)
    W = [_number(d.level_weights[k], cache) for k in pairs]
    Wd = [_number(d.level_weights[(a, a)], cache) for a in diag]
    ka, kb = sorted(d.expect_A), sorted(d.expect_B)
    eA = [_number(d.expect_A[a], cache) for a in ka]
    eB = [_number(d.expect_B[a], cache) for a in kb]
    real = all(abs(v.imag) == 0 for v in W + Wd + eA + eB)
    n = len(d.levels)
    P = len(safe)
    L = [f"_DEG = numpy.array({[lv.degeneracy for lv in d.levels]!r}, dtype=float)",
         f"DEGENERACIES = {tuple(lv.degeneracy for lv in d.levels)!r}",
         "ENERGIES = (", *[f"    {sp.sstr(lv.energy)!r}," for lv in d.levels], ")",
         # levels x monomials: E = _COEFFS @ (phi_j)
         f"_COEFFS = numpy.array({coeffs!r}, dtype=float).reshape({n}, {len(atoms)})",
         f"_PI = numpy.array({[a for a, _ in pairs]!r}, dtype=int)",
         f"_PJ = numpy.array({[b for _, b in pairs]!r}, dtype=int)",
         f"_PW = {_array(W, real)}",
         f"_DI = numpy.array({diag!r}, dtype=int)",
         f"_DW = {_array(Wd, real)}",
         f"_KA = numpy.array({ka!r}, dtype=int)",
         f"_EA = {_array(eA, real)}",
         f"_KB = numpy.array({kb!r}, dtype=int)",
         f"_EB = {_array(eB, real)}"]
    unpack = "    (" + "".join(f"{s.name}, " for s in safe) + ") = _ps"
    phis = [_code(m, rename) for m in atoms]
    body = ["", "", "def _spectrum(_ps, _jac):",
            "    \"\"\"Energies (levels first), their derivatives, and the weights as arrays.\"\"\"",
            unpack,
            "    _shape = numpy.shape(_ps[0]) if _ps else ()",
            "    _one = numpy.ones(_shape)",
            "    _phi = numpy.stack([" + ", ".join(f"({c}) * _one" for c in phis) + "])",
            "    _E = numpy.tensordot(_COEFFS, _phi, axes=1)",
            "    _dE = None",
            "    if _jac:",
            "        _dE = []"]
    for s in safe:
        ders = [_code(sp.diff(m.xreplace(rename), s), {}) for m in atoms]
        body.append("        _dE.append(numpy.tensordot(_COEFFS, numpy.stack(["
                    + ", ".join(f"({c}) * _one" for c in ders) + "]), axes=1))")
    body += [
        "    _lead = (-1,) + (1,) * len(_shape)",
        "    _zero = [numpy.zeros(1)] * " + str(P),
        "    return (_E, _dE, (_PI, _PJ, _PW.reshape(_lead), _zero), (_DI, _DW.reshape(_lead), _zero),",
        "            (_KA, _EA.reshape(_lead), _zero, _KB, _EB.reshape(_lead), _zero))",
        "",
        "",
        "def energies(*params):",
        "    \"\"\"The level energies E_a (one per level of ENERGIES, DEGENERACIES states each),",
        "    along the last axis; the parameters broadcast together.\"\"\"",
        "    _, ps, _ = _inputs(1.0, _args(params))",
        "    E = _spectrum(ps, False)[0]",
        "    return numpy.moveaxis(E, 0, -1)",
    ]
    fp = fingerprint(d)
    title = name if name is not None else d.system.name
    names = tuple(s.name for s in safe)
    extra = (f"Compact form for {n} levels of total-spin multiplets: the energies are\n"
             f"E = C phi with phi = ({', '.join(sp.sstr(m) for m in atoms)}) and exact\n"
             "coefficients C (see ENERGIES), the weights are numbers; the Lehmann sums run over\n"
             "arrays of levels and pairs (docs/evaluators.md).")
    header = _header(d, "exact diagonalisation, total-spin multiplets (compact)", fp, version,
                     title, names, extra)
    src = _assemble(d, header, fp, version, title, names, real, L + body, _LADDER_RUNTIME)
    src = src.replace("'chi_time']", "'chi_time', 'energies']", 1)
    return src + _named_signatures(names)


def _named_signatures(names: tuple[str, ...]) -> str:
    """The public functions again with the parameters named (keywords work as in the
    standard modules); each calls the positional version above."""
    sig = "".join(f", {n}" for n in names)
    args = "".join(f"{n}, " for n in names)
    out = ["", ""]
    for fn, head, call in (
            ("chi_isothermal", f"T{sig}", f"T, {args}"),
            ("chi_isolated", f"T{sig}", f"T, {args}"),
            ("chi_static", f"T{sig}, *, kind=\"isothermal\"", f"T, {args}kind=kind"),
            ("jacobian_static", f"T{sig}, *, kind=\"isothermal\"", f"T, {args}kind=kind"),
            ("chi_omega", f"omega, T{sig}, *, eta", f"omega, T, {args}eta=eta"),
            ("chi_spectral", f"omega, T{sig}, *, eta, shape=\"lorentzian\"",
             f"omega, T, {args}eta=eta, shape=shape"),
            ("chi_time", f"t, T{sig}", f"t, T, {args}"),
            ("energies", ", ".join(names), args)):
        out += [f"_positional_{fn} = {fn}", "", "",
                f"def {fn}({head}):",
                f"    return _positional_{fn}({call})",
                "", "",
                f"{fn}.__doc__ = _positional_{fn}.__doc__", "", ""]
    while out and out[-1] == "":
        out.pop()
    return "\n".join(out) + "\n"
