"""PNG plots of a response and the picture of a fit (layer: cli; the only module that imports
matplotlib).

Owns :func:`render_plots`, :func:`fit_figure`, :func:`write_fit_picture` and
:data:`HAVE_MATPLOTLIB`; the plot command writes the pictures with
:func:`symresp._files.write_files` (atomic, never over an existing file without
``--force``). matplotlib is optional (``pip install
symresp[plot]``); when it is missing this module still imports and ``HAVE_MATPLOTLIB`` is
False. The Agg backend is selected, so no display is needed.
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import numpy as np

from ..cases import Curves, FitResult

try:  # optional dependency: the plot command reports its absence
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure
    HAVE_MATPLOTLIB = True
except ImportError:  # pragma: no cover - depends on the installation
    Figure = None  # type: ignore[assignment,misc]
    HAVE_MATPLOTLIB = False

__all__ = ["render_plots", "HAVE_MATPLOTLIB", "safe_stem", "fit_figure", "write_fit_picture"]


def safe_stem(text: str) -> str:
    """A file-name-safe version of a case name or response label."""
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text).strip("_") or "response"


def _unit(u: str, inverse: bool = False) -> str:
    if not u:
        return " (energy units)" if not inverse else " (1/energy units)"
    return f" ({u})" if not inverse else f" (1/{u})"


def _png(fig) -> bytes:
    buffer = io.BytesIO()
    fig.savefig(buffer, dpi=120, format="png")
    return buffer.getvalue()


def render_plots(case_name: str, curves: Curves) -> list[tuple[str, bytes]]:
    """The spectrum, chi(T) and chi*T plots of one response as (file name, PNG bytes)."""
    assert HAVE_MATPLOTLIB and Figure is not None
    stem = f"{safe_stem(case_name)}-{safe_stem(curves.label)}"
    u = curves.energy_unit
    written: list[tuple[str, bytes]] = []
    if curves.omega.size:
        fig = Figure(figsize=(6.0, 4.0), layout="tight")
        ax = fig.add_subplot()
        ax.plot(curves.omega, curves.spectrum, color="C0")
        ax.axhline(0.0, color="0.6", lw=0.6)
        ax.set_xlabel("frequency omega" + _unit(u))
        ax.set_ylabel("chi''(omega)" + _unit(u, inverse=True))
        ax.set_title(f"{case_name}, {curves.label}: T = {curves.temperature:.4g}{' ' + u if u else ''}, "
                     f"Lorentzian half width {curves.eta:.3g}")
        written.append((f"{stem}-spectrum.png", _png(fig)))
    fig = Figure(figsize=(6.0, 4.0), layout="tight")
    ax = fig.add_subplot()
    ax.plot(curves.T, curves.isothermal.real, label="isothermal", color="C0")
    ax.plot(curves.T, curves.isolated.real, label="isolated", color="C1", ls="--")
    ax.set_xlabel("temperature T" + _unit(u))
    ax.set_ylabel("static chi" + _unit(u, inverse=True))
    ax.set_title(f"{case_name}, {curves.label}: static susceptibility")
    ax.legend()
    written.append((f"{stem}-chi.png", _png(fig)))
    fig = Figure(figsize=(6.0, 4.0), layout="tight")
    ax = fig.add_subplot()
    ax.plot(curves.T, curves.T * curves.isothermal.real, label="isothermal", color="C0")
    ax.plot(curves.T, curves.T * curves.isolated.real, label="isolated", color="C1", ls="--")
    ax.set_xlabel("temperature T" + _unit(u))
    ax.set_ylabel("chi * T (dimensionless, k_B = 1)")
    ax.set_title(f"{case_name}, {curves.label}: chi T")
    ax.legend()
    written.append((f"{stem}-chiT.png", _png(fig)))
    return written


# ------------------------------------------------------------------------------ a fit
# The picture of ``symresp fit``: two panels sharing the abscissa (T, or B for M(B) data): the
# data with error bars and the fitted model curves, and below it the residuals (data minus
# model, in units of sigma when the data give it).

_LABELS = {"chi": "chi", "chiT": "chi T", "M": "M"}


def fit_figure(result: FitResult):
    """A matplotlib Figure of the fit (data with error bars, model curves, residuals).

    The first axes hold the data (first line, markers) and then one line per model curve; the
    second axes hold the residuals (first line).
    """
    assert HAVE_MATPLOTLIB and Figure is not None
    data = result.data
    fig = Figure(figsize=(6.4, 5.6), layout="tight")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1))
    x = np.asarray(data.B if result.x_name == "B" else data.T, dtype=float)
    y = np.asarray(data.values, dtype=float)
    top.plot(x, y, "o", ms=3.5, color="0.2", mfc="none", label="data")
    if data.sigma is not None:
        top.errorbar(x, y, yerr=np.asarray(data.sigma), fmt="none", ecolor="0.5", lw=0.8)
    for k, c in enumerate(result.curves):
        label = "fit" if len(result.curves) == 1 else f"fit, {c.label}"
        top.plot(c.x, c.y, "-", color=f"C{k}", lw=1.5, label=label)
    unit = result.unit
    top.set_ylabel(f"{_LABELS[result.quantity]} ({unit})")
    params = ", ".join(f"{n} = {v:.6g} ± {e:.2g}" for n, v, e in
                       zip(result.names, result.values, result.errors))
    top.set_title(f"{result.case}: {params}\nchi^2/dof = {result.reduced_chi2:.3g}", fontsize=9)
    top.legend(fontsize=8)
    res = result.residuals
    bottom.plot(x, res, "o", ms=3, color="0.2")
    bottom.axhline(0.0, color="0.5", lw=0.8)
    bottom.set_ylabel("residual / sigma" if data.sigma is not None else "residual")
    xunit = "T" if result.x_name == "B" else result.temperature_unit
    bottom.set_xlabel(("field B" if result.x_name == "B" else "temperature T") + f" ({xunit})")
    if result.x_name == "T" and x.min() > 0 and x.max() / x.min() > 50:
        top.set_xscale("log")
    return fig


def write_fit_picture(result: FitResult, path: Path) -> Path:
    """Write the picture of ``result`` to ``path`` (PNG, or the format of its suffix)."""
    fig = fit_figure(result)
    fig.savefig(path, dpi=120)
    return path
