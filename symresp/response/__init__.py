"""Response (layer: response): Lehmann sums, chi(omega), chi(t), static isothermal and isolated
susceptibilities, pole tables, presentable forms.

Imports sympy, :mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.algebra`,
:mod:`symresp.models`, :mod:`symresp.spectrum`.
"""

from ._derive import Derivation, Level, StaticKind, Transition, derive, present
from ._motion import Gibbs, MotionDerivation, PolePair, derive_motion
from ._numbers import (PREC_BITS, PRECISE_DIGITS, compile_expression, evaluate_arrays, evaluate_exact,
                       evaluate_mp, evaluate_precise, to_mp)
from ._quantities import (CASE_QUANTITIES, CHECKED_QUANTITIES, DEFAULT_CASE_QUANTITIES,
                          QUANTITIES, STATIC_KINDS, Quantity, QuantityInfo, check_quantity,
                          quantity_expression)

__all__ = ["Derivation", "Level", "Transition", "StaticKind", "derive", "present", "MotionDerivation",
           "PolePair", "Gibbs", "derive_motion", "QUANTITIES", "QuantityInfo", "Quantity",
           "STATIC_KINDS", "CASE_QUANTITIES", "DEFAULT_CASE_QUANTITIES", "CHECKED_QUANTITIES",
           "check_quantity", "quantity_expression", "PRECISE_DIGITS", "PREC_BITS", "compile_expression",
           "evaluate_arrays", "evaluate_exact", "evaluate_mp", "evaluate_precise", "to_mp"]
