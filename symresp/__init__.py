"""symresp: closed-form linear-response (Kubo) susceptibilities of small quantum models.

Public facade: explicit re-exports only, no logic. See README.md and docs/.
"""

from ._api import Model, Response, load_case
from .algebra import (Operator, anticommutator, boson, commutator, dagger, fermion, nlevel, spin,
                      spinful_fermion)
from .conventions import Convention, beta, eta, nu, omega, t
from .errors import (BudgetExceeded, ClosedFormError, InputError, NotConservedError,
                     NotHermitianError, SymrespError)

from .checks import CheckRow, Report, Verdict
from .emit import magnetic_moment, zeeman
from .models import Budget

__version__ = "0.1.0"

__all__ = [
    "spin", "nlevel", "fermion", "spinful_fermion", "boson", "dagger", "commutator",
    "anticommutator", "Operator", "Model", "Response", "Budget", "load_case",
    "Verdict", "Report", "CheckRow",
    "beta", "omega", "t", "eta", "nu", "Convention",
    "SymrespError", "InputError", "NotHermitianError", "NotConservedError", "BudgetExceeded",
    "ClosedFormError",
    "zeeman", "magnetic_moment",
]
