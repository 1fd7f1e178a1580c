r"""Correlation functions as lines, from the levels and weights of a derivation (layer: response).

Owns :func:`correlation_lines` and :data:`CORRELATION_KINDS`. Imports sympy,
:mod:`symresp.conventions`, :mod:`symresp.errors` and :mod:`._present` (the derivation type is
used for annotations only).

Definitions (pinned convention, :math:`\hbar = k_B = 1`; ``docs/conventions.md`` section 9):

.. math::

    S_{AB}(\omega) = \int dt\, e^{i\omega t}\langle A(t) B\rangle
                   = 2\pi\sum_k s_k\,\delta(\omega - \Omega_k),

with lines at the level spacings :math:`\Omega = E_b - E_a` (levels a, b; populations
:math:`p_a` per state, weights :math:`W_{ab} = \mathrm{Tr}(P_a A P_b B)`):

* ``"plain"``: :math:`s = p_a W_{ab}`;
* ``"symmetrised"`` (:math:`\tfrac12\langle\{A(t), B\}\rangle`):
  :math:`s = \tfrac12(p_a + p_b) W_{ab}`;
* ``"canonical"`` (Kubo's :math:`\beta^{-1}\int_0^\beta d\lambda\,
  \langle e^{\lambda H}Be^{-\lambda H}A(t)\rangle`):
  :math:`s = (p_a - p_b) W_{ab}/(\beta\Omega)`;

and for every kind the elastic line at :math:`\Omega = 0` with :math:`s_0 = \sum_a p_a W_{aa}`
(pairs inside a level). Lines of equal frequency are merged. Under the reversed Fourier sign
the lines sit at :math:`-\Omega`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Literal

import sympy as sp

from ..conventions import beta
from ..errors import InputError

if TYPE_CHECKING:
    from ._derive import Derivation

__all__ = ["correlation_lines", "CORRELATION_KINDS", "CorrelationKind"]

CorrelationKind = Literal["plain", "symmetrised", "canonical"]
#: The correlation functions offered, see the module docstring.
CORRELATION_KINDS = ("plain", "symmetrised", "canonical")


def correlation_lines(d: Derivation, kind: CorrelationKind = "plain", *,
                      tidy=None, order_point: dict | None = None) -> list[tuple[sp.Expr, sp.Expr]]:
    r"""Lines :math:`[(\Omega_k, s_k)]` of the correlation function ``kind`` of a derivation
    (see the module docstring), ordered by frequency at ``order_point``; weights are passed
    through ``tidy`` (the derivation's presentable form) when given."""
    if kind not in CORRELATION_KINDS:
        raise InputError(f"correlation_lines: kind={kind!r} must be one of "
                         f"{', '.join(map(repr, CORRELATION_KINDS))}")
    sig = d.convention.frequency_sign
    Zr = d.reduced_partition()
    acc: dict[sp.Expr, sp.Expr] = {}
    order: list[sp.Expr] = []
    for (a, b), W in sorted(d.level_weights.items()):
        xa, xb = d.boltzmann(a), d.boltzmann(b)
        if a == b:
            key, s = sp.Integer(0), xa * W
        else:
            lv_a, lv_b = d.levels[a], d.levels[b]
            Om = lv_b.energy - lv_a.energy
            Om = Om if (lv_a.implicit or lv_b.implicit) else sp.expand(Om)
            key = sig * Om
            if kind == "plain":
                s = xa * W
            elif kind == "symmetrised":
                s = (xa + xb) * W / 2
            else:
                s = (xa - xb) * W / (beta * Om)
        if key not in acc:
            acc[key] = sp.Integer(0)
            order.append(key)
        acc[key] += s
    out = []
    for key in order:
        value = acc[key] / Zr
        value = tidy(value) if tidy is not None else value
        if value != 0:
            out.append((key, value))
    if order_point is not None:
        def position(item):
            return (complex(sp.N(item[0].subs(order_point), 15)).real,
                    sp.default_sort_key(item[0]))
        out.sort(key=position)
    return out
