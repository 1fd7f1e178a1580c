r"""Runtime support of every emitted module, a module of its own (layer: emit).

It is the same for every model: input checks, the chunked drivers and the numerically
stable helpers that the printers call (``_bexp``, ``_expdiv``, ``_expdiv2``, ...), each in an
array (``_a``) and a scalar (``_s``) flavour. Model-specific code is never spliced into it; it
is printed separately by :mod:`symresp.emit._printers`. A test imports the emitted modules in
a process where sympy cannot be imported, so the copied part uses numpy and the standard
library only. Stage P at float parameters is remembered, one entry per parameter kernel: plots and
global fits evaluate the same parameters on several grids (measured on the spin-1/2 dimer: a
hit saves 0.3 us of a 7 us call, a miss costs 0.15 us more than no memory at all).

Stable forms (:math:`y = \beta|w| \ge 0`):

* :math:`\varphi(y) = (1 - e^{-y})/y = -\mathrm{expm1}(-y)/y`, :math:`\varphi(0) = 1`;
* :math:`\psi(y) = (1 - e^{-y} - y)/y^2`, series below :math:`y = 10^{-2}`;
* :math:`\psi(y) + \varphi(y) = (1 - e^{-y}(1 + y))/y^2`, series below :math:`y = 10^{-2}`.

Everything from the line ``# === copied into every emitted module ===`` on is copied verbatim
by :func:`runtime_source`; what stands above it lets this module be imported and tested like
any other: the imports every emitted module makes, its ``PARAMETERS`` (each emitted module
defines its own) and the constants of the tolerance policy (:mod:`symresp._tolerances`), which
:func:`runtime_source` writes into the copy as numbers.

Imports: numpy, math, cmath and :mod:`symresp._tolerances` (the copied text: numpy, math and
cmath only).
"""

from __future__ import annotations

import cmath
import math
from pathlib import Path

import numpy

from .._tolerances import DEGENERACY_RTOL

__all__ = ["runtime_source", "MARKER"]

#: The line after which the text of this module is copied into emitted modules.
MARKER = "# === copied into every emitted module ==="

#: Parameter names; every emitted module defines its own.
PARAMETERS: tuple[str, ...] = ()
#: Level-grouping tolerance of the isolated susceptibility, relative to max|E| at the point
#: (no absolute floor: the same model in kelvin and in joules groups the same levels).
_DEGENERACY_RTOL = DEGENERACY_RTOL


def runtime_source() -> str:
    """The runtime text of an emitted module: the policy constants, then the text of this
    module after :data:`MARKER`.

    Examples
    --------
    >>> from symresp.emit._runtime import runtime_source
    >>> text = runtime_source()
    >>> text.splitlines()[0]
    '_DEGENERACY_RTOL = 1e-09'
    >>> "\\nimport " in text
    False
    """
    own = Path(__file__).read_text(encoding="utf-8")
    start = own.index("\n" + MARKER + "\n") + len(MARKER) + 2
    return f"_DEGENERACY_RTOL = {DEGENERACY_RTOL!r}\n" + own[start:]


# === copied into every emitted module ===
# ------------------------------------------------------------------------------------------
# Runtime support (the same in every emitted module).
# ------------------------------------------------------------------------------------------

#: Grid points handled per pass (and the largest grid of the one-pass fast paths). Larger
#: temporaries make the C allocator hand the top of its heap back to the system at each free
#: and fault it in again at the next call (trim threshold, 128 KiB by default), which triples
#: the time per element: measured with float64 static kernels from about 14000 points (110 KiB)
#: on, not at 12288 (96 KiB); complex 8192-point temporaries (128 KiB) stayed clear of it.
_CHUNK = 12288
_CHUNK_COMPLEX = 8192
#: Smallest beta*|w| used in a division (the limit value applies below it).
_TINY = 1e-300
#: Below this y the series of psi are used (truncation error < 3e-13 relative).
_SERIES = 1e-2
#: Lowest temperature: below it 1/T overflows a float (1/1.8e308).
_T_MIN = 1.0 / 1.7976931348623157e308
_F64 = numpy.dtype(float)
_C128 = numpy.dtype(complex)


