"""Models (layer: models): validated systems, sectors, budgets.

Imports sympy, :mod:`symresp.errors`, :mod:`symresp.conventions`, :mod:`symresp.algebra`.
"""

from ._system import Budget, Clock, System, is_diagonal

__all__ = ["System", "Budget", "Clock", "is_diagonal"]
