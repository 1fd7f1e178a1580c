r"""Physical conventions of symresp, fixed here and nowhere else (layer: bottom).

Imports: sympy and :mod:`symresp.errors` only.

Units: :math:`\hbar = k_B = 1`, :math:`\beta = 1/T`.

The pinned (default) convention
-------------------------------
* Perturbation :math:`H(t) = H_0 - f(t)\,B`; response
  :math:`\delta\langle A\rangle(t) = \int \chi_{AB}(t-t')\,f(t')\,dt'`.
* :math:`\chi_{AB}(t) = i\,\theta(t)\,\langle[A(t), B]\rangle_0`, Heisenberg picture under
  :math:`H_0`, Gibbs state :math:`\rho_0 = e^{-\beta H_0}/Z`.
* Fourier transform :math:`\chi(\omega) = \int dt\, e^{+i\omega t}\chi(t)`, retarded
  prescription :math:`\omega \to \omega + i0^+`:

  .. math:: \chi_{AB}(\omega) = \sum_{n,m} \frac{(p_n - p_m) A_{nm} B_{mn}}{E_m - E_n - \omega - i0^+}.

* Isolated static susceptibility :math:`\chi^{\mathrm{isol}} = \chi(\omega\to 0)`, pairs with
  :math:`E_n \ne E_m` only; isothermal static susceptibility adds
  :math:`\beta(\sum_{E_n = E_m} p_n A_{nm}B_{mn} - \langle A\rangle\langle B\rangle)`.

Other conventions in use are reachable through :class:`Convention` and are documented side by
side in ``docs/conventions.md``; one result never mixes two of them.

Magnetic quantities (``docs/conventions.md``, section 8): a spin with g tensor g carries the
moment :math:`-\mu_B g\mathbf S`; a field :math:`B\mathbf n` in tesla adds
:math:`H_Z = \mu_B B\,\mathbf n\cdot g\cdot\mathbf S`, so the field couples as
:math:`f = \mu_B B` to :math:`X = -\mathbf n\cdot g\cdot\mathbf S`; the magnetisation is
:math:`\langle X\rangle` in Bohr magnetons along the field. A mean-field coupling between
clusters, :math:`zJ'`, has the sign of the exchange in the Hamiltonian (positive:
antiferromagnetic): :math:`\chi = \chi_0/(1 + zJ'\chi_0/(N_A\mu_B^2 g^2))`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import sympy as sp

from .errors import InputError

__all__ = [
    "beta",
    "omega",
    "t",
    "eta",
    "T",
    "nu",
    "RESERVED_NAMES",
    "Convention",
    "DEFAULT_CONVENTION",
]

#: Inverse temperature :math:`\beta = 1/T` (k_B = 1).
beta = sp.Symbol("beta", positive=True)
#: Real frequency of :math:`\chi(\omega)`; the retarded prescription is implied.
omega = sp.Symbol("omega", real=True)
#: Time after the perturbation is switched on; :math:`\chi(t)` is given for t > 0.
t = sp.Symbol("t", positive=True)
#: Broadening (half width) used by numerical and emitted evaluators.
eta = sp.Symbol("eta", positive=True)
#: Temperature, :math:`T = 1/\beta`; accepted in hand formulas.
T = sp.Symbol("T", positive=True)
#: Bosonic Matsubara frequency :math:`\nu_n = 2\pi n/\beta`.
nu = sp.Symbol("nu", real=True)

#: Names a model parameter may not take.
RESERVED_NAMES = frozenset({"beta", "omega", "t", "eta", "T", "nu", "I", "E", "pi", "oo"})

PerturbationSign = Literal["H0 - f B", "H0 + f B"]
Prescription = Literal["retarded", "advanced"]
FourierSign = Literal["+i omega t", "-i omega t"]


@dataclass(frozen=True, slots=True)
class Convention:
    r"""A complete statement of the sign conventions a result was derived under.

    Parameters
    ----------
    perturbation : {"H0 - f B", "H0 + f B"}
        Sign with which the driving field couples. ``"H0 + f B"`` flips the sign of every
        susceptibility relative to the default.
    prescription : {"retarded", "advanced"}
        Retarded: :math:`\omega \to \omega + i0^+` (causal response). Advanced:
        :math:`\omega \to \omega - i0^+`.
    fourier : {"+i omega t", "-i omega t"}
        Sign of the exponent in :math:`\chi(\omega) = \int dt\, e^{\pm i\omega t}\chi(t)`;
        the second maps :math:`\omega \to -\omega`.

    Examples
    --------
    >>> from symresp.conventions import Convention
    >>> Convention().sign
    1
    >>> Convention(perturbation="H0 + f B").sign
    -1
    """

    perturbation: PerturbationSign = "H0 - f B"
    prescription: Prescription = "retarded"
    fourier: FourierSign = "+i omega t"

    def __post_init__(self) -> None:
        for name, allowed in (
            ("perturbation", ("H0 - f B", "H0 + f B")),
            ("prescription", ("retarded", "advanced")),
            ("fourier", ("+i omega t", "-i omega t")),
        ):
            value = getattr(self, name)
            if value not in allowed:
                raise InputError(
                    f"Convention: {name}={value!r} is not one of {', '.join(map(repr, allowed))}"
                )

    @property
    def sign(self) -> int:
        """Overall sign multiplying every susceptibility (+1 for ``H0 - f B``)."""
        return 1 if self.perturbation == "H0 - f B" else -1

    @property
    def frequency_sign(self) -> int:
        """+1 when omega enters as in the default convention, -1 when omega -> -omega."""
        return 1 if self.fourier == "+i omega t" else -1

    def describe(self) -> str:
        """One line stating the convention, used in headers of emitted code and summaries."""
        return (
            f"hbar = k_B = 1; H(t) = {self.perturbation.replace('f', 'f(t)')}; "
            f"chi_AB(t) = {'i' if self.sign > 0 else '-i'} theta(t) <[A(t), B]>; "
            f"chi(omega) = int dt exp({self.fourier}) chi(t), {self.prescription}"
        )


#: The pinned convention (see the module docstring).
DEFAULT_CONVENTION = Convention()
