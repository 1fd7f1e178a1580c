r"""Fitting a case to measured magnetometry data (layer: cases).

Owns :func:`fit_case`, :class:`FitResult`, :class:`Curve` and :func:`magnetometry_model`
(the fitted function on its own, for curves and tests). Imports numpy, scipy.optimize, sympy
and the layers below (algebra, models, response, numeric, emit).

The model of the measured quantity, per formula unit (``docs/fitting.md``):

* **zero field** (``chi`` or ``chiT`` data, field 0): the isothermal susceptibility of the
  magnetic moment (``magnetic_moment``) from the **emitted evaluator** and its analytic Jacobian,
  along each direction the orientation average needs: one for an isotropic model, z and x
  for an axial one, :math:`(\chi_\parallel + 2\chi_\perp)/3`, and x, y, z for any other,
  :math:`(\chi_{xx} + \chi_{yy} + \chi_{zz})/3` (exact for the zero-field tensor);
* **finite field** (``M`` data, or ``chi``/``chiT`` measured in a field, taken as
  :math:`M/B`): the magnetisation along the field from the closed-form levels in the field
  (:func:`symresp.emit.level_functions`), averaged over field directions with the quadrature of
  :func:`symresp.emit.orientation_quadrature` for a powder;
* then the corrections of ``[sample]`` (:class:`symresp.emit.Corrections`).

Only the varied parameters stay symbolic in the derivations; every other parameter is replaced
by its exact value first. The fit is :func:`scipy.optimize.least_squares` (trust-region
reflective, bounds from the parameters' ``assume``) on the residuals
:math:`r_i = (y_{\rm model}(x_i) - y_i)/\sigma_i`, with the analytic Jacobian. Standard errors
are the square roots of the diagonal of :math:`(J^TJ)^{-1}` at the optimum; without a
``sigma`` column every :math:`\sigma_i = 1` and the covariance is scaled by
:math:`\chi^2/\nu` (common practice).
"""

from __future__ import annotations

import math
import random
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import sympy as sp

from ..algebra import Operator, to_array
from ..emit import (AXES, EXACT, TEMPERATURE_UNITS, Corrections, brillouin,
                    evaluator_parameters, level_functions, magnetic_moment, molar_factor,
                    moment_factor, numpy_functions, orientation_quadrature, temperature_factor,
                    zeeman_constant)
from ..errors import InputError
from ..models import Budget, System
from ..response import derive
from ._data import DataTable
from ._read import Case
from ._values import parameter_values

__all__ = ["fit_case", "FitResult", "Curve", "magnetometry_model", "MagnetometryModel",
           "UNITS"]

Progress = Callable[[str], None]

#: Printed units of the measured quantities, by unit system.
UNITS = {
    ("chi", "cgs"): "cm^3/mol", ("chi", "SI"): "m^3/mol",
    ("chiT", "cgs"): "cm^3 K/mol", ("chiT", "SI"): "m^3 K/mol",
    ("M", "cgs"): "mu_B per formula unit", ("M", "SI"): "mu_B per formula unit",
}
#: Measured quantities the model describes.
UNITS_QUANTITIES = ("chi", "chiT", "M")
#: Relative tolerance of the numeric symmetry test of the spectrum in a field.
_SYMMETRY_RTOL = 1e-9
#: Largest number of model evaluations of one fit.
MAX_EVALUATIONS = 2000


def _quiet(_: str) -> None:
    return None


# ------------------------------------------------------------------------------ results
@dataclass(frozen=True, slots=True, eq=False)
class Curve:
    """A model curve for the picture: ``x`` (T or B) and the model ``y`` at fixed ``label``."""

    label: str
    x: np.ndarray
    y: np.ndarray


