"""Property test: emitted numpy evaluators equal exact diagonalisation on random models.

The same random Hermitian models as the backbone test of the derivation
(tests/response/test_against_numeric.py, built twice, independently, by tests/strategies.py)
are derived, emitted, compiled in memory and evaluated at random parameter points, including
points where a parameter is exactly zero (the closed forms have removable singularities there;
the evaluators must give the limit). Semi-closed blocks (implicit roots) are included.
"""

from __future__ import annotations

import numpy as np
from hypothesis import assume, given, note, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.emit import compile_module, numpy_module_source
from symresp.errors import BudgetExceeded, ClosedFormError

from ..strategies import parameter_points, random_models

#: Agreement with exact diagonalisation, relative to the largest value compared.
RTOL = 1e-9
OMEGA = np.array([-1.3, -0.2, 0.45, 2.1])
ETA = 0.07
TIMES = np.array([0.0, 0.4, 3.3])


def _close(actual, expected, what: str) -> None:
    actual, expected = np.asarray(actual), np.asarray(expected)
    assert np.all(np.isfinite(actual)), (what, actual)
    scale = max(1.0, float(np.max(np.abs(expected))))
    err = float(np.max(np.abs(actual - expected)))
    assert err <= RTOL * scale, f"{what}: max error {err:.3g} at scale {scale:.3g}"


@settings(max_examples=12, deadline=None)
@given(model=random_models(), data=st.data())
def test_emitted_evaluator_equals_exact_diagonalisation(model, data):
    try:
        # Exact diagonalisation on both sides: the numeric reference truncates boson modes
        # at the same cutoff (the cutoff-free route has its own tests in test_routes.py).
        r = sr.Model(model.H).response(model.A, model.B, route="lehmann")
        mod = compile_module(numpy_module_source(r.derivation))
    except (ClosedFormError, BudgetExceeded) as err:
        note(f"outside closed form by design: {err}")
        assume(False)
        return
    values = data.draw(parameter_points(model.params))
    if values and data.draw(st.booleans()):
        # A parameter exactly zero: a removable singularity of some closed forms.
        values[data.draw(st.sampled_from(sorted(values)))] = 0.0
    T = data.draw(st.sampled_from([0.05, 0.6, 3.0]))
    args = [values[n] for n in mod.PARAMETERS]
    ref = numeric.solve(model.H_num(values), model.A_mat, model.B_mat, 1.0 / T)
    _close(mod.chi_isothermal(T, *args), ref.isothermal, "isothermal")
    _close(mod.chi_isolated(T, *args), ref.isolated, "isolated")
    _close(mod.chi_omega(OMEGA, T, *args, eta=ETA), ref.frequency(OMEGA, ETA), "chi(omega)")
    _close(mod.chi_time(TIMES, T, *args), ref.time(TIMES), "chi(t)")
    Ts = np.array([T, 2 * T])
    expected = [numeric.static_isothermal(model.H_num(values), model.A_mat, model.B_mat, 1 / x)
                for x in Ts]
    _close(mod.chi_isothermal(Ts, *args), expected, "isothermal over T")
    # The array kernels (in-place, stacked levels) against the scalar ones (math, plain).
    _close(mod.chi_isolated(Ts, *args), [mod.chi_isolated(float(x), *args) for x in Ts],
           "isolated over T")
    for kind in ("isothermal", "isolated") if args else ():
        _close(mod.jacobian_static(Ts, *args, kind=kind),
               [mod.jacobian_static(float(x), *args, kind=kind) for x in Ts], f"Jacobian {kind}")