def _real_input(name, value):
    """A float, or a float64 ndarray of dimension >= 1; anything but real numbers raises
    TypeError (text is refused, not converted: '3' is not a number here)."""
    if type(value) is float:
        return value
    if type(value) is numpy.ndarray and value.dtype == numpy.float64 and value.ndim:
        return value
    if isinstance(value, float):
        return float(value)       # numpy.float64 (what a fit passes): skip the 0-d array
    if isinstance(value, (str, bytes, bool, numpy.bool_)) or value is None:
        raise TypeError(f"{name}={value!r} must be a real number or an array of real numbers, "
                        f"not {type(value).__name__}")
    try:
        arr = numpy.asarray(value)
        if arr.dtype.kind in "biuf":
            arr = arr.astype(float)
        elif arr.dtype.kind == "O":
            arr = numpy.array([_one_real(name, v) for v in arr.reshape(-1)],
                              dtype=float).reshape(arr.shape)
        else:
            raise TypeError
    except (TypeError, ValueError, OverflowError):
        raise TypeError(f"{name}={value!r} must be a real number or an array of real numbers "
                        f"(got {type(value).__name__})") from None
    if arr.dtype.kind != "f":
        raise TypeError(f"{name}={value!r} must be real numbers")
    return float(arr) if arr.ndim == 0 else arr


def _one_real(name, v):
    """One element of an object array: a real number (int, float, Fraction, ...), not text."""
    if isinstance(v, (str, bytes, bool, numpy.bool_, complex)) or v is None:
        raise TypeError
    return float(v)


def _is_positive(T):
    """All of a non-empty float64 array > 0, NaN counting as not.

    argmin returns the index of the first NaN if there is one, so one look at T[argmin]
    decides; it takes a third of the time of T.min() on 1e3 points (no reduction set-up).
    """
    return T.item(T.argmin()) > 0


def _temperature(T):
    T = _real_input("T", T)
    if type(T) is float:
        ok, low = T > 0, T
    else:
        ok = T.size == 0 or _is_positive(T)
        low = T.item(T.argmin()) if T.size and ok else 1.0
    if not ok:
        raise ValueError("T must be > 0 (and not nan) everywhere")
    if low < _T_MIN:
        raise ValueError(f"T must be at least {_T_MIN:.3g} (1/T overflows a float below it), "
                         f"got T = {float(low)!r}")
    return T                      # T = inf is the infinite-temperature limit (beta = 0)


def _parameters(values):
    """Checked parameters and whether all of them are single numbers."""
    scalar = True
    out = []
    for name, value in zip(PARAMETERS, values):
        if type(value) is float and math.isfinite(value):
            out.append(value)
            continue
        v = _real_input(name, value)
        if not (math.isfinite(v) if type(v) is float else numpy.isfinite(v).all()):
            raise ValueError(f"parameter {name} must be finite")
        scalar = scalar and type(v) is float
        out.append(v)
    return tuple(out), scalar


def _width(eta):
    eta = _real_input("eta", eta)
    if type(eta) is not float or not (eta > 0 and math.isfinite(eta)):
        raise ValueError(f"eta={eta!r} must be one finite number > 0")
    return eta


#: Relative size of the step off a removable singularity of the weights (see _stage_p_s).
_NUDGE = 1e-50
#: The same for Jacobians: their terms grow like 1/step there and cancel, so a tiny step would
#: leave rounding noise; 1e-7 leaves about 1e-9 of noise and 1e-7 of truncation.
_NUDGE_JACOBIAN = 1e-7
#: Where the singular point is not at zero parameters (e.g. at J1 = -J2), a step of 1e-50 does
#: not move the floats: there the mean of the values this far (relative) on either side is
#: taken, the limit to O(1e-10) with rounding noise of about 1e-16 / 1e-5.
_NUDGE_OFF = 1e-5


def _nudge(ps, size):
    # Distinct steps per parameter, so that no symmetric combination stays singular.
    return [p + size * (1.0 + 0.618 * k) * (1.0 + abs(p)) for k, p in enumerate(ps)]


