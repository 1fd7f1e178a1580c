r"""Standalone numpy evaluator modules (layer: emit).

:func:`numpy_module_source` writes the source of a Python module that imports only numpy and
the standard library and evaluates a derived response at numbers: static susceptibilities and
their parameter Jacobian, :math:`\chi(\omega + i\eta)`, the broadened spectral function and
:math:`\chi(t)`. The code is built from the derivation's structure (levels, exact spacings,
weights), not from the presented formula, and printed by the printers of
:mod:`symresp.emit._printers`. :func:`compile_module` turns the source into a module object
in memory; :func:`numpy_functions` does both.

Imports: sympy, :mod:`symresp.errors`, :mod:`symresp.response` and the emit modules below it.
"""

from __future__ import annotations

import hashlib
import importlib.metadata
import linecache
import types
from dataclasses import replace

import sympy as sp

from ..algebra import describe
from ..errors import InputError
from ..response import Derivation, MotionDerivation
from ..spectrum import LadderSpectrum
from ._block_module import block_module_source, uses_block_evaluator
from ._correlation import (CORRELATION_RUNTIME, correlation_glue, correlation_program,
                           correlation_wrapper)
from ._eigen import eigen_plan
from ._inplace import inplace_body
from ._plan import Plan, build_plan, fingerprint
from ._multiplet_module import is_compact_derivation, multiplet_module_source
from ._pole_module import ladder_module_source, motion_module_source
from ._printers import ArrayPrinter, ConstantTable, ScalarPrinter
from ._program import (Program, energies_program, freeze_plan, jacobian_program, omega_program,
                       params_program, poles_program, spectral_program, static_program,
                       time_program)
from ._runtime import runtime_source
from ._runtime_roots import ROOTS_RUNTIME, semi_runtime

__all__ = ["numpy_module_source", "compile_module", "numpy_functions", "symresp_version"]


def symresp_version() -> str:
    """Installed version of symresp (read from the package metadata; 'unknown' if absent)."""
    try:
        return importlib.metadata.version("symresp")
    except importlib.metadata.PackageNotFoundError:
        return "unknown"


# ------------------------------------------------------------------------------ printing
def _print_function(prog: Program, printer, name: str, inplace: bool = False,
                    real: bool = False) -> list[str]:
    out = [f"def {name}({', '.join(prog.args)}):"]
    if prog.unpack:
        names = ", ".join(s.name for s in prog.unpack)
        out.append(f"    ({names},) = _P")
    if inplace:
        real_inputs = {s.name for s in prog.unpack} if real else set()
        out += inplace_body(prog.lines, prog.returns, printer, real_inputs)
    else:
        for sym, expr in prog.lines:
            if isinstance(expr, sp.Add) and sym in expr.args and sym.name == "_acc":
                # Accumulate a pole sum in place: one fresh array per call, not one per pole.
                out.append(f"    {sym.name} += {printer.doprint(expr - sym)}")
            else:
                out.append(f"    {sym.name} = {printer.doprint(expr)}")
    if prog.single:
        out.append(f"    return {printer.doprint(prog.returns[0])}")
    elif prog.returns:
        out.append(f"    return ({', '.join(printer.doprint(r) for r in prog.returns)},)")
    else:
        out.append("    return ()")
    return out


def _printers() -> tuple[ScalarPrinter, ArrayPrinter]:
    """The printers of one module (each keeps the texts it printed: see ``doprint``)."""
    return ScalarPrinter({"standard": "python3"}), ArrayPrinter()


def _both(prog: Program, inplace: bool = False, real: bool = False,
          printers: tuple | None = None) -> list[str]:
    """Scalar (math) and array (numpy) flavours of one program; ``inplace`` writes the array
    flavour with in-place updates of its temporaries (stage B, :mod:`._inplace`), ``real``
    says every stage-P value it reads is real."""
    scalar, array = printers if printers is not None else _printers()
    lines = _print_function(prog, scalar, prog.name + "_s")
    lines.append("")
    lines.append("")
    lines += _print_function(prog, array, prog.name + "_a", inplace, real)
    return lines


