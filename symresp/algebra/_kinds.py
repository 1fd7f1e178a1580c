r"""The registry of site kinds (layer: algebra).

Everything the layers need to know about a kind of site, in one table: how a case file writes
it, what number it takes, its natural observable, the conserved quantity a family of such
sites adds up to, and the constructor. The kind strings themselves (:data:`SPIN`,
:data:`LEVEL`, :data:`FERMION`, :data:`BOSON`) are defined in :mod:`._sites`.

Imports sympy, :mod:`._sites` and :mod:`._constructors`.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import sympy as sp

from ._constructors import MAX_CUTOFF, MAX_LEVELS, MAX_SPIN, boson, fermion, nlevel, spin
from ._sites import BOSON, FERMION, LEVEL, SPIN, Site

__all__ = ["SiteKindInfo", "SITE_KINDS", "site_kind", "CASE_SITE_WORDS", "natural_term",
           "natural_value", "ladder_value"]


@dataclass(frozen=True, slots=True)
class SiteKindInfo:
    """What is known about one kind of site.

    Attributes
    ----------
    kind : str
        The kind string of :class:`~symresp.algebra.Site`.
    word : str
        How a case file writes it (``"spin 1/2"``, ``"levels 3"``, ``"fermion"``, ``"boson 6"``).
    size : str or None
        What the number after the word is (``"S"``, ``"N"``, ``"CUTOFF"``), None if none.
    example : str
        A valid case-file entry.
    largest : sympy.Rational or int or None
        The largest number accepted after the word.
    natural : str
        Format of the site's natural linear observable in the formula language
        (``{name}`` is the site name): S^z, the level index, the number operator.
    family : tuple of (str, str) or None
        Name and description of the sum of :attr:`natural` over all sites of this kind when
        it is a familiar conserved quantity (total S^z, fermion number, boson number).
    finite : bool
        False for a truncated boson mode (its algebra is infinite-dimensional).
    is_mode : bool
        The handle of the site is an annihilator (fermion and boson modes).
    build : callable
        ``build(name, number) -> handle``, the constructor (number is None when
        :attr:`size` is None).
    """

    kind: str
    word: str
    size: str | None
    example: str
    largest: object
    natural: str
    family: tuple[str, str] | None
    finite: bool
    is_mode: bool
    build: Callable[[str, object], object]


SITE_KINDS: Mapping[str, SiteKindInfo] = {
    SPIN: SiteKindInfo(SPIN, "spin", "S", "spin 1/2", MAX_SPIN, "{name}.z", ("Sz", "total S^z"),
                       True, False, lambda name, S: spin(name, S)),
    LEVEL: SiteKindInfo(LEVEL, "levels", "N", "levels 3", MAX_LEVELS, "level({name})", None,
                        True, False, lambda name, n: nlevel(name, n)),
    FERMION: SiteKindInfo(FERMION, "fermion", None, "fermion", None, "n({name})",
                          ("N", "fermion number"), True, True, lambda name, _: fermion(name)),
    BOSON: SiteKindInfo(BOSON, "boson", "CUTOFF", "boson 6", MAX_CUTOFF, "n({name})",
                        ("Nb", "boson number"), False, True, lambda name, n: boson(name, n)),
}

#: The words of the ``[sites]`` table of a case file; ``spinful fermion`` makes the two modes
#: ``NAME_up`` and ``NAME_dn``.
CASE_SITE_WORDS = tuple(info.word for info in SITE_KINDS.values()) + ("spinful fermion",)


def site_kind(site: Site) -> SiteKindInfo:
    """The registry entry of a site."""
    return SITE_KINDS[site.kind]


def natural_term(site: Site) -> str:
    """How the natural observable of a site is written: ``a.z``, ``level(q)``, ``n(c)``."""
    return site_kind(site).natural.format(name=site.name)


def natural_value(site: Site, k: int) -> sp.Rational:
    """The natural observable on local state ``k``: S^z = m for spins, the number for modes,
    the level index for n-level sites."""
    return site.m_of(k) if site.kind == SPIN else sp.Integer(k)


def ladder_value(site: Site, k: int) -> int:
    """Integer ladder value of local state ``k``: m + S for spins (0 .. 2S), k otherwise."""
    return int(2 * site.spin) - k if site.kind == SPIN else k