#: The last stage-P values of each parameter kernel: {kernel: (parameters, step, P)}. A plot or
#: a global fit evaluates the same parameters again on another grid, or for another kind. An
#: entry is replaced whole, so concurrent callers read an old or a new triple, never a mix.
_LAST_P = {}


def _stage_p_s(par, ps, size=_NUDGE):
    """Stage P at finite float parameters, remembered per kernel (a tuple key only).

    Weights of a symbolic block can hold removable singularities where its eigenvectors are
    not defined, e.g. h / sqrt(E^2 + h^2) at E = h = 0. The response itself is analytic in
    the parameters (T > 0), so its value there is the limit: evaluate 1e-50 away instead, or,
    where that does not move the floats, take the mean 1e-5 away on either side.
    Zeros are never looked up (0.0 == -0.0, but a kernel may tell them apart).
    """
    last = _LAST_P.get(par)
    if last is not None and last[0] == ps and 0.0 not in ps and last[1] == size:
        return last[2]          # the key is a tuple, so a list never matches
    P = _finite_p(par, ps)
    if P is None:
        P = _finite_p(par, _nudge(ps, size))
    if P is None:
        up = _finite_p(par, _nudge(ps, _NUDGE_OFF))
        dn = _finite_p(par, _nudge(ps, -_NUDGE_OFF))
        if up is None or dn is None:
            raise ValueError(f"the formulas are singular at and around the parameters "
                             f"{dict(zip(PARAMETERS, ps))}; evaluate at a point nearby")
        P = tuple((a + b) / 2 for a, b in zip(up, dn))
    _LAST_P[par] = (tuple(ps), size, P)
    return P


def _finite_p(par, ps):
    try:
        P = par(*ps)
    except (ZeroDivisionError, ValueError, OverflowError):
        return None
    return P if cmath.isfinite(sum(P)) else None


def _stage_p_a(par, ps, size=_NUDGE):
    """Stage P at array parameters (see _stage_p_s)."""
    with numpy.errstate(divide="ignore", invalid="ignore", over="ignore"):
        P = par(*ps)
        if numpy.isfinite(sum(P)).all():
            return P
        P = par(*_nudge(ps, size))
        bad = ~numpy.isfinite(sum(P))
        if not bad.any():
            return P
        up, dn = par(*_nudge(ps, _NUDGE_OFF)), par(*_nudge(ps, -_NUDGE_OFF))
        return tuple(numpy.where(bad, (a + b) / 2, p) for p, a, b in zip(P, up, dn))


def _store(out, s, value, width):
    if width is None:
        out[s] = value
    else:
        for k, v in enumerate(value):
            out[s, k] = v


def _is_lazy(values):
    """True when a value is a dask array (or another dask collection); dask is not imported."""
    for v in values:
        if hasattr(v, "__dask_graph__"):
            return True
    return False


def _over_blocks(func, args, dtype, width=None):
    """func(*args) block by block, when some argument is a dask array: the numpy code runs
    unchanged on each block (dask.array.blockwise, arguments broadcast from the left, size-1
    axes broadcast), and the result is a lazy dask array of the broadcast shape (with a
    trailing axis of length width for Jacobians and energies). dask is imported here only."""
    import uuid

    import dask.array as da
    arrays = [a if _is_lazy((a,)) else numpy.asarray(a) for a in args]
    ndim = max(a.ndim for a in arrays)
    out = tuple(f"i{k}" for k in range(ndim))
    pairs = []
    for a, v in zip(arrays, args):
        if a.ndim == 0 and not _is_lazy((v,)):
            pairs += [v, None]          # a number: passed as it is to every block
        else:
            pairs += [a, out[ndim - a.ndim:]]
    new_axes = {}
    if width is not None:
        out += ("_width",)
        new_axes = {"_width": width}
    meta = numpy.empty((0,) * len(out), dtype=dtype)
    # A fresh name: without one dask would hash the block function and its closure (the
    # kernels) by pickling them, which took longer than evaluating 1e5 points.
    name = f"symresp-{uuid.uuid4().hex}"
    return da.blockwise(func, out, *pairs, new_axes=new_axes, dtype=dtype, meta=meta, name=name)


