r"""Choice of the derivation route, and what the cutoff of a boson mode costs (layer: response).

Owns :func:`respond` and :class:`Truncation`. Imports sympy, :mod:`symresp.errors`,
:mod:`symresp.algebra`, :mod:`symresp.models`, :mod:`symresp.spectrum` and the response modules.

Routes
------
* ``"lehmann"``: exact diagonalisation of H in the (sector) product basis and Lehmann sums
  (:func:`._derive.derive`). Exact for spins, n-level sites and fermions; for a boson mode it
  diagonalises the model truncated at the mode's cutoff.
* ``"motion"``: the equations of motion of A and B closed on a finite operator space
  (:func:`._motion.derive_motion`). Exact without any truncation, where it applies.
* ``"auto"`` (default): ``"motion"`` for a model with boson modes whenever it applies (the
  cutoff then plays no role), otherwise ``"lehmann"``. Models without bosons keep the Lehmann
  route even where their motion closes (a spin in a field): it is exact there too, and its
  levels, transitions and checks are the richer result; ``route="motion"`` asks for the other.

Truncation
----------
On the Lehmann route a boson mode is cut at ``cutoff`` quanta. The states from which H, A or B
would lead above the cutoff are the ones the truncation falsifies ("edge states": for a qubit
coupled to a cavity, the incomplete doublet at the top of the ladder; for A = x, every state
with ``cutoff`` quanta). Each level gets its edge weight :math:`w_a = \mathrm{Tr}(P_a
\Pi_{\rm edge})/d_a` (exactly zero for levels the cutoff does not touch), and the truncation
error is estimated by the Gibbs probability of the edge states,
:math:`\epsilon(T) = \sum_a d_a p_a w_a`: the populations whose transitions or energies the
cutoff changes.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Literal

import sympy as sp

from ..algebra import Basis, Operator
from ..conventions import DEFAULT_CONVENTION, Convention, beta
from ..errors import ClosedFormError, InputError
from ..models import Budget, System
from ..spectrum import edge_positions, edge_weights
from ._derive import Derivation, derive
from ._motion import MotionDerivation, derive_motion
from ._numbers import evaluate_precise

__all__ = ["respond", "Truncation", "Route", "ROUTES"]

Route = Literal["auto", "lehmann", "motion"]
ROUTES = ("auto", "lehmann", "motion")

#: Edge weight below which a level counts as untouched by the cutoff when parameters are
#: given numbers (levels whose edge weight is exactly zero are untouched for all parameters).
EDGE_WEIGHT = 1e-6


@dataclass(frozen=True, slots=True, eq=False)
class Truncation:
    r"""What the cutoff of the boson modes does to a Lehmann derivation (module docstring).

    Attributes
    ----------
    cutoffs : tuple of (str, int)
        Boson modes and their cutoffs.
    edge_states : int
        Number of basis states from which H, A or B leads above a cutoff.
    level_weights : dict
        Level index -> its edge weight :math:`w_a` (only levels touched by the cutoff).
    """

    cutoffs: tuple[tuple[str, int], ...]
    edge_states: int
    level_weights: dict
    derivation: Derivation

    @property
    def affected(self) -> tuple[int, ...]:
        """Levels whose edge weight is not identically zero."""
        return tuple(sorted(self.level_weights))

    def estimate(self) -> sp.Expr:
        r""":math:`\epsilon(T) = \sum_a d_a x_a w_a / Z'` in ``beta`` and the parameters."""
        d = self.derivation
        num = sp.Add(*[d.levels[a].degeneracy * d.boltzmann(a) * w
                       for a, w in self.level_weights.items()])
        return num / d.reduced_partition()

    def estimate_at(self, params: dict, T: float) -> float:
        """The estimate at numbers (``params`` maps symbols or names to values)."""
        by_name = {p.name: p for p in self.derivation.system.parameters}
        values = {by_name.get(k, k) if isinstance(k, str) else k: float(v) for k, v in params.items()}
        values[beta] = 1.0 / float(T)
        return evaluate_precise(self.estimate(), values).real

    def describe(self) -> str:
        """One line for summaries."""
        modes = ", ".join(f"{n} at {c} quanta" for n, c in self.cutoffs)
        if not self.level_weights:
            return (f"boson cutoff ({modes}): no level is touched by it (H, A and B stay below "
                    f"the cutoff from every state)")
        return (f"boson cutoff ({modes}): {len(self.level_weights)} of {len(self.derivation.levels)} "
                f"levels touched ({self.edge_states} edge state{'s' if self.edge_states != 1 else ''} from which H, A or B would go "
                f"above it); truncation error ~ the Gibbs weight of the edge states, "
                f"eps(T) = sum_a d_a p_a w_a")


def _truncation(d: Derivation) -> Truncation | None:
    system = d.system
    bosons = [s for s in system.sites if s.kind == "boson"]
    if not bosons:
        return None
    basis: Basis = d.spectrum.structure.basis
    edges = edge_positions(basis, (system.hamiltonian, d.A, d.B))
    per_part = edge_weights(d.spectrum, edges) if edges else {}
    level_of = {p: a for a, lv in enumerate(d.levels) for p in lv.parts}
    lw: dict[int, sp.Expr] = {}
    for p, w in per_part.items():
        a = level_of[p]
        lw[a] = lw.get(a, sp.Integer(0)) + w
    lw = {a: w / d.levels[a].degeneracy for a, w in lw.items() if w != 0}
    return Truncation(tuple((s.name, s.dim - 1) for s in bosons), len(edges), lw, d)


def respond(system: System, A: Operator, B: Operator, *, route: Route = "auto",
            convention: Convention = DEFAULT_CONVENTION, budget: Budget = Budget(),
            symmetry: bool = True) -> Derivation | MotionDerivation:
    """Derive the response of ``A`` to ``B`` by the route ``route`` (see the module docstring).

    Raises
    ------
    InputError
        If ``route`` is not one of "auto", "lehmann", "motion".
    ClosedFormError
        If ``route="motion"`` and the equations of motion do not close (the message says why).

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.models import System
    >>> from symresp.response import respond
    >>> w = sp.Symbol("w", positive=True); a = sr.boson("a", 8)
    >>> d = respond(System.build(w * sr.dagger(a) * a), a + sr.dagger(a), a + sr.dagger(a))
    >>> d.route, d.static("isothermal")
    ('motion', 2/w)
    """
    if route not in ROUTES:
        raise InputError(f"response: route={route!r} must be one of {', '.join(map(repr, ROUTES))}")
    system = system.with_sites(A.sites | B.sites)
    bosons = any(s.kind == "boson" for s in system.sites)
    note = ""
    if route == "motion" or (route == "auto" and bosons):
        clock = budget.start()
        d, why = derive_motion(system, A, B, convention=convention, budget=budget, clock=clock)
        if d is not None:
            return d
        if route == "motion":
            raise ClosedFormError(f"response: route='motion' does not apply: {why}; use "
                                  f"route='lehmann' (exact diagonalisation)")
        note = f"equations of motion not closed ({why})"
    d = derive(system, A, B, convention=convention, budget=budget, symmetry=symmetry)
    notes = (note,) if note else ()
    return replace(d, notes=notes, truncation=_truncation(d) if bosons else None)
