"""Emitted numpy modules: agreement with exact diagonalisation, stability, Jacobians, round trip.

The emitted modules are imported in a child process where ``import sympy`` fails, with numpy
floating-point errors raised (except underflow, which is how far-away Boltzmann factors
become exactly 0) and warnings turned into errors. Their values are compared with the
numeric reference of ``symresp.numeric`` on matrices built from plain Kronecker products.
"""

from __future__ import annotations

import hashlib
import math
import os
import pickle
import subprocess
import sys
import textwrap

import numpy as np
import pytest
import sympy as sp

import symresp as sr
from symresp import numeric
from symresp.conventions import Convention
from symresp.emit import compile_module, numpy_module_source
from symresp.emit._runtime_roots import ROOTS_RUNTIME
from symresp.errors import InputError

from ._models import CASES, module, response, source

#: Agreement with exact diagonalisation: |a - b| <= RTOL * max|b| (over the grid) + ATOL.
RTOL = 1e-9
ATOL = 1e-13
#: Round trip against the 30-digit sympy evaluation of the presented formulas.
RTOL_ROUND_TRIP = 1e-12
#: Central finite differences with step FD_STEP agree with the analytic Jacobian to FD_RTOL.
FD_STEP = 1e-5
FD_RTOL = 1e-7
#: Accidental degeneracy of the field-split levels.
TINY_FIELD = 1e-12
#: At h = TINY_FIELD the reference merges the split levels into one (its grouping tolerance is
#: 1e-9), so it lacks the true O(h / eta) part of chi(omega) between them; allow that much.
ATOL_DEGENERATE = 1e3 * TINY_FIELD
#: Low temperature, relative to the case's energy scale.
LOW_T = 1e-3
#: Next to a pole: distance and broadening.
POLE_OFFSET = 1e-6
POLE_ETA = 1e-7
#: Next to a pole, exact diagonalisation is itself uncertain: its eigenvalues carry an absolute
#: error of a few eps * ||H||, about 1e-9 of the value at 1e-6 from a pole. Against ED there
#: the tolerance is RTOL_NEAR_POLE_ED; against the 30-digit closed form it is RTOL.
RTOL_NEAR_POLE_ED = 1e-8
#: Cases checked next to a pole against the 30-digit evaluation of the closed form, at
#: parameters that are exact binary fractions (so the closed form sees the same numbers).
NEAR_POLE_EXACT = ("dimer_xx", "spin1_xx", "two_level", "rhombic", "ring4_s0z")
#: The same numbers reached through another broadcast or chunking path (rounding only).
RTOL_SAME = 1e-13
ATOL_SAME = 1e-15
#: chi_T moves by O(beta h) when h goes from 0 to 1e-8 (continuity through a crossing).
RTOL_CONTINUITY = 1e-7
#: Against sympy.lambdify / float evaluation of the closed forms.
RTOL_LAMBDIFY = 1e-12
ATOL_LAMBDIFY = 1e-12
#: Jacobian exactly at a removable singularity of the weights: evaluated 1e-7 away from it.
RTOL_SINGULAR_JACOBIAN = 1e-6
#: Ordinary grids.
ETA = 0.05
OMEGA = np.linspace(-4.0, 4.0, 81)
TIMES = np.linspace(-1.0, 10.0, 45)


def _draw(case, rng) -> dict[str, float]:
    out = {}
    for name in module(case.name).PARAMETERS:
        magnitude = float(rng.uniform(0.5, 2.0))
        if name in case.positive:
            out[name] = magnitude
        elif name == "h":
            out[name] = float(rng.uniform(-1.5, 1.5))
        else:
            out[name] = magnitude * float(rng.choice([-1.0, 1.0]))
    return out


def _points(case, rng) -> list[tuple[str, dict[str, float], float]]:
    pts = []
    for k in range(2):
        pts.append((f"random{k}", _draw(case, rng), float(rng.uniform(0.3, 3.0))))
    p = _draw(case, rng)
    pts.append(("low_T", p, LOW_T * abs(p[case.energy_scale])))
    if "h" in p:
        q = _draw(case, rng)
        q["h"] = TINY_FIELD
        pts.append(("degenerate", q, 0.7))
    return pts