@dataclass(frozen=True, slots=True, eq=False)
class FitResult:
    """The outcome of :func:`fit_case`.

    Attributes
    ----------
    names : tuple of str
        The varied parameters, in the order given.
    values, errors : tuple of float
        Best values and standard errors.
    correlation : ndarray
        Correlation matrix of the varied parameters.
    chi2 : float
        Sum of squared residuals :math:`\\sum_i r_i^2`.
    dof : int
        Degrees of freedom (points minus varied parameters).
    weighted : bool
        True when the data gave ``sigma``; otherwise errors are scaled by sqrt(chi2/dof).
    fixed : tuple of (name, float)
        Values of the parameters that were not varied.
    fitted : ndarray
        The model at the data points.
    curves : tuple of Curve
        Model curves over the data range (one per distinct field, or temperature for M(B)).
    x_name : {"T", "B"}
        The abscissa of the picture.
    """

    case: str
    data: DataTable
    quantity: str
    unit: str
    temperature_unit: str
    names: tuple[str, ...]
    values: tuple[float, ...]
    errors: tuple[float, ...]
    correlation: np.ndarray
    chi2: float
    dof: int
    weighted: bool
    fixed: tuple[tuple[str, float], ...]
    success: bool
    message: str
    evaluations: int
    description: str
    fitted: np.ndarray
    curves: tuple[Curve, ...]
    x_name: str
    units: tuple[tuple[str, str], ...] = ()

    @property
    def reduced_chi2(self) -> float:
        """:math:`\\chi^2/\\nu` (nan without degrees of freedom)."""
        return self.chi2 / self.dof if self.dof > 0 else float("nan")

    @property
    def parameters(self) -> dict[str, tuple[float, float]]:
        """``{name: (value, error)}`` of the varied parameters."""
        return {n: (v, e) for n, v, e in zip(self.names, self.values, self.errors)}

    @property
    def residuals(self) -> np.ndarray:
        """Data minus model, divided by sigma when the data give it."""
        r = self.data.values - self.fitted
        return r / self.data.sigma if self.data.sigma is not None else r

    def as_dict(self) -> dict:
        """A JSON-ready dictionary (the shape printed by ``symresp fit --json``)."""
        def num(x: float) -> float | None:
            return float(x) if math.isfinite(x) else None

        return {
            "case": self.case,
            "data": self.data.source,
            "quantity": self.quantity,
            "unit": self.unit,
            "points": len(self.data),
            "parameters": {n: {"value": num(v), "error": num(e)}
                           for n, v, e in zip(self.names, self.values, self.errors)},
            "fixed": {n: num(v) for n, v in self.fixed},
            "units": dict(self.units),
            "correlation": {"names": list(self.names),
                            "matrix": [[num(x) for x in row] for row in self.correlation]},
            "chi2": num(self.chi2),
            "dof": self.dof,
            "chi2_per_dof": num(self.reduced_chi2),
            "sigma": "data" if self.weighted else "none: unit weights, errors scaled by "
                                                  "sqrt(chi2/dof)",
            "model": self.description,
            "success": self.success,
            "message": self.message,
            "evaluations": self.evaluations,
        }


# ------------------------------------------------------------------------------ the model
def _float_direction(d: Sequence[sp.Expr]) -> tuple[float, float, float]:
    return tuple(float(x) for x in d)  # type: ignore[return-value]


def _moment_along(handles, direction: Sequence[sp.Expr]) -> Operator:
    total = Operator((), frozenset(h.site for h in handles))
    for c, axis in zip(direction, ("x", "y", "z")):
        if c != 0:
            total = total + c * magnetic_moment(handles, direction=axis)
    return total


