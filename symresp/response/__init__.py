"""Response (layer: response): Lehmann sums, chi(omega), chi(t), static isothermal and isolated
susceptibilities, pole tables, correlation lines, presentable forms and presentations.

Imports sympy, :mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.algebra`,
:mod:`symresp.models`, :mod:`symresp.spectrum`.
"""

from ._derive import Derivation, Level, StaticKind, Transition, derive, present
from ._motion import Gibbs, MotionDerivation, PolePair, derive_motion
from ._route import ROUTES, Route, Truncation, respond
from ._numbers import (PREC_BITS, PRECISE_DIGITS, compile_expression, evaluate_arrays, evaluate_exact,
                       evaluate_mp, evaluate_precise, to_mp)
from ._presentation import (DEFINITION_KINDS, PRESENTED_QUANTITIES, Definition, Formula, LevelRow,
                            Line, Presentation, TransitionRow, present_response)
from ._quantities import (CASE_QUANTITIES, CHECKED_QUANTITIES, DEFAULT_CASE_QUANTITIES,
                          QUANTITIES, STATIC_KINDS, Quantity, QuantityInfo, check_quantity,
                          quantity_expression)
from ._render import (GENERIC_FORMS, MAX_LINE, formula_lines, formula_text, level_lines,
                      presentation_text, split_shared, transition_lines, where_lines, wrap)

__all__ = ["Derivation", "Level", "Transition", "StaticKind", "derive", "present", "MotionDerivation",
           "PolePair", "Gibbs", "derive_motion", "respond", "Truncation", "Route", "ROUTES", "QUANTITIES", "QuantityInfo", "Quantity",
           "STATIC_KINDS", "CASE_QUANTITIES", "DEFAULT_CASE_QUANTITIES", "CHECKED_QUANTITIES",
           "check_quantity", "quantity_expression", "PRECISE_DIGITS", "PREC_BITS", "compile_expression",
           "evaluate_arrays", "evaluate_exact", "evaluate_mp", "evaluate_precise", "to_mp",
           "Presentation", "Definition", "Formula", "LevelRow", "Line", "TransitionRow",
           "present_response", "PRESENTED_QUANTITIES", "DEFINITION_KINDS",
           "formula_text", "wrap", "MAX_LINE", "level_lines", "transition_lines",
           "formula_lines", "where_lines", "presentation_text", "GENERIC_FORMS", "split_shared"]
