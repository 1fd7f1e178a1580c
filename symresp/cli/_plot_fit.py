"""The picture of a fit: data, model and residuals (layer: cli; imports matplotlib when present).

Owns :func:`fit_figure` and :func:`write_fit_picture`. The figure has two panels sharing the
abscissa (T, or B for M(B) data): the data with error bars and the fitted model curves, and
below it the residuals (data minus model, in units of sigma when the data give it).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..cases import FitResult

try:  # optional dependency: the fit command still runs without it and says so
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure
    HAVE_MATPLOTLIB = True
except ImportError:  # pragma: no cover - depends on the installation
    Figure = None  # type: ignore[assignment,misc]
    HAVE_MATPLOTLIB = False

__all__ = ["fit_figure", "write_fit_picture", "HAVE_MATPLOTLIB"]

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