def _array_only(prog: Program) -> list[str]:
    return _print_function(prog, ArrayPrinter(), prog.name)


def _energy_texts(energies) -> list[str]:
    """The lines of ``ENERGIES``: each exact level as text. An exact root (``CRootOf``) is
    printed once and its text reused (sympy rebuilds the polynomial each time it prints one,
    and the levels of a large ring share a few hundred roots)."""
    roots: set = set()
    for e in energies:
        roots |= e.atoms(sp.CRootOf)
    names = {r: sp.Symbol(sp.sstr(r)) for r in roots}
    return [f"    {sp.sstr(e.xreplace(names) if names else e)!r}," for e in energies]


# ------------------------------------------------------------------------------ docstrings
def _header(d: Derivation, plan: Plan, fp: str, version: str, name: str,
            signature: tuple[str, ...]) -> str:
    pnames = ", ".join(signature) or "(none)"
    renamed = [f"{o.name} -> {n}" for o, n in zip(plan.original, signature) if o.name != n]
    lines = [
        f"Linear-response evaluators for model {name!r}, generated by symresp {version}.",
        "",
        "Do not edit: regenerate with symresp.emit.numpy_module_source(...).",
        "",
        f"Measured operator A = {describe(d.A)}",
        f"Driving operator  B = {describe(d.B)}",
        f"Convention: {d.convention.describe()}",
        f"Model fingerprint (sha256 of H, sector, sites, A, B): {fp}",
        "",
        "Units: hbar = k_B = 1. The temperature T, the parameters, the frequency omega and the",
        "broadening eta are in one and the same energy unit (e.g. kelvin for all of them); t is",
        "in the inverse of that unit. See docs/units.md for conversions and molar quantities.",
        "",
        f"Parameters, in the order every function takes them after its grid: {pnames}",
        "Arguments broadcast together; any of them may be a dask array, and the result is then a",
        "lazy dask array evaluated block by block by the same code (dask is imported only then).",
    ]
    if renamed:
        lines.append("Renamed in the signatures (the name is an argument of the functions "
                     "already): " + ", ".join(renamed))
    lines += [
        f"Levels: {len(plan.energies)} (energies E_a with degeneracies d_a, see ENERGIES).",
        "",
        "Formulas (p_a = exp(-beta (E_a - E_min)) / Z' per state, Z' = sum_a d_a exp(-beta (E_a - E_min)),",
        "W_ab = Tr(P_a A P_b B), g_ab = (p_a - p_b)/(E_b - E_a), evaluated stably as",
        "beta max(p_a, p_b) (1 - exp(-beta|E_b - E_a|))/(beta|E_b - E_a|), limit beta p_a):",
        "",
        "    chi_isolated   = sum_{a != b, E_a != E_b} g_ab W_ab",
        "    chi_isothermal = sum_{a != b} g_ab W_ab + beta (sum_a p_a W_aa - <A><B>)",
        "    chi(omega)     = sum_{a != b} (p_a - p_b) W_ab / (E_b - E_a - z),  z = omega + i eta",
        "    chi''(omega)   = sum_{a != b} (p_a - p_b) W_ab L(omega - (E_b - E_a))",
        "    chi(t)         = i theta(t) sum_{a != b} (p_a - p_b) W_ab exp(-i (E_b - E_a) t)",
        "",
        "(times the convention's sign; omega -> -omega and z -> omega - i eta where the",
        "convention says so). Pairs of poles at +-|E_b - E_a| are merged into one term.",
    ]
    return "\n".join(lines)


