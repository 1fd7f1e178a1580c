"""symresp: closed-form linear-response (Kubo) susceptibilities of small quantum models.

Public facade: the table below says where each public name lives; a name is imported from
there the first time it is used (``sr.Model``, ``from symresp import spin``). Loading on
first use keeps ``import symresp.numeric`` (the numpy-only reference) free of sympy. See
README.md and docs/.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

__version__ = "0.1.0"

#: Public name -> the module that defines it.
_SOURCES = {
    **dict.fromkeys(("Model", "Response", "load_case"), "._api"),
    **dict.fromkeys(("Operator", "anticommutator", "boson", "commutator", "dagger", "fermion",
                     "nlevel", "spin", "spinful_fermion"), ".algebra"),
    **dict.fromkeys(("Convention", "beta", "eta", "nu", "omega", "t"), ".conventions"),
    **dict.fromkeys(("BudgetExceeded", "ClosedFormError", "InputError", "NotConservedError",
                     "NotHermitianError", "SymrespError"), ".errors"),
    **dict.fromkeys(("CheckRow", "Report", "Verdict"), ".checks"),
    "Budget": ".models",
    **dict.fromkeys(("magnetic_moment", "zeeman"), ".emit"),
}

__all__ = [
    "spin", "nlevel", "fermion", "spinful_fermion", "boson", "dagger", "commutator",
    "anticommutator", "Operator", "Model", "Response", "Budget", "load_case",
    "Verdict", "Report", "CheckRow",
    "beta", "omega", "t", "eta", "nu", "Convention",
    "SymrespError", "InputError", "NotHermitianError", "NotConservedError", "BudgetExceeded",
    "ClosedFormError",
    "zeeman", "magnetic_moment",
]


def __getattr__(name: str) -> object:
    try:
        source = _SOURCES[name]
    except KeyError:
        raise AttributeError(f"module 'symresp' has no attribute {name!r}") from None
    value = getattr(import_module(source, __name__), name)  # safe: a module of the fixed table
    globals()[name] = value  # later lookups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


if TYPE_CHECKING:  # the same names, for type checkers and editors
    from ._api import Model, Response, load_case
    from .algebra import (Operator, anticommutator, boson, commutator, dagger, fermion, nlevel,
                          spin, spinful_fermion)
    from .checks import CheckRow, Report, Verdict
    from .conventions import Convention, beta, eta, nu, omega, t
    from .errors import (BudgetExceeded, ClosedFormError, InputError, NotConservedError,
                         NotHermitianError, SymrespError)
    from .emit import magnetic_moment, zeeman
    from .models import Budget