class MagnetometryModel:
    """The function fitted by :func:`fit_case`: the measured quantity at (T, B) and its
    Jacobian in the varied parameters (see the module docstring).

    Build it with :func:`magnetometry_model`.
    """

    def __init__(self, case: Case, quantity: str, varied: Sequence[sp.Symbol],
                 values: Mapping[sp.Symbol, sp.Rational], finite_field: bool, *,
                 budget: Budget = Budget(), progress: Progress = _quiet) -> None:
        mag = case.magnetism
        if mag is None or mag.zeeman is None:
            raise InputError(f"{case.source}: a magnetometry model needs the [zeeman] section "
                             f"(g of each spin site and the field); see docs/case-files.md")
        if not case.energy_unit:
            raise InputError(f"{case.source}: [model] energy_unit is not set")
        self.case = case
        self.quantity = quantity
        self.varied = tuple(varied)
        self.sample = mag.sample
        self.unit = case.energy_unit
        self.c = float(zeeman_constant(self.unit))
        self.F = molar_factor(self.unit, self.sample.system)
        self.kM = moment_factor(self.sample.system)
        self.t_energy = temperature_factor(case.temperature_unit, self.unit)
        self.t_kelvin = float(TEMPERATURE_UNITS[case.temperature_unit] / EXACT["k_B"])
        self.finite_field = finite_field
        self.progress = progress
        self._fix_parameters(values)
        self.clock = budget.start()
        # Orientation: directions (and symmetry) of the average.
        if self.sample.orientation == "oriented":
            self.symmetry = "oriented"
            self.quadrature = None
        else:
            self.symmetry = self._symmetry(values)
            self.quadrature = orientation_quadrature(
                "isotropic" if self.symmetry == "isotropic" else self.symmetry,
                self.sample.quadrature_order)
        if self.entries["mean_field"] != 0 and not self._uniform_g():
            raise InputError("a mean-field coupling zJ' needs one g tensor shared by all spin "
                             "sites (its spin is read off the moment with that g)")
        if finite_field:
            self._build_levels(budget)
        else:
            self._build_axes(budget)

    # ------------------------------------------------------------ set-up
    def _fix_parameters(self, values: Mapping[sp.Symbol, sp.Rational]) -> None:
        """Substitute the fixed parameters into H (without its Zeeman term), g and [sample];
        every varied parameter must enter one of them, every other one must have a value."""
        zeeman = self.case.magnetism.zeeman
        field_syms = sp.sympify(zeeman.field).free_symbols  # safe: sympy object
        bad = [s.name for s in self.varied if s in field_syms]
        if bad:
            raise InputError(f"the field parameter {bad[0]} cannot be varied: the field is set by "
                             f"the data (column B) or by its value")
        fixed = {s: v for s, v in values.items() if s not in set(self.varied)}
        self.fixed = fixed
        self.H0 = (self.case.system.hamiltonian - zeeman.term).subs(fixed)
        self.handles = {h: g.subs(fixed) for h, g in zeeman.handles().items()}
        self.sites = self.case.system.sites
        self.direction = zeeman.direction
        model_syms = set(self.H0.free_symbols)
        for g in self.handles.values():
            model_syms |= g.free_symbols
        self.model_symbols = tuple(s for s in self.varied if s in model_syms)
        leftover = model_syms - set(self.varied)
        if leftover:
            raise InputError(f"no value for {', '.join(sorted(s.name for s in leftover))}: give "
                             f"one in the case file or with --set NAME=VALUE")
        self.entries = {k: sp.sympify(v).subs(fixed)  # safe: sympy objects
                        for k, v in self.sample.entries().items()}
        used = set(self.model_symbols) | {e for e in self.entries.values()
                                          if isinstance(e, sp.Symbol)}
        unused = [s.name for s in self.varied if s not in used]
        if unused:
            raise InputError(f"the varied parameter {unused[0]} does not enter the model of the "
                             f"data (Hamiltonian, g, [sample]); remove it from --vary")

    def _uniform_g(self) -> bool:
        gs = list(self.handles.values())
        return all(g.matrix == gs[0].matrix for g in gs)

    def _symmetry(self, values: Mapping[sp.Symbol, sp.Rational]) -> str:
        """'isotropic', 'axial' (about z) or 'general': the spectrum in a field, compared
        between field directions at perturbed parameter values (exact diagonalisation)."""
        rng = random.Random(7)
        point = {s: float(v) * (1 + 0.1 * rng.random()) + 0.01 * rng.random()
                 for s, v in values.items() if s in set(self.varied)}
        system = System.build(self.H0, extra_sites=self.sites)
        basis = system.basis()
        H0 = to_array(self.H0, basis, point) if self.H0.terms else np.zeros((basis.dimension,) * 2)
        moments = [to_array(magnetic_moment(self.handles, direction=a), basis,
                            point) for a in ("x", "y", "z")]
        scale = max(1.0, float(np.abs(np.linalg.eigvalsh(H0)).max()) if H0.size else 1.0)
        spectra = []

        def spectrum(n: Sequence[float]) -> np.ndarray:
            # field strength that makes the Zeeman energy comparable with H0
            H = H0 - scale * sum(nk * m for nk, m in zip(n, moments))
            return np.linalg.eigvalsh(H)

        def same(a: np.ndarray, b: np.ndarray) -> bool:
            return bool(np.allclose(a, b, rtol=0, atol=_SYMMETRY_RTOL * scale * 10))

        probe = [(0, 0, 1), (1, 0, 0), (0, 1, 0),
                 tuple(np.array([1.0, 2.0, 3.0]) / math.sqrt(14.0))]
        spectra = [spectrum(n) for n in probe]
        if all(same(spectra[0], s) for s in spectra[1:]):
            return "isotropic"
        for theta in (0.7, 1.3):
            ring = [spectrum((math.sin(theta) * math.cos(p), math.sin(theta) * math.sin(p),
                              math.cos(theta))) for p in (0.0, 1.1, 2.3)]
            if not all(same(ring[0], s) for s in ring[1:]):
                return "general"
        return "axial"

    def _g_norm(self, direction: Sequence[float]):
        """g along a principal direction for the mean-field term, |n . g|, and its gradient."""
        g = next(iter(self.handles.values()))
        row = g.along([sp.nsimplify(x) for x in direction])  # safe: float components, not text
        norm = sp.sqrt(sum(r * r for r in row))
        grads = {s: sp.diff(norm, s) for s in self.varied if s in norm.free_symbols}
        return norm, grads

    def _build_axes(self, budget: Budget) -> None:
        if self.symmetry == "oriented":
            axes = [(self.direction, 1.0)]
        elif self.symmetry == "isotropic":
            axes = [((0, 0, 1), 1.0)]
        elif self.symmetry == "axial":
            axes = [((0, 0, 1), 1 / 3), ((1, 0, 0), 2 / 3)]
        else:
            axes = [((1, 0, 0), 1 / 3), ((0, 1, 0), 1 / 3), ((0, 0, 1), 1 / 3)]
        self.axes = []
        system = System.build(self.H0, extra_sites=self.sites, name=self.case.name)
        for direction, weight in axes:
            n = tuple(sp.sympify(x) for x in direction)  # safe: numbers of this module
            A = _moment_along(self.handles, n)
            self.progress(f"deriving the susceptibility along {_float_direction(n)}")
            d = derive(system, A, A, budget=budget)
            f = numpy_functions(d)
            names = dict(evaluator_parameters(d))
            self.axes.append((f, names, weight, self._g_norm(_float_direction(n))))

    def _build_levels(self, budget: Budget) -> None:
        if self.symmetry in ("isotropic", "oriented"):
            basis = [self.direction if self.symmetry == "oriented"
                     else tuple(map(sp.Integer, AXES["z"]))]
        elif self.symmetry == "axial":
            basis = [tuple(map(sp.Integer, AXES["x"])), tuple(map(sp.Integer, AXES["z"]))]
        else:
            basis = [tuple(map(sp.Integer, AXES[a])) for a in ("x", "y", "z")]
        # The field components enter in energy units, F_k = (mu_B/E_u) B_k: the same
        # Hamiltonian as the Zeeman term, without the large exact rational mu_B/E_u in the
        # symbolic work (it is applied to the numbers, F = c B, at evaluation).
        fields = [sp.Symbol(f"_F{k}", real=True) for k in range(len(basis))]
        H = self.H0
        for F, e in zip(fields, basis):
            H = H - F * _moment_along(self.handles, e)
        system = System.build(H, extra_sites=self.sites, name=self.case.name)
        zero = Operator((), frozenset())
        self.progress(f"deriving the levels in a field with {len(fields)} component(s)")
        d = derive(system, zero, zero, budget=budget)
        self.levels = level_functions(d, self.model_symbols, fields, 1.0)
        self.basis = [_float_direction(e) for e in basis]

    # ------------------------------------------------------------ evaluation
    def describe(self) -> str:
        """The orientation average and the route, in words."""
        route = ("magnetisation from the closed-form levels in the field" if self.finite_field
                 else "zero-field susceptibility from the emitted evaluator")
        if self.symmetry == "oriented":
            where = f"field along {tuple(round(x, 6) for x in _float_direction(self.direction))}"
        elif self.finite_field:
            assert self.quadrature is not None
            where = f"powder average ({self.symmetry}): {self.quadrature.describe()}"
        else:
            where = {"isotropic": "powder average (isotropic: one direction)",
                     "axial": "powder average (chi_par + 2 chi_perp)/3",
                     "general": "powder average (chi_xx + chi_yy + chi_zz)/3"}[self.symmetry]
        return f"{where}; {route}"

    def _corrections(self, values: Mapping[sp.Symbol, float], g_mf: float = 2.0) -> Corrections:
        def val(e: sp.Expr) -> float:
            return float(values[e]) if isinstance(e, sp.Symbol) else float(e)
        return Corrections(tip=val(self.entries["tip"]), diamagnetic=val(self.entries["diamagnetic"]),
                           impurity_fraction=val(self.entries["impurity_fraction"]),
                           impurity_spin=float(self.sample.impurity_spin),
                           impurity_g=val(self.entries["impurity_g"]),
                           mean_field=val(self.entries["mean_field"]), mean_field_g=g_mf,
                           system=self.sample.system, energy_unit=self.unit)

    def _entry_columns(self, partials: Mapping[str, np.ndarray], shape) -> np.ndarray:
        """Jacobian columns of the [sample] entries that are varied parameters."""
        out = np.zeros(shape + (len(self.varied),))
        for j, s in enumerate(self.varied):
            for key, e in self.entries.items():
                if e == s and key in partials:
                    out[..., j] += partials[key]
        return out

    def __call__(self, theta: Sequence[float], T, B=None) -> tuple[np.ndarray, np.ndarray]:
        """The measured quantity at temperatures ``T`` (temperature unit of the case) and fields
        ``B`` (tesla), and its Jacobian (last axis: the varied parameters)."""
        self.clock.check("the fit", "a model evaluation")
        values = dict(zip(self.varied, (float(x) for x in theta)))
        T = np.asarray(T, dtype=float)
        TE = T * self.t_energy
        if self.finite_field:
            Bv = np.broadcast_to(np.asarray(B, dtype=float), T.shape)
            y, jac = self._finite(values, TE, Bv)
        else:
            y, jac = self._zero_field(values, TE)
        if self.quantity == "chiT":
            TK = T * self.t_kelvin
            y, jac = y * TK, jac * TK[..., None]
        return y, jac

    def _zero_field(self, values, TE) -> tuple[np.ndarray, np.ndarray]:
        P = len(self.varied)
        chi = np.zeros(TE.shape)
        jac = np.zeros(TE.shape + (P,))
        mf = self._corrections(values)
        for f, names, weight, (gk, grads) in self.axes:
            kwargs = {names[s]: values[s] for s in names}
            chi_k = self.F * np.asarray(f.chi_isothermal(TE, **kwargs), dtype=float)
            jk = np.asarray(f.jacobian_static(TE, **kwargs), dtype=float) if names else None
            order = list(names.values())
            dchi_k = np.zeros(TE.shape + (P,))
            if jk is not None:
                for j, s in enumerate(self.varied):
                    if s in names:
                        dchi_k[..., j] = self.F * jk[..., order.index(names[s])]
            if mf.mean_field != 0:
                sub = {s: values.get(s, 0.0) for s in gk.free_symbols}
                g_value = float(gk.subs(sub))
                corr = Corrections(mean_field=mf.mean_field, mean_field_g=g_value,
                                   system=mf.system, energy_unit=mf.energy_unit)
                chi_c, part = corr.susceptibility(chi_k, TE)
                dchi_k = dchi_k * part["chi0"][..., None]
                for j, s in enumerate(self.varied):
                    if s in grads:
                        dchi_k[..., j] += part["mean_field_g"] * float(grads[s].subs(sub))
                    if self.entries["mean_field"] == s:
                        dchi_k[..., j] += part["mean_field"]
                chi_k = chi_c
            chi += weight * chi_k
            jac += weight * dchi_k
        rest = Corrections(tip=mf.tip, diamagnetic=mf.diamagnetic,
                           impurity_fraction=mf.impurity_fraction, impurity_spin=mf.impurity_spin,
                           impurity_g=mf.impurity_g, system=mf.system, energy_unit=mf.energy_unit)
        y, part = rest.susceptibility(chi, TE)
        # the mean-field term was applied per axis above (with its own derivatives)
        part = {k: v for k, v in part.items() if k not in ("mean_field", "mean_field_g")}
        jac = jac * part["chi0"][..., None] + self._entry_columns(part, TE.shape)
        return y, jac

    def differential(self, theta: Sequence[float], T, B) -> np.ndarray:
        r"""The differential susceptibility :math:`\partial M/\partial B` per formula unit in
        :math:`\mu_B`/T at temperatures ``T`` and fields ``B`` (a finite-field model), with the
        orientation average and the impurity, TIP and diamagnetic terms; divide by
        :func:`symresp.emit.moment_factor` for a molar value."""
        if not self.finite_field:
            raise InputError("the differential susceptibility needs a finite-field model "
                             "(finite_field=True)")
        values = dict(zip(self.varied, (float(x) for x in theta)))
        params = {s.name: values[s] for s in self.model_symbols}
        T = np.asarray(T, dtype=float)
        TE = T * self.t_energy
        Bv = np.broadcast_to(np.asarray(B, dtype=float), TE.shape)
        if self.symmetry == "oriented":
            dirs, weights = [_float_direction(self.direction)], [1.0]
        else:
            assert self.quadrature is not None
            dirs, weights = [tuple(d) for d in self.quadrature.directions], list(self.quadrature.weights)
        dM = np.zeros(TE.shape)
        for n, w in zip(dirs, weights):
            _, _, d = self.levels.magnetisation(TE, params, Bv * self.c, n, self.basis)
            dM += w * d * self.c                     # dM/dB = c dM/dF
        corr = self._corrections(values)
        S, gi, rho = corr.impurity_spin, corr.impurity_g, corr.impurity_fraction
        x = gi * self.c * Bv * S / TE
        _, dbs = brillouin(S, x)
        return ((1 - rho) * dM + rho * gi * S * dbs * gi * self.c * S / TE
                + self.kM * (corr.tip + corr.diamagnetic))

    def _finite(self, values, TE, B) -> tuple[np.ndarray, np.ndarray]:
        P = len(self.varied)
        params = {s.name: values[s] for s in self.model_symbols}
        M = np.zeros(TE.shape)
        dM = np.zeros(TE.shape + (len(self.model_symbols),))
        if self.symmetry == "oriented":
            dirs, weights = [_float_direction(self.direction)], [1.0]
        else:
            assert self.quadrature is not None
            dirs, weights = [tuple(d) for d in self.quadrature.directions], list(self.quadrature.weights)
        for n, w in zip(dirs, weights):
            self.clock.check("the fit", "the orientation average")
            m, dm, _ = self.levels.magnetisation(TE, params, B * self.c, n, self.basis)
            M += w * m
            dM += w * dm
        jac = np.zeros(TE.shape + (P,))
        for j, s in enumerate(self.varied):
            if s in self.model_symbols:
                jac[..., j] = dM[..., self.model_symbols.index(s)]
        corr = self._corrections(values)
        if self.quantity == "M":
            y, part = corr.magnetisation(M, B, TE)
            jac = jac * part["M0"][..., None] + self._entry_columns(part, TE.shape)
            return y, jac
        if np.any(B <= 0):
            raise InputError("chi measured in a field is M/B: every field must be > 0 (use a zero "
                             "field throughout for the zero-field susceptibility)")
        chi0 = M / (self.kM * B)
        dchi0 = jac / (self.kM * B)[..., None]
        if corr.mean_field != 0 and self.symmetry not in ("isotropic",):
            raise InputError("a mean-field coupling zJ' in a finite field is offered for isotropic "
                             "models only")
        if corr.mean_field != 0:
            gk, grads = self._g_norm((0.0, 0.0, 1.0))
            sub = {s: values.get(s, 0.0) for s in gk.free_symbols}
            corr = Corrections(tip=corr.tip, diamagnetic=corr.diamagnetic,
                               impurity_fraction=corr.impurity_fraction,
                               impurity_spin=corr.impurity_spin, impurity_g=corr.impurity_g,
                               mean_field=corr.mean_field, mean_field_g=float(gk.subs(sub)),
                               system=corr.system, energy_unit=corr.energy_unit)
        y, part = corr.susceptibility(chi0, TE)
        jac = dchi0 * part["chi0"][..., None] + self._entry_columns(part, TE.shape)
        if corr.mean_field != 0:
            gk, grads = self._g_norm((0.0, 0.0, 1.0))
            sub = {s: values.get(s, 0.0) for s in gk.free_symbols}
            for j, s in enumerate(self.varied):
                if s in grads:
                    jac[..., j] += part["mean_field_g"] * float(grads[s].subs(sub))
        return y, jac


