r"""Pictures of a response, drawn with matplotlib (layer: emit; the one module that imports it).

Owns the style (:data:`PALETTE`, :data:`COLOUR_MAP`, :func:`new_figure`, :func:`save_figure`),
the pictures of a response (:func:`draw_levels`, :func:`draw_sweep`, :func:`draw_spectrum`,
:func:`draw_map`, :func:`draw_static`) and the picture of a data fit (:func:`fit_figure`).
matplotlib is optional (``pip install symresp[plot]``): without it this module still imports
and :data:`HAVE_MATPLOTLIB` is False. Figures are made with ``matplotlib.figure.Figure`` (no
pyplot, no global state, no display). Imports numpy, :mod:`symresp.errors` and
:mod:`._pictures` (the numbers).

Style: colours of our own choosing, told apart by lightness as well as hue (safe for the
common colour-vision deficiencies: no red/green pair carries meaning), lines also told apart by
dash pattern; the colour map of the chi''(omega, T) picture is matplotlib's perceptually
uniform, colour-vision-deficiency-friendly ``cividis``.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from ..errors import InputError
from ._pictures import LevelScheme, SpectralMap, Spectrum, StaticCurves, Sweep

import importlib.util

# matplotlib is optional and slow to import (about a second): it is looked up here and imported
# by the first picture drawn, so that commands without pictures do not pay for it.
HAVE_MATPLOTLIB = importlib.util.find_spec("matplotlib") is not None


def _matplotlib():
    """(Figure, FancyArrowPatch), importing matplotlib with the non-interactive backend."""
    try:  # optional dependency
        import matplotlib

        matplotlib.use("Agg")
        from matplotlib.figure import Figure
        from matplotlib.patches import FancyArrowPatch
    except ImportError:  # pragma: no cover - depends on the installation
        raise InputError("pictures need matplotlib, which did not import; install it with "
                         "pip install symresp[plot]") from None
    return Figure, FancyArrowPatch

__all__ = ["HAVE_MATPLOTLIB", "PALETTE", "DASHES", "COLOUR_MAP", "new_figure", "save_figure",
           "figure_bytes",
           "draw_levels", "draw_sweep", "draw_spectrum", "draw_map", "draw_static",
           "fit_figure", "FORMATS", "STATIC_KINDS"]

#: Line colours: deep blue, amber, sky, plum, slate, ochre, teal, rose (lightness alternates).
PALETTE = ("#1b4f8f", "#e0a020", "#56a6d6", "#7b3f86", "#4a4a4a", "#b87a1b", "#2f8f83",
           "#c86f8d")
#: Dash patterns that accompany the palette, so curves differ without colour too.
DASHES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1)), (0, (1, 1)), (0, (3, 1, 1, 1, 1, 1)),
          (0, (7, 2)))
#: The colour map of intensity pictures.
COLOUR_MAP = "cividis"
#: File formats a picture is saved in (by the path's suffix).
FORMATS = ("png", "svg")
#: Panels of the static picture.
STATIC_KINDS = ("chi", "chiT", "inverse")
_LEVEL_COLOUR = "#222222"
_ARROW_COLOUR = PALETTE[0]
_MARK_COLOUR = PALETTE[1]


def _need() -> None:
    if not HAVE_MATPLOTLIB:
        raise InputError("pictures need matplotlib, which is not installed; install it with "
                         "pip install symresp[plot]")


def new_figure(rows: int = 1, cols: int = 1, *, size: tuple[float, float] = (6.4, 4.4),
               **grid):
    """A Figure and its axes (a 2-d array) in the house style: light grid, no top or right
    spines; ``grid`` goes to ``Figure.subplots`` (``sharex``, ``height_ratios``, ...)."""
    _need()
    Figure, _ = _matplotlib()
    fig = Figure(figsize=size, layout="constrained")
    axes = fig.subplots(rows, cols, squeeze=False, **grid)
    for ax in axes.flat:
        ax.grid(True, color="#dddddd", lw=0.6)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    return fig, axes


def save_figure(fig, path: str | Path, *, dpi: int = 130) -> Path:
    """Write ``fig`` as PNG or SVG (by the suffix of ``path``)."""
    _need()
    path = Path(path)
    fmt = path.suffix.lstrip(".").lower()
    if fmt not in FORMATS:
        raise InputError(f"save_figure: {path}: the suffix must be .png or .svg")
    fig.savefig(path, dpi=dpi, format=fmt)
    return path


def figure_bytes(fig, fmt: str = "png", *, dpi: int = 130) -> bytes:
    """The file contents of ``fig`` as PNG or SVG (for writing with the atomic file helper)."""
    _need()
    if fmt not in FORMATS:
        raise InputError(f"figure_bytes: fmt={fmt!r} must be 'png' or 'svg'")
    buffer = io.BytesIO()
    fig.savefig(buffer, dpi=dpi, format=fmt)
    return buffer.getvalue()


def _unit(u: str, inverse: bool = False) -> str:
    if not u:
        return " (1/energy unit)" if inverse else " (energy unit)"
    return f" (1/{u})" if inverse else f" ({u})"


# ------------------------------------------------------------------------------ levels
def draw_levels(scheme: LevelScheme, *, title: str = "", unit: str = ""):
    """Energy-level diagram: levels in columns by quantum number, transitions as arrows from
    the lower to the upper level whose width grows with the weight at the temperature.

    Arrows are drawn strongest first, as ``FancyArrowPatch`` objects (``ax.patches``) in the
    order of ``scheme.arrows``; each level is a horizontal line (``ax.lines``).
    """
    fig, axes = new_figure(size=(6.4, 5.0))
    ax = axes[0, 0]
    groups = list(dict.fromkeys(sorted(set(scheme.groups), key=_group_key)))
    column = {g: k for k, g in enumerate(groups)}
    xs = np.array([column[g] for g in scheme.groups], dtype=float)
    # Levels that coincide in one column are spread a little so each stays visible.
    E = scheme.energies
    span = float(E.max() - E.min()) or 1.0
    offsets = np.zeros_like(xs)
    for i in range(len(E)):
        same = [j for j in range(i) if xs[j] == xs[i] and abs(E[j] - E[i]) < 1e-3 * span]
        offsets[i] = 0.12 * len(same)
    half = 0.32
    for i, (x, e) in enumerate(zip(xs + offsets, E)):
        ax.plot([x - half, x + half], [e, e], color=_LEVEL_COLOUR, lw=2.0, solid_capstyle="butt")
        ax.text(x - half - 0.03, e, f"E{i + 1}", va="center", ha="right", fontsize=7,
                color="#555555")
        if scheme.degeneracies[i] > 1:
            ax.text(x + half + 0.03, e, f"\u00d7{scheme.degeneracies[i]}", va="center",
                    fontsize=7, color="#555555")
    wmax = max((a[3] for a in scheme.arrows), default=1.0) or 1.0
    for k, (lo, hi, _om, w) in enumerate(scheme.arrows):
        x0 = xs[lo] + offsets[lo] + 0.18 * ((k % 3) - 1) * (xs[lo] == xs[hi])
        x1 = xs[hi] + offsets[hi] + 0.18 * ((k % 3) - 1) * (xs[lo] == xs[hi])
        lw = 0.6 + 4.4 * w / wmax
        arrow = _matplotlib()[1]((x0, E[lo]), (x1, E[hi]), arrowstyle="-|>",
                                mutation_scale=6 + 3 * lw, lw=lw, color=_ARROW_COLOUR,
                                alpha=0.85, shrinkA=0, shrinkB=0, zorder=3)
        arrow.set_gid(f"transition {lo + 1}->{hi + 1}")
        ax.add_patch(arrow)
    ax.set_xticks(range(len(groups)))
    ax.set_xticklabels([f"{scheme.group_name} = {g}" if scheme.group_name else "levels"
                        for g in groups])
    ax.set_xlim(-0.7, len(groups) - 0.3)
    ax.set_ylim(E.min() - 0.08 * span, E.max() + 0.08 * span)
    ax.set_ylabel("energy E" + _unit(unit))
    ax.grid(False, axis="x")
    ax.set_title(title or f"levels and transitions at T = {scheme.temperature:.4g}"
                 f"{' ' + unit if unit else ''} (arrow width: weight)", fontsize=9)
    return fig


def _group_key(g: str):
    """Columns in ascending order of a numeric quantum number, others alphabetically."""
    num, _, den = g.partition("/")
    try:
        return (0, float(int(num)) / (float(int(den)) if den else 1.0), g)
    except ValueError:
        return (1, 0.0, g)


# ------------------------------------------------------------------------------ sweep
def draw_sweep(sweep: Sweep, *, title: str = "", unit: str = ""):
    """Levels against one parameter, each level a line, crossings marked by circles."""
    fig, axes = new_figure()
    ax = axes[0, 0]
    for a in range(sweep.energies.shape[1]):
        ax.plot(sweep.x, sweep.energies[:, a], color=PALETTE[a % len(PALETTE)],
                ls=DASHES[(a // len(PALETTE)) % len(DASHES)], lw=1.4)
    if sweep.crossings:
        xc = [c[0] for c in sweep.crossings]
        ec = [c[1] for c in sweep.crossings]
        ax.scatter(xc, ec, s=28, facecolors="none", edgecolors=_MARK_COLOUR, linewidths=1.5,
                   zorder=4, label="level crossing")
        ax.legend(fontsize=8, loc="best")
    ax.set_xlabel(sweep.parameter + _unit(unit))
    ax.set_ylabel("energy E" + _unit(unit))
    ax.set_title(title or f"levels against {sweep.parameter}", fontsize=9)
    return fig


# ------------------------------------------------------------------------------ spectra
def draw_spectrum(spec: Spectrum, *, title: str = "", unit: str = ""):
    """Stick spectrum (lines at Omega_k, height pi w_k) with the broadened chi''(omega) over it."""
    fig, axes = new_figure()
    ax = axes[0, 0]
    if spec.lines:
        f = [x for x, _ in spec.lines]
        h = [y for _, y in spec.lines]
        ax.vlines(f, 0.0, h, colors=PALETTE[1], lw=2.2, label="lines pi w_k")
    ax.plot(spec.omega, spec.curve, color=PALETTE[0], lw=1.5,
            label=f"chi''(omega), half width {spec.eta:.3g}")
    ax.axhline(0.0, color="#888888", lw=0.6)
    ax.set_xlabel("frequency omega" + _unit(unit))
    ax.set_ylabel("chi''(omega)" + _unit(unit, inverse=True))
    ax.set_title(title or f"spectrum at T = {spec.temperature:.4g}{' ' + unit if unit else ''}",
                 fontsize=9)
    ax.legend(fontsize=8)
    return fig


def draw_map(m: SpectralMap, *, title: str = "", unit: str = ""):
    """chi''(omega, T) as a colour map (frequency across, temperature up)."""
    fig, axes = new_figure(size=(6.4, 4.8))
    ax = axes[0, 0]
    ax.grid(False)
    mesh = ax.pcolormesh(m.omega, m.temperatures, m.values, cmap=COLOUR_MAP, shading="auto")
    fig.colorbar(mesh, ax=ax, label="chi''(omega)" + _unit(unit, inverse=True))
    ax.set_xlabel("frequency omega" + _unit(unit))
    ax.set_ylabel("temperature T" + _unit(unit))
    ax.set_title(title or f"chi''(omega, T), half width {m.eta:.3g}", fontsize=9)
    return fig


# ------------------------------------------------------------------------------ static
_STATIC_LABELS = {"chi": "chi", "chiT": "chi * T", "inverse": "1/chi"}


def draw_static(curves: StaticCurves, *, kinds: Sequence[str] = STATIC_KINDS,
                log_T: bool = False, data: tuple[np.ndarray, np.ndarray] | None = None,
                data_kind: str = "chi", title: str = "", unit: str = ""):
    """chi(T), chi*T and 1/chi against T (one panel per kind), isothermal (solid) and isolated
    (dashed), with measured ``data`` (T, value of ``data_kind``) as open circles."""
    kinds = list(kinds)
    bad = [k for k in kinds if k not in STATIC_KINDS]
    if bad or not kinds:
        raise InputError(f"draw_static: kinds={kinds!r} must be some of {', '.join(STATIC_KINDS)}")
    if data_kind not in STATIC_KINDS:
        raise InputError(f"draw_static: data_kind={data_kind!r} must be one of "
                         f"{', '.join(STATIC_KINDS)}")
    fig, axes = new_figure(1, len(kinds), size=(4.0 * len(kinds), 3.8))
    T = curves.temperatures
    for ax, kind in zip(axes.flat, kinds):
        for k, (name, chi) in enumerate((("isothermal", curves.isothermal),
                                         ("isolated", curves.isolated))):
            with np.errstate(divide="ignore", invalid="ignore"):
                y = {"chi": chi, "chiT": chi * T, "inverse": 1.0 / chi}[kind]
            if kind == "inverse" and not np.any(np.isfinite(y) & (np.abs(chi) > 0)):
                continue                          # 1/0: nothing to draw (e.g. isolated = 0)
            ax.plot(T, y, color=PALETTE[k], ls=DASHES[k], lw=1.6, label=name)
        if data is not None and kind == data_kind:
            ax.plot(data[0], data[1], "o", ms=4, mfc="none", color=PALETTE[3], label="data")
        if log_T:
            ax.set_xscale("log")
        ax.set_xlabel("temperature T" + _unit(unit))
        ylabel = _STATIC_LABELS[kind]
        ax.set_ylabel(ylabel + ("" if kind == "chiT" else _unit(unit, inverse=kind == "chi")))
        ax.legend(fontsize=8)
    fig.suptitle(title or "static susceptibility", fontsize=10)
    return fig


# ------------------------------------------------------------------------------ fits
_FIT_LABELS = {"chi": "chi", "chiT": "chi T", "M": "M"}


def fit_figure(result):
    """A Figure of a data fit (``symresp.cases.FitResult``): data with error bars and model
    curves above, residuals below.

    The first axes hold the data (first line, markers) and then one line per model curve; the
    second axes hold the residuals (first line).
    """
    _need()
    data = result.data
    fig, axes = new_figure(2, 1, size=(6.4, 5.6), sharex=True, height_ratios=(3, 1))
    top, bottom = axes[0, 0], axes[1, 0]
    x = np.asarray(data.B if result.x_name == "B" else data.T, dtype=float)
    y = np.asarray(data.values, dtype=float)
    top.plot(x, y, "o", ms=3.5, color="0.2", mfc="none", label="data")
    if data.sigma is not None:
        top.errorbar(x, y, yerr=np.asarray(data.sigma), fmt="none", ecolor="0.5", lw=0.8)
    for k, c in enumerate(result.curves):
        label = "fit" if len(result.curves) == 1 else f"fit, {c.label}"
        top.plot(c.x, c.y, color=PALETTE[k % len(PALETTE)], ls=DASHES[k % len(DASHES)], lw=1.5,
                 label=label)
    top.set_ylabel(f"{_FIT_LABELS[result.quantity]} ({result.unit})")
    params = ", ".join(f"{n} = {v:.6g} \u00b1 {e:.2g}" for n, v, e in
                       zip(result.names, result.values, result.errors))
    top.set_title(f"{result.case}: {params}\nchi^2/dof = {result.reduced_chi2:.3g}", fontsize=9)
    top.legend(fontsize=8)
    bottom.plot(x, result.residuals, "o", ms=3, color="0.2")
    bottom.axhline(0.0, color="0.5", lw=0.8)
    bottom.set_ylabel("residual / sigma" if data.sigma is not None else "residual")
    xunit = "T" if result.x_name == "B" else result.temperature_unit
    bottom.set_xlabel(("field B" if result.x_name == "B" else "temperature T") + f" ({xunit})")
    if result.x_name == "T" and x.min() > 0 and x.max() / x.min() > 50:
        top.set_xscale("log")
    return fig