def _static_call(kern_s, kern_a, par_s, par_a, T, params, width, dtype):
    """Drive a stage-B kernel over temperatures and parameters (all broadcasting together)."""
    if _is_lazy((T, *params)):
        return _over_blocks(
            lambda T, *ps: _static_call(kern_s, kern_a, par_s, par_a, T, ps, width, dtype),
            (T, *params), dtype, width)
    T = _temperature(T)
    ps, scalar = _parameters(params)
    size = _NUDGE if width is None else _NUDGE_JACOBIAN
    if scalar and type(T) is float:
        value = kern_s(T, _stage_p_s(par_s, ps, size))
        return dtype.type(value).item() if width is None else numpy.array(value, dtype=dtype)
    if scalar:
        P = _stage_p_s(par_s, ps, size)
        if width is None and T.size <= _CHUNK:
            # The kernels are elementwise: the result has the shape of T already.
            value = kern_a(T, P)
            if type(value) is numpy.ndarray and value.shape == T.shape and value.dtype == dtype:
                return value
            return numpy.array(numpy.broadcast_to(value, T.shape), dtype=dtype)
        # A chunk at a time: whole-grid temporaries would meet the trim threshold (_CHUNK).
        shape = T.shape
        Ts = T.reshape(-1)
        n = Ts.size
        full = shape if width is None else shape + (width,)
        out = numpy.empty((n,) + full[len(shape):], dtype=dtype)
        for i in range(0, n, _CHUNK):
            s = slice(i, i + _CHUNK)
            _store(out, s, kern_a(Ts[s], P), width)
        return out.reshape(full)
    shape = numpy.broadcast_shapes(numpy.shape(T), *(numpy.shape(p) for p in ps))
    n = math.prod(shape)
    full = shape if width is None else shape + (width,)
    Ts = numpy.broadcast_to(T, shape).reshape(-1)
    flat = [p if type(p) is float else numpy.broadcast_to(p, shape).reshape(-1) for p in ps]
    out = numpy.empty((n,) + full[len(shape):], dtype=dtype)
    for i in range(0, n, _CHUNK):
        s = slice(i, i + _CHUNK)
        P = _stage_p_a(par_a, [p if type(p) is float else p[s] for p in flat], size)
        _store(out, s, kern_a(Ts[s], P), width)
    return out.reshape(full)


def _dynamic_call(kern_s, kern_a, par_s, par_a, grid, name, X, T, params, eta, dtype):
    """Drive stage B (pole coefficients) and stage W (the grid) over broadcast inputs."""
    if _is_lazy((X, T, *params)):
        return _over_blocks(
            lambda X, T, *ps: _dynamic_call(kern_s, kern_a, par_s, par_a, grid, name, X, T, ps,
                                            eta, dtype),
            (X, T, *params), dtype)
    X = _real_input(name, X)
    T = _temperature(T)
    ps, scalar = _parameters(params)
    if scalar and type(T) is float:
        C = kern_s(1.0 / T, _stage_p_s(par_s, ps))
        if type(X) is float:
            return dtype.type(grid(X, eta, C)).item()
        if X.size <= _CHUNK_COMPLEX:
            value = grid(X, eta, C)
            if type(value) is numpy.ndarray and value.shape == X.shape and value.dtype == dtype:
                return value
            return numpy.array(numpy.broadcast_to(value, X.shape), dtype=dtype)
        shape = X.shape
        xs = X.reshape(-1)
        out = numpy.empty(xs.size, dtype=dtype)
        for i in range(0, xs.size, _CHUNK_COMPLEX):
            s = slice(i, i + _CHUNK_COMPLEX)
            out[s] = grid(xs[s], eta, C)
        return out.reshape(shape)
    shape = numpy.broadcast_shapes(numpy.shape(X), numpy.shape(T), *(numpy.shape(p) for p in ps))
    n = math.prod(shape)
    xs = numpy.broadcast_to(X, shape).reshape(-1)
    beta = 1.0 / numpy.broadcast_to(T, shape).reshape(-1)
    flat = [p if type(p) is float else numpy.broadcast_to(p, shape).reshape(-1) for p in ps]
    P = _stage_p_s(par_s, ps) if scalar else None
    out = numpy.empty(n, dtype=dtype)
    for i in range(0, n, _CHUNK_COMPLEX):
        s = slice(i, i + _CHUNK_COMPLEX)
        Ps = P if scalar else _stage_p_a(par_a, [p if type(p) is float else p[s] for p in flat])
        out[s] = grid(xs[s], eta, kern_a(beta[s], Ps))
    return out.reshape(shape)