def _reference(case, params, T):
    H, A, B = case.matrices(**params)
    return H, A, B, numeric.solve(H, A, B, 1.0 / T)


_CHILD = textwrap.dedent(r'''
    import importlib.util, pickle, sys, warnings
    sys.modules["sympy"] = None          # any "import sympy" below raises ImportError
    import numpy as np
    try:
        import sympy  # noqa: F401
        raise SystemExit("sympy importable")
    except ImportError:
        pass
    warnings.simplefilter("error")
    np.seterr(over="raise", divide="raise", invalid="raise", under="ignore")
    calls, out_path = pickle.load(open(sys.argv[1], "rb")), sys.argv[2]
    modules, results = {}, {}
    for key, (path, fname, args, kwargs) in calls.items():
        if path not in modules:
            spec = importlib.util.spec_from_file_location("m%d" % len(modules), path)
            mod = importlib.util.module_from_spec(spec)
            spec.loader.exec_module(mod)
            modules[path] = mod
        try:
            results[key] = getattr(modules[path], fname)(*args, **kwargs)
        except Exception as exc:  # reported, and failed, by the parent
            results[key] = "ERROR %s: %s" % (type(exc).__name__, exc)
    bad = [m for m in sys.modules if m.split(".")[0] == "sympy" and sys.modules[m] is not None]
    results["__sympy_modules__"] = bad
    pickle.dump(results, open(out_path, "wb"))
''')


@pytest.fixture(scope="module")
def sympy_free_run(tmp_path_factory):
    """Evaluate every case in a child process without sympy; return calls, references, results."""
    tmp = tmp_path_factory.mktemp("emitted")
    rng = np.random.default_rng(20240611)
    calls, expected = {}, {}
    for name, case in CASES.items():
        path = tmp / f"{name}.py"
        path.write_text(source(name))
        for label, params, T in _points(case, rng):
            H, A, B, ref = _reference(case, params, T)
            args = tuple(params[n] for n in module(name).PARAMETERS)
            key = f"{name}/{label}"
            beta = 1.0 / T
            calls[key + "/isothermal"] = (str(path), "chi_isothermal", (T, *args), {})
            expected[key + "/isothermal"] = ref.isothermal
            calls[key + "/isolated"] = (str(path), "chi_isolated", (T, *args), {})
            expected[key + "/isolated"] = ref.isolated
            temps = np.array([T, 2 * T, 5 * T])
            calls[key + "/isothermal_T"] = (str(path), "chi_isothermal", (temps, *args), {})
            expected[key + "/isothermal_T"] = np.array(
                [numeric.static_isothermal(H, A, B, 1 / x) for x in temps])
            calls[key + "/omega"] = (str(path), "chi_omega", (OMEGA, T, *args), {"eta": ETA})
            expected[key + "/omega"] = ref.frequency(OMEGA, ETA)
            calls[key + "/spectral"] = (str(path), "chi_spectral", (OMEGA, T, *args), {"eta": ETA})
            expected[key + "/spectral"] = numeric.spectral_function(H, A, B, beta, OMEGA, ETA)
            calls[key + "/gaussian"] = (str(path), "chi_spectral", (OMEGA, T, *args),
                                        {"eta": ETA, "shape": "gaussian"})
            expected[key + "/gaussian"] = _gaussian_lines(ref, OMEGA, ETA)
            calls[key + "/time"] = (str(path), "chi_time", (TIMES, T, *args), {})
            expected[key + "/time"] = ref.time(TIMES)
            for kind in ("isothermal", "isolated"):
                calls[key + f"/jacobian_{kind}"] = (str(path), "jacobian_static", (T, *args),
                                                    {"kind": kind})
            Om = ref.poles[0]
            if Om.size:
                k = int(np.argmax(np.abs(ref.poles[1])))
                near = Om[k] + np.array([-POLE_OFFSET, POLE_OFFSET, 0.5 * POLE_OFFSET])
                calls[key + "/near_pole"] = (str(path), "chi_omega", (near, T, *args),
                                             {"eta": POLE_ETA})
                expected[key + "/near_pole"] = ref.frequency(near, POLE_ETA)
    for name in NEAR_POLE_EXACT:
        path = tmp / f"{name}.py"
        r, mod = response(name), module(name)
        params = {n: float(rng.integers(4, 17)) / 8 for n in mod.PARAMETERS}
        T = 0.75
        subs = {p: sp.Rational(params[p.name]) for p in r.derivation.system.parameters}
        subs[sr.beta] = 1 / sp.Rational(T)
        Om, _ = max(r.poles(), key=lambda pw: abs(complex(sp.N(pw[1].subs(subs), 20))))
        pole = float(sp.N(Om.subs(subs), 30))
        for sign in (-1, 1):
            w = pole + sign * POLE_OFFSET
            key = f"{name}/exact/near_pole{sign:+d}"
            calls[key] = (str(path), "chi_omega", (w, T, *[params[n] for n in mod.PARAMETERS]),
                          {"eta": POLE_ETA})
            expected[key] = r.evaluate("frequency", params=params, T=T,
                                       omega_value=complex(w, POLE_ETA))
    calls_path, out_path = tmp / "calls.pkl", tmp / "out.pkl"
    calls_path.write_bytes(pickle.dumps(calls))
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    proc = subprocess.run([sys.executable, "-c", _CHILD, str(calls_path), str(out_path)],
                          capture_output=True, text=True, env=env, cwd=str(tmp), timeout=120)
    assert proc.returncode == 0, proc.stderr
    return calls, expected, pickle.loads(out_path.read_bytes())