_DOCS = {
    "chi_isothermal": r'''Isothermal static susceptibility d<A>/df at fixed T.

    chi_T = sum_{a != b} g_ab W_ab + beta (sum_a p_a W_aa - <A><B>), continuous where levels
    cross (the pair term tends to beta p_a W_ab there).

    Parameters
    ----------
    T : float or array_like
        Temperature(s) > 0, in the energy unit of the parameters.
    @PARAMS@ : float or array_like
        Model parameters; all arguments broadcast together.

    Returns
    -------
    float or ndarray''',
    "chi_isolated": r'''Isolated (Kubo) static susceptibility chi(omega -> 0).

    chi_isol = sum over pairs of levels that differ in energy of g_ab W_ab; levels closer than
    1e-9 max|E| at the evaluation point count as one level (relative: the same in any unit).

    Parameters
    ----------
    T : float or array_like
        Temperature(s) > 0.
    @PARAMS@ : float or array_like
        Model parameters; all arguments broadcast together.

    Returns
    -------
    float or ndarray''',
    "chi_static": r'''Static susceptibility of the given kind ("isothermal" or "isolated").''',
    "jacobian_static": r'''Analytic derivatives d chi_static / d parameter, stacked along the last axis.

    Parameters
    ----------
    T : float or array_like
        Temperature(s) > 0.
    @PARAMS@ : float or array_like
        Model parameters; all arguments broadcast together.
    kind : {"isothermal", "isolated"}

    Returns
    -------
    ndarray, shape broadcast(T, params) + (@N@,)
        In parameter order (@PARAMS@). Suitable as ``jac=`` of scipy.optimize.curve_fit.''',
    "chi_omega": r'''Dynamical susceptibility chi(omega + i eta) (complex).

    chi(z) = sum_{a != b} (p_a - p_b) W_ab / (E_b - E_a - z), z = omega + i eta.

    Parameters
    ----------
    omega : float or array_like
        Real frequencies.
    T : float or array_like
        Temperature(s) > 0.
    @PARAMS@ : float or array_like
        Model parameters; all arguments broadcast together.
    eta : float
        Broadening > 0 (half width of each line), keyword only.

    Returns
    -------
    complex or ndarray of complex''',
    "chi_spectral": r'''Broadened spectral function chi''(omega).

    chi''(omega) = sum_{a != b} (p_a - p_b) W_ab L(omega - (E_b - E_a)), with L the Lorentzian
    eta/(x^2 + eta^2) (equal to Im chi(omega + i eta)) or the Gaussian of the same half width at
    half maximum eta and the same area pi. Its eta -> 0 limit is the line list of
    Response.spectral_lines().

    Parameters
    ----------
    omega : float or array_like
        Real frequencies.
    T : float or array_like
        Temperature(s) > 0.
    @PARAMS@ : float or array_like
        Model parameters; all arguments broadcast together.
    eta : float
        Half width at half maximum > 0, keyword only.
    shape : {"lorentzian", "gaussian"}

    Returns
    -------
    float or ndarray''',
    "chi_time": r'''Retarded response function chi(t) = i theta(t) <[A(t), B]>.

    chi(t) = i sum_{a != b} (p_a - p_b) W_ab exp(-i (E_b - E_a) t) for t >= 0 (the value at
    t = 0 is the limit t -> 0+), zero for t < 0.

    Parameters
    ----------
    t : float or array_like
        Times, in the inverse energy unit (hbar = 1).
    T : float or array_like
        Temperature(s) > 0.
    @PARAMS@ : float or array_like
        Model parameters; all arguments broadcast together.

    Returns
    -------
    float or ndarray (complex when the response is not real)''',
    "energies": r'''Level energies E_a at the parameters, stacked along the last axis (see DEGENERACIES).''',
}


def _doc(key: str, names: tuple[str, ...]) -> str:
    text = _DOCS[key].replace("@PARAMS@", ", ".join(names) or "(none)")
    return text.replace("@N@", str(len(names)))


#: Arguments the public functions take besides the parameters.
_FIXED_ARGUMENTS = frozenset({"T", "omega", "t", "eta", "kind", "shape"})