# Boltzmann factor exp(-beta c) of a level c >= 0 above the lowest one.
def _bexp_s(beta, c):
    return math.exp(-beta * c)


def _bexp_a(beta, c):
    if type(c) is float:
        if c == 0.0:
            return 1.0            # the lowest level: no exponential over the grid
        x = beta * (-c)
    else:
        x = beta * numpy.negative(c)
    if type(x) is numpy.ndarray:
        return numpy.exp(x, out=x)
    return numpy.exp(x)


# The same at beta = 1/T: exp(-c/T), one division (the static kernels take T).
def _bexpt_s(T, c):
    return math.exp(-c / T)


def _bexpt_a(T, c):
    if type(c) is float:
        if c == 0.0:
            return 1.0            # the lowest level: no exponential over the grid
        x = (-c) / T
    else:
        x = numpy.negative(c) / T
    if type(x) is numpy.ndarray:
        return numpy.exp(x, out=x)
    return numpy.exp(x)


# All Boltzmann factors at once, a row per level: X[a] = exp(-c_a/T) (c_a >= 0), or
# exp(-c_a beta) with _bexp_m. Rows are contiguous, so work on one level's row runs at full speed.
def _bexpt_m(T, cs):
    return _stacked_exp(cs, T, numpy.divide)


def _bexp_m(beta, cs):
    return _stacked_exp(cs, beta, numpy.multiply)


def _stacked_exp(cs, t, op):
    if all(type(c) is float for c in cs):
        X = op.outer(numpy.negative(cs), t)
    else:
        X = numpy.array([numpy.broadcast_to(c, t.shape) for c in cs], dtype=float)
        numpy.negative(X, out=X)
        op(X, t, out=X)
    return numpy.exp(X, out=X)


# Sums sum_a coefs[a] X[a], a row of the result per tuple of coefficients: one matrix product
# when the coefficients are numbers (a fit), row by row when they vary along the grid
# (parameters given as arrays).
def _lincomb_m(X, rows):
    try:
        M = numpy.array(rows)
    except ValueError:          # numbers mixed with arrays
        M = None
    if M is not None and M.ndim == 2 and M.dtype.kind in "fic":
        return (M @ X.reshape(M.shape[1], -1)).reshape((len(rows),) + X.shape[1:])
    out = []
    for coefs in rows:
        acc = coefs[0] * X[0]
        for c, row in zip(coefs[1:], X[1:]):
            acc = acc + c * row
        out.append(acc)
    return out


def _lincomb_a(X, coefs):
    return _lincomb_m(X, (coefs,))[0]


def _cplx_a(x):
    return numpy.asarray(x, dtype=complex)


# Thermal pair factor (x_a - x_b)/(beta w) = max(x_a, x_b) phi(beta |w|), w = E_b - E_a.
def _expdiv_s(xa, xb, beta, w):
    y = beta * abs(w)
    lo = xa if w >= 0 else xb
    return lo if y == 0.0 else lo * (-math.expm1(-y) / y)


def _expdiv_a(xa, xb, beta, w):
    if type(w) is float:
        lo = xa if w >= 0 else xb
        if w == 0.0:
            return lo
        ny = beta * (-abs(w))
    else:
        lo = numpy.where(w >= 0, xa, xb)
        ny = beta * numpy.negative(numpy.abs(w))
    if type(ny) is numpy.ndarray:
        numpy.minimum(ny, -_TINY, out=ny)
        phi = numpy.expm1(ny)
        phi /= ny
        phi *= lo
        return phi
    ny = min(float(ny), -_TINY)
    return lo * (math.expm1(ny) / ny)


def _psi_s(y):
    if y < _SERIES:
        return _psi_series(y)
    return (-math.expm1(-y) - y) / y / y


