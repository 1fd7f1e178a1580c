r"""Runtime support for semi-closed blocks, copied into emitted modules that need it (layer: emit).

A block whose characteristic polynomial has an irreducible cubic factor with
parameter-dependent coefficients has no closed-form levels; the engine keeps them as exact
implicit roots. The emitted evaluator diagonalises that block at every evaluation point (only
that block: the other levels stay closed-form), see :mod:`symresp.emit._eigen`:

* ``_blockeig_a``: the block in Hermitian form, ``numpy.linalg.eigh`` on the stack of small
  matrices, the eigenvalue nearest each explicit level of the block set aside, the rest
  ascending (the order of ``LevelRoot(k, ...)``), and each one's projector in the block's
  local basis. Eigenvalues and the Lehmann sums built from these projectors are backward
  stable, also where two levels nearly coincide;
* ``_semi_closed_jacobian``: the exact Jacobian (differentiated through the roots) where the
  implicit levels are apart, central differences of the stable values where they are not.

Semi-closed blocks of any size (exact factors of any degree; weights kept as exact
definitions, :class:`symresp.spectrum.BlockWeight`) use ``_semieig``/``_semiw``
(:func:`semi_runtime`), and their Jacobian is taken by central differences.

Imports: inspect and :mod:`symresp.spectrum` (whose numpy functions are copied as text).
"""

import inspect

from ..spectrum._eigen_numeric import _semi_matrix, _semieig_a, _semiw_a

__all__ = ["ROOTS_RUNTIME", "semi_runtime"]

ROOTS_RUNTIME = r'''
# ------------------------------------------------------------------------------------------
# Semi-closed blocks: the block diagonalised at every point.
# ------------------------------------------------------------------------------------------

def _blockeig_a(deg, mult, others, entries, R, Rinv):
    """A semi-closed block diagonalised at every point: its deg implicit levels (mult states
    each), ascending, then the n*n entries of each one's projector in the block's local basis
    (R (sum u u^+) R^-1)."""
    n = math.isqrt(len(entries))
    arrays = numpy.broadcast_arrays(*[numpy.asarray(e) for e in entries])
    M = numpy.stack(arrays, axis=-1).reshape(arrays[0].shape + (n, n))
    bad = ~numpy.isfinite(M).all(axis=(-2, -1))
    if bad.any():                    # a removable singularity: the caller steps off it
        M = numpy.where(bad[..., None, None], 0.0, M)
    if R:
        Rm = numpy.array(R).reshape(n, n)
        M = numpy.array(Rinv).reshape(n, n) @ M @ Rm
    H = 0.5 * (M + numpy.conj(numpy.swapaxes(M, -1, -2)))
    ev, U = numpy.linalg.eigh(H)
    free = numpy.ones(ev.shape, dtype=bool)
    for other in others:
        o = numpy.asarray(other, dtype=float)[..., None]
        nearest = numpy.argmin(numpy.where(free, numpy.abs(ev - o), numpy.inf), axis=-1)
        numpy.put_along_axis(free, nearest[..., None], False, axis=-1)
    # Indices of the implicit levels: the free ones, ascending (eigh sorts ascending), mult
    # consecutive eigenvalues per level.
    order = numpy.argsort(~free, axis=-1, kind="stable")[..., :deg * mult]
    roots = numpy.take_along_axis(ev, order, axis=-1)
    out = [numpy.where(bad, numpy.nan, roots[..., k * mult:(k + 1) * mult].mean(axis=-1))
           for k in range(deg)]
    real = not numpy.iscomplexobj(H)
    for k in range(deg):
        u = numpy.take_along_axis(U, order[..., None, k * mult:(k + 1) * mult], axis=-1)
        P = u @ numpy.conj(numpy.swapaxes(u, -1, -2))
        if R:
            P = Rm @ P @ numpy.array(Rinv).reshape(n, n)
        if real:
            P = P.real
        out += [P[..., i, j] for i in range(n) for j in range(n)]
    return tuple(out)


def _blockeig_s(deg, mult, others, entries, R, Rinv):
    return tuple(v.item() for v in _blockeig_a(deg, mult, others, entries, R, Rinv))


#: Relative spacing of two implicit levels below which the Jacobian of the exact weights
#: (rational in the roots, root differences squared in the denominator) loses more than about
#: 1e-8 of relative accuracy; there central differences of the stable values are used.
_CLOSE_LEVELS = 1e-4
#: Relative step of those central differences (truncation ~1e-12, rounding ~1e-10).
_FD_STEP = 1e-6


def _semi_closed_jacobian(J, value, T, params, energies, implicit):
    """J where the implicit levels are well apart; central differences of value elsewhere."""
    E = energies(*params)
    Ei = E[..., list(implicit)]
    scale = numpy.maximum(1.0, numpy.max(numpy.abs(E), axis=-1))
    gaps = numpy.abs(Ei[..., :, None] - Ei[..., None, :])
    gaps = gaps + numpy.where(numpy.eye(len(implicit), dtype=bool), numpy.inf, 0.0)
    close = numpy.min(gaps, axis=(-2, -1)) < _CLOSE_LEVELS * scale
    if not numpy.any(close):
        return J
    cols = []
    for i, p in enumerate(params):
        step = _FD_STEP * (1.0 + numpy.abs(p))
        up = list(params)
        down = list(params)
        up[i] = p + step
        down[i] = p - step
        cols.append((numpy.asarray(value(T, *up)) - numpy.asarray(value(T, *down))) / (2 * step))
    fd = numpy.stack(numpy.broadcast_arrays(*cols), axis=-1)
    close = numpy.broadcast_to(close, numpy.shape(J)[:-1])
    return numpy.where(close[..., None], fd, J)
'''


def semi_runtime() -> str:
    """The runtime of semi-closed blocks: the numpy functions of
    :mod:`symresp.spectrum._eigen_numeric` (one implementation for the engine and the emitted
    modules), their scalar flavours and the Jacobian by central differences."""
    body = "\n\n".join(inspect.getsource(f) for f in (_semi_matrix, _semieig_a, _semiw_a))
    return SEMI_HEADER + body + SEMI_TAIL


SEMI_HEADER = r'''
# ------------------------------------------------------------------------------------------
# Semi-closed blocks: exact block matrices diagonalised at every point; their weights
# Tr(P_a A P_b B) from the eigenvectors.
# ------------------------------------------------------------------------------------------

'''

SEMI_TAIL = r'''

def _semieig_s(n, spec, explicit, coeffs, entries, T):
    out = _semieig_a(n, spec, explicit, coeffs, entries, T)
    return tuple(v.item() for v in out[:-1]) + (out[-1],)


def _semiw_s(*args):
    return tuple(v.item() for v in _semiw_a(*args))


#: Relative step of the central differences of the semi-closed Jacobian (truncation ~1e-12,
#: rounding ~1e-10 of the value's scale).
_SEMI_FD_STEP = 1e-6


def _fd_jacobian(value, T, params):
    """d value / d parameter by central differences, stacked along the last axis (the weights
    of semi-closed blocks are known numerically only)."""
    if not params:
        return numpy.zeros(numpy.shape(value(T)) + (0,))
    cols = []
    for i, p in enumerate(params):
        p = numpy.asarray(p, dtype=float)
        step = _SEMI_FD_STEP * (1.0 + numpy.abs(p))
        up = list(params)
        down = list(params)
        up[i] = p + step
        down[i] = p - step
        cols.append((numpy.asarray(value(T, *up)) - numpy.asarray(value(T, *down))) / (2 * step))
    return numpy.stack(numpy.broadcast_arrays(*cols), axis=-1)
'''
