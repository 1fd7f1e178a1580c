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

import keyword
import re
import unicodedata
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
    "MAX_NAME_LENGTH",
    "name_problem",
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

#: Names a model parameter may not take: the temperature, frequency and time symbols, and the
#: imaginary unit, pi and infinity of the formula language. (``E``, the usual name of a
#: rhombic anisotropy, is a legal parameter; Euler's number is ``exp(1)`` in formulas.)
RESERVED_NAMES = frozenset({"beta", "omega", "t", "eta", "T", "nu", "I", "pi", "oo"})
#: Longest parameter, site or observable name.
MAX_NAME_LENGTH = 64


def name_problem(name: object, what: str = "name") -> str | None:
    """Why ``name`` cannot name a parameter, site or observable, or None when it can.

    A legal name is an ASCII identifier of at most :data:`MAX_NAME_LENGTH` characters, not a
    Python keyword, not a dunder (``__x__``) and not in :data:`RESERVED_NAMES`. Unicode text
    is refused with its NFKC normal form named when that is ASCII (``'ﬁ'`` reads as ``'fi'``).

    Examples
    --------
    >>> from symresp.conventions import name_problem
    >>> name_problem("J1") is None, name_problem("E") is None
    (True, True)
    >>> name_problem("lambda")
    "'lambda' is a Python keyword; use e.g. 'lambda_'"
    """
    if not isinstance(name, str):
        return f"a {what} must be a string, got {type(name).__name__}"
    if not name:
        return f"the {what} is empty"
    if len(name) > MAX_NAME_LENGTH:
        return f"the {what} {name[:20]!r}... has {len(name)} characters, more than {MAX_NAME_LENGTH}"
    if not name.isascii():
        normal = unicodedata.normalize("NFKC", name)
        hint = (f" (it reads as {normal!r} after Unicode normalisation: write that)"
                if normal != name and normal.isascii() and _IDENTIFIER.fullmatch(normal) else "")
        return f"{name!r} is not ASCII: names use the letters A-Z, a-z, digits and '_'{hint}"
    if not _IDENTIFIER.fullmatch(name):
        return (f"{name!r} is not a valid {what}: use ASCII letters, digits and '_', starting "
                f"with a letter or '_'")
    if keyword.iskeyword(name):
        return f"{name!r} is a Python keyword; use e.g. '{name}_'"
    if name.startswith("__") and name.endswith("__"):
        return f"{name!r} is a dunder name (reserved by Python); drop the double underscores"
    if name in RESERVED_NAMES:
        return (f"{name!r} is reserved for the temperature, frequency and time symbols and the "
                f"constants of formulas ({', '.join(sorted(RESERVED_NAMES))}); rename it")
    return None


_IDENTIFIER = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")

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
