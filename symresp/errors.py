"""One error tree for symresp (layer: bottom; imports nothing from symresp).

Every failure a user can cause raises a subclass of :class:`SymrespError`.
Bad input raises :class:`InputError`, which is also a ``ValueError`` so that
generic code catching ``ValueError`` keeps working.
"""

from __future__ import annotations

__all__ = [
    "SymrespError",
    "InputError",
    "NotConservedError",
    "NotHermitianError",
    "BudgetExceeded",
    "ClosedFormError",
]


class SymrespError(Exception):
    """Base class of every error raised on purpose by symresp."""


class InputError(SymrespError, ValueError):
    """An argument, case file or expression is malformed; the message names the place and the fix."""


class NotHermitianError(InputError):
    """A Hamiltonian (or an operator required to be Hermitian) is not Hermitian."""


class NotConservedError(InputError):
    """An operator used to select a sector does not commute with the Hamiltonian."""


class BudgetExceeded(SymrespError):
    """An expensive step ran out of its budget; the message names the block and the step."""


class ClosedFormError(SymrespError):
    """A quantity has no closed form under the rules of symresp (e.g. a parametric irreducible cubic)."""
