"""Pictures of the ``plot`` command and the picture of a fit, written to files (layer: cli).

Owns :func:`render_plots`, :func:`write_fit_picture`, :func:`safe_stem` and re-exports
:data:`HAVE_MATPLOTLIB`. The numbers come from :mod:`symresp.emit` (picture data computed with
the emitted evaluators) and the drawing from ``symresp.emit._plots``, the one module that
imports matplotlib; this module only chooses grids and names the files. The plot command
writes them with :func:`symresp._files.write_files` (atomic, never over an existing file
without ``--force``).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from ..cases import Case, FitResult, energy_scale
from ..emit import (HAVE_MATPLOTLIB, draw_levels, draw_map, draw_spectrum, draw_static,
                    draw_sweep, figure_bytes, fit_figure, level_scheme, level_sweep,
                    spectral_map, spectrum, static_curves)
from ..errors import InputError
from ..response import Derivation

__all__ = ["render_plots", "HAVE_MATPLOTLIB", "safe_stem", "fit_figure", "write_fit_picture",
           "PlotOptions"]


def safe_stem(text: str) -> str:
    """A file-name-safe version of a case name or response label."""
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text).strip("_") or "response"


class PlotOptions:
    """What the ``plot`` command was asked for (see ``docs/pictures.md``)."""

    def __init__(self, *, temperature: float | None = None, eta: float | None = None,
                 fmt: str = "png", T_range: tuple[float, float] | None = None,
                 log_T: bool = False, data: tuple[np.ndarray, np.ndarray] | None = None,
                 data_kind: str = "chi", sweep: tuple[str, float, float] | None = None) -> None:
        self.temperature, self.eta, self.fmt = temperature, eta, fmt
        self.T_range, self.log_T, self.data, self.data_kind = T_range, log_T, data, data_kind
        self.sweep = sweep


def render_plots(case: Case, label: str, d: Derivation,
                 options: PlotOptions) -> list[tuple[str, bytes]]:
    """The pictures of one response as (file name, bytes): level diagram, stick spectrum with
    the broadened chi''(omega), chi''(omega, T) map, chi(T), chi*T and 1/chi, and the levels
    against a swept parameter when asked."""
    stem = f"{safe_stem(case.name)}-{safe_stem(label)}"
    unit = case.energy_unit
    # Only the parameters the derived model still has (--set NAME=0 can remove one).
    names = {p.name for p in d.system.parameters}
    params = {p.name: float(v) for p, v in case.defaults.items() if p.name in names}
    missing = [p.name for p in d.system.parameters if p.name not in params]
    if missing:
        raise InputError(f"{case.source}: pictures need a value for every parameter; add value = "
                         f"... under [parameters] for {', '.join(missing)}")
    scale = energy_scale(case)
    T0 = options.temperature if options.temperature is not None else scale
    lo, hi = options.T_range if options.T_range is not None else (0.02 * scale, 5.0 * scale)
    temps = np.geomspace(lo, hi, 300) if options.log_T else np.linspace(lo, hi, 300)
    written: list[tuple[str, bytes]] = []

    def save(fig, name: str) -> None:
        written.append((f"{stem}-{name}.{options.fmt}", figure_bytes(fig, options.fmt)))

    title = f"{case.name}, {label}"
    save(draw_levels(level_scheme(d, params, T0), unit=unit,
                     title=f"{title}: levels and transitions at T = {T0:.4g} {unit}".rstrip()),
         "levels")
    if d.transitions():
        spec = spectrum(d, params, T0, eta=options.eta)
        save(draw_spectrum(spec, unit=unit, title=f"{title}: T = {T0:.4g} {unit}, half width "
                                                  f"{spec.eta:.3g}"), "spectrum")
        map_T = np.geomspace(lo, hi, 80) if options.log_T else np.linspace(lo, hi, 80)
        save(draw_map(spectral_map(d, params, map_T, eta=options.eta), unit=unit,
                      title=f"{title}: chi''(omega, T)"), "map")
    curves = static_curves(d, params, temps)
    for kind in ("chi", "chiT", "inverse"):
        data = options.data if options.data_kind == kind else None
        save(draw_static(curves, kinds=(kind,), log_T=options.log_T, data=data,
                         data_kind=options.data_kind, unit=unit, title=title), kind)
    if options.sweep is not None:
        name, start, stop = options.sweep
        sweep = level_sweep(d, params, name, np.linspace(start, stop, 401))
        save(draw_sweep(sweep, unit=unit, title=f"{title}: levels against {name}"),
             f"sweep-{safe_stem(name)}")
    return written


def write_fit_picture(result: FitResult, path: Path) -> Path:
    """Write the picture of ``result`` to ``path`` (PNG, or the format of its suffix)."""
    fit_figure(result).savefig(path, dpi=120)
    return path
