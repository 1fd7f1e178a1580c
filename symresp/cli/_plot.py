"""PNG plots of a response (layer: cli; the only module that imports matplotlib).

Owns :func:`write_plots` and :data:`HAVE_MATPLOTLIB`. matplotlib is optional (``pip install
symresp[plot]``); when it is missing this module still imports and ``HAVE_MATPLOTLIB`` is
False. The Agg backend is selected, so no display is needed.
"""

from __future__ import annotations

import re
from pathlib import Path

from ..cases import Curves

try:  # optional dependency: the plot command reports its absence
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure
    HAVE_MATPLOTLIB = True
except ImportError:  # pragma: no cover - depends on the installation
    Figure = None  # type: ignore[assignment,misc]
    HAVE_MATPLOTLIB = False

__all__ = ["write_plots", "HAVE_MATPLOTLIB", "safe_stem"]


def safe_stem(text: str) -> str:
    """A file-name-safe version of a case name or response label."""
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text).strip("_") or "response"


def _unit(u: str, inverse: bool = False) -> str:
    if not u:
        return " (energy units)" if not inverse else " (1/energy units)"
    return f" ({u})" if not inverse else f" (1/{u})"


def write_plots(case_name: str, curves: Curves, out: Path) -> list[Path]:
    """Write the spectrum, chi(T) and chi*T plots of one response; return the file paths."""
    assert HAVE_MATPLOTLIB and Figure is not None
    out.mkdir(parents=True, exist_ok=True)
    stem = f"{safe_stem(case_name)}-{safe_stem(curves.label)}"
    u = curves.energy_unit
    written: list[Path] = []
    if curves.omega.size:
        fig = Figure(figsize=(6.0, 4.0), layout="tight")
        ax = fig.add_subplot()
        ax.plot(curves.omega, curves.spectrum, color="C0")
        ax.axhline(0.0, color="0.6", lw=0.6)
        ax.set_xlabel("frequency omega" + _unit(u))
        ax.set_ylabel("chi''(omega)" + _unit(u, inverse=True))
        ax.set_title(f"{case_name}, {curves.label}: T = {curves.temperature:.4g}{' ' + u if u else ''}, "
                     f"Lorentzian half width {curves.eta:.3g}")
        path = out / f"{stem}-spectrum.png"
        fig.savefig(path, dpi=120)
        written.append(path)
    fig = Figure(figsize=(6.0, 4.0), layout="tight")
    ax = fig.add_subplot()
    ax.plot(curves.T, curves.isothermal.real, label="isothermal", color="C0")
    ax.plot(curves.T, curves.isolated.real, label="isolated", color="C1", ls="--")
    ax.set_xlabel("temperature T" + _unit(u))
    ax.set_ylabel("static chi" + _unit(u, inverse=True))
    ax.set_title(f"{case_name}, {curves.label}: static susceptibility")
    ax.legend()
    path = out / f"{stem}-chi.png"
    fig.savefig(path, dpi=120)
    written.append(path)
    fig = Figure(figsize=(6.0, 4.0), layout="tight")
    ax = fig.add_subplot()
    ax.plot(curves.T, curves.T * curves.isothermal.real, label="isothermal", color="C0")
    ax.plot(curves.T, curves.T * curves.isolated.real, label="isolated", color="C1", ls="--")
    ax.set_xlabel("temperature T" + _unit(u))
    ax.set_ylabel("chi * T (dimensionless, k_B = 1)")
    ax.set_title(f"{case_name}, {curves.label}: chi T")
    ax.legend()
    path = out / f"{stem}-chiT.png"
    fig.savefig(path, dpi=120)
    written.append(path)
    return written