def magnetometry_model(case: Case, quantity: str, varied: Sequence[str] = (), *,
                       values: Mapping[str, object] | None = None, finite_field: bool = False,
                       budget: Budget = Budget(), progress: Progress = _quiet) -> MagnetometryModel:
    """The model of a measured quantity for ``case`` (see :class:`MagnetometryModel`).

    Parameters
    ----------
    case : Case
    quantity : {"chi", "chiT", "M"}
    varied : sequence of str
        Parameters kept symbolic (their values are arguments of the model).
    values : mapping, optional
        Values of the other parameters (default: the case's values).
    finite_field : bool
        Use the magnetisation in a field (needed for M) rather than the zero-field
        susceptibility.

    Examples
    --------
    Bleaney-Bowers at high temperature: :math:`\\chi T \\to 2\\times 0.375\\,g^2/4` cm^3 K/mol.

    >>> from symresp.cases import find_case, magnetometry_model, read_case
    >>> model = magnetometry_model(read_case(find_case("dinuclear")), "chiT", ["J", "g"],
    ...                            values={"rho": 0, "tip": 0})
    >>> y, jac = model([100.0, 2.0], [1e5])
    >>> round(float(y[0]), 3), jac.shape
    (0.75, (1, 2))
    """
    if quantity not in UNITS_QUANTITIES:
        raise InputError(f"quantity={quantity!r} must be one of {', '.join(UNITS_QUANTITIES)}")
    symbols = case.symbols
    vs = []
    for name in varied:
        if name not in symbols:
            known = ", ".join(symbols) or "none"
            raise InputError(f"--vary {name}: {case.source} declares no parameter {name!r} "
                             f"(parameters: {known})")
        vs.append(symbols[name])
    if len(set(vs)) != len(vs):
        raise InputError("--vary: a parameter is named twice")
    given = {p.symbol: v for p, v in parameter_values(case, values).items()}
    all_values = {**case.defaults, **given}
    return MagnetometryModel(case, quantity, vs, all_values, finite_field, budget=budget,
                             progress=progress)