def _gaussian_lines(ref, omega, eta):
    # Gaussian of half width at half maximum eta and area pi per unit weight.
    sigma = eta / math.sqrt(2 * math.log(2))
    Om, w = ref.poles
    x = omega[None, :] - Om[:, None]
    g = math.pi * np.exp(-0.5 * (x / sigma) ** 2) / (sigma * math.sqrt(2 * math.pi))
    return (w[:, None] * g).sum(axis=0)


def _assert_close(actual, expected, what, rtol=RTOL, atol=ATOL):
    actual = np.asarray(actual)
    expected = np.asarray(expected)
    assert actual.shape == expected.shape, (what, actual.shape, expected.shape)
    assert np.all(np.isfinite(actual)), (what, actual)
    scale = float(np.max(np.abs(expected))) if expected.size else 0.0
    err = float(np.max(np.abs(actual - expected))) if expected.size else 0.0
    assert err <= rtol * scale + atol, f"{what}: max error {err:.3g} at scale {scale:.3g}"


def test_child_process_never_imported_sympy(sympy_free_run):
    _, _, results = sympy_free_run
    assert results["__sympy_modules__"] == []


@pytest.mark.parametrize("name", sorted(CASES))
def test_emitted_module_agrees_with_exact_diagonalisation(sympy_free_run, name):
    calls, expected, results = sympy_free_run
    keys = [k for k in calls if k.startswith(name + "/")]
    assert keys
    for key in keys:
        value = results[key]
        assert not isinstance(value, str), f"{key}: {value}"
        if key.endswith(("jacobian_isothermal", "jacobian_isolated")):
            assert np.all(np.isfinite(value)) and np.shape(value) == (len(calls[key][2]) - 1,)
            continue
        atol = ATOL_DEGENERATE if "/degenerate/" in key else ATOL
        rtol = RTOL_NEAR_POLE_ED if key.endswith("/near_pole") else RTOL
        _assert_close(value, expected[key], key, rtol=rtol, atol=atol)


