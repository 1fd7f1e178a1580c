r"""Physical consistency checks of a derivation (layer: checks).

Owns :func:`consistency` and its result :class:`Report` (rows of :class:`CheckRow`). Imports
numpy, sympy, mpmath, :mod:`symresp.conventions`, :mod:`symresp.errors`,
:mod:`symresp.algebra` (commutators, adjoints, matrix forms), :mod:`symresp.response`,
:mod:`symresp.numeric` and :mod:`._points`.

Every check evaluates the *derived* closed forms (or the derived pole table) at random
parameter points and inverse temperatures and tests an exact relation against an independent
computation: a commutator expectation in the Gibbs state of the numeric reference, a numerical
Hilbert transform, the correlation spectrum built from a numeric eigen-decomposition, or a trace
at infinite temperature. The relations (pinned convention, :math:`\hbar = k_B = 1`):

* zeroth moment :math:`\sum_k w_k = \langle[A, B]\rangle`, first moment
  :math:`\sum_k w_k\Omega_k = \langle[[A, H], B]\rangle`
  (Source: R. Kubo, J. Phys. Soc. Jpn. 12, 570 (1957));
* Kramers–Kronig: :math:`\chi(\omega + i\eta) = \frac{1}{i\pi}\mathcal P\!\int d\omega'\,
  \chi(\omega' + i\eta)/(\omega' - \omega)` for a function analytic above the real axis that
  falls off as :math:`1/\omega` (common practice);
* fluctuation–dissipation, line by line: :math:`S(\Omega) = 2\chi''(\Omega)/(1 - e^{-\beta\Omega})`
  with :math:`S = 2\pi\sum p_n A_{nm}B_{mn}\delta(\omega - (E_m - E_n))` and
  :math:`\chi'' = \pi\sum_k w_k\delta(\omega - \Omega_k)`
  (Source: H. B. Callen and T. A. Welton, Phys. Rev. 83, 34 (1951));
* the elastic line of :math:`S` equals the Curie term:
  :math:`\chi_T - \chi^{\rm isol} = \beta(S_0/2\pi - \langle A\rangle\langle B\rangle)`;
* positivity :math:`\Omega_k w_k \ge 0` for :math:`A = B^\dagger`, and
  :math:`\chi_T - \chi^{\rm isol} = \beta\,\mathrm{Var}(\bar B) \ge 0` for :math:`A = B` Hermitian;
* Onsager reciprocity :math:`\chi_{AB} = \epsilon_A\epsilon_B\chi_{BA}` when :math:`H` is a real
  matrix and :math:`A^T = \epsilon_A A`, :math:`B^T = \epsilon_B B`
  (complex conjugation in the product basis is then an antiunitary symmetry of :math:`H`);
* high temperature :math:`\chi_T/\beta \to \mathrm{Tr}(AB)/d - \mathrm{Tr}A\,\mathrm{Tr}B/d^2`;
* agreement of every closed form with exact diagonalisation (:mod:`symresp.numeric`);
* correlation lines (:meth:`Derivation.correlation_lines`): the fluctuation-dissipation
  relation :math:`w_k = (1 - e^{-\beta\Omega_k})s_k` line by line and, for A = B, detailed
  balance :math:`s(-\Omega) = e^{-\beta\Omega}s(\Omega)` (Source: Callen and Welton 1951);
  Kubo's canonical sum rule :math:`\chi_T = \beta(\sum_k s^K_k - \langle A\rangle\langle B\rangle)`
  (Source: R. Kubo, J. Phys. Soc. Jpn. 12, 570 (1957)); the lines against the numeric
  reference.
"""

from __future__ import annotations

import math
import random
from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

import mpmath as mp
import numpy as np
import sympy as sp

from .._public import public
from ..algebra import commutator, dagger, to_array
from ..conventions import beta, omega, t
from ..errors import InputError, SymrespError
from ..models import checkpoint
from ..numeric import NumericResponse, correlation_lines, eigensystem, expectation, solve
from ..response import Derivation, compile_expression, derive, to_mp
from ._points import PREC_BITS, draw_beta, draw_parameters, draw_real

__all__ = ["CheckRow", "Report", "consistency", "CHECK_NAMES"]

Status = Literal["pass", "fail", "not applicable"]

