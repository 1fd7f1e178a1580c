r"""Verification of a case: derived formulas against exact diagonalisation (layer: cases).

Owns :func:`derive_case`, :func:`verify_case`, :class:`Check` and :class:`Verification`.
Imports numpy, sympy, :mod:`symresp.algebra`, :mod:`symresp.models`, :mod:`symresp.response`,
:mod:`symresp.numeric` and the cases modules.

At random parameter points (drawn around the case's default values, respecting the declared
assumptions) and random temperatures, every requested quantity of every response is evaluated
from its closed form (30-digit arithmetic, :func:`evaluate_precise`) and compared with
:func:`symresp.numeric.solve` on the matrices of H, A and B:

* ``levels``: the derived energies, repeated by degeneracy, against the eigenvalues of H;
* ``Z``: the partition function;
* ``isothermal``, ``isolated``: the static susceptibilities;
* ``frequency``: :math:`\chi_{AB}(z)` at a complex point :math:`z = \omega + i\eta` above the
  real axis against the pole sum :math:`\sum_k w_k/(\Omega_k - z)`;
* ``time``: :math:`\chi_{AB}(t)` at a positive time;
* ``correlation``: the correlation lines broadened by a Lorentzian of half width
  :math:`\eta`, :math:`S(\omega) = 2\sum_k s_k\eta/((\omega - \Omega_k)^2 + \eta^2)`,
  against :func:`symresp.numeric.correlation_spectrum`.

A check passes when :math:`|x_{\rm derived} - x_{\rm reference}| \le` ``VERIFY_RTOL``
:math:`|x_{\rm reference}| +` ``VERIFY_ATOL`` :math:`(1 + s)`, with :math:`s` a natural scale
of the quantity.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import sympy as sp

from .. import numeric
from ..algebra import Operator, to_array
from ..conventions import beta, omega, t
from ..errors import InputError
from ..models import Budget
from ..response import Derivation, derive, evaluate_precise, respond
from ._read import Case

__all__ = ["derive_case", "verify_case", "Check", "Verification", "sample_point", "energy_scale",
           "VERIFY_RTOL", "VERIFY_ATOL"]

#: Relative tolerance of a verification check (double-precision diagonalisation).
VERIFY_RTOL = 1e-7
#: Absolute tolerance of a verification check, times (1 + scale of the quantity).
VERIFY_ATOL = 1e-9

Progress = Callable[[str], None]


def _quiet(_: str) -> None:
    return None


@dataclass(frozen=True, slots=True)
class Check:
    """One comparison of a derived quantity with the numeric reference."""

    response: str
    quantity: str
    point: int
    parameters: tuple[tuple[str, float], ...]
    T: float
    argument: complex | None
    derived: complex
    reference: complex
    tolerance: float

    @property
    def error(self) -> float:
        """Absolute difference between the derived and the reference value."""
        return abs(self.derived - self.reference)

    @property
    def ok(self) -> bool:
        """True when the difference is within the tolerance."""
        return bool(np.isfinite(self.error)) and self.error <= self.tolerance


@dataclass(frozen=True, slots=True)
class Verification:
    """All checks of one verification run."""

    case: str
    seed: int
    points: int
    checks: tuple[Check, ...]

    @property
    def ok(self) -> bool:
        """True when every check passed."""
        return all(c.ok for c in self.checks)

    @property
    def failures(self) -> tuple[Check, ...]:
        """The checks that failed."""
        return tuple(c for c in self.checks if not c.ok)


def derive_case(case: Case, *, budget: Budget = Budget(),
                progress: Progress = _quiet) -> tuple[tuple[str, Derivation], ...]:
    """Derive every response the case asks for (or only the levels when it asks for none).

    Returns
    -------
    tuple of (label, Derivation)

    Examples
    --------
    >>> from symresp.cases import derive_case, find_case, read_case
    >>> [(label, len(d.levels)) for label, d in derive_case(read_case(find_case("dimer")))]
    [('M', 4), ('Mx', 4)]
    """
    out = []
    if not case.responses:
        zero = Operator((), frozenset())
        progress(f"deriving the levels of {case.name}")
        out.append(("levels", derive(case.system, zero, zero, budget=budget)))
        return tuple(out)
    for k, req in enumerate(case.responses, 1):
        progress(f"deriving response {k}/{len(case.responses)} '{req.label}' "
                 f"(A = {req.A_text}, B = {req.B_text})")
        # Exact diagonalisation (the case's levels, tables and checks); for boson modes it
        # records the levels the cutoff touches.
        out.append((req.label, respond(case.system, req.A, req.B, route="lehmann", budget=budget)))
    return tuple(out)


def energy_scale(case: Case) -> float:
    """A typical energy of the case: the largest absolute default value, or 1."""
    vals = [abs(float(v)) for v in case.defaults.values() if v != 0]
    return max(vals) if vals else 1.0


def sample_point(case: Case, rng: np.random.Generator) -> dict[sp.Symbol, float]:
    """Random parameter values around the defaults, respecting each parameter's assumption."""
    scale = energy_scale(case)
    out: dict[sp.Symbol, float] = {}
    for p in case.parameters:
        v = float(p.value) if p.value is not None else None
        if p.assume in ("positive", "nonnegative"):
            if v:
                x = v * rng.uniform(0.5, 1.5)
            else:
                x = scale * rng.uniform(0.2 if p.assume == "positive" else 0.0, 1.5)
        else:
            base = v if v is not None else 0.0
            x = base * rng.uniform(0.5, 1.5) + scale * rng.uniform(-0.25, 0.25)
        out[p.symbol] = float(x)
    return out


