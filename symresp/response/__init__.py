"""Response (layer: response): Lehmann sums, chi(omega), chi(t), static isothermal and isolated
susceptibilities, pole tables, presentable forms.

Imports sympy, :mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.algebra`,
:mod:`symresp.models`, :mod:`symresp.spectrum`.
"""

from ._derive import Derivation, Level, StaticKind, Transition, derive, present
from ._motion import Gibbs, MotionDerivation, PolePair, derive_motion

__all__ = ["Derivation", "Level", "Transition", "StaticKind", "derive", "present", "MotionDerivation",
           "PolePair", "Gibbs", "derive_motion"]