#: Sum rules, line-by-line relations and agreement with the numeric reference: the derived side
#: is evaluated with 30 digits, the reference in double precision on matrices of modest size.
NUMERIC_TOL = 1e-9
#: Numerical Hilbert transform (midpoint rule on a finite window plus a 1/omega tail).
KK_TOL = 1e-6
#: Richardson-extrapolated high-temperature limit (error of order (beta E)^2 at beta E = 1e-4).
HIGH_T_TOL = 1e-6
#: Sign conditions, relative to the natural scale of the quantity.
SIGN_TOL = 1e-12
#: Broadening, grid step and window of the Kramers-Kronig check, in units of the largest |Omega|.
_KK_ETA = 1 / 20
_KK_STEPS_PER_ETA = 8
_KK_WINDOW = 200
#: A matrix entry counts as zero below this (relative to the largest entry): realness of H and
#: definite transposition parity of A, B.
_MATRIX_TOL = 1e-12
#: Inverse temperature of the high-temperature check, in units of 1 / (spectral width).
_HIGH_T_BETA = 1e-4
#: Random points are redrawn at most this often when one lands on a pole of the formulas.
_REDRAWS = 5

CHECK_NAMES = (
    "zeroth moment", "first moment", "Kramers-Kronig", "fluctuation-dissipation",
    "Curie term vs elastic line", "positivity", "isothermal >= isolated", "Onsager reciprocity",
    "high-temperature limit", "reference: isothermal", "reference: isolated",
    "reference: frequency", "reference: time", "reference: partition",
    "correlation: fluctuation-dissipation", "correlation: detailed balance",
    "correlation: canonical sum rule", "reference: correlation",
)


@public
@dataclass(frozen=True, slots=True)
class CheckRow:
    """One row of a consistency report.

    Attributes
    ----------
    name : str
        The check (one of ``symresp.checks.CHECK_NAMES``).
    status : {"pass", "fail", "not applicable"}
    deviation : float or None
        Worst relative deviation over the points (None when not applicable).
    relation : str
        The relation tested, in the notation of ``docs/conventions.md``.
    note : str
        Why a check does not apply, or where it failed.

    Examples
    --------
    >>> from symresp.checks import CheckRow
    >>> CheckRow("positivity", "pass", 0.0, "Omega_k w_k >= 0").status
    'pass'
    """

    name: str
    status: Status
    deviation: float | None
    relation: str
    note: str = ""


@public
@dataclass(frozen=True, slots=True)
class Report:
    """Result of :func:`consistency`: a table of checks.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.checks import consistency
    >>> h = sp.Symbol("h", positive=True); s = sr.spin("s", sp.Rational(1, 2))
    >>> report = consistency(sr.Model(h * s.z).response(s.x).derivation, points=1)
    >>> report.ok, report.row("positivity").status
    (True, 'pass')
    """

    rows: tuple[CheckRow, ...]
    points: int
    seed: int

    @property
    def ok(self) -> bool:
        """True when no check failed."""
        return all(r.status != "fail" for r in self.rows)

    @property
    def failed(self) -> tuple[str, ...]:
        """Names of the failed checks."""
        return tuple(r.name for r in self.rows if r.status == "fail")

    def row(self, name: str) -> CheckRow:
        """The row of check ``name``."""
        for r in self.rows:
            if r.name == name:
                return r
        raise InputError(f"Report.row: no check named {name!r} (checks: {', '.join(CHECK_NAMES)})")

    def table(self) -> str:
        """Text table: check, status, worst deviation, relation (and a note where useful)."""
        w1 = max(len(r.name) for r in self.rows)
        w2 = max(len(r.status) for r in self.rows)
        lines = [f"{'check':<{w1}}  {'status':<{w2}}  {'deviation':<9}  relation",
                 f"{'-' * w1}  {'-' * w2}  {'-' * 9}  {'-' * 8}"]
        for r in self.rows:
            dev = "-" if r.deviation is None else f"{r.deviation:.1e}"
            note = f"   [{r.note}]" if r.note else ""
            lines.append(f"{r.name:<{w1}}  {r.status:<{w2}}  {dev:<9}  {r.relation}{note}")
        verdict = "all applicable checks pass" if self.ok else f"FAILED: {', '.join(self.failed)}"
        lines.append(f"({self.points} random point(s), seed {self.seed}): {verdict}")
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.table()