def _signature_names(names: tuple[str, ...]) -> tuple[str, ...]:
    """The parameters' names in the public signatures: the user's names, except where one is
    already an argument of the functions (``kind``, ``shape``): that one gets a ``_``."""
    out: list[str] = []
    for n in names:
        m = n
        while m in _FIXED_ARGUMENTS or m in out or (m != n and m in names):
            m += "_"
        out.append(m)
    return tuple(out)


def _wrappers(signature: tuple[str, ...], prefix: str, has_time: bool) -> list[str]:
    """Public functions under the user's parameter names, calling the drivers (``prefix``).

    Used when some parameter is called like a name the drivers use (``float``, ``type``,
    ``chi_omega``, ...): inside, the drivers take it renamed; these thin functions keep the
    names the user declared, so keyword calls and fitting code see them.
    """
    sig = "".join(f", {n}" for n in signature)
    L: list[str] = []
    heads = [("chi_isothermal", "T", "", ""), ("chi_isolated", "T", "", ""),
             ("chi_static", "T", ', *, kind="isothermal"', ", kind=kind"),
             ("jacobian_static", "T", ', *, kind="isothermal"', ", kind=kind"),
             ("chi_omega", "omega, T", ", *, eta", ", eta=eta"),
             ("chi_spectral", "omega, T", ', *, eta, shape="lorentzian"', ", eta=eta, shape=shape"),
             ("chi_time", "t, T", "", "")]
    for name, first, extra, passed in heads:
        if name == "chi_time" and not has_time:
            pass                                    # the driver raises the explanation
        L += [f"def {name}({first}{sig}{extra}):", f'    """{_doc(name, signature)}\n    """',
              f"    return {prefix}{name}({first}{sig}{passed})", "", ""]
    L += [f"def energies({', '.join(signature)}):", f'    """{_doc("energies", signature)}\n    """',
          f"    return {prefix}energies({', '.join(signature)})", "", ""]
    return L


