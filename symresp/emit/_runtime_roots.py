r"""Runtime support for semi-closed blocks, copied into emitted modules that need it (layer: emit).

A block whose characteristic polynomial has an irreducible cubic factor with
parameter-dependent coefficients has no closed-form levels; the engine keeps them as exact
implicit roots. The emitted evaluator solves that factor numerically at every evaluation point
(only that block: the other levels stay closed-form), then evaluates the exact weights, which
are rational functions of the roots and the parameters.

Method (vectorised over the evaluation points): the cubic is made monic and depressed,
:math:`E = t - a/3`, :math:`t^3 + pt + q = 0`; its three real roots are
:math:`t_k = m\cos(\phi - 2\pi k/3)` with :math:`m = 2\sqrt{-p/3}`,
:math:`\cos 3\phi = -4q/m^3` (Viete's trigonometric form, exact for real roots, no complex
arithmetic); two Newton steps on the undepressed cubic then restore full relative accuracy lost
in the depression, and the roots are sorted ascending (the order of ``LevelRoot(k, ...)``).

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
'''