def verify_case(case: Case, *, points: int = 3, seed: int = 0, budget: Budget = Budget(),
                derivations: tuple[tuple[str, Derivation], ...] | None = None,
                progress: Progress = _quiet) -> Verification:
    """Compare every derived quantity of ``case`` with exact diagonalisation.

    Parameters
    ----------
    case : Case
    points : int
        Number of random (parameter, temperature) points, 1 to 100.
    seed : int
        Seed of the random points (the same seed gives the same points).
    budget : Budget
        Limits of the derivations.
    derivations : tuple of (label, Derivation), optional
        Already derived responses (from :func:`derive_case`), to avoid deriving twice.
    progress : callable, optional
        Receives one line per stage.

    Returns
    -------
    Verification

    Examples
    --------
    >>> from symresp.cases import find_case, read_case, verify_case
    >>> verify_case(read_case(find_case("dimer")), points=2).ok
    True
    """
    if not isinstance(points, int) or isinstance(points, bool) or not 1 <= points <= 100:
        raise InputError(f"verify: points={points!r} must be an integer from 1 to 100")
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        raise InputError(f"verify: seed={seed!r} must be a non-negative integer")
    if derivations is None:
        derivations = derive_case(case, budget=budget, progress=progress)
    rng = np.random.default_rng(seed)
    scale = energy_scale(case)
    requests = {r.label: r.quantities for r in case.responses}
    checks: list[Check] = []
    for k in range(points):
        params = sample_point(case, rng)
        T = scale * float(rng.uniform(0.3, 3.0))
        z = complex(scale * rng.uniform(-2.0, 2.0), scale * rng.uniform(0.1, 0.5))
        time_value = float(rng.uniform(0.2, 3.0)) / scale
        progress(f"point {k + 1}/{points}: T = {T:.4g}, "
                 + ", ".join(f"{s.name} = {v:.4g}" for s, v in params.items()))
        shown = tuple((s.name, v) for s, v in params.items())
        for label, d in derivations:
            wanted = requests.get(label, ())
            checks += _check_point(label, d, wanted, params, shown, T, z, time_value, k, scale)
    return Verification(case.name, seed, points, tuple(checks))


def _check_point(label: str, d: Derivation, wanted: tuple[str, ...],
                 params: dict[sp.Symbol, float], shown: tuple[tuple[str, float], ...], T: float,
                 z: complex, time_value: float, k: int, scale: float) -> list[Check]:
    system = d.system
    used = {s: v for s, v in params.items() if s in set(system.parameters)}
    basis = system.basis()
    H = to_array(system.hamiltonian, basis, used)
    A = to_array(d.A, basis, used)
    B = to_array(d.B, basis, used)
    ref = numeric.solve(H, A, B, 1.0 / T)
    values: dict[sp.Symbol, complex | float] = dict(used)
    values[beta] = 1.0 / T
    out: list[Check] = []

    def add(quantity: str, derived: complex, reference: complex, size: float,
            argument: complex | None = None) -> None:
        tol = VERIFY_RTOL * abs(reference) + VERIFY_ATOL * (1.0 + size)
        out.append(Check(label, quantity, k + 1, shown, T, argument, derived, reference, tol))

    # levels: derived energies repeated by degeneracy against the eigenvalues of H
    derived_E = sorted(evaluate_precise(lv.energy, values).real for lv in d.levels
                       for _ in range(lv.degeneracy))
    exact_E = np.linalg.eigvalsh(H)
    worst = max((abs(a - b) for a, b in zip(derived_E, exact_E)), default=0.0)
    if len(derived_E) != len(exact_E):
        worst = math.inf
    add("levels", complex(worst), 0j, scale)
    logZ = evaluate_precise(sp.log(d.reduced_partition()), values).real
    logZ -= (1.0 / T) * evaluate_precise(d.levels[d.reference].energy, values).real
    add("Z", complex(logZ), complex(ref.log_Z), abs(ref.log_Z))
    weight = float(np.linalg.norm(A) * np.linalg.norm(B)) / max(H.shape[0], 1)
    if "isothermal" in wanted:
        add("isothermal", evaluate_precise(d.static("isothermal"), values), ref.isothermal,
            weight / T)
    if "isolated" in wanted:
        add("isolated", evaluate_precise(d.static("isolated"), values), ref.isolated, weight / T)
    if "frequency" in wanted:
        v = dict(values)
        v[omega] = z
        add("frequency", evaluate_precise(d.frequency(omega), v), complex(ref.evaluate(z)),
            weight / abs(z.imag), z)
    if "time" in wanted:
        v = dict(values)
        v[t] = time_value
        add("time", evaluate_precise(d.time(t), v), complex(ref.time(time_value)), weight,
            complex(time_value))
    if "correlation" in wanted:
        # S(omega) = 2 sum_k s_k eta/((omega - Omega_k)^2 + eta^2) at omega = Re z, eta = Im z
        w, eta = z.real, z.imag
        derived = sum((2 * evaluate_precise(s, values) * eta
                       / ((w - evaluate_precise(Om, values).real) ** 2 + eta**2)
                       for Om, s in d.correlation_lines()), 0j)
        reference = complex(numeric.correlation_spectrum(H, A, B, 1.0 / T, w, eta))
        add("correlation", derived, reference, weight / eta, z)
    return out
