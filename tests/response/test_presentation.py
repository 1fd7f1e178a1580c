"""Presentable forms: Boltzmann factors relative to the lowest level, cosh/sinh for a field.

Every value here is also checked numerically against the unpresented Lehmann sum, so a
presentation rule can only change how a formula reads, never what it is.
"""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr
from symresp.conventions import beta
from symresp.response._present import boltzmann_form

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)
D = sp.Symbol("D", real=True)
HALF = sp.Rational(1, 2)
#: Exact rational sample points for the value comparisons.
POINTS = [{J: sp.Rational(7, 5), h: sp.Rational(3, 10), beta: sp.Rational(2, 3)},
          {J: sp.Rational(1, 3), h: sp.Rational(-9, 4), beta: sp.Rational(5, 2)}]


def _equal(a: sp.Expr, b: sp.Expr) -> bool:
    return all(abs(sp.N((a - b).subs(p), 30)) < sp.Float("1e-25") for p in POINTS)


def _dimer_in_field():
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    return sr.Model(J * a.vec @ b.vec - h * (a.z + b.z)), a.z + b.z, a.x + b.x


def test_dimer_in_a_field_reads_as_the_textbook_form():
    # Z' = 1 + e^{-beta J}(1 + 2 cosh(beta h)) relative to the singlet; chi_zz = beta (<M^2> -
    # <M>^2) = 2 beta e^{-beta J}[cosh(beta h) + e^{-beta J}(2 + cosh(beta h))] / Z'^2.
    # Source: the Bleaney-Bowers dimer (Proc. R. Soc. A 214, 451 (1952)) in a field; the
    # cosh/sinh form is common practice in magnetochemistry.
    model, Mz, Mx = _dimer_in_field()
    Zr = 1 + sp.exp(-beta * J) * (1 + 2 * sp.cosh(beta * h))
    expected = 2 * beta * sp.exp(-beta * J) * (sp.cosh(beta * h)
                                               + sp.exp(-beta * J) * (2 + sp.cosh(beta * h))) / Zr**2
    chi = model.response(Mz).static("isothermal")
    assert _equal(chi, expected)
    assert chi.has(sp.cosh) and not chi.has(sp.exp(beta * J))     # decaying factors only
    _, den = sp.fraction(sp.together(chi))
    assert any(isinstance(f, sp.Pow) and f.exp == 2 for f in sp.Mul.make_args(den))
    # Transverse: chi_xx = 2 e^{-beta J} sinh(beta h) / (h Z') (isothermal = isolated).
    chi_x = model.response(Mx).static("isothermal")
    assert _equal(chi_x, 2 * sp.exp(-beta * J) * sp.sinh(beta * h) / (h * Zr))
    assert chi_x.has(sp.sinh)


def test_partition_function_is_relative_to_the_lowest_level():
    model, Mz, _ = _dimer_in_field()
    Z = model.response(Mz).partition_function()
    expected = sp.exp(3 * beta * J / 4) * (1 + sp.exp(-beta * J) * (1 + 2 * sp.cosh(beta * h)))
    assert _equal(Z, expected)
    assert len(Z.atoms(sp.exp)) == 2 and Z.has(sp.cosh)


def test_sign_free_parameter_without_a_reversal_symmetry_keeps_plain_exponentials():
    # D has no sign: no cosh is invented when the levels are not symmetric under D -> -D.
    Zr = 1 + 2 * sp.exp(-beta * D)
    out = boltzmann_form(Zr)
    assert out == Zr and not out.has(sp.cosh)


def test_boltzmann_form_with_irrational_coefficients_keeps_no_auxiliary_variable():
    # Levels -1 -+ sqrt(2) and 0: the numerator (3/2 + sqrt(2)) + (3/2 - sqrt(2)) e^{-2 sqrt(2) beta}
    # has irrational coefficients, which sympy's factor_list returns unfactored as the content.
    r2 = sp.sqrt(2)
    Zr = 1 + sp.exp(-beta * (1 + r2)) + sp.exp(-2 * r2 * beta)
    expr = (HALF * 3 + r2 + (HALF * 3 - r2) * sp.exp(-2 * r2 * beta)) / Zr
    out = boltzmann_form(expr)
    assert out.free_symbols == {beta}
    assert _equal(out, expr)


def test_boltzmann_form_declines_non_linear_exponents():
    assert boltzmann_form(sp.exp(-beta * J**2 * sp.exp(J))) is None
    assert boltzmann_form(beta * J) is None


def test_boltzmann_form_leaves_phases_alone():
    t = sp.Symbol("t", real=True)
    assert boltzmann_form(sp.exp(sp.I * J * t) + sp.exp(-beta * J)) is None


