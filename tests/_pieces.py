"""The Lehmann sums of a derivation rebuilt from its exact pieces, in double precision.

Shared by the symmetry tests: a derivation's levels, level weights and level expectations are
evaluated with sympy (not with symresp's own evaluators) and summed with numpy, following
docs/engine.md section 5. Implicit roots are evaluated once each (40 digits) before the
weights, which contain them many times.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import sympy as sp

from symresp.spectrum import LevelRoot

from .strategies import spin_matrices

#: Levels closer than this (relative to max(1, max|E|)) count as one in the isolated sum.
DEGENERATE_RTOL = 1e-9


def derived_sums(d, p: dict, T: float, z: complex):
    """Isothermal, isolated, chi(z) and all energies (with multiplicity) at parameters ``p``."""
    pt = {s: sp.Float(p[s.name], 30) for s in d.system.parameters}
    roots: dict = {}

    def num(e):
        e = sp.sympify(e).xreplace(pt)
        for r in e.atoms(LevelRoot, sp.CRootOf):
            if r not in roots:
                roots[r] = sp.Float(r.evalf(40), 40)
        return complex(sp.N(e.xreplace(roots), 25))

    E = np.array([num(lv.energy).real for lv in d.levels])
    g = np.array([lv.degeneracy for lv in d.levels])
    x = np.exp(-(E - E.min()) / T)
    pop = x / np.sum(g * x)
    close = DEGENERATE_RTOL * max(1.0, float(np.max(np.abs(E))))
    iso = elastic = dyn = 0.0
    for (a, b), w in d.level_weights.items():
        w = num(w)
        if a != b:
            dyn += (pop[a] - pop[b]) * w / (E[b] - E[a] - z)
        if a == b or abs(E[b] - E[a]) <= close:
            elastic += pop[a] * w
        else:
            iso += (pop[a] - pop[b]) * w / (E[b] - E[a])
    mA = sum(pop[a] * num(v) for a, v in d.expect_A.items())
    mB = sum(pop[a] * num(v) for a, v in d.expect_B.items())
    energies = sorted(e for e, k in zip(E, g) for _ in range(k))
    return iso + (elastic - mA * mB) / T, iso, dyn, energies


def kron_ring(N: int, Jv: float, hv: float):
    """The spin-1/2 Heisenberg ring H = Jv sum_i S_i.S_{i+1} + hv sum_i S^z_i built from numpy
    Kronecker products, independently of symresp; returns (H, {"x"|"y"|"z": [S^c_k per site]})."""
    S = spin_matrices(Fraction(1, 2))

    def site(op, k):
        out = np.ones((1, 1), dtype=complex)
        for i in range(N):
            out = np.kron(out, op if i == k else np.eye(2))
        return out

    ops = {c: [site(S[c], k) for k in range(N)] for c in ("x", "y", "z")}
    H = sum(Jv * ops[c][k] @ ops[c][(k + 1) % N] for c in ("x", "y", "z") for k in range(N))
    return H + hv * sum(ops["z"]), ops