def _psiphi_s(y):
    if y < _SERIES:
        return _psiphi_series(y)
    return (-math.expm1(-y) - y * math.exp(-y)) / y / y


# psi and psi + phi over a grid y >= 0 (fresh arrays; y is left as it is).
def _psi_grid(y):
    if y.size and y.min() < _SERIES:
        small = y < _SERIES
        ys = numpy.where(small, 1.0, y)          # each branch sees only its own points
        return numpy.where(small, _psi_series(numpy.where(small, y, 0.0)),
                           (-numpy.expm1(-ys) - ys) / ys / ys)
    out = numpy.negative(y, out=numpy.empty_like(y))
    numpy.expm1(out, out=out)
    numpy.negative(out, out=out)
    out -= y
    out /= y                                      # twice, not by y*y: no overflow for huge y
    out /= y
    return out


def _psiphi_grid(y):
    if y.size and y.min() < _SERIES:
        small = y < _SERIES
        ys = numpy.where(small, 1.0, y)
        return numpy.where(small, _psiphi_series(numpy.where(small, y, 0.0)),
                           (-numpy.expm1(-ys) - ys * numpy.exp(-ys)) / ys / ys)
    e = numpy.negative(y, out=numpy.empty_like(y))
    out = numpy.expm1(e)
    numpy.exp(e, out=e)
    e *= y
    out += e
    numpy.negative(out, out=out)
    out /= y
    out /= y
    return out


def _psi_series(y):
    return -0.5 + y * (1 / 6 - y * (1 / 24 - y * (1 / 120 - y / 720)))


def _psiphi_series(y):
    return 0.5 - y * (1 / 3 - y * (1 / 8 - y * (1 / 30 - y / 144)))


# d/du_a of (e^u_a - e^u_b)/(u_a - u_b): -x_a psi(y) if level a is lower, else x_b (psi + phi).
def _expdiv2_s(xa, xb, beta, w):
    y = beta * abs(w)
    return -xa * _psi_s(y) if w >= 0 else xb * _psiphi_s(y)


def _expdiv2_a(xa, xb, beta, w):
    if type(w) is float and type(beta) is numpy.ndarray:
        # One spacing over a grid (a fit): only the branch its sign selects, and the series
        # only if some point needs it.
        y = beta * abs(w)
        if w >= 0:
            out = _psi_grid(y)
            out *= xa
            return numpy.negative(out, out=out)
        out = _psiphi_grid(y)
        out *= xb
        return out
    y = numpy.asarray(beta * numpy.abs(w), dtype=float)
    return numpy.where(numpy.asarray(w) >= 0, -xa * _psi_grid(y.copy()), xb * _psiphi_grid(y))


# Isolated susceptibility: pairs closer than the grouping tolerance count as one level.
def _keep_s(w, tol):
    return 1.0 if abs(w) > tol else 0.0


def _keep_a(w, tol):
    return numpy.abs(w) > tol


def _lmin_s(*energies):
    return min(energies)


def _lmin_a(*energies):
    out = energies[0]
    for e in energies[1:]:
        out = numpy.minimum(out, e)
    return out


def _atmin_s(energies, values):
    return values[min(range(len(energies)), key=energies.__getitem__)]


def _atmin_a(energies, values):
    arrays = numpy.broadcast_arrays(*energies, *values)
    n = len(energies)
    index = numpy.argmin(numpy.stack(arrays[:n]), axis=0)
    return numpy.take_along_axis(numpy.stack(arrays[n:]), index[None], axis=0)[0]


def _degtol_s(rtol, *energies):
    return rtol * max(abs(e) for e in energies)


def _degtol_a(rtol, *energies):
    out = numpy.abs(energies[0])
    for e in energies[1:]:
        out = numpy.maximum(out, numpy.abs(e))
    return rtol * out


# Square root of a radicand that is >= 0 exactly (a block discriminant): clamp rounding noise.
def _sqrt_s(x):
    return math.sqrt(x) if x > 0.0 else 0.0


def _sqrt_a(x):
    return numpy.sqrt(numpy.maximum(x, 0.0))


def _causal_a(t, value):
    return numpy.where(t >= 0, value, 0.0)