def test_parameter_factors_cancel_between_numerator_and_denominator():
    # Levels 0 and 2(J1 - J2): the factor (J1 - J2) of the weights must not survive as an
    # uncancelled pair in the presented form.
    J1, J2 = sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)
    s = sr.spin("s", HALF)
    chi = sr.Model((2 * J1 - 2 * J2) * (s.z + HALF)).response(s.x).static("isothermal")
    _, den = sp.fraction(sp.together(chi))
    assert sp.degree(sp.Poly(sp.factor(den).as_independent(sp.exp)[0], J1)) <= 1


def test_evaluate_takes_the_limit_where_levels_meet():
    # At J1 = J2 the closed form is 0/0 (a removable singularity); evaluate() gives the limit,
    # equal to exact diagonalisation, and refuses the isolated susceptibility, which jumps there.
    J1, J2 = sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)
    s = sr.spin("s", HALF)
    r = sr.Model((2 * J1 - 2 * J2) * (s.z + HALF)).response(s.x)
    p = {"J1": 1.0, "J2": 1.0}
    ref = r.reference(params=p, T=0.3)
    assert abs(r.evaluate("isothermal", params=p, T=0.3) - ref.isothermal) < 1e-12
    assert abs(r.evaluate("frequency", params=p, T=0.3, omega_value=0.5 + 0.1j)
               - ref.frequency(0.5, 0.1)) < 1e-12
    with pytest.raises(sr.InputError, match="isolated susceptibility is discontinuous"):
        r.evaluate("isolated", params=p, T=0.3)


def test_one_generator_in_a_parameter_combination_reads_as_tanh():
    # Levels 0 and 2(J1 - J2), A = S^x: chi = tanh(beta (J1 - J2)) / (4 (J1 - J2)), the
    # two-level result with splitting 2(J1 - J2) (common practice).
    J1, J2 = sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)
    s = sr.spin("s", HALF)
    chi = sr.Model((2 * J1 - 2 * J2) * (s.z + HALF)).response(s.x).static("isothermal")
    assert chi.has(sp.tanh) and not chi.has(sp.exp)
    assert _equal(chi.subs({J1: sp.Rational(3, 2), J2: sp.Rational(1, 3)}),
                  (sp.tanh(beta * sp.Rational(7, 6)) / (4 * sp.Rational(7, 6))))


# ------------------------------------------------------------------ presented structure
# Every presented formula, with its where-list substituted back, equals exact diagonalisation
# of the independently built matrices (tests/strategies.py) at random points: the presentation
# may change how a formula reads, never what it is.
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from symresp import numeric  # noqa: E402
from symresp.response import MAX_LINE, present_response, presentation_text  # noqa: E402

from ..conftest import ATOL_EXACT, RTOL_EXACT, assert_close  # noqa: E402
from ..strategies import parameter_points, random_models  # noqa: E402
from ._exact import at_point, number, regular_point, response_or_skip  # noqa: E402

ALL = ("isothermal", "isolated", "frequency", "time", "correlation")

def _clustered(lines, tol):
    """Sums of line weights over frequencies closer than ``tol``."""
    out: list[list] = []
    for f, w in sorted(lines, key=lambda x: x[0]):
        if out and abs(f - out[-1][0]) <= tol:
            out[-1][1] += w
        else:
            out.append([f, w])
    return [(f, w) for f, w in out if abs(w) > 1e-13]


