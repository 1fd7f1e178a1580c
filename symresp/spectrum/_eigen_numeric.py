r"""Semi-closed blocks at numbers: eigenvalues and eigenspace weights, vectorised with numpy
(layer: spectrum).

Imports numpy only: the functions below are also copied verbatim into emitted
evaluators (:mod:`symresp.emit._runtime_roots`), which import nothing else.

A semi-closed block is known exactly as its matrix :math:`M` in the engine's local basis
(a similarity transform :math:`M = R\,H_s R^{-1}` of a Hermitian :math:`H_s`, with a constant
:math:`R = G^{-1/2}` from the Gram matrix G of the local basis) and the list of its parts: each
an eigenspace of ``mult`` states whose energy is either an explicit expression or the k-th
ascending root of an implicit factor of the characteristic polynomial. At each point:

1. ``numpy.linalg.eigh`` of :math:`H_s` (backward stable, also where roots nearly coincide);
2. each explicit part takes the ``mult`` free eigenvalues nearest its exact value;
3. each implicit factor takes the free eigenvalues where the factor is smallest relative to
   the size of its terms (the last factor takes what is left); inside a factor the
   eigenvalues are ascending, ``mult`` per root;
4. the eigenvectors are reordered so that each part owns a fixed range of columns.

Weights :math:`\mathrm{Tr}(P_a L P_b R)` between the parts of two blocks then follow from
:math:`\tilde L = R_X^{-1} L R_Y`, :math:`\tilde R = R_Y^{-1} R R_X` and the eigenvectors U, V:
the per-eigenvector products :math:`(U^\dagger\tilde LV)_{ij}(V^\dagger\tilde RU)_{ji}` summed
over the column ranges of each pair of parts. Where two eigenvalues nearly coincide their
eigenvectors may rotate into each other, but they enter the Lehmann sums with continuous
factors, so the response stays accurate there.
"""

from __future__ import annotations

import numpy

__all__ = ["_semieig_a", "_semiw_a", "_semi_matrix"]


def _semi_matrix(n, entries, T):
    """The block matrices (..., n, n) in Hermitian form T^-1 M T from n*n broadcastable entries
    (T is the flat constant R, or () for the identity)."""
    arrays = numpy.broadcast_arrays(*[numpy.asarray(e) for e in entries])
    M = numpy.stack(arrays, axis=-1).reshape(arrays[0].shape + (n, n))
    if not numpy.iscomplexobj(M):
        M = M.astype(float)
    if len(T):
        Tm = numpy.array(T[0], dtype=float).reshape(n, n)
        Ti = numpy.array(T[1], dtype=float).reshape(n, n)
        M = Ti @ M @ Tm
    return 0.5 * (M + numpy.conj(numpy.swapaxes(M, -1, -2)))


def _semieig_a(n, spec, explicit, coeffs, entries, T):
    """Parts of a semi-closed block at every point.

    ``spec``: per part (kind, mult, factor, k): kind 0 explicit (its value is the next entry of
    ``explicit``), kind 1 the k-th ascending root of implicit factor ``factor`` (coefficients
    ``coeffs[factor]``, highest power first). Returns the part energies, then the eigenvector
    matrix (..., n, n) whose columns are grouped part by part in ``spec`` order.
    """
    H = _semi_matrix(n, entries, T)
    bad = ~numpy.isfinite(H).all(axis=(-2, -1))
    if bad.any():                    # a removable singularity: the caller steps off it
        H = numpy.where(bad[..., None, None], 0.0, H)
    ev, U = numpy.linalg.eigh(H)
    shape = ev.shape[:-1]
    free = numpy.ones(ev.shape, dtype=bool)
    picks = [None] * len(spec)
    values = iter(explicit)
    for p, (kind, mult, _, _) in enumerate(spec):
        if kind != 0:
            continue
        target = numpy.broadcast_to(numpy.real(numpy.asarray(next(values))), shape)[..., None]
        cols = []
        for _ in range(mult):
            d = numpy.where(free, numpy.abs(ev - target), numpy.inf)
            i = numpy.argmin(d, axis=-1)[..., None]
            numpy.put_along_axis(free, i, False, axis=-1)
            cols.append(i)
        picks[p] = cols
    factors = sorted({f for kind, _, f, _ in spec if kind == 1})
    for fi, f in enumerate(factors):
        members = sorted((k, p) for p, (kind, _, g, k) in enumerate(spec) if kind == 1 and g == f)
        count = sum(spec[p][1] for _, p in members)
        if fi == len(factors) - 1:
            score = numpy.where(free, 0.0, numpy.inf)
        else:
            c = [numpy.real(numpy.asarray(x))[..., None] for x in coeffs[f]]
            value = numpy.zeros(ev.shape)
            size = numpy.zeros(ev.shape)
            for x in c:
                value = value * ev + x
                size = size * numpy.abs(ev) + numpy.abs(x)
            score = numpy.where(free, numpy.abs(value) / numpy.maximum(size, 1e-300), numpy.inf)
        chosen = numpy.argsort(score, axis=-1, kind="stable")[..., :count]
        chosen = numpy.sort(chosen, axis=-1)           # eigh is ascending: so are the roots
        numpy.put_along_axis(free, chosen, False, axis=-1)
        start = 0
        for _, p in members:
            mult = spec[p][1]
            picks[p] = [chosen[..., start + j:start + j + 1] for j in range(mult)]
            start += mult
    order = numpy.concatenate([c for cols in picks for c in cols], axis=-1)
    ev = numpy.take_along_axis(ev, order, axis=-1)
    U = numpy.take_along_axis(U, numpy.broadcast_to(order[..., None, :], U.shape), axis=-1)
    out = []
    start = 0
    for kind, mult, _, _ in spec:
        out.append(numpy.where(bad, numpy.nan, ev[..., start:start + mult].mean(axis=-1)))
        start += mult
    return tuple(out) + (U,)


def _semiw_a(U, V, offU, offV, nU, nV, L, R, TU, TV, real):
    """Tr(P_a L P_b R) for every part a of one block (eigenvectors U, part column offsets offU)
    and part b of another (V, offV); L is nU x nV and R is nV x nU (flat, broadcastable entries;
    R = () for the identity, which gives Tr(P_a L) on the diagonal a = b). Returns the weights
    row by row (parts of U, then parts of V)."""
    def mat(entries, rows, cols):
        arrays = numpy.broadcast_arrays(*[numpy.asarray(e) for e in entries])
        return numpy.stack(arrays, axis=-1).reshape(arrays[0].shape + (rows, cols))

    def between(entries, rows, cols, TL, TR):
        """The operator's block (rows x cols) brought to the frame of the eigenvectors."""
        m = mat(entries, rows, cols)
        if len(TL):
            m = numpy.array(TL[1], dtype=float).reshape(rows, rows) @ m
        if len(TR):
            m = m @ numpy.array(TR[0], dtype=float).reshape(cols, cols)
        return m

    X = numpy.conj(numpy.swapaxes(U, -1, -2)) @ between(L, nU, nV, TU, TV) @ V
    if len(R):
        Y = numpy.conj(numpy.swapaxes(V, -1, -2)) @ between(R, nV, nU, TV, TU) @ U
        w = X * numpy.swapaxes(Y, -1, -2)
    else:
        w = X * numpy.eye(nU)
    w = numpy.add.reduceat(numpy.add.reduceat(w, list(offU[:-1]), axis=-2), list(offV[:-1]), axis=-1)
    if real:
        w = w.real
    return tuple(w[..., i, j] for i in range(len(offU) - 1) for j in range(len(offV) - 1))
