"""Numerical tolerances of symresp, in one place (layer: bottom; imports nothing).

Every tolerance is relative to the size of what it compares, with no absolute floor, so a
model gives the same answer in any energy unit (kelvin, meV or joules). Where a quantity can be
exactly zero, a zero scale gives a zero tolerance: only exact equality counts then.
"""

from __future__ import annotations

__all__ = ["DEGENERACY_RTOL", "HERMITIAN_RTOL", "degeneracy_tolerance", "hermitian_tolerance"]

#: Two levels are one when |E_a - E_b| <= DEGENERACY_RTOL * max_c |E_c|: far above the
#: rounding of a diagonalisation (a few 1e-16 of max|E|), far below physical splittings. Used
#: by the numeric reference, the emitted evaluators and their generated programs.
DEGENERACY_RTOL = 1e-9
#: A matrix H counts as Hermitian when max|H - H^dagger| <= HERMITIAN_RTOL * max|H|.
HERMITIAN_RTOL = 1e-10


def degeneracy_tolerance(largest_energy: float) -> float:
    """Level-grouping tolerance for levels whose largest magnitude is ``largest_energy``.

    Examples
    --------
    >>> from symresp._tolerances import degeneracy_tolerance
    >>> degeneracy_tolerance(2.0), degeneracy_tolerance(2.0e-23) == 2.0e-32
    (2e-09, True)
    """
    return DEGENERACY_RTOL * abs(largest_energy)


def hermitian_tolerance(largest_entry: float) -> float:
    """Largest ``|H - H^dagger|`` entry allowed for a matrix whose largest entry is that."""
    return HERMITIAN_RTOL * abs(largest_entry)
