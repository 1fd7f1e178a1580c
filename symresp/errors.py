"""One error tree for symresp (layer: bottom; imports nothing from symresp).

Every failure a user can cause raises a subclass of :class:`SymrespError`.
Bad input raises :class:`InputError`, which is also a ``ValueError`` so that
generic code catching ``ValueError`` keeps working. :func:`positive_float` is the one check of
a positive finite number given as a float (a temperature, a width, a beta).
"""

from __future__ import annotations

import math

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


def positive_float(value: object, where: str) -> float:
    """``value`` as a float when it is a positive finite number, else an :class:`InputError`
    naming ``where`` (booleans and text are refused).

    Examples
    --------
    >>> positive_float(0.5, "eta")
    0.5
    >>> positive_float("1", "eta")
    Traceback (most recent call last):
    ...
    symresp.errors.InputError: eta='1' must be a positive finite number
    """
    if isinstance(value, (bool, str, bytes)):
        raise InputError(f"{where}={value!r} must be a positive finite number")
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"{where}={value!r} must be a positive finite number") from None
    if not (x > 0 and math.isfinite(x)):
        raise InputError(f"{where}={value!r} must be a positive finite number")
    return x