# ------------------------------------------------------------------------------ public glue
def _glue(plan: Plan, has_time: bool, prefix: str = "") -> list[str]:
    """The public functions: explicit signatures (curve_fit counts the parameters) calling the
    drivers of the runtime text with the printed kernels.

    Each function first tries the case of a fit or a plot: one float64 grid of at most one
    chunk, every other argument a float (numpy.float64, which scipy's fitters pass, counts).
    That path does only the checks this case needs and calls the kernels directly; anything
    else, including every bad argument, goes to the general drivers, which check and raise.
    """
    sig = "".join(f", {n}" for n in plan.names)
    tup = "(" + "".join(f"{n}, " for n in plan.names) + ")"
    # Plain floats into stage P: numpy scalars would make every kernel operation slower.
    floats = "(" + "".join(f"{n} if type({n}) is float else float({n}), "
                           for n in plan.names) + ")"
    finite = "".join(f" and isinstance({n}, float) and math.isfinite({n})" for n in plan.names)
    n = len(plan.names)
    L: list[str] = []

    def fn(head: str, doc_key: str, body: list[str]) -> None:
        if prefix:                      # drivers behind the public wrappers (see _wrappers)
            L.extend([head.replace("def ", "def " + prefix, 1), *body, "", ""])
        else:
            L.extend([head, f'    """{_doc(doc_key, plan.names)}\n    """', *body, "", ""])

    def grid_fast(x: str, kernel: str, grid: str, eta: str, dtype: str) -> list[str]:
        # One grid of frequencies or times at one temperature; eta is "eta" or "0.0" (chi(t)).
        width = (" and type(eta) is float and eta > 0 and math.isfinite(eta)"
                 if eta == "eta" else "")
        return [f"    if (type({x}) is numpy.ndarray and {x}.dtype is _F64"
                f" and 0 < {x}.size <= _CHUNK_COMPLEX",
                f"            and type(T) is float and T >= _T_MIN{finite}{width}):",
                f"        value = {grid}({x}, {eta}, "
                f"_{kernel}_s(1.0 / T, _stage_p_s(_params_dynamic_s, {floats})))",
                # Every other argument is a number: an array result has the grid's shape.
                f"        if type(value) is numpy.ndarray and value.dtype is {dtype}:",
                "            return value"]

    for kind in ("isothermal", "isolated"):
        fn(f"def chi_{kind}(T{sig}):", f"chi_{kind}", [
            "    if (type(T) is numpy.ndarray and T.dtype is _F64 and 0 < T.size <= _CHUNK"
            f"{finite}):",
            "        if not T.item(T.argmin()) >= _T_MIN:  # argmin finds the first NaN, if any",
            "            _temperature(T)               # raises, naming the bad temperature",
            f"        value = _{kind}_a(T, "
            f"_stage_p_s(_params_{kind}_s, {floats}))",
            # The parameters are numbers: an array result has the shape of T.
            "        if type(value) is numpy.ndarray and value.dtype is _STATIC:",
            "            return value",
            f"    return _static_call(_{kind}_s, _{kind}_a, _params_{kind}_s, _params_{kind}_a, "
            f"T, {tup}, None, _STATIC)"])
    fn(f'def chi_static(T{sig}, *, kind="isothermal"):', "chi_static",
       ['    if kind == "isothermal":', f"        return {prefix}chi_isothermal(T{sig})",
        '    if kind == "isolated":', f"        return {prefix}chi_isolated(T{sig})",
        "    raise ValueError(f\"kind={kind!r} must be 'isothermal' or 'isolated'\")"])
    jac_body = []
    for kind in ("isothermal", "isolated"):
        call = (f"_static_call(_jacobian_{kind}_s, _jacobian_{kind}_a, _params_jacobian_s, "
                f"_params_jacobian_a, T, {tup}, {n}, _STATIC)")
        if plan.numeric_weights:
            # Weights of semi-closed blocks are known numerically only: central differences.
            jac_body += [f'    if kind == "{kind}":',
                         f"        return _fd_jacobian(chi_{kind}, T, {tup})"]
            continue
        if plan.eigen:
            # Semi-closed blocks: where two of their levels nearly coincide, the exact weights'
            # derivatives lose digits; there the Jacobian is taken from the stable values.
            call = (f"_semi_closed_jacobian({call}, chi_{kind}, T, {tup}, energies, "
                    "_IMPLICIT_LEVELS)")
        jac_body += [f'    if kind == "{kind}":', f"        return {call}"]
    fn(f'def jacobian_static(T{sig}, *, kind="isothermal"):', "jacobian_static",
       [*jac_body, "    raise ValueError(f\"kind={kind!r} must be 'isothermal' or 'isolated'\")"])
    fn(f"def chi_omega(omega, T{sig}, *, eta):", "chi_omega", [
        *grid_fast("omega", "poles_omega", "_omega_w", "eta", "_C128"),
        f"    return _dynamic_call(_poles_omega_s, _poles_omega_a, _params_dynamic_s, "
        f"_params_dynamic_a, _omega_w, 'omega', omega, T, {tup}, _width(eta), _C128)"])
    fn(f'def chi_spectral(omega, T{sig}, *, eta, shape="lorentzian"):', "chi_spectral",
       ['    if shape == "lorentzian":', "        grid = _spectral_lorentzian_w",
        '    elif shape == "gaussian":', "        grid = _spectral_gaussian_w",
        "    else:",
        "        raise ValueError(f\"shape={shape!r} must be 'lorentzian' or 'gaussian'\")",
        *grid_fast("omega", "poles_spectral", "grid", "eta", "_WAVE"),
        f"    return _dynamic_call(_poles_spectral_s, _poles_spectral_a, _params_dynamic_s, "
        f"_params_dynamic_a, grid, 'omega', omega, T, {tup}, _width(eta), _WAVE)"])
    if has_time:
        fn(f"def chi_time(t, T{sig}):", "chi_time", [
            *grid_fast("t", "poles_time", "_time_w", "0.0", "_WAVE"),
            f"    return _dynamic_call(_poles_time_s, _poles_time_a, _params_dynamic_s, "
            f"_params_dynamic_a, _time_w, 't', t, T, {tup}, 0.0, _WAVE)"])
    else:
        fn(f"def chi_time(t, T{sig}):", "chi_time",
           ["    raise ValueError('chi(t) of the advanced convention vanishes for t > 0; '",
            "                     'derive with the retarded convention')"])
    fn(f"def energies({', '.join(plan.names)}):", "energies",
       [f"    if _is_lazy({tup}):",
        f"        return _over_blocks(energies, {tup}, _F64, len(DEGENERACIES))",
        f"    ps, scalar = _parameters({tup})",
        "    if scalar:",
        "        return numpy.array(_stage_p_s(_energies_s, ps))",
        "    values = numpy.broadcast_arrays(*_stage_p_a(_energies_a, ps), *ps)[:len(DEGENERACIES)]",
        "    return numpy.stack(values, axis=-1)"])
    return L


