"""Reference exact diagonalisation on numpy arrays (layer: numeric, a leaf).

The judge every symbolic result is compared with. Imports numpy and :mod:`symresp.errors`
only; no other layer of symresp is used, so a bug elsewhere cannot hide itself here.
"""

from ._reference import (
    Eigensystem,
    NumericResponse,
    chi_matsubara,
    chi_omega,
    chi_time,
    eigensystem,
    expectation,
    log_partition_function,
    partition_function,
    poles,
    solve,
    spectral_function,
    static_isolated,
    static_isothermal,
)
from ._roots import real_roots

__all__ = [
    "Eigensystem",
    "NumericResponse",
    "chi_matsubara",
    "chi_omega",
    "chi_time",
    "eigensystem",
    "expectation",
    "log_partition_function",
    "partition_function",
    "poles",
    "real_roots",
    "solve",
    "spectral_function",
    "static_isolated",
    "static_isothermal",
]
