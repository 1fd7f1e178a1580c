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
  implicit levels are apart, central differences of the stable values where they are not;
* ``_realroots_a``: fallback without a block matrix (not produced by the engine today): the
  cubic made monic and depressed, :math:`E = t - a/3`, :math:`t^3 + pt + q = 0`, its three
  real roots :math:`t_k = m\cos(\phi - 2\pi k/3)` with :math:`m = 2\sqrt{-p/3}`,
  :math:`\cos 3\phi = -4q/m^3` (Viete's trigonometric form), two Newton steps on the
  undepressed cubic, sorted ascending.

Imports: nothing (a text constant).
"""

ROOTS_RUNTIME = r'''
# ------------------------------------------------------------------------------------------
# Semi-closed blocks: real roots of a cubic characteristic factor, at every point.
# ------------------------------------------------------------------------------------------

def _realroots_a(c0, c1, c2, c3):
    """The three real roots, ascending, of c0 E^3 + c1 E^2 + c2 E + c3 (a Hermitian block)."""
    a = numpy.divide(c1, c0)
    b = numpy.divide(c2, c0)
    d = numpy.divide(c3, c0)
    s = a / 3.0
    p = b - 3.0 * s * s
    q = d + s * (2.0 * s * s - b)
    m = 2.0 * numpy.sqrt(numpy.maximum(-p / 3.0, 0.0))
    m3 = m * m * m
    ratio = numpy.where(m3 > 0.0, -4.0 * q / numpy.where(m3 > 0.0, m3, 1.0), 0.0)
    phi = numpy.arccos(numpy.clip(ratio, -1.0, 1.0)) / 3.0
    roots = [m * numpy.cos(phi - 2.0943951023931957 * k) - s for k in (2, 1, 0)]
    for _ in range(2):
        for i, x in enumerate(roots):
            f = ((x + a) * x + b) * x + d
            fp = (3.0 * x + 2.0 * a) * x + b
            step = numpy.where(fp != 0.0, f / numpy.where(fp != 0.0, fp, 1.0), 0.0)
            # A step longer than the root's own scale means f' ~ 0 (a double root): keep x.
            ok = numpy.abs(step) <= 1e-3 * (1.0 + numpy.abs(x) + numpy.abs(a))
            roots[i] = numpy.where(ok, x - step, x)
    out = numpy.sort(numpy.stack(numpy.broadcast_arrays(*roots)), axis=0)
    return tuple(out)


def _realroots_s(c0, c1, c2, c3):
    return tuple(float(r) for r in _realroots_a(float(c0), float(c1), float(c2), float(c3)))


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
