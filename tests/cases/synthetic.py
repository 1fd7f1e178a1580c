"""Synthetic magnetometry data from the numerical reference (symresp.numeric), with known noise.

Nothing here goes through the symbolic path or the emitted evaluators: Hamiltonians are built
with the tests' own Kronecker products (tests/numeric/_kron.py), susceptibilities and
magnetisations come from exact diagonalisation (symresp.numeric), physical constants from
scipy.constants (Source: CODATA via scipy.constants), and the corrections are written out
again below from their textbook forms.

The demo data of cases/dinuclear_chiT.csv are made by::

    python -m tests.cases.synthetic

(an invented compound, the dinuclear complex Vennadrel; see docs/fitting.md).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import scipy.constants as C

from symresp import numeric
from tests.numeric._kron import embed, spin_matrices

#: Invented "true" values of the demo compound Vennadrel (J in cm^-1).
VENNADREL = {"J": 112.4, "g": 2.093, "rho": 0.015, "tip": 1.2e-4}
#: Noise of the demo data: sigma_i = NOISE_REL * chiT_i + NOISE_ABS (cm^3 K/mol), seed SEED.
NOISE_REL = 0.004
NOISE_ABS = 4e-4
SEED = 31
#: Temperatures of the demo data (K).
DEMO_T = np.round(np.geomspace(2.0, 300.0, 60), 3)
DEMO_FILE = Path(__file__).resolve().parents[2] / "cases" / "dinuclear_chiT.csv"

MU_B = C.physical_constants["Bohr magneton"][0]
K_B = C.k
N_A = C.N_A
#: One wavenumber (cm^-1) in joules, h c * 100 / m.
CM = C.h * C.c * 100.0


def curie_per_kelvin() -> float:
    """N_A mu_B^2 / k_B in cm^3 K/mol (cgs-emu: SI value / 10)."""
    return N_A * MU_B**2 / K_B * 0.1


def spin_ops(spins):
    """Per site (Sx, Sy, Sz) embedded in the product space of ``spins``."""
    mats = [spin_matrices(s) for s in spins]
    dims = tuple(m[2].shape[0] for m in mats)
    return [[embed(m[k], i, dims) for k in range(3)] for i, m in enumerate(mats)]


def dimer_chi_mol(J: float, g: float, T: np.ndarray, unit: str = "cm^-1") -> np.ndarray:
    """Molar susceptibility (cm^3/mol) of H = J S_a.S_b (J in ``unit``, "cm^-1" or "K"),
    isotropic g, at temperatures T (K), by exact diagonalisation.

    chi_mol = N_A mu_B^2 g^2 chi_SzSz / k_B, chi_SzSz from numeric.static_isothermal with
    energies in kelvin.
    """
    ops = spin_ops((0.5, 0.5))
    J_K = J * CM / K_B if unit == "cm^-1" else J
    H = J_K * sum(ops[0][k] @ ops[1][k] for k in range(3))
    Sz = ops[0][2] + ops[1][2]
    out = []
    for t in T:
        chi = numeric.static_isothermal(H, Sz, Sz, 1.0 / t).real   # 1/K
        out.append(curie_per_kelvin() * g * g * chi)
    return np.array(out)


def vennadrel_chiT(T: np.ndarray, J: float, g: float, rho: float, tip: float) -> np.ndarray:
    """chi*T of the demo compound: (1 - rho) chi_dimer + rho * Curie(S = 1/2, g) + TIP, times T."""
    chi = (1 - rho) * dimer_chi_mol(J, g, T) + rho * curie_per_kelvin() * g * g * 0.75 / (3 * T) + tip
    return chi * T


def demo_table(seed: int = SEED) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(T, chiT with noise, sigma) of the demo data."""
    T = DEMO_T
    clean = vennadrel_chiT(T, **VENNADREL)
    sigma = NOISE_REL * clean + NOISE_ABS
    rng = np.random.default_rng(seed)
    return T, clean + sigma * rng.standard_normal(T.size), sigma


def demo_text() -> str:
    T, y, s = demo_table()
    lines = ["# Invented magnetometry data of the dinuclear complex Vennadrel (cases/dinuclear.toml).",
             "# Simulated with symresp's numerical reference (exact diagonalisation) for",
             f"# J = {VENNADREL['J']} cm^-1, g = {VENNADREL['g']}, impurity fraction "
             f"{VENNADREL['rho']} (S = 1/2), TIP = {VENNADREL['tip']} cm^3/mol,",
             f"# plus Gaussian noise of standard deviation sigma = {NOISE_REL} chiT + {NOISE_ABS} "
             f"(seed {SEED}).",
             "# Regenerate: python -m tests.cases.synthetic",
             "# T in K, chiT in cm^3 K/mol",
             "T, chiT, sigma"]
    lines += [f"{t:.3f}, {v:.6f}, {e:.6f}" for t, v, e in zip(T, y, s)]
    return "\n".join(lines) + "\n"


if __name__ == "__main__":
    DEMO_FILE.write_text(demo_text())
    print(DEMO_FILE)


def ion_powder_M(D: float, g: float, T: np.ndarray, B: np.ndarray, nodes: int = 40) -> np.ndarray:
    """Powder-averaged magnetisation (mu_B) of a spin 1 with D Sz^2 (kelvin) and isotropic g, by
    exact diagonalisation at each field direction; the average over cos(theta) in [0, 1] by a
    Gauss-Legendre rule of ``nodes`` points (more than the fit uses), directions in the xz plane
    (axial symmetry)."""
    Sx, Sy, Sz = spin_matrices(1)
    mu_K = MU_B / K_B
    x, w = np.polynomial.legendre.leggauss(nodes)
    u, w = 0.5 * (x + 1), 0.5 * w
    out = []
    for t, b in zip(T, B):
        total = 0.0
        for ui, wi in zip(u, w):
            si = np.sqrt(1 - ui * ui)
            mu = -g * (si * Sx + ui * Sz)
            H = D * Sz @ Sz - mu_K * b * mu
            total += wi * numeric.expectation(H, mu, 1.0 / t).real
        out.append(total)
    return np.array(out)