# ------------------------------------------------------------------------------ the fit
def _bounds(case: Case, varied: Sequence[sp.Symbol], entries: Mapping[str, sp.Expr]
            ) -> tuple[np.ndarray, np.ndarray]:
    by_symbol = {p.symbol: p for p in case.parameters}
    lo, hi = [], []
    for s in varied:
        p = by_symbol[s]
        low = 0.0 if p.assume in ("positive", "nonnegative") else -np.inf
        high = np.inf
        if entries.get("impurity_fraction") == s:
            low, high = max(low, 0.0), 1.0
        lo.append(low)
        hi.append(high)
    return np.array(lo), np.array(hi)


def fit_case(case: Case, data: DataTable, vary: Sequence[str], *,
             values: Mapping[str, object] | None = None, budget: Budget = Budget(),
             progress: Progress = _quiet, curve_points: int = 200) -> FitResult:
    r"""Fit the varied parameters of ``case`` to ``data``.

    Parameters
    ----------
    case : Case
        A case with ``[zeeman]`` (and optionally ``[sample]``).
    data : DataTable
        From :func:`read_data`.
    vary : sequence of str
        Names of the parameters to fit; every other parameter keeps its value.
    values : mapping, optional
        ``{name: value}``: start values of varied parameters, values of fixed ones
        (``--set``); the case's values otherwise.
    budget : Budget
        Time limit of the derivations and of the fit.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        Unknown or unusable parameter names, a missing value, data that the model cannot
        describe (M without a field, ...).

    Examples
    --------
    See ``docs/fitting.md``; ``symresp fit CASE DATA --vary J,g`` runs this function.
    """
    if not vary:
        raise InputError("--vary: name at least one parameter to fit, e.g. --vary J,g")
    quantity = data.quantity
    mag = case.magnetism
    if mag is None or mag.zeeman is None:
        raise InputError(f"{case.source}: fitting magnetometry data needs the [zeeman] section "
                         f"(g of each spin site, field in tesla); see docs/case-files.md")
    given = {p.symbol: v for p, v in parameter_values(case, values).items()}
    start = {**case.defaults, **given}
    B = _fields(case, data, start)
    finite = quantity == "M" or bool(np.any(B > 0))
    _check_varied(case, vary, start)
    model = magnetometry_model(case, quantity, list(vary), values=values, finite_field=finite,
                               budget=budget, progress=progress)
    progress(f"fitting {', '.join(vary)} to {len(data)} points of {quantity}")
    sol = _least_squares(model, data, B, start)
    fitted, _ = model(sol.x, np.array(data.T, dtype=float), B)
    return _fit_result(case, data, tuple(vary), model, sol, start, fitted, B, curve_points)