# ------------------------------------------------------------------------------ assembly
def numpy_module_source(derivation: Derivation, *, name: str | None = None) -> str:
    r"""Source of a standalone numpy module evaluating ``derivation`` at numbers.

    The module imports numpy, ``math`` and ``cmath`` only, and defines (independent variable
    first, then the model parameters in their declared order, all broadcasting together):
    ``chi_isothermal(T, *p)``, ``chi_isolated(T, *p)``, ``chi_static(T, *p, kind=)``,
    ``jacobian_static(T, *p, kind=)``, ``chi_omega(omega, T, *p, eta=)``,
    ``chi_spectral(omega, T, *p, eta=, shape=)``, ``chi_time(t, T, *p)``,
    ``energies(*p)`` and ``correlation_spectral(omega, T, *p, eta=, shape=, kind=)`` (the
    broadened correlation function :math:`S_{AB}(\omega)`), with the constants ``PARAMETERS``,
    ``DEGENERACIES``, ``ENERGIES``, ``CONVENTION``, ``FINGERPRINT`` and ``SYMRESP_VERSION``.

    Per level a the code evaluates :math:`E_a`; per pair of levels the exact spacing
    :math:`E_b - E_a` and the weights :math:`W_{ab}`; the Boltzmann factors are taken relative
    to the lowest level at each point and the factor
    :math:`g_{ab} = (p_a - p_b)/(E_b - E_a)` is evaluated as
    :math:`\beta\max(p_a, p_b)\,(1 - e^{-\beta|E_b - E_a|})/(\beta|E_b - E_a|)`, finite at
    accidental degeneracies and at low temperature.

    Parameters
    ----------
    derivation : symresp.response.Derivation
        The derived response (``Response.derivation``).
    name : str, optional
        Module name used in the header (default: the model name).

    Returns
    -------
    str
        Python source; generation is deterministic (no timestamps, stable order).

    Raises
    ------
    InputError
        If ``derivation`` is not a Derivation or ``name`` not a string.
    ClosedFormError
        If a level is an implicit root of a parameter-dependent factor of degree other than
        3 (cubic factors of semi-closed blocks are solved numerically at every point).

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.emit import numpy_module_source, compile_module
    >>> J = sp.Symbol("J", real=True)
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> r = sr.Model(J * (a.vec @ b.vec), name="dimer").response(a.z + b.z)
    >>> mod = compile_module(numpy_module_source(r.derivation))
    >>> mod.PARAMETERS
    ('J',)
    >>> round(mod.chi_isothermal(2.0, 1.0), 12) == round(2 / 2.0 / (3 + float(sp.exp(sp.Rational(1, 2)))), 12)
    True

    See Also
    --------
    compile_module, numpy_functions, latex_document
    """
    if not isinstance(derivation, (Derivation, MotionDerivation)):
        raise InputError(f"numpy_module_source: derivation={derivation!r} must be a "
                         "symresp.response.Derivation (use response.derivation)")
    if name is not None and not isinstance(name, str):
        raise InputError(f"numpy_module_source: name={name!r} must be a string")
    # Other routes have their own writers with the same public functions (_pole_module).
    if isinstance(derivation, MotionDerivation):
        return motion_module_source(derivation, name=name, version=symresp_version())
    if isinstance(derivation.spectrum, LadderSpectrum):
        return ladder_module_source(derivation, name=name, version=symresp_version())
    if uses_block_evaluator(derivation):
        # Semi-closed blocks: every block diagonalised at the points, sums over state pairs.
        return block_module_source(derivation, name=name, version=symresp_version(),
                                   arguments=_signature_names)
    if is_compact_derivation(derivation):
        return multiplet_module_source(derivation, name=name, version=symresp_version())
    exact = build_plan(derivation)
    # Value functions diagonalise semi-closed blocks numerically (stable where their levels
    # nearly coincide); the Jacobian differentiates the exact weights through the roots.
    plan = eigen_plan(derivation, exact)
    fp = fingerprint(derivation)
    version = symresp_version()
    # One table of constants for the module: every program below reads frozen plans.
    table = ConstantTable()
    levels = exact.energies                     # exact, for the ENERGIES text
    plan = freeze_plan(plan, table)
    exact = freeze_plan(exact, table)
    # Both take the levels of semi-closed blocks from the numerically diagonalised block.
    jac = replace(exact, eigen=plan.eigen)
    kinds = ("isothermal", "isolated", "dynamic") if plan.numeric_weights else \
        ("isothermal", "isolated", "jacobian", "dynamic")
    P = {kind: params_program(jac if kind == "jacobian" else plan, kind) for kind in kinds}

    static_vals = [p.S for p in exact.pairs] + list(exact.fluctuation) + list(exact.mean_a) + list(exact.mean_b)
    static_real = not exact.is_complex(*static_vals)
    static_dtype = "float" if static_real else "complex"
    wave_complex = exact.is_complex(*[p.S for p in exact.pairs]) or any(p.D != 0 for p in exact.pairs)
    wave_dtype = "complex" if wave_complex else "float"
    has_time = plan.prescription == 1

    title = name if name is not None else derivation.system.name
    user = tuple(o.name for o in plan.original)
    signature = _signature_names(user)
    prefix = ""
    if signature != plan.names:
        prefix = "_impl_"
        while any(u.startswith(prefix) for u in user):
            prefix = "_" + prefix
    doc = _header(derivation, plan, fp, version, title, signature)
    # A docstring literal; names that would end or escape it fall back to repr().
    literal = '"""' + doc + '\n"""' if '"""' not in doc and "\\" not in doc else repr(doc)
    src: list[str] = [literal, ""]
    src += ["import cmath", "import math", "", "import numpy", ""]
    public_names = ["chi_isothermal", "chi_isolated", "chi_static", "jacobian_static",
                    "chi_omega", "chi_spectral", "chi_time", "energies", "correlation_spectral"]
    src.append("__all__ = [" + ", ".join(repr(n) for n in public_names) + "]")
    src += [
        "",
        f"SYMRESP_VERSION = {version!r}",
        f"CONVENTION = {derivation.convention.describe()!r}",
        f"FINGERPRINT = {fp!r}",
        f"MODEL = {title!r}",
        f"PARAMETERS = {user!r}",
        f"DEGENERACIES = {tuple(plan.degeneracies)!r}",
        "ENERGIES = (",
        *_energy_texts(levels),
        ")",
    ]
    src += runtime_source().splitlines()
    src += CORRELATION_RUNTIME.splitlines()
    if plan.semi:
        src += semi_runtime().splitlines()
    if plan.roots and not plan.semi:
        src += ROOTS_RUNTIME.splitlines()
        lam = {sym for rs in plan.roots for sym, _ in rs.picks}
        implicit = tuple(a for a, e in enumerate(plan.energies) if e.free_symbols & lam)
        src += ["", f"_IMPLICIT_LEVELS = {implicit!r}"]
    src += ["", f"_STATIC = numpy.dtype({static_dtype})", f"_WAVE = numpy.dtype({wave_dtype})"]
    src += ["", "", "# " + "-" * 90, "# Stage P: parameters only (energies, spacings, weights).",
            "# " + "-" * 90, "", ""]
    pr = _printers()
    for kind in kinds:
        src += _both(P[kind], printers=pr) + ["", ""]
    src += _both(energies_program(plan), printers=pr) + ["", ""]
    src += _both(correlation_program(plan), printers=pr) + ["", ""]
    src += ["# " + "-" * 90, "# Stage B: temperature (Boltzmann factors, pair factors).",
            "# " + "-" * 90, "", ""]
    for kind in ("isothermal", "isolated"):
        src += _both(static_program(plan, kind, P[kind].returns), True, static_real,
                     pr) + ["", ""]
        if "jacobian" in P:
            src += _both(jacobian_program(exact, kind, P["jacobian"].returns), True,
                         static_real, pr) + ["", ""]
    for what in ("omega", "spectral", "time"):
        src += _both(poles_program(plan, what, P["dynamic"].returns), True,
                     not wave_complex, pr) + ["", ""]
    src += ["# " + "-" * 90, "# Stage W: the frequency or time grid.", "# " + "-" * 90, "", ""]
    src += _array_only(omega_program(plan)) + ["", ""]
    src += _array_only(spectral_program(plan, "lorentzian", wave_complex)) + ["", ""]
    src += _array_only(spectral_program(plan, "gaussian", wave_complex)) + ["", ""]
    src += _array_only(time_program(plan, wave_complex)) + ["", ""]
    src += ["# " + "-" * 90, "# Public functions.", "# " + "-" * 90, "", ""]
    src += _glue(plan, has_time, prefix)
    src += correlation_glue(plan, prefix)
    if prefix:
        src += _wrappers(signature, prefix, has_time)
        src += correlation_wrapper(signature, prefix)
    while src and src[-1] == "":
        src.pop()
    return "\n".join(src) + "\n"