# ----------------------------------------------------------------------------- points
@dataclass(frozen=True, slots=True, eq=False)
class _Point:
    """One random parameter point with everything the checks share."""

    subs: dict                     # sympy values of the parameters and beta
    beta: float
    H: np.ndarray
    A: np.ndarray
    B: np.ndarray
    ref: NumericResponse
    poles: tuple[tuple[complex, complex], ...]   # derived (Omega_k, w_k), pinned convention
    scale_ab: float                # ||A||_F ||B||_F / d: size of <AB>
    scale_e: float                 # spectral width (1 if zero)
    z: complex                     # a random complex frequency, Im z > 0
    time: float                    # a random time > 0


class _Closed:
    """The derived closed forms of one derivation, compiled once and evaluated with mpmath."""

    def __init__(self, d: Derivation, params: tuple[sp.Symbol, ...]) -> None:
        self.d = d
        self.params = params
        self.args = (*params, beta, omega, t)
        self._functions: dict[object, Callable] = {}

    def _expression(self, key: object) -> sp.Expr:
        d = self.d
        if key in ("isothermal", "isolated"):
            return d.static(key)
        if key == "frequency":
            return d.frequency(omega)
        if key == "time":
            return d.time(t)
        if key == "partition":
            return d.partition()
        if key[0] == "corr":
            _, kind, k, part = key
            Om, sk = d.correlation_lines(kind)[k]
            return Om if part == "Omega" else sk
        what, k = key
        tr = d.transitions()[k]
        return tr.frequency if what == "Omega" else tr.weight

    def __call__(self, key: object, subs: dict, *, beta_value: object = None, z: complex = 0j,
                 time: float = 0.0) -> complex:
        f = self._functions.get(key)
        if f is None:
            f = compile_expression(self._expression(key), self.args)
            self._functions[key] = f
        b = to_mp(subs[beta]).real if beta_value is None else mp.mpf(beta_value)
        values = [to_mp(subs[p]).real for p in self.params]
        return complex(f(*values, b, mp.mpc(z), mp.mpf(time)))


def _make_point(d: Derivation, closed: _Closed, rng: random.Random) -> _Point:
    values = draw_parameters(rng, closed.params)
    b = draw_beta(rng)
    subs = dict(values)
    subs[beta] = b
    system = d.system
    basis = system.basis()
    numeric_params = {k: complex(v) for k, v in values.items()}
    H = to_array(system.hamiltonian, basis, numeric_params)
    A = to_array(d.A, basis, numeric_params)
    B = to_array(d.B, basis, numeric_params)
    ref = solve(H, A, B, float(b))
    poles = tuple((closed(("Omega", k), subs), closed(("w", k), subs))
                  for k in range(len(d.transitions())))
    dim = H.shape[0]
    energies = np.linalg.eigvalsh(H)
    width = float(energies[-1] - energies[0])
    scale_ab = float(np.linalg.norm(A) * np.linalg.norm(B)) / dim
    z = complex(float(draw_real(rng, sp.Integer(-2), sp.Integer(2))),
                float(draw_real(rng, sp.Rational(1, 10), sp.Integer(1))))
    time = float(draw_real(rng, sp.Rational(1, 10), sp.Integer(4)))
    return _Point(subs, float(b), H, A, B, ref, poles, max(scale_ab, 1e-300),
                  width if width > 0 else 1.0, z, time)


def _draw_point(d: Derivation, closed: _Closed, rng: random.Random) -> _Point:
    """A random point, redrawn when it lands on an accidental degeneracy (a pole of the formulas)."""
    for _ in range(_REDRAWS):
        try:
            p = _make_point(d, closed, rng)
        except (ZeroDivisionError, OverflowError, ValueError):
            continue
        if all(math.isfinite(abs(om)) and math.isfinite(abs(w)) for om, w in p.poles):
            return p
    raise InputError("consistency: the derived formulas could not be evaluated at random points of "
                     "the parameter domain (are the parameters declared with their true domain?)")


def _rel(a: complex, b: complex, floor: float) -> float:
    return abs(a - b) / max(abs(a), abs(b), floor)