def test_low_temperature_and_degenerate_points_are_covered(sympy_free_run):
    calls, _, _ = sympy_free_run
    assert any("/low_T/" in k for k in calls)
    assert any("/degenerate/" in k for k in calls)
    assert sum(k.endswith("/near_pole") for k in calls) >= 10
    assert sum("/exact/near_pole" in k for k in calls) == 2 * len(NEAR_POLE_EXACT)


# ------------------------------------------------------------------------------ Jacobian
@pytest.mark.parametrize("name", ["dimer_zz", "dimer_xx", "triangle_s0x", "ring4_s0z",
                                  "spin1_xx", "rhombic", "two_level", "tilted_pair",
                                  "tilted_field"])
def test_jacobian_agrees_with_finite_differences(name):
    case = CASES[name]
    mod = module(name)
    rng = np.random.default_rng(7)
    for label, params, T in _points(case, rng):
        p = np.array([params[n] for n in mod.PARAMETERS])
        for kind in ("isothermal", "isolated"):
            jac = mod.jacobian_static(T, *p, kind=kind)
            assert np.all(np.isfinite(jac))
            if label in ("low_T",) or (label == "degenerate" and kind == "isolated"):
                continue   # FD is meaningless across the level-grouping threshold / at beta*dE ~ 1e3
            value = mod.chi_static(T, *p, kind=kind)
            for i in range(p.size):
                up, down = p.copy(), p.copy()
                up[i] += FD_STEP
                down[i] -= FD_STEP
                fd = (mod.chi_static(T, *up, kind=kind) - mod.chi_static(T, *down, kind=kind)) / (2 * FD_STEP)
                scale = max(abs(fd), abs(value), 1.0)
                assert abs(fd - jac[i]) <= FD_RTOL * scale, (name, label, kind, i, fd, jac[i])


def test_jacobian_broadcasts_and_stacks_parameters_last():
    mod = module("dimer_zz")
    T = np.array([[0.5], [1.0]])
    hs = np.array([0.0, 0.3, -0.2])
    jac = mod.jacobian_static(T, 1.1, hs)
    assert jac.shape == (2, 3, 2)
    for i in range(2):
        for j in range(3):
            np.testing.assert_allclose(jac[i, j], mod.jacobian_static(float(T[i, 0]), 1.1, float(hs[j])),
                                       rtol=RTOL_SAME, atol=ATOL_SAME)


# ------------------------------------------------------------------------------ round trip
@pytest.mark.parametrize("name,points,dynamic", [
    ("dimer_zz", 2, True), ("spin1_xx", 2, True), ("two_level", 2, True),
    ("tilted_pair", 1, False),     # implicit roots: 30-digit sympy evaluation is slow
])
def test_compiled_functions_equal_the_sympy_formulas(name, points, dynamic):
    r, mod = response(name), module(name)
    rng = np.random.default_rng(11)
    case = CASES[name]
    for _ in range(points):
        params = _draw(case, rng)
        T = float(rng.uniform(0.4, 2.0))
        args = [params[n] for n in mod.PARAMETERS]
        for kind in ("isothermal", "isolated"):
            exact = r.evaluate(kind, params=params, T=T)
            got = mod.chi_static(T, *args, kind=kind)
            assert abs(got - exact) <= RTOL_ROUND_TRIP * max(abs(exact), 1.0), (kind, got, exact)
        if not dynamic:
            continue
        w = 0.37
        exact = r.evaluate("frequency", params=params, T=T, omega_value=complex(w, ETA))
        got = mod.chi_omega(w, T, *args, eta=ETA)
        assert abs(got - exact) <= RTOL_ROUND_TRIP * max(abs(exact), 1.0)
        exact = r.evaluate("time", params=params, T=T, time_value=1.3)
        got = mod.chi_time(1.3, T, *args)
        assert abs(got - exact) <= RTOL_ROUND_TRIP * max(abs(exact), 1.0)


