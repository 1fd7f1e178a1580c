"""Checks (layer: checks): comparison of hand-derived formulas with a derivation, and physical
consistency checks of a derivation (sum rules, Kramers-Kronig, fluctuation-dissipation,
positivity, Onsager reciprocity, high-temperature limit, agreement with the numeric reference).

Imports sympy, mpmath, numpy and the layers below: :mod:`symresp.conventions`,
:mod:`symresp.errors`, :mod:`symresp.algebra`, :mod:`symresp.text`, :mod:`symresp.models`,
:mod:`symresp.response`, :mod:`symresp.numeric`.
"""

from ._compare import QUANTITIES, Quantity, Verdict, compare
from ._consistency import CHECK_NAMES, CheckRow, Report, consistency

__all__ = ["compare", "Verdict", "Quantity", "QUANTITIES", "consistency", "Report", "CheckRow",
           "CHECK_NAMES"]
