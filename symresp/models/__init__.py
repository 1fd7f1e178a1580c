"""Models (layer: models): validated systems, sectors, budgets.

Imports sympy, :mod:`symresp.errors`, :mod:`symresp.conventions`, :mod:`symresp.algebra`.
"""

from ._budget import DEFAULT_SECONDS, Budget, Clock, checkpoint, current_clock
from ._system import System, is_diagonal

__all__ = ["System", "Budget", "Clock", "checkpoint", "current_clock", "DEFAULT_SECONDS",
           "is_diagonal"]