# ------------------------------------------------------------------------------ safety
def test_isothermal_is_continuous_through_an_accidental_degeneracy():
    # dimer, chi_xx: the pair (E_1, E_2) split by h has g_ab -> beta p_a as h -> 0.
    mod = module("dimer_xx")
    values = [mod.chi_isothermal(0.8, 1.3, hh) for hh in (0.0, 1e-300, 1e-12, 1e-8, -1e-8)]
    assert np.all(np.isfinite(values))
    np.testing.assert_allclose(values, values[0], rtol=RTOL_CONTINUITY)
    H, A, B = CASES["dimer_xx"].matrices(J=1.3, h=0.0)
    _assert_close(values[0], numeric.static_isothermal(H, A, B, 1 / 0.8), "h = 0")


def test_removable_singularity_of_the_weights_gives_the_limit():
    # At E_r = h = 0 the weights h / sqrt(E_r^2 + h^2) are 0/0; the response is analytic there.
    mod = module("rhombic")
    H, A, B = CASES["rhombic"].matrices(D=1.0, E_r=0.0, h=0.0)
    T = 0.5
    ref = numeric.solve(H, A, B, 1 / T)
    for args in ((T, 1.0, 0.0, 0.0), (np.array([T]), 1.0, 0.0, np.zeros(1))):
        _assert_close(mod.chi_isothermal(*args), np.full(np.shape(args[0]), ref.isothermal).real, "isothermal")
        _assert_close(mod.chi_isolated(*args), np.full(np.shape(args[0]), ref.isolated).real, "isolated")
    _assert_close(mod.chi_omega(OMEGA, T, 1.0, 0.0, 0.0, eta=ETA), ref.frequency(OMEGA, ETA), "omega")
    jac = mod.jacobian_static(T, 1.0, 0.0, 0.0)
    p = np.array([1.0, 0.0, 0.0])
    for i in range(3):
        step = FD_STEP * np.eye(3)[i]
        fd = (mod.chi_isothermal(T, *(p + step)) - mod.chi_isothermal(T, *(p - step))) / (2 * FD_STEP)
        assert abs(jac[i] - fd) <= RTOL_SINGULAR_JACOBIAN, (i, jac[i], fd)


def test_removable_singularity_away_from_zero_parameters_gives_the_limit():
    # H = -(J1 + J2)(a + a^+) for a boson with cutoff 2: the stage-P weights divide by J1 + J2,
    # singular at J1 = -J2 = -0.2, where a step of 1e-50 does not move the floats. Found by the
    # random-model property test (it raised ZeroDivisionError, and gave NaN on arrays).
    J1, J2 = sp.symbols("J1 J2", real=True)
    a = sr.boson("a", 2)
    H = -(J1 + J2) * (a + sr.dagger(a))
    mod = compile_module(numpy_module_source(sr.Model(H).response(a, sr.dagger(a) * a).derivation))
    model = sr.Model(H)
    T = 0.6
    with np.errstate(divide="raise", invalid="raise", over="raise", under="ignore"):
        for j2 in (0.2, 0.2 + 1e-7):
            Hn = model.array(H, params={"J1": -0.2, "J2": j2})
            ref = numeric.solve(Hn, model.array(a), model.array(sr.dagger(a) * a), 1 / T)
            _assert_close(mod.chi_isothermal(T, -0.2, j2), ref.isothermal.real, "scalar")
            grid = mod.chi_isothermal(np.array([T, T]), np.array([-0.2, 0.3]), np.array([j2, 0.2]))
            _assert_close(grid[0], ref.isothermal.real, "array")
            _assert_close(mod.chi_omega(OMEGA, T, -0.2, j2, eta=ETA), ref.frequency(OMEGA, ETA),
                          "omega")