def _fields(case: Case, data: DataTable, start: Mapping[sp.Symbol, sp.Expr]) -> np.ndarray:
    """The field (tesla) at each data point: the B column, or the case's field value."""
    mag = case.magnetism
    field = sp.sympify(mag.zeeman.field).subs(start)  # safe: sympy object
    if data.B is not None:
        B = np.array(data.B, dtype=float)
    elif field.free_symbols:
        raise InputError(f"{case.source}: the field {mag.zeeman.field} has no value; give it in "
                         f"the case file, with --set, or as a B column of the data")
    else:
        B = np.full(len(data), float(field))
    if data.quantity == "M" and np.all(B == 0):
        raise InputError(f"{data.source}: M data need a field: add a B column (tesla) or give the "
                         f"case's field a value")
    if data.quantity != "M" and np.any(B > 0) and np.any(B <= 0):
        raise InputError(f"{data.source}: chi measured in a field is M/B, so every field must be "
                         f"> 0; mixed zero and finite fields are not supported")
    return B


def _check_varied(case: Case, vary: Sequence[str], start: Mapping[sp.Symbol, sp.Expr]) -> None:
    """Every varied name is a parameter of the case and has a start value."""
    missing = [v for v in vary if v not in case.symbols]
    if missing:
        known = ", ".join(case.symbols) or "none"
        raise InputError(f"--vary {missing[0]}: {case.source} declares no parameter "
                         f"{missing[0]!r} (parameters: {known})")
    no_start = [v for v in vary if case.symbols[v] not in start]
    if no_start:
        raise InputError(f"--vary {no_start[0]}: no start value; give one in the case file or "
                         f"with --set {no_start[0]}=VALUE")


