r"""The broadened correlation function in emitted evaluators (layer: emit).

Owns :func:`correlation_program` (stage P: level energies, spacings, pair weights and the
level-diagonal weights :math:`W_{aa}`), :func:`correlation_glue` (the public function
``correlation_spectral``) and :data:`CORRELATION_RUNTIME` (the numpy sum over lines). Imports
sympy, :mod:`._plan` and :mod:`._program`.

The emitted function evaluates, with :math:`p_a` the population per state of level a and
:math:`W_{ab} = \mathrm{Tr}(P_a A P_b B)` (:math:`S = W_{ab} + W_{ba}`,
:math:`D = W_{ab} - W_{ba}` of the plan),

.. math::

    S_{AB}(\omega) = 2\Big[s_0 L(\omega) + \sum_{a<b}\big(s_{ab} L(\sigma\omega - w_{ab})
                     + s_{ba} L(\sigma\omega + w_{ab})\big)\Big],

the lines of :mod:`symresp.response._correlation` broadened by L (Lorentzian
:math:`\eta/(x^2 + \eta^2)` or the Gaussian of the same half width at half maximum, area
:math:`\pi`), so that :math:`\eta \to 0` gives :math:`2\pi\sum_k s_k\delta(\omega - \Omega_k)`.
The canonical weights use the stable divided difference
:math:`(p_a - p_b)/(\beta w) = p_a(1 - e^{-\beta w})/(\beta w)`, finite where levels meet.
"""

from __future__ import annotations

import sympy as sp

from ._plan import Plan
from ._program import Program, _D, _E, _freeze, _root_lines, _S, _w, shared_subexpressions

__all__ = ["correlation_program", "correlation_glue", "correlation_wrapper",
           "CORRELATION_RUNTIME"]


def correlation_program(plan: Plan) -> Program:
    """Stage P of the correlation function: (E_a..., w_k..., S_k..., D_k..., W_aa...)."""
    L = len(plan.energies)
    targets = [(_E(a), e) for a, e in enumerate(plan.energies)]
    targets += [(_w(k), p.w) for k, p in enumerate(plan.pairs)]
    targets += [(_S(k), p.S) for k, p in enumerate(plan.pairs)]
    targets += [(_D(k), p.D) for k, p in enumerate(plan.pairs)]
    waa = [C + d * a * b for C, d, a, b in zip(plan.fluctuation, plan.degeneracies,
                                                 plan.mean_a, plan.mean_b)]
    targets += [(sp.Symbol(f"_Waa{a}"), v) for a, v in enumerate(waa)]
    exprs = [_freeze(e) for _, e in targets]
    repl, reduced = shared_subexpressions(exprs)
    lines = _root_lines(plan) + list(repl) + [(sym, e) for (sym, _), e in zip(targets, reduced)]
    del L
    return Program("_correlation_p", tuple(p.name for p in plan.parameters), (), tuple(lines),
                   tuple(sym for sym, _ in targets))


def correlation_glue(plan: Plan, prefix: str = "") -> list[str]:
    """Constants and the public ``correlation_spectral`` of an emitted module (named
    ``prefix + "correlation_spectral"`` when public wrappers rename the parameters, see
    :func:`correlation_wrapper`)."""
    sig = "".join(f", {n}" for n in plan.names)
    tup = "(" + "".join(f"{n}, " for n in plan.names) + ")"
    pairs = tuple((p.a, p.b) for p in plan.pairs)
    names = ", ".join(plan.names) or "(none)"
    return [
        f"_CORRELATION_PAIRS = {pairs!r}",
        f"_FREQUENCY_SIGN = {plan.frequency_sign}",
        "",
        "",
        f'def {prefix}correlation_spectral(omega, T{sig}, *, eta, shape="lorentzian", '
        'kind="plain"):',
        '    """Broadened correlation function S_AB(omega) = int dt exp(i omega t) <A(t) B>.',
        "",
        "    S(omega) = 2 sum_k s_k L(omega - Omega_k), the lines s_k of",
        "    Response.correlation_lines(kind) broadened by L (Lorentzian eta/(x^2 + eta^2) or",
        "    the Gaussian of the same half width at half maximum, area pi); the elastic line",
        "    sum_a p_a W_aa sits at omega = 0. Detailed balance: S(-omega) = exp(-beta omega)",
        "    S_BA(omega); fluctuation-dissipation: chi''(omega) = (1 - exp(-beta omega)) S / 2.",
        "",
        "    Parameters",
        "    ----------",
        "    omega : float or array_like",
        "        Real frequencies.",
        "    T : float or array_like",
        "        Temperature(s) > 0.",
        f"    {names} : float or array_like",
        "        Model parameters; all arguments broadcast together.",
        "    eta : float",
        "        Half width at half maximum > 0, keyword only.",
        '    shape : {"lorentzian", "gaussian"}',
        '    kind : {"plain", "symmetrised", "canonical"}',
        "",
        "    Returns",
        "    -------",
        "    float or ndarray (complex when the response is not real)",
        '    """',
        f"    ps, _scalar = _parameters({tup})",
        "    P = _stage_p_a(_correlation_p_a, ps)",
        "    return _correlation_sum(omega, T, P, _width(eta), shape, kind)",
        "",
        "",
    ]