def _row(name: str, relation: str, deviations: list[float], tol: float, note: str = "") -> CheckRow:
    worst = max(deviations) + 0.0 if deviations else 0.0    # + 0.0 turns -0.0 into 0.0
    status: Status = "pass" if worst <= tol else "fail"
    return CheckRow(name, status, float(worst), relation, note)


def _na(name: str, relation: str, why: str) -> CheckRow:
    return CheckRow(name, "not applicable", None, relation, why)


# ----------------------------------------------------------------------------- checks
def _moments(d: Derivation, pts: list[_Point]) -> list[CheckRow]:
    H_op = d.system.hamiltonian
    basis = d.system.basis()
    c0 = commutator(d.A, d.B)
    c1 = commutator(commutator(d.A, H_op), d.B)
    dev0, dev1 = [], []
    for p in pts:
        params = {k: complex(v) for k, v in p.subs.items() if k != beta}
        m0 = expectation(p.H, to_array(c0, basis, params), p.beta)
        m1 = expectation(p.H, to_array(c1, basis, params), p.beta)
        s0 = sum((w for _, w in p.poles), 0j)
        s1 = sum((w * om for om, w in p.poles), 0j)
        dev0.append(_rel(s0, m0, p.scale_ab))
        dev1.append(_rel(s1, m1, p.scale_ab * p.scale_e))
    return [_row("zeroth moment", "sum_k w_k = <[A,B]>", dev0, NUMERIC_TOL),
            _row("first moment", "sum_k w_k Omega_k = <[[A,H],B]>", dev1, NUMERIC_TOL)]


def _kramers_kronig(d: Derivation, closed: _Closed, pts: list[_Point]) -> CheckRow:
    relation = "chi(w+i eta) = (1/(i pi)) P int chi(w'+i eta)/(w'-w) dw'"
    expr = d.frequency(omega)
    if not expr.has(omega) or not any(p.poles for p in pts):
        return _na("Kramers-Kronig", relation, "no transitions")
    # numpy speed on a 10^5-point grid; the derived expression itself is what is transformed
    f = compile_expression(expr, closed.args, backend="numpy")
    devs = []
    for p in pts:
        values = [float(p.subs[q]) for q in closed.params]
        devs.append(_kk_deviation(lambda w: f(*values, p.beta, w, 0.0), [om.real for om, _ in p.poles]))
    return _row("Kramers-Kronig", relation, devs, KK_TOL)


def _kk_deviation(f: Callable, frequencies: list[float]) -> float:
    """Largest |chi(w0 + i eta) - (1/i pi) P int chi(w' + i eta)/(w' - w0)| / max|chi| on a grid."""
    big = max(abs(x) for x in frequencies) or 1.0
    eta_ = big * _KK_ETA
    h = eta_ / _KK_STEPS_PER_ETA
    M = int(round(_KK_WINDOW * big / h))
    L = M * h
    nodes = -L + (np.arange(2 * M) + 0.5) * h       # midpoints: never equal to a test w0 = j h
    g = np.asarray(f(nodes + 1j * eta_), dtype=complex) * np.ones_like(nodes)
    g_hi, g_lo = complex(f(L + 1j * eta_)), complex(f(-L + 1j * eta_))
    tests = {0.0}
    for x in frequencies:
        tests |= {x, x + 2 * eta_, x - 3 * eta_}
    tests |= {0.5 * big, -1.5 * big}
    scale = float(np.max(np.abs(g))) or 1.0
    worst = 0.0
    for x in sorted(tests):
        w0 = round(x / h) * h
        f0 = complex(f(w0 + 1j * eta_))
        pv = h * np.sum((g - f0) / (nodes - w0)) + f0 * math.log((L - w0) / (L + w0))
        if w0 == 0:
            tail = g_hi - g_lo
        else:
            tail = g_hi * (L / w0) * -math.log1p(-w0 / L) - g_lo * (L / w0) * math.log1p(w0 / L)
        predicted = (pv + tail) / (1j * math.pi)
        worst = max(worst, abs(predicted - f0) / scale)
    return worst