def _least_squares(model: MagnetometryModel, data: DataTable, B: np.ndarray,
                   start: Mapping[sp.Symbol, sp.Expr]):
    """scipy's trust-region least squares of the weighted residuals, within the bounds."""
    import scipy.optimize  # here, not at import: half a second or more for every other command
    varied = model.varied
    lo, hi = _bounds(model.case, varied, model.entries)
    x0 = np.clip(np.array([float(start[s]) for s in varied]), lo, hi)
    sigma = np.array(data.sigma, dtype=float) if data.sigma is not None else np.ones(len(data))
    y = np.array(data.values, dtype=float)
    T = np.array(data.T, dtype=float)

    def residuals(theta):
        m, _ = model(theta, T, B)
        return (m - y) / sigma

    def jacobian(theta):
        _, jac = model(theta, T, B)
        return jac / sigma[:, None]

    with np.errstate(over="ignore", under="ignore"):
        return scipy.optimize.least_squares(residuals, x0, jac=jacobian, bounds=(lo, hi),
                                            method="trf", x_scale="jac",
                                            max_nfev=MAX_EVALUATIONS)


def _fit_result(case: Case, data: DataTable, vary: tuple[str, ...], model: MagnetometryModel,
                sol, start: Mapping[sp.Symbol, sp.Expr], fitted: np.ndarray, B: np.ndarray,
                curve_points: int) -> FitResult:
    """Errors, correlations and curves of a finished fit, as a :class:`FitResult`."""
    varied = model.varied
    r = sol.fun
    chi2 = float(r @ r)
    dof = len(data) - len(varied)
    cov = _covariance(sol.jac)
    if data.sigma is None and dof > 0:
        cov = cov * (chi2 / dof)
    err = np.sqrt(np.clip(np.diag(cov), 0, None))
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = cov / np.outer(err, err)
    curves, x_name = _curves(model, sol.x, data, B, curve_points)
    fixed = tuple((p.name, float(start[p.symbol])) for p in case.parameters
                  if p.symbol not in set(varied) and p.symbol in start)
    unit = UNITS[(data.quantity, case.magnetism.sample.system)]
    return FitResult(case.name, data, data.quantity, unit, case.temperature_unit, vary,
                     tuple(float(v) for v in sol.x), tuple(float(e) for e in err), corr, chi2,
                     dof, data.sigma is not None, fixed, bool(sol.success), str(sol.message),
                     int(sol.nfev), model.describe(), np.asarray(fitted), curves, x_name,
                     tuple((p.name, p.unit) for p in case.parameters if p.unit))