def test_complex_pole_sums_whose_first_term_is_real():
    # A three-level site and a fermion, A = n, B = |0><2| (not Hermitian): the first pole of
    # chi(t) has a real coefficient and later ones complex, so a sum accumulated in place must
    # start complex. Found by the random-model search (numpy refused the complex += at run time).
    s0, s1 = sr.nlevel("s0", 3), sr.fermion("s1")
    H = (s0.op(0, 2) * sr.dagger(s1) + s0.op(1, 2) + s0.op(2, 0) * s1 + s0.op(2, 1)
         - sp.Rational(1, 2) * (s1 + sr.dagger(s1)))
    A, B = sr.dagger(s1) * s1, s0.op(0, 2)
    model = sr.Model(H)
    mod = compile_module(numpy_module_source(model.response(A, B).derivation))
    T = 0.6
    ref = numeric.solve(model.array(H), model.array(A), model.array(B), 1 / T)
    times = np.array([0.0, 0.4, 3.3])
    _assert_close(mod.chi_time(times, T), ref.time(times), "chi(t)")
    _assert_close(mod.chi_omega(OMEGA, T, eta=ETA), ref.frequency(OMEGA, ETA), "omega")
    _assert_close(mod.chi_spectral(OMEGA, T, eta=ETA), ref.spectral(OMEGA, ETA), "spectral")
    _assert_close(mod.chi_spectral(OMEGA, T, eta=ETA, shape="gaussian"),
                  _gaussian_lines(ref, OMEGA, ETA), "gaussian")


def test_extreme_temperatures_and_parameters_stay_finite_without_warnings():
    mod = module("ring4_s0z")
    T = np.array([1e-6, 1e-3, 1.0, 1e3, 1e8])
    with np.errstate(over="raise", divide="raise", invalid="raise", under="ignore"):
        for J_, h_ in ((1.0, 0.3), (-1.0, 0.3), (1e6, -2e5), (1e-9, 0.0)):
            for f in (mod.chi_isothermal, mod.chi_isolated):
                assert np.all(np.isfinite(f(T, J_, h_)))
            assert np.all(np.isfinite(mod.jacobian_static(T, J_, h_)))
            assert np.all(np.isfinite(mod.chi_omega(OMEGA, 1e-3, J_, h_, eta=ETA)))


def test_large_grids_are_chunked_without_changing_values():
    mod = module("triangle_s0x")
    T = np.linspace(0.05, 5.0, 20001)
    whole = mod.chi_isothermal(T, 0.9, 0.2)
    pieces = np.concatenate([mod.chi_isothermal(T[i:i + 1000], 0.9, 0.2) for i in range(0, T.size, 1000)])
    np.testing.assert_array_equal(whole, pieces)
    w = np.linspace(-3, 3, 30001)
    big = mod.chi_omega(w, 0.7, 0.9, 0.2, eta=ETA)
    np.testing.assert_allclose(big[::1000], mod.chi_omega(w[::1000], 0.7, 0.9, 0.2, eta=ETA),
                               rtol=RTOL_SAME, atol=ATOL_SAME)
    hs = np.linspace(-1, 1, 40000)                     # array parameters, chunked path
    np.testing.assert_allclose(mod.chi_isothermal(0.7, 0.9, hs)[::3331],
                               [mod.chi_isothermal(0.7, 0.9, float(x)) for x in hs[::3331]],
                               rtol=RTOL_SAME)


def test_scalar_inputs_give_python_numbers_and_arrays_keep_their_shape():
    mod = module("dimer_xx")
    assert isinstance(mod.chi_isothermal(1.0, 1.0, 0.2), float)
    assert isinstance(mod.chi_omega(0.3, 1.0, 1.0, 0.2, eta=ETA), complex)
    T = np.full((2, 3), 0.9)
    assert mod.chi_isothermal(T, 1.0, 0.2).shape == (2, 3)
    assert mod.chi_omega(np.zeros((4, 1)), np.ones(5), 1.0, 0.2, eta=ETA).shape == (4, 5)
    assert mod.energies(1.0, np.array([0.1, 0.2])).shape == (2, len(mod.DEGENERACIES))


