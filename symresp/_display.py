r"""Presentation for the public facade: the text summary, the LaTeX block, the presented
results section and the pictures of a derivation (layer: facade, beside :mod:`._api`).

``Response.summary``, ``Response.latex``, ``Response.presented`` and ``Response.plot``
delegate here; the work itself lives in :mod:`.response` (presented forms) and :mod:`.emit`
(pictures). Imports the layers below the facade.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import sympy as sp

from ._evaluation import numeric_params
from .algebra import describe
from .conventions import omega
from .emit import (presentation_aligned, draw_levels, draw_map, draw_spectrum, draw_static, draw_sweep, level_scheme,
                   level_sweep, save_figure, spectral_map, spectrum, static_curves)
from .errors import InputError
from .models import Budget
from .response import (Derivation, MotionDerivation, Presentation, present_response,
                       presentation_text)

__all__ = ["summary_text", "latex_block", "results_section", "picture", "PICTURES"]

#: The quantities a summary prints (as a results section prints them).
SUMMARY_QUANTITIES = ("isothermal", "isolated", "frequency")
#: Seconds a summary may spend choosing printed forms (within the derivation's budget); past
#: them it prints the population sums with a note.
SUMMARY_SECONDS = 20.0

#: The kinds of picture ``Response.plot`` draws.
PICTURES = ("levels", "sweep", "spectrum", "map", "static")


def summary_text(d: Derivation | MotionDerivation) -> str:
    """A readable derivation summary: the route taken, then the results section of
    :func:`~symresp.response.present_response` (levels, transitions, static and dynamic chi,
    where-list; poles instead of levels on the equations-of-motion route)."""
    lines = [f"Linear response chi_AB of model {d.system.name!r}",
             f"  A = {describe(d.A)}", f"  B = {describe(d.B)}",
             f"  convention: {d.convention.describe()}",
             f"  route: {d.describe_route()}"]
    if isinstance(d, MotionDerivation):
        lines += ["", "Poles (Omega, weight):"]
        lines += [f"  Omega = {sp.sstr(Om)}, w = {sp.sstr(w)}" for Om, w in d.poles()] or ["  none"]
        lines += ["", f"chi_isothermal = {sp.sstr(d.static('isothermal'))}",
                  f"chi_isolated   = {sp.sstr(d.static('isolated'))}",
                  f"chi(omega)     = {sp.sstr(d.frequency(omega))}"]
        return "\n".join(lines)
    lines += [f"  blocks: {d.spectrum.describe()}", ""] + presentation_text(_presented(d))
    return "\n".join(lines)


def latex_block(d: Derivation | MotionDerivation) -> str:
    r"""LaTeX ``aligned`` block: the presented static susceptibilities and :math:`\chi(\omega)`
    with their where-list (Z, radicals, populations, poles), chosen within
    :data:`SUMMARY_SECONDS` as for :func:`summary_text`; plain formulas on the
    equations-of-motion route."""
    if isinstance(d, MotionDerivation):
        rows = [(r"\chi^{T}_{AB}", d.static("isothermal")),
                (r"\chi^{\mathrm{isol}}_{AB}", d.static("isolated")),
                (r"\chi_{AB}(\omega)", d.frequency(omega))]
        body = " \\\\\n".join(f"{k} &= {sp.latex(v)}" for k, v in rows)
        return "\\begin{aligned}\n" + body + "\n\\end{aligned}"
    return presentation_aligned(_presented(d))


def _presented(d: Derivation) -> Presentation:
    """The presentation a summary prints, within :data:`SUMMARY_SECONDS` (made once per
    derivation: the summary and the LaTeX block show the same forms)."""
    memo = d._memo.get("summary")
    if memo is None:
        budget = Budget(seconds=min(SUMMARY_SECONDS, d.budget.seconds))
        memo = d._memo["summary"] = present_response(d, SUMMARY_QUANTITIES, clock=budget.start())
    return memo


def results_section(d: Derivation, quantities: object, *, point: Mapping | None,
              budget: Budget) -> Presentation:
    """The derivation as a results section prints it (see ``Response.presented``)."""
    if isinstance(quantities, str):
        quantities = (quantities,)
    if not isinstance(budget, Budget):
        raise InputError(f"presented: budget={budget!r} must be a symresp.models.Budget")
    values = numeric_params(d.system, point)
    pt = {k: sp.Float(v.real) for k, v in values.items()}
    return present_response(d, tuple(quantities), point=pt, clock=budget.start())


def picture(d: Derivation, kind: str, *, params: Mapping | None, T: float | None,
            eta: float | None, parameter: str | None, values: object, temperatures: object,
            kinds: tuple[str, ...], log_T: bool, data: object, data_kind: str, path: object):
    """One picture of the derivation as a matplotlib Figure (see ``Response.plot``),
    saved to ``path`` when given."""
    if kind not in PICTURES:
        raise InputError(f"plot: kind={kind!r} must be one of {', '.join(PICTURES)}")
    if kind in ("levels", "spectrum"):
        fig = _at_temperature(d, kind, params, T, eta)
    elif kind == "sweep":
        fig = _sweep(d, params, parameter, values)
    else:
        if temperatures is None:
            raise InputError(f"plot: the {kind} picture needs temperatures=")
        if kind == "map":
            fig = draw_map(spectral_map(d, params, temperatures, eta=eta))
        else:
            fig = draw_static(static_curves(d, params, temperatures), kinds=kinds,
                              log_T=log_T, data=_overlay(data), data_kind=data_kind)
    if path is not None:
        save_figure(fig, path)
    return fig


def _at_temperature(d: Derivation, kind: str, params: Mapping | None, T: float | None,
                    eta: float | None):
    """The level scheme or the spectrum at one temperature."""
    if T is None:
        raise InputError(f"plot: the {kind} picture needs a temperature T=")
    if kind == "levels":
        return draw_levels(level_scheme(d, params, T))
    return draw_spectrum(spectrum(d, params, T, eta=eta))


def _sweep(d: Derivation, params: Mapping | None, parameter: str | None, values: object):
    """Levels against one parameter (the others fixed by ``params``)."""
    if parameter is None or values is None:
        raise InputError("plot: the sweep picture needs parameter= and values=")
    full = dict(params or {})
    full.setdefault(parameter, 0.0)
    return draw_sweep(level_sweep(d, full, parameter, values))


def _overlay(data: object) -> tuple[np.ndarray, np.ndarray] | None:
    """Measured (temperatures, values) to draw over the static curves, as float arrays."""
    if data is None:
        return None
    try:
        xs, ys = (np.asarray(v, dtype=float) for v in data)
    except (TypeError, ValueError):
        raise InputError("plot: data must be (temperatures, values)") from None
    return xs, ys