def correlation_wrapper(signature: tuple[str, ...], prefix: str) -> list[str]:
    """The public ``correlation_spectral`` under the user's parameter names, calling the
    driver ``prefix + "correlation_spectral"`` (as the other public functions do)."""
    sig = "".join(f", {n}" for n in signature)
    return [f'def correlation_spectral(omega, T{sig}, *, eta, shape="lorentzian", kind="plain"):',
            '    """Broadened correlation function S_AB(omega) = 2 sum_k s_k L(omega - Omega_k)',
            "    (lines of Response.correlation_lines(kind), Lorentzian or Gaussian L of half",
            '    width eta and area pi)."""',
            f"    return {prefix}correlation_spectral(omega, T{sig}, eta=eta, shape=shape, "
            "kind=kind)", "", ""]


CORRELATION_RUNTIME = r'''

def _correlation_line(x, eta, shape):
    if shape == "lorentzian":
        return eta / (x * x + eta * eta)
    sigma = eta / math.sqrt(2.0 * math.log(2.0))
    return math.pi * numpy.exp(-0.5 * (x / sigma) ** 2) / (sigma * math.sqrt(2.0 * math.pi))


def _correlation_sum(omega, T, P, eta, shape, kind):
    """Sum of the broadened lines of the correlation function (see correlation_spectral)."""
    if kind not in ("plain", "symmetrised", "canonical"):
        raise ValueError(f"kind={kind!r} must be 'plain', 'symmetrised' or 'canonical'")
    if shape not in ("lorentzian", "gaussian"):
        raise ValueError(f"shape={shape!r} must be 'lorentzian' or 'gaussian'")
    omega = numpy.asarray(_real_input("omega", omega), dtype=float)
    T = numpy.asarray(_real_input("T", T), dtype=float)
    if not (T > 0).all():
        raise ValueError("T must be > 0 (and not nan) everywhere")
    L, K = len(DEGENERACIES), len(_CORRELATION_PAIRS)
    E = P[:L]
    w, S, D, Waa = P[L:L + K], P[L + K:L + 2 * K], P[L + 2 * K:L + 3 * K], P[L + 3 * K:]
    emin = E[0]
    for e in E[1:]:
        emin = numpy.minimum(emin, e)
    beta = 1.0 / T
    x = [numpy.exp(-beta * (e - emin)) for e in E]
    Z = sum(d * xa for d, xa in zip(DEGENERACIES, x))
    om = _FREQUENCY_SIGN * omega
    total = sum(waa * xa for waa, xa in zip(Waa, x)) * _correlation_line(om, eta, shape)
    for k, (a, b) in enumerate(_CORRELATION_PAIRS):
        up, down = (S[k] + D[k]) / 2, (S[k] - D[k]) / 2
        if kind == "plain":
            cu, cd = x[a] * up, x[b] * down
        elif kind == "symmetrised":
            cu, cd = (x[a] + x[b]) / 2 * up, (x[a] + x[b]) / 2 * down
        else:
            # (x_a - x_b)/(beta w) = x_lower (1 - exp(-beta |w|))/(beta |w|), -> x_a as w -> 0
            y = beta * numpy.abs(w[k])
            with numpy.errstate(divide="ignore", invalid="ignore"):
                phi = numpy.where(y > 0, -numpy.expm1(-y) / numpy.where(y > 0, y, 1.0), 1.0)
            g = numpy.where(w[k] >= 0, x[a], x[b]) * phi
            cu, cd = g * up, g * down
        total = total + cu * _correlation_line(om - w[k], eta, shape)
        total = total + cd * _correlation_line(om + w[k], eta, shape)
    out = 2.0 * total / Z
    small = numpy.abs(out.imag) <= 1e-14 * (1 + numpy.abs(out.real)) if numpy.iscomplexobj(out) else 0
    if numpy.iscomplexobj(out) and numpy.all(small):
        out = out.real
    return float(out) if numpy.ndim(out) == 0 else out
'''
