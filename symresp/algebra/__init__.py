"""Operator algebra (layer: algebra): sites, operator expressions, matrix forms.

Imports sympy, numpy, :mod:`symresp.errors` and :mod:`symresp.conventions` only.
"""

from ._closure import MAX_COMMUTATORS, MAX_SPACE_DIMENSION, OperatorSpace, close_under, coordinates
from ._constructors import (MAX_CUTOFF, MAX_LEVELS, MAX_SPIN, LevelSite, SpinSite, SpinVector,
                            boson, describe, fermion, nlevel, spin, spinful_fermion)
from ._matrix import MAX_DIMENSION, Basis, SparseForm, sparse_form, to_array, to_sympy_matrix
from ._operators import (Monomial, Operator, anticommutator, as_coefficient, as_operator, commutator,
                         dagger, exact_decimal)
from ._kinds import (CASE_SITE_WORDS, SITE_KINDS, SiteKindInfo, ladder_value, natural_term,
                     natural_value, site_kind)
from ._sites import BOSON, FERMION, LEVEL, SPIN, Site, local_parity

__all__ = [
    "Site", "local_parity", "Operator", "Monomial", "as_coefficient", "as_operator", "dagger",
    "commutator", "anticommutator", "spin", "nlevel", "fermion", "spinful_fermion", "boson",
    "SpinSite", "LevelSite", "describe", "SpinVector", "MAX_SPIN", "MAX_LEVELS", "MAX_CUTOFF",
    "Basis", "SparseForm", "sparse_form", "to_sympy_matrix", "to_array", "MAX_DIMENSION",
    "OperatorSpace", "close_under", "coordinates", "MAX_SPACE_DIMENSION", "MAX_COMMUTATORS",
    "exact_decimal", "SPIN", "LEVEL", "FERMION", "BOSON", "SITE_KINDS", "SiteKindInfo",
    "site_kind", "CASE_SITE_WORDS", "natural_term", "natural_value", "ladder_value",
]