def compile_module(source: str, *, name: str | None = None) -> types.ModuleType:
    """Compile emitted source into a module object in memory (nothing is written to disk).

    Parameters
    ----------
    source : str
        Output of :func:`numpy_module_source`.
    name : str, optional
        Module ``__name__`` (default ``symresp_evaluator_<fingerprint prefix>``).

    Returns
    -------
    types.ModuleType

    Raises
    ------
    InputError
        If ``source`` is not a string.

    Examples
    --------
    >>> from symresp.emit import compile_module
    >>> compile_module("X = 1").X
    1

    See Also
    --------
    numpy_module_source, numpy_functions
    """
    if not isinstance(source, str):
        raise InputError(f"compile_module: source={source!r} must be a string")
    if name is not None and not isinstance(name, str):
        raise InputError(f"compile_module: name={name!r} must be a string")
    key = hashlib.sha256(source.encode()).hexdigest()[:12]
    modname = name or f"symresp_evaluator_{key}"
    filename = f"<{modname}>"
    # Register the text so tracebacks and inspect.getsource show the generated lines.
    linecache.cache[filename] = (len(source), None, source.splitlines(True), filename)
    module = types.ModuleType(modname)
    module.__file__ = filename
    exec(compile(source, filename, "exec"), module.__dict__)  # safe: compiles source symresp generated itself, never user text
    return module


def numpy_functions(derivation: Derivation) -> types.ModuleType:
    """Generate and compile the numpy evaluators of ``derivation`` (``response.numpy()``).

    Parameters
    ----------
    derivation : symresp.response.Derivation

    Returns
    -------
    types.ModuleType
        See :func:`numpy_module_source` for its functions.

    Raises
    ------
    InputError
        If ``derivation`` is not a Derivation.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.emit import numpy_functions
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> f = numpy_functions(sr.Model(0 * s.z).response(s.z).derivation)
    >>> f.chi_isothermal(0.5)           # Curie law beta/4
    0.5

    See Also
    --------
    numpy_module_source, compile_module
    """
    return compile_module(numpy_module_source(derivation))