def _levels_numeric(p: _Point) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Level energies, populations per state and W_ab from a numeric eigen-decomposition."""
    es = eigensystem(p.H)
    V = es.vectors
    Ae = V.conj().T @ p.A @ V
    Be = V.conj().T @ p.B @ V
    S = np.zeros((es.n_levels, es.dimension))
    S[es.labels, np.arange(es.dimension)] = 1.0
    W = S @ (Ae * Be.T) @ S.T                       # W_ab = sum_{n in a, m in b} A_nm B_mn
    E = es.level_energies
    x = np.exp(-p.beta * (E - E[0]))
    pop = x / np.sum(es.degeneracies * x)
    return E, pop, W


def _cluster(freqs: list[float], tol: float) -> list[float]:
    out: list[float] = []
    for f in sorted(freqs):
        if not out or f - out[-1] > tol:
            out.append(f)
    return out


def _fluctuation_dissipation(d: Derivation, closed: _Closed, pts: list[_Point]) -> list[CheckRow]:
    rel_fdt = "S(Omega) = 2 chi''(Omega) / (1 - exp(-beta Omega)), line by line"
    rel_el = "chi_T - chi_isol = beta (S_0/(2 pi) - <A><B>)"
    s = d.convention.sign
    devs, devs_el = [], []
    any_lines = False
    for p in pts:
        E, pop, W = _levels_numeric(p)
        tol = 1e-8 * p.scale_e
        lines_s: list[tuple[float, complex]] = []
        for a in range(len(E)):
            for b in range(len(E)):
                if a != b and abs(W[a, b]) > 1e-14 * p.scale_ab * len(E):
                    lines_s.append((float(E[b] - E[a]), 2 * math.pi * pop[a] * W[a, b]))
        lines_x = [(om.real, math.pi * w) for om, w in p.poles]
        centres = _cluster([f for f, _ in lines_s] + [f for f, _ in lines_x], tol)
        ref_scale = max([abs(v) for _, v in lines_s] + [2 * math.pi * p.scale_ab * 1e-3])
        worst = 0.0
        for c in centres:
            if abs(c) <= tol:
                continue
            any_lines = True
            S = sum((v for f, v in lines_s if abs(f - c) <= tol), 0j)
            X = sum((v for f, v in lines_x if abs(f - c) <= tol), 0j)
            predicted = 2 * X / -math.expm1(-p.beta * c)
            worst = max(worst, abs(S - predicted) / ref_scale)
        devs.append(worst)
        # elastic line: S_0 = 2 pi sum_a p_a W_aa
        S0 = 2 * math.pi * float(np.sum(np.diag(W).real * pop)) + 2j * math.pi * float(np.sum(np.diag(W).imag * pop))
        mA, mB = p.ref.expectation_A, p.ref.expectation_B
        rhs = p.beta * (S0 / (2 * math.pi) - mA * mB)
        lhs = s * (closed("isothermal", p.subs) - closed("isolated", p.subs))
        devs_el.append(_rel(lhs, rhs, p.beta * p.scale_ab))
    rows = []
    if any_lines:
        rows.append(_row("fluctuation-dissipation", rel_fdt, devs, NUMERIC_TOL))
    else:
        rows.append(_na("fluctuation-dissipation", rel_fdt, "no transitions"))
    rows.append(_row("Curie term vs elastic line", rel_el, devs_el, NUMERIC_TOL))
    return rows


def _positivity(d: Derivation, closed: _Closed, pts: list[_Point]) -> list[CheckRow]:
    rel_pos = "Omega_k w_k >= 0 and w_k real (A = B^dagger)"
    rel_var = "chi_T - chi_isol = beta Var(B_bar) >= 0 (A = B Hermitian)"
    rows = []
    if d.A == dagger(d.B):
        devs = []
        for p in pts:
            worst = 0.0
            for om, w in p.poles:
                v = om.real * w
                worst = max(worst, -v.real, abs(w.imag) * abs(om.real))
            devs.append(max(worst, 0.0) / (p.scale_ab * p.scale_e))
        rows.append(_row("positivity", rel_pos, devs, SIGN_TOL))
    else:
        rows.append(_na("positivity", rel_pos, "A is not B^dagger"))
    if d.A == d.B and d.A.is_hermitian():
        s = d.convention.sign
        devs = []
        for p in pts:
            diff = s * (closed("isothermal", p.subs) - closed("isolated", p.subs))
            devs.append(max(-diff.real, abs(diff.imag), 0.0) / (p.beta * p.scale_ab) + 0.0)
        rows.append(_row("isothermal >= isolated", rel_var, devs, SIGN_TOL))
    else:
        rows.append(_na("isothermal >= isolated", rel_var, "A is not B, or not Hermitian"))
    return rows


def _parity(X: np.ndarray) -> int | None:
    """+1 if X^T = X, -1 if X^T = -X, None otherwise (within _MATRIX_TOL)."""
    size = max(float(np.max(np.abs(X))), 1e-300)
    if np.max(np.abs(X.T - X)) <= _MATRIX_TOL * size:
        return 1
    if np.max(np.abs(X.T + X)) <= _MATRIX_TOL * size:
        return -1
    return None


def _onsager(d: Derivation, closed: _Closed, pts: list[_Point]) -> CheckRow:
    name = "Onsager reciprocity"
    relation = "chi_AB = eps_A eps_B chi_BA (H real, A^T = eps_A A, B^T = eps_B B)"
    if d.A == d.B:
        return _na(name, relation, "A = B")
    p0 = pts[0]
    if np.max(np.abs(p0.H.imag)) > _MATRIX_TOL * max(float(np.max(np.abs(p0.H))), 1e-300):
        return _na(name, relation, "H is not a real matrix")
    eps_a, eps_b = _parity(p0.A), _parity(p0.B)
    if eps_a is None or eps_b is None:
        return _na(name, relation, "A or B has no definite parity under transposition")
    try:
        other = derive(d.system, d.B, d.A, convention=d.convention)
    except SymrespError as err:
        return _na(name, relation, f"chi_BA could not be derived: {err}")
    eps = eps_a * eps_b
    reverse = _Closed(other, closed.params)
    devs = []
    for p in pts:
        devs.append(_rel(closed("frequency", p.subs, z=p.z), eps * reverse("frequency", p.subs, z=p.z),
                         p.scale_ab / p.scale_e))
        devs.append(_rel(closed("isothermal", p.subs), eps * reverse("isothermal", p.subs),
                         p.beta * p.scale_ab))
    return _row(name, relation, devs, NUMERIC_TOL, f"eps_A eps_B = {eps:+d}")


def _high_temperature(d: Derivation, closed: _Closed, pts: list[_Point]) -> CheckRow:
    relation = "chi_T / beta -> Tr(AB)/d - Tr(A) Tr(B)/d^2 as beta -> 0"
    s = d.convention.sign
    devs = []
    for p in pts:
        dim = p.H.shape[0]
        expected = s * (np.trace(p.A @ p.B) / dim - np.trace(p.A) * np.trace(p.B) / dim**2)
        b1 = mp.mpf(_HIGH_T_BETA) / p.scale_e
        g1 = closed("isothermal", p.subs, beta_value=b1) / float(b1)
        g2 = closed("isothermal", p.subs, beta_value=b1 / 2) / float(b1 / 2)
        limit = 2 * g2 - g1                         # Richardson: g = c0 + c1 beta + O(beta^2)
        devs.append(_rel(limit, complex(expected), p.scale_ab))
    return _row("high-temperature limit", relation, devs, HIGH_T_TOL)


def _reference(d: Derivation, closed: _Closed, pts: list[_Point]) -> list[CheckRow]:
    conv = d.convention
    s, sig = conv.sign, conv.frequency_sign
    rows = []
    for kind in ("isothermal", "isolated"):
        devs = []
        for p in pts:
            ref = p.ref.isothermal if kind == "isothermal" else p.ref.isolated
            devs.append(_rel(closed(kind, p.subs), s * ref, p.scale_ab * max(p.beta, 1 / p.scale_e)))
        rows.append(_row(f"reference: {kind}", f"static('{kind}') = exact diagonalisation", devs,
                         NUMERIC_TOL))
    devs = [_rel(closed("frequency", p.subs, z=p.z), s * p.ref.evaluate(sig * p.z), p.scale_ab / p.scale_e)
            for p in pts]
    rows.append(_row("reference: frequency", "frequency() at complex omega = exact diagonalisation",
                     devs, NUMERIC_TOL))
    rel_t = "time() = exact diagonalisation"
    if conv.prescription == "advanced":
        rows.append(_na("reference: time", rel_t, "advanced convention: chi(t) = 0 for t > 0"))
    else:
        devs = [_rel(closed("time", p.subs, time=p.time), s * p.ref.time(p.time), p.scale_ab) for p in pts]
        rows.append(_row("reference: time", rel_t, devs, NUMERIC_TOL))
    devs = []
    for p in pts:
        z_derived = closed("partition", p.subs)
        log_derived = math.log(abs(z_derived)) if z_derived.real > 0 else math.inf
        devs.append(abs(log_derived - p.ref.log_Z) + abs(z_derived.imag) / abs(z_derived))
    rows.append(_row("reference: partition", "log partition() = log Z of exact diagonalisation",
                     devs, NUMERIC_TOL))
    return rows


def _key(f: float, p: _Point) -> int:
    """Frequencies that agree to 1e-9 of the spectral width share a key."""
    return round(f / (1e-9 * p.scale_e))


def _lines(d: Derivation, closed: _Closed, p: _Point, kind: str) -> dict[int, list]:
    """Derived correlation lines at a point, merged where frequencies agree numerically:
    key -> [frequency of the pinned convention, weight]."""
    out: dict[int, list] = {}
    sig = d.convention.frequency_sign         # lines sit at sig * Omega: back to Omega
    for k in range(len(d.correlation_lines(kind))):
        f = sig * closed(("corr", kind, k, "Omega"), p.subs).real
        entry = out.setdefault(_key(f, p), [f, 0j])
        entry[1] += closed(("corr", kind, k, "s"), p.subs)
    return out


def _correlation(d: Derivation, closed: _Closed, pts: list[_Point]) -> list[CheckRow]:
    r"""Correlation lines: fluctuation-dissipation :math:`w_k = (1 - e^{-\beta\Omega_k})s_k`
    line by line, detailed balance :math:`s(-\Omega) = e^{-\beta\Omega}s(\Omega)` (A = B),
    Kubo's canonical sum rule :math:`\chi_T = \beta(\sum_k s^K_k - \langle A\rangle\langle B\rangle)`
    and agreement with the numeric reference."""
    rel_fdt = "w_k = (1 - exp(-beta Omega_k)) s_k, line by line"
    rel_db = "s(-Omega) = exp(-beta Omega) s(Omega) (A = B)"
    rel_k = "chi_T = beta (sum_k s_k^canonical - <A><B>)"
    rel_ref = "correlation_lines() = exact diagonalisation"
    fdt, db, kubo, ref_dev = [], [], [], []
    sym = d.A == d.B
    for p in pts:
        plain = _lines(d, closed, p, "plain")
        scale = max([abs(v) for _, v in plain.values()] + [p.scale_ab * 1e-3])
        poles: dict[int, list] = {}
        for om, w in p.poles:
            entry = poles.setdefault(_key(om.real, p), [om.real, 0j])
            entry[1] += w
        worst = 0.0
        for key, (f, w) in poles.items():
            predicted = -math.expm1(-p.beta * f) * plain.get(key, [f, 0j])[1]
            worst = max(worst, abs(w - predicted) / scale)
        fdt.append(worst)
        if sym:
            worst = 0.0
            for key, (f, s_) in plain.items():
                partner = plain.get(_key(-f, p), [-f, 0j])[1]
                worst = max(worst, abs(partner - math.exp(-p.beta * f) * s_) / scale)
            db.append(worst)
        canonical = sum((v for _, v in _lines(d, closed, p, "canonical").values()), 0j)
        s = d.convention.sign
        chi = s * p.beta * (canonical - p.ref.expectation_A * p.ref.expectation_B)
        kubo.append(_rel(closed("isothermal", p.subs), chi, p.beta * p.scale_ab))
        f_ref, s_ref = correlation_lines(p.H, p.A, p.B, p.beta)
        ref_lines: dict[int, complex] = {}
        for f, v in zip(f_ref, s_ref):
            ref_lines[_key(f, p)] = ref_lines.get(_key(f, p), 0j) + v
        keys = set(plain) | set(ref_lines)
        ref_dev.append(max((abs(plain.get(k_, [0, 0j])[1] - ref_lines.get(k_, 0j)) / scale
                            for k_ in keys), default=0.0))
    if any(p.poles for p in pts):
        rows = [_row("correlation: fluctuation-dissipation", rel_fdt, fdt, NUMERIC_TOL)]
    else:
        rows = [_na("correlation: fluctuation-dissipation", rel_fdt, "no transitions")]
    rows.append(_row("correlation: detailed balance", rel_db, db, NUMERIC_TOL) if sym else
                _na("correlation: detailed balance", rel_db,
                    "A != B (in general S_AB(-w) = exp(-beta w) S_BA(w))"))
    rows.append(_row("correlation: canonical sum rule", rel_k, kubo, NUMERIC_TOL))
    rows.append(_row("reference: correlation", rel_ref, ref_dev, NUMERIC_TOL))
    return rows


# ----------------------------------------------------------------------------- entry point
@public
def consistency(derivation: Derivation, *, points: int = 3, seed: int = 0) -> Report:
    r"""Run every physical consistency check that applies to a derivation.

    Parameters
    ----------
    derivation : symresp.response.Derivation
        The derivation (``response.derivation``).
    points : int
        Number of random parameter points (each with its own :math:`\beta`).
    seed : int
        Seed of the random points.

    Returns
    -------
    Report
        One :class:`CheckRow` per check (see ``CHECK_NAMES``); ``report.ok`` is False when any
        applicable check fails, and ``report.table()`` renders the table.

    Raises
    ------
    InputError
        On a bad argument.

    Notes
    -----
    The relations are listed in the module docstring and in ``docs/checking.md``. The moments
    follow from :math:`[A, H]_{nm} = (E_m - E_n)A_{nm}`; the line-by-line
    fluctuation–dissipation relation from :math:`p_m = p_n e^{-\beta(E_m - E_n)}`.

    References
    ----------
    R. Kubo, J. Phys. Soc. Jpn. 12, 570 (1957) (response functions and sum rules).
    H. B. Callen and T. A. Welton, Phys. Rev. 83, 34 (1951) (fluctuation–dissipation).

    Examples
    --------
    Two-level system :math:`H = \Delta S^z`, :math:`A = B = S^x`:

    >>> import sympy as sp, symresp as sr
    >>> from symresp.checks import consistency
    >>> Delta = sp.Symbol("Delta", positive=True); q = sr.spin("q", sp.Rational(1, 2))
    >>> report = consistency(sr.Model(Delta * q.z).response(q.x).derivation, points=2)
    >>> report.ok
    True
    >>> [r.name for r in report.rows if r.status == "not applicable"]
    ['Onsager reciprocity']

    See Also
    --------
    compare
    """
    if not isinstance(derivation, Derivation):
        raise InputError(f"consistency: derivation={derivation!r} must be a symresp Derivation "
                         f"(use response.derivation)")
    if isinstance(points, bool) or not isinstance(points, int) or not 1 <= points <= 50:
        raise InputError(f"consistency: points={points!r} must be an integer in 1..50")
    if isinstance(seed, bool) or not isinstance(seed, int):
        raise InputError(f"consistency: seed={seed!r} must be an integer")
    d = derivation
    rng = random.Random(seed)
    params = tuple(sorted(set(d.system.parameters) | d.A.free_symbols | d.B.free_symbols,
                          key=lambda s: s.name))
    with mp.workprec(PREC_BITS):
        closed = _Closed(d, params)
        pts = []
        for k in range(points):
            checkpoint("consistency checks: drawing points", f"point {k + 1} of {points}")
            pts.append(_draw_point(d, closed, rng))
        rows: list[CheckRow] = []
        checkpoint("consistency checks: sum rules")
        rows += _moments(d, pts)
        checkpoint("consistency checks: Kramers-Kronig")
        rows.append(_kramers_kronig(d, closed, pts))
        checkpoint("consistency checks: fluctuation-dissipation")
        rows += _fluctuation_dissipation(d, closed, pts)
        checkpoint("consistency checks: positivity")
        rows += _positivity(d, closed, pts)
        checkpoint("consistency checks: Onsager reciprocity")
        rows.append(_onsager(d, closed, pts))
        checkpoint("consistency checks: high-temperature limit")
        rows.append(_high_temperature(d, closed, pts))
        checkpoint("consistency checks: exact diagonalisation")
        rows += _reference(d, closed, pts)
        checkpoint("consistency checks: correlation lines")
        rows += _correlation(d, closed, pts)
    return Report(tuple(rows), points, seed)
