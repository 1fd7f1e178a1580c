r"""Sites: the local degrees of freedom of a model (layer: algebra).

Owns :class:`Site` and the local operator vocabulary of each kind of site. Imports sympy,
:mod:`symresp.errors` only.

Local basis conventions (fixed; the product basis is the Kronecker product of these in
site order, the first site most significant):

* spin S: index ``i = 0 .. 2S`` is the state with :math:`S^z = m = S - i` (highest m first);
* n-level site: index ``i`` is level :math:`|i\rangle`;
* fermion mode: index 0 empty, 1 occupied;
* boson mode: index ``n = 0 .. cutoff`` is the number state :math:`|n\rangle`.

Every local operator of a finite site is a linear combination of matrix units
:math:`|i\rangle\langle j|` (key ``("u", i, j)``). A boson operator is a combination of
normal-ordered monomials :math:`(a^\dagger)^p a^q` (key ``("b", p, q)``); the boson cutoff
applies only to matrix forms, never to the algebra.

Site order (and hence the Jordan–Wigner order of fermion modes) is creation order.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from typing import Literal

import sympy as sp

from ..errors import InputError

__all__ = ["Site", "SiteKind", "LocalKey", "local_parity", "check_name", "SPIN", "LEVEL",
           "FERMION", "BOSON"]

SiteKind = Literal["spin", "level", "fermion", "boson"]
#: The kinds of site (everything else about them: :mod:`._kinds`).
SPIN: SiteKind = "spin"
LEVEL: SiteKind = "level"
FERMION: SiteKind = "fermion"
BOSON: SiteKind = "boson"
LocalKey = tuple[str, int, int]

# Creation stamps give every site a place in the global site order. The counter only ever
# increases; it holds no setting and changes no result except the documented mode order.
_STAMPS = itertools.count()


def check_name(name: object, what: str = "site") -> str:
    """Return ``name`` if it is a valid identifier-like name, else raise InputError."""
    if not isinstance(name, str) or not name or not (name.replace("_", "a").isalnum()):
        raise InputError(
            f"{what} name {name!r} is not valid: use letters, digits and '_' (e.g. 'a', 'c_up')"
        )
    if name[0].isdigit():
        raise InputError(f"{what} name {name!r} must not start with a digit")
    return name


@dataclass(frozen=True, slots=True)
class Site:
    """One local degree of freedom. Build sites with the constructors, not directly.

    Attributes
    ----------
    name : str
        Unique name within a model.
    kind : {"spin", "level", "fermion", "boson"}
    dim : int
        Dimension of the local space used in matrix forms (boson: cutoff + 1).
    spin : sympy.Rational or None
        S for spin sites.
    order : int
        Creation stamp; sites (and fermion modes) are ordered by it.
    """

    name: str
    kind: SiteKind
    dim: int
    spin: sp.Rational | None = None
    order: int = field(default_factory=lambda: next(_STAMPS))

    @property
    def is_fermion(self) -> bool:
        """True for fermion modes (odd operators anticommute between modes)."""
        return self.kind == FERMION

    def m_of(self, index: int) -> sp.Rational:
        """S^z eigenvalue of local basis state ``index`` of a spin site."""
        assert self.spin is not None
        return self.spin - index

    def label(self, index: int) -> str:
        """Readable label of local basis state ``index`` (used in level tables)."""
        if self.kind == SPIN:
            return str(self.m_of(index))
        return str(index)

    def __repr__(self) -> str:
        extra = f", S={self.spin}" if self.kind == SPIN else f", dim={self.dim}"
        return f"Site({self.name!r}, {self.kind}{extra})"


def local_parity(site: Site, key: LocalKey) -> int:
    """Fermion parity (0 or 1) of a local operator key: odd keys anticommute across modes."""
    if not site.is_fermion:
        return 0
    _, i, j = key
    return (i + j) % 2