# Half the examples of the backbone test (which derives the same kind of models): each example
# here also presents every quantity and evaluates the expanded forms.
@settings(max_examples=max(5, settings().max_examples // 2))
@given(model=random_models(), data=st.data())
def test_presented_formulas_equal_exact_diagonalisation(model, data):
    r = response_or_skip(model)
    p = present_response(r.derivation, ALL)
    exact = data.draw(parameter_points(model.params))
    T = data.draw(st.sampled_from([0.3, 1.0, 4.0]))
    ref = numeric.solve(model.H_num(exact), model.A_mat, model.B_mat, 1.0 / T)
    values = regular_point(r, exact, T)
    digits = 30 if values is exact else 60
    scale = max(1.0, abs(ref.isothermal), abs(ref.isolated))
    got = number(at_point(p.value("isothermal"), values, T), digits)
    assert_close(got / scale, ref.isothermal / scale, what="presented isothermal")
    if values is exact:
        got = number(at_point(p.value("isolated"), values, T), digits)
        assert_close(got / scale, ref.isolated / scale, what="presented isolated")
    z = 0.37 + 0.21j
    w = sp.nsimplify(z.real) + sp.I * sp.nsimplify(z.imag)
    got = number(at_point(p.value("frequency"), values, T).xreplace({sr.omega: w}), digits)
    assert_close(got, ref.frequency(z.real, z.imag), rtol=RTOL_EXACT, atol=ATOL_EXACT * 10,
                 what="presented chi(omega)")
    got = number(at_point(p.value("time"), values, T).xreplace({sr.t: sp.Rational(7, 10)}), digits)
    assert_close(got, ref.time(0.7), rtol=RTOL_EXACT, atol=ATOL_EXACT * 10, what="presented chi(t)")
    # Correlation lines of the presentation against the numeric reference.
    subs = p.substitutions()
    lines = [(number(at_point(ln.frequency.xreplace(subs), values, T), digits).real,
              number(at_point(ln.weight.xreplace(subs), values, T), digits)) for ln in p.correlation]
    f_ref, s_ref = numeric.correlation_lines(model.H_num(exact), model.A_mat, model.B_mat, 1.0 / T)
    tol = 1e-7 * max([1.0, *(abs(f) for f in f_ref)])
    mine, theirs = _clustered(lines, tol), _clustered(list(zip(f_ref, s_ref)), tol)
    assert len(mine) == len(theirs), (mine, theirs)
    for (f1, w1), (f2, w2) in zip(mine, theirs):
        assert abs(f1 - f2) <= tol
        assert_close(w1, w2, rtol=1e-9, atol=1e-11, what=f"correlation line at {f2}")


def test_levels_are_sorted_by_energy_at_the_ordering_point():
    # Spin 1 with D S_z^2 - h S_z: for D = 2, h = 1 the order is m = 0 (0), m = 1 (1), m = -1 (3).
    s = sr.spin("s", 1)
    r = sr.Model(D * s.z**2 - h * s.z).response(s.x)
    p = r.presented(point={"D": 2, "h": 1})
    assert [row.energy for row in p.levels] == [0, D - h, D + h]
    assert [row.label for row in p.levels] == [1, 2, 3]
    p = r.presented(point={"D": -2, "h": 1})
    assert [row.energy for row in p.levels] == [D - h, D + h, 0]


def test_radicals_are_named_once_and_used_everywhere():
    # Spin 1 with axial D, rhombic E and a field: levels D/3 +- sqrt(E^2 + h^2), -2D/3.
    E = sp.Symbol("E_r", nonnegative=True)
    s = sr.spin("s", 1)
    r = sr.Model(D * (s.z**2 - sp.Rational(2, 3)) + E * (s.x**2 - s.y**2) - h * s.z).response(s.x)
    p = r.presented()
    text = p.text()
    assert "sqrt" in text and text.count("sqrt") == 1          # defined once: R = sqrt(...)
    radical = [d for d in p.definitions if d.kind == "radical"]
    assert len(radical) == 1 and radical[0].value == sp.sqrt(E**2 + h**2)
    assert all(not row.energy.has(sp.sqrt(E**2 + h**2)) for row in p.levels)


def test_hermitian_pole_pairs_are_merged():
    # Spin 1/2 in a field, A = B = S_x: one pair at +-h, printed as 2 h w/(h^2 - omega^2).
    q = sr.spin("q", HALF)
    p = sr.Model(J * q.z).response(q.x).presented(["frequency"])
    f = p.formula("frequency").expr
    assert sp.simplify(f - J * sp.tanh(beta * J / 2) / (2 * (J**2 - sr.omega**2))) == 0
    assert len(sp.Add.make_args(sp.together(f).as_numer_denom()[1])) <= 2


def test_implicit_and_radical_levels_with_unequal_weights_present_and_evaluate():
    # A cubic block (implicit roots r1_k) beside a 2x2 block with levels -+R, R = sqrt(g^2 + h^2);
    # W_ij and W_ji differ (B complex), so they are compared at numbers, radicals included.
    s = sr.nlevel("s", 5)
    g, hh = sp.Symbol("g", positive=True), sp.Symbol("hh", positive=True)
    H = (s.op(0, 1) + s.op(1, 0) + s.op(1, 2) + s.op(2, 1) + 2 * s.op(0, 0) - s.op(2, 2)
         + hh * (s.op(3, 3) - s.op(4, 4)) + g * (s.op(3, 4) + s.op(4, 3)))
    A = s.op(0, 3) + s.op(3, 0) + s.op(1, 4) + s.op(4, 1)
    B = sp.I * (s.op(0, 4) - s.op(4, 0)) + s.op(2, 3) + s.op(3, 2)
    r = sr.Model(H).response(A, B)
    p = present_response(r.derivation, ("isothermal",))
    assert any(not row.symmetric for row in p.transitions)
    ref = r.reference(params={"g": 0.7, "hh": 1.3}, T=0.9).isothermal
    got = complex(sp.N(p.value("isothermal").subs({g: sp.Rational(7, 10), hh: sp.Rational(13, 10),
                                                   beta: 1 / sp.Rational(9, 10)}), 30))
    assert abs(got - ref) <= 1e-9 * max(1.0, abs(ref))


def test_population_form_takes_over_where_closed_forms_are_long():
    # Six-site wheel: the closed forms run to 1e5 characters; the presentation stays short.
    from symresp.cases import derive_case, find_case, present_case, read_case
    case = read_case(find_case("ring4"))
    items = [(label, d, ("isothermal", "isolated", "frequency", "time"))
             for label, d in derive_case(case)]
    for label, _a, _b, d, p in present_case(case, items):
        text = p.text()
        assert max(len(line) for line in text.splitlines()) <= MAX_LINE
        assert len(text) < 4000
        for q in ("isothermal", "frequency"):
            pt = {**case.defaults, beta: sp.Rational(1, 5), sr.omega: sp.Rational(1, 3)}
            raw = d.static("isothermal") if q == "isothermal" else d.frequency()
            assert abs(sp.N((p.value(q) - raw).subs(pt), 30)) < 1e-20


def test_an_exhausted_share_of_the_budget_gives_population_sums_and_a_note(monkeypatch):
    # The presentation may use a share of the time left; past it, it falls back to the plain
    # population sums with a note instead of failing (the whole budget is not used up here).
    from symresp.models import Budget
    from symresp.response import _presentation
    monkeypatch.setattr(_presentation, "PRESENT_SHARE", 1e-12)
    q = sr.spin("q", HALF)
    r = sr.Model(J * q.z + h * q.x).response(q.z)
    clock = Budget(seconds=60).start()
    with clock.running():
        p = present_response(r.derivation, ("isothermal", "frequency"))
    assert any("budget" in n for n in p.notes) and any("budget" in n for n in clock.notes)
    assert all(f.form != "closed" for f in p.formulas)
    pt = {J: sp.Rational(1, 2), h: sp.Rational(1, 3), beta: 2, sr.omega: sp.Rational(1, 7)}
    assert abs(sp.N((p.value("isothermal") - r.static("isothermal")).subs(pt), 30)) < 1e-25
    assert abs(sp.N((p.value("frequency") - r.frequency()).subs(pt), 30)) < 1e-25


def test_a_presentation_clock_of_its_own_that_ends_gives_the_population_sums():
    # A clock given for the presentation alone (a summary's few seconds) is not the call's
    # budget: when it ends, even before the first step, the cheap forms follow with a note.
    import time
    from symresp.models import Budget
    q = sr.spin("q", HALF)
    r = sr.Model(J * q.z + h * q.x).response(q.z)
    own = Budget(seconds=0.001).start()
    time.sleep(0.01)
    with Budget(seconds=60).start().running():
        p = present_response(r.derivation, ("isothermal", "frequency"), clock=own)
    assert any("budget" in n for n in p.notes)
    pt = {J: sp.Rational(1, 2), h: sp.Rational(1, 3), beta: 2}
    assert abs(sp.N((p.value("isothermal") - r.static("isothermal")).subs(pt), 30)) < 1e-25


def test_an_exhausted_whole_budget_is_an_error():
    from symresp.errors import BudgetExceeded
    from symresp.models import Budget
    q = sr.spin("q", HALF)
    r = sr.Model(J * q.z + h * q.x).response(q.z)
    with pytest.raises(BudgetExceeded, match="presenting"):
        present_response(r.derivation, ("isothermal",), clock=Budget(seconds=1e-9).start())


def test_implicit_levels_with_long_decimal_coefficients_are_printed_by_their_names():
    # Decimals typed as g factors and couplings (1.987, 0.0137) make long exact numbers inside
    # the roots of a parametric factor; the level table names the roots (r1_k), it does not
    # print the root objects with those numbers renamed inside them.
    s = sr.spin("s", sp.Rational(7, 2))
    D, hx, hz = sp.Symbol("D", real=True), sp.Symbol("hx", real=True), sp.Symbol("hz", real=True)
    g = sp.Rational(1987, 1000)
    H = D * s.z**2 + sp.Rational(137, 10000) * (s.x**2 - s.y**2) - g * (hx * s.x + hz * s.z)
    p = sr.Model(H).response(s.z).presented(["isothermal"])
    roots = {d.symbol for d in p.definitions if d.kind == "root"}
    assert len(p.levels) == 8 and all(row.energy in roots for row in p.levels)
    text = "\n".join(presentation_text(p))
    assert "LevelRoot(" not in text and max(map(len, text.splitlines())) < 200