@pytest.mark.parametrize("call", [
    lambda m: m.chi_isothermal(0.0, 1.0, 0.1),
    lambda m: m.chi_isothermal(np.array([1.0, -1.0]), 1.0, 0.1),
    lambda m: m.chi_isothermal(float("nan"), 1.0, 0.1),
    lambda m: m.chi_isothermal(1.0, float("inf"), 0.1),
    lambda m: m.chi_static(1.0, 1.0, 0.1, kind="adiabatic"),
    lambda m: m.jacobian_static(1.0, 1.0, 0.1, kind="adiabatic"),
    lambda m: m.chi_omega(0.1, 1.0, 1.0, 0.1, eta=0.0),
    lambda m: m.chi_omega(0.1, 1.0, 1.0, 0.1, eta=np.array([0.1, 0.2])),
    lambda m: m.chi_spectral(0.1, 1.0, 1.0, 0.1, eta=0.1, shape="voigt"),
])
def test_emitted_functions_reject_bad_arguments(call):
    with pytest.raises(ValueError):
        call(module("dimer_zz"))


@pytest.mark.parametrize("bad", [None, "dimer", 3, sr])
def test_generators_reject_non_derivations(bad):
    with pytest.raises(InputError):
        numpy_module_source(bad)


def test_generator_rejects_bad_name():
    with pytest.raises(InputError):
        numpy_module_source(response("two_level").derivation, name=3)


# ------------------------------------------------------------------------------ conventions
@pytest.mark.parametrize("convention", [
    Convention(perturbation="H0 + f B"),
    Convention(fourier="-i omega t"),
    Convention(prescription="advanced"),
    Convention(perturbation="H0 + f B", fourier="-i omega t", prescription="advanced"),
])
def test_conventions_follow_the_derivation(convention):
    s = sr.spin("s", sp.Rational(1, 2))
    hh = sp.Symbol("h", positive=True)
    model = sr.Model(hh * s.z + 0 * s.x)
    r = model.response(s.x, s.y, convention=convention)
    mod = compile_module(numpy_module_source(r.derivation))
    assert mod.CONVENTION == convention.describe()
    T, hv, w = 0.6, 0.8, np.array([-1.1, 0.2, 0.9])
    q = convention.frequency_sign * (1 if convention.prescription == "retarded" else -1)
    expr = sp.lambdify((sr.omega, sr.beta, hh), r.frequency().subs(sr.omega, sr.omega + sp.I * q * sr.eta).subs(sr.eta, ETA), "numpy")
    np.testing.assert_allclose(mod.chi_omega(w, T, hv, eta=ETA), expr(w + 0j, 1 / T, hv), rtol=RTOL_LAMBDIFY)
    static = complex(r.static("isothermal").subs({sr.beta: 1 / sp.Float(T), hh: sp.Float(hv)}))
    assert abs(mod.chi_isothermal(T, hv) - static) <= ATOL_LAMBDIFY
    if convention.prescription == "advanced":
        with pytest.raises(ValueError):
            mod.chi_time(1.0, T, hv)


# ------------------------------------------------------------------------------ header
def test_header_states_version_convention_fingerprint_and_units():
    text = source("dimer_zz")
    mod = module("dimer_zz")
    assert mod.SYMRESP_VERSION in text.splitlines()[0]
    assert mod.CONVENTION == response("dimer_zz").convention.describe()
    assert len(mod.FINGERPRINT) == 64 and mod.FINGERPRINT in text
    assert "hbar = k_B = 1" in mod.__doc__
    assert "import sympy" not in text and "from sympy" not in text
    assert mod.PARAMETERS == ("J", "h")


def test_fingerprint_tells_models_and_operators_apart():
    fps = {module(n).FINGERPRINT for n in ("dimer_zz", "dimer_xx", "dimer_xy", "triangle_zz")}
    assert len(fps) == 4


def test_generation_is_deterministic_in_process():
    d = response("ring4_s0z").derivation
    assert numpy_module_source(d) == numpy_module_source(d) == source("ring4_s0z")


_REGENERATE = textwrap.dedent('''
    import hashlib, sys
    sys.path.insert(0, sys.argv[1])
    from tests.emit._models import source
    print(hashlib.sha256(source("triangle_s0x").encode()).hexdigest())
''')


