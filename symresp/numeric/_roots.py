"""Real roots of polynomials with real coefficients, batched (layer: numeric).

Imports numpy only.
"""

from __future__ import annotations

import numpy as np

__all__ = ["real_roots"]


def real_roots(coeffs) -> np.ndarray:
    """Real parts of the roots of ``c_0 x^n + ... + c_n``, ascending, for arrays of coefficients.

    The coefficients broadcast together; the result has their shape plus a last axis of
    length n. Roots are the eigenvalues of the companion matrices (``numpy.linalg.eigvals`` on
    the whole stack). Meant for characteristic factors of Hermitian blocks, whose roots are
    real; imaginary parts (rounding) are dropped.

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.numeric import real_roots
    >>> np.round(real_roots([1.0, 0.0, -3.0, 1.0]), 6).tolist()
    [-1.879385, 0.347296, 1.532089]
    """
    cs = np.broadcast_arrays(*[np.real(np.asarray(c, dtype=complex)) for c in coeffs])
    n = len(cs) - 1
    comp = np.zeros(cs[0].shape + (n, n))
    for j in range(n):
        comp[..., 0, j] = -cs[j + 1] / cs[0]
    for j in range(1, n):
        comp[..., j, j - 1] = 1.0
    return np.sort(np.linalg.eigvals(comp).real, axis=-1)