def _covariance(J: np.ndarray) -> np.ndarray:
    """:math:`(J^TJ)^{-1}` by a singular value decomposition (pseudo-inverse for a singular J,
    so a parameter the data do not constrain gets an infinite error rather than a crash)."""
    _, s, Vt = np.linalg.svd(J, full_matrices=False)
    tiny = np.finfo(float).eps * max(J.shape) * (s[0] if s.size else 0.0)
    inv = np.where(s > tiny, 1.0 / np.where(s > tiny, s, 1.0) ** 2, np.inf)
    with np.errstate(invalid="ignore"):
        cov = (Vt.T * inv) @ Vt
    return cov


def _curves(model: MagnetometryModel, theta, data: DataTable, B: np.ndarray,
            points: int) -> tuple[tuple[Curve, ...], str]:
    """Model curves over the data range: against B at each temperature of an M(B) table (when
    the field varies), otherwise against T at each field."""
    T = np.asarray(data.T)
    if data.B is not None and np.unique(data.B).size > 1 and data.quantity == "M":
        out = []
        for t in np.unique(T):
            sel = T == t
            x = np.linspace(0.0, float(B[sel].max()) * 1.02, points)
            x[0] = x[1] * 1e-3
            y, _ = model(theta, np.full(points, t), x)
            out.append(Curve(f"T = {t:g} {model.case.temperature_unit}", x, y))
        return tuple(out), "B"
    out = []
    for b in np.unique(B):
        sel = B == b
        lo, hi = float(T[sel].min()), float(T[sel].max())
        x = np.geomspace(lo, hi, points) if hi > lo else np.array([lo])
        y, _ = model(theta, x, np.full(x.shape, b))
        out.append(Curve(f"B = {b:g} T", x, y))
    return tuple(out), "T"