def test_generation_is_deterministic_across_hash_seeds():
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    env = dict(os.environ, PYTHONHASHSEED="12345")
    proc = subprocess.run([sys.executable, "-c", _REGENERATE, root], capture_output=True,
                          text=True, env=env, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == hashlib.sha256(source("triangle_s0x").encode()).hexdigest()


@pytest.mark.parametrize("params", [
    {"D": 1.0, "h": 1.0, "hx": 1e-9},      # two roots of the cubic 1e-9 apart
    {"D": 1.0, "h": 1.0, "hx": 0.0},       # an exact double root
    {"D": 1.0, "h": 0.0, "hx": 1e-8},      # zero field: a rational root and a close neighbour
    {"D": 0.3, "h": -0.3, "hx": 1e-10},
    {"D": -2.0, "h": 0.7, "hx": 1.3},
])
def test_semi_closed_block_is_accurate_where_its_levels_nearly_coincide(params):
    # The value functions diagonalise the block numerically (symresp/emit/_eigen.py); the
    # exact weights, rational in the roots with root differences in the denominator, would
    # lose every digit here.
    case, mod = CASES["tilted_field"], module("tilted_field")
    args = [params[n] for n in mod.PARAMETERS]
    T = 0.5
    H, A, B, ref = _reference(case, params, T)
    _assert_close(mod.chi_isothermal(T, *args), ref.isothermal, "isothermal")
    _assert_close(mod.chi_isolated(T, *args), ref.isolated, "isolated")
    _assert_close(mod.chi_omega(OMEGA, T, *args, eta=ETA), ref.frequency(OMEGA, ETA), "chi(omega)")
    _assert_close(mod.chi_time(TIMES, T, *args), ref.time(TIMES), "chi(t)")
    # The Jacobian there: central differences of the stable values (emit/_runtime_roots.py).
    jac = mod.jacobian_static(T, *args)
    for i in range(len(args)):
        up, down = list(args), list(args)
        up[i] += FD_STEP
        down[i] -= FD_STEP
        fd = (mod.chi_isothermal(T, *up) - mod.chi_isothermal(T, *down)) / (2 * FD_STEP)
        assert abs(jac[i] - fd) <= FD_RTOL * max(1.0, abs(fd)), (i, jac[i], fd)
    # Array parameters go through the same diagonalisation, point by point.
    Ts = np.array([0.3, 0.5, 2.0])
    expected = [numeric.static_isothermal(H, A, B, 1 / x) for x in Ts]
    _assert_close(mod.chi_isothermal(Ts, *[np.full(3, a) for a in args]), expected, "arrays")


def test_block_diagonalisation_groups_repeated_levels():
    # A block whose implicit levels each hold two states (a symmetry sector with +-k): the
    # runtime helper must return one level per pair and the rank-2 projector onto it.
    namespace = {"numpy": np, "math": math}
    exec(compile(ROOTS_RUNTIME, "<runtime>", "exec"), namespace)  # the generated modules' own text
    rng = np.random.default_rng(3)
    Q, _ = np.linalg.qr(rng.normal(size=(6, 6)))
    levels = np.array([-1.0, -1.0, 0.3, 0.3, 2.0, 2.0])
    M = Q @ np.diag(levels) @ Q.T
    out = namespace["_blockeig_a"](3, 2, (), tuple(M.ravel()), (), ())
    assert np.allclose(out[:3], [-1.0, 0.3, 2.0], atol=1e-12)
    projectors = [np.array(out[3 + 36 * k: 3 + 36 * (k + 1)]).reshape(6, 6) for k in range(3)]
    for k, P in enumerate(projectors):
        assert np.allclose(P @ P, P, atol=1e-12) and abs(np.trace(P) - 2) < 1e-12
        assert np.allclose(M @ P, levels[2 * k] * P, atol=1e-12)
    assert np.allclose(sum(projectors), np.eye(6), atol=1e-12)
