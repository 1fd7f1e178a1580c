"""Cost per parameter point of the emitted evaluators against the alternatives.

Run::

    python tests/perf/bench_evaluators.py           # grids of 1e3 and 1e6 points
    python tests/perf/bench_evaluators.py --quick   # 1e3 points (sweep 1e3, 1e4, 1e6), under a minute

Routes, each evaluating a whole grid for one parameter point:

(a) ``emitted``    the numpy module of ``symresp.emit`` (``chi_isothermal`` on a temperature
                   grid, ``chi_omega`` on a frequency grid);
(b) ``ED``         exact diagonalisation at the parameter point: ``numpy.linalg.eigh`` of the
                   full H, then the Lehmann sum on the grid (static: vectorised over levels,
                   O(N d); dynamic: the plain double sum over all pairs n != m, O(N d^2));
    ``ED pruned``  the same with pairs of zero weight dropped before the grid loop;
(c) ``hand``       hand-written numpy of the same formula, where one exists: Bleaney-Bowers
                   chi(T) = 2 beta / (3 + exp(beta J)) and the two-level
                   chi(omega) = 2 Delta tanh(beta Delta / 2) / (Delta^2 - z^2);
(d) ``lambdify``   ``sympy.lambdify`` (numpy) of the unsimplified Lehmann sum.

On the 4-site ring at 1e3 points the parameter Jacobian of chi_T is timed too: the emitted
``jacobian_static`` against central differences (two calls per parameter) of the emitted values
and of ED.

Timings are the minimum over interleaved rounds (the routes of one row alternate), so the ratios
printed are measured in the same run under the same load; BLAS runs on one thread. The last
line reads::

    summary: evaluator/handwritten=<ratio> speedup_vs_ed_dim16=<ratio>

with the larger (worse) of the two hand-written ratios at 1e3 points (from the size sweep, timed
with a longer budget) and the ED / emitted ratio of chi(omega) on the 4-site ring (dimension 16)
at 1e3 frequencies.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from dataclasses import dataclass

# One BLAS thread: the machine is shared, and a fit evaluates one parameter point at a time;
# threaded BLAS on tiny matrices mostly measures thread wake-ups. Set before numpy loads.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import numpy as np  # noqa: E402
import sympy as sp  # noqa: E402

import symresp as sr  # noqa: E402
from symresp.conventions import beta as BETA  # noqa: E402
from symresp.emit import compile_module, numpy_module_source  # noqa: E402

HALF = sp.Rational(1, 2)
J = sp.Symbol("J", real=True)
h = sp.Symbol("h", real=True)
Delta = sp.Symbol("Delta", positive=True)
ETA = 0.02
T_FIXED = 0.5
PARAMS = {"J": 1.0, "h": 0.3, "Delta": 1.3}


# ------------------------------------------------------------------------------ models
@dataclass
class Bench:
    name: str
    dim: int
    static: sr.Response          # A = B = total S^z (temperature grid)
    dynamic: sr.Response         # A = B = S^z of site 0 (frequency grid)
    parameters: tuple[str, ...]


def _ring(n: int, field: bool) -> Bench:
    s = [sr.spin(f"s{i}", HALF) for i in range(n)]
    bonds = [(0, 1)] if n == 2 else [(i, (i + 1) % n) for i in range(n)]
    H = sum((J * (s[i].vec @ s[j].vec) for i, j in bonds), 0 * s[0].z)
    Sz = sum((x.z for x in s), 0 * s[0].z)
    if field:
        H = H + h * Sz
    m = sr.Model(H, name=f"{n}-site ring" if n > 2 else "dimer")
    params = ("J", "h") if field else ("J",)
    return Bench(m.system.name, 2**n, m.response(Sz), m.response(s[0].z), params)


def _two_level() -> sr.Response:
    q = sr.spin("q", HALF)
    return sr.Model(Delta * q.z, name="two-level").response(2 * q.x)


# ------------------------------------------------------------------------------ routes
class ExactDiagonalisation:
    """Route (b): H = sum_i theta_i M_i from coefficient matrices built once."""

    def __init__(self, r: sr.Response, names: tuple[str, ...]):
        model = r.model
        zero = {n: 0.0 for n in names}
        self.names = names
        self.const = model.array(params=zero)
        self.parts = []
        for n in names:
            one = dict(zero, **{n: 1.0})
            self.parts.append(model.array(params=one) - self.const)
        self.A = model.array(r.derivation.A, params=zero)
        self.B = model.array(r.derivation.B, params=zero)

    def _eig(self, theta):
        H = self.const + sum(t * M for t, M in zip(theta, self.parts))
        E, V = np.linalg.eigh(H)
        a = V.conj().T @ self.A @ V
        b = V.conj().T @ self.B @ V
        return E, a, b

    def static(self, T, *theta):
        E, a, b = self._eig(theta)
        beta = 1.0 / T
        M = a * b.T                                           # A_nm B_mn
        da, db = np.diag(a), np.diag(b)
        scale = 1e-12 * max(1.0, float(np.max(np.abs(M))))
        if max(np.max(np.abs(M.imag)), np.max(np.abs(da.imag)), np.max(np.abs(db.imag))) <= scale:
            M, da, db = M.real, da.real, db.real               # real BLAS, not a mixed-type loop
        dE = E[None, :] - E[:, None]                          # E_m - E_n
        tol = 1e-9 * max(1.0, float(np.max(np.abs(E))))
        deg = np.abs(dE) <= tol
        K = np.where(deg, 0.0, M / np.where(deg, 1.0, dE))
        p = np.exp(-np.outer(beta, E - E[0]))                 # (N, d), E ascending
        p /= p.sum(axis=1, keepdims=True)
        if M.dtype.kind == "c":
            p = p.astype(complex)                             # one cast, then complex BLAS
        iso = p @ K.sum(axis=1) - p @ K.sum(axis=0)
        elastic = p @ np.where(deg, M, 0.0).sum(axis=1)
        ea, eb = p @ da, p @ db
        return (iso + beta * (elastic - ea * eb)).real

    def dynamic(self, omega, T, *theta, eta, prune=False):
        E, a, b = self._eig(theta)
        p = np.exp(-(E - E[0]) / T)
        p /= p.sum()
        w = ((p[:, None] - p[None, :]) * a * b.T)
        Om = E[None, :] - E[:, None]
        off = ~np.eye(E.size, dtype=bool)
        w, Om = w[off], Om[off]
        if prune:
            keep = np.abs(w) > 1e-14 * max(1.0, float(np.max(np.abs(w))))
            w, Om = w[keep], Om[keep]
        z = omega + 1j * eta
        out = np.empty(z.size, dtype=complex)
        step = max(1, (1 << 18) // max(1, w.size))            # keep temporaries small
        for i in range(0, z.size, step):
            zs = z[i:i + step]
            out[i:i + step] = (w[:, None] / (Om[:, None] - zs[None, :])).sum(axis=0)
        return out


def _lambdify_static(r: sr.Response, names):
    d = r.derivation
    Zr = d.reduced_partition()
    iso = sp.Add(*[tr.weight / tr.frequency for tr in d.transitions()])
    diag = sp.Add(*[d.boltzmann(a) * W for (a, b), W in d.level_weights.items() if a == b]) / Zr
    raw = iso + BETA * (diag - d.expectation("A") * d.expectation("B"))
    Tsym = sp.Symbol("T", positive=True)
    syms = [Tsym] + [next(p for p in d.system.parameters if p.name == n) for n in names]
    return sp.lambdify(syms, raw.subs(BETA, 1 / Tsym), "numpy")


def _lambdify_dynamic(r: sr.Response, names):
    d = r.derivation
    z = sp.Symbol("z")
    raw = sp.Add(*[tr.weight / (tr.frequency - z) for tr in d.transitions()])
    Tsym = sp.Symbol("T", positive=True)
    syms = [z, Tsym] + [next(p for p in d.system.parameters if p.name == n) for n in names]
    f = sp.lambdify(syms, raw.subs(BETA, 1 / Tsym), "numpy")
    return lambda omega, T, *theta, eta: f(omega + 1j * eta, T, *theta)


def hand_bleaney_bowers(T, J_):
    # chi = 2 beta / (3 + exp(beta J)) for H = J S_1.S_2, A = B = S^z_1 + S^z_2.
    b = 1.0 / T
    return 2 * b / (3 + np.exp(b * J_))


def hand_two_level(omega, T, D, *, eta):
    z = omega + 1j * eta
    return 2 * D * np.tanh(D / (2 * T)) / (D * D - z * z)


def _central(f, T, theta, k):
    """Central difference of f(T, *theta) in parameter k (step 1e-6 relative)."""
    step = 1e-6 * max(1.0, abs(theta[k]))
    up = list(theta)
    dn = list(theta)
    up[k] += step
    dn[k] -= step
    return (f(T, *up) - f(T, *dn)) / (2 * step)


def _jacobian_row(mod, ed, T, theta, budget) -> None:
    """The parameter Jacobian a fit asks for: emitted, or central differences (2 calls per
    parameter) of the emitted values or of ED."""
    fd = np.stack([_central(mod.chi_isothermal, T, theta, k) for k in range(len(theta))], -1)
    assert np.allclose(mod.jacobian_static(T, *theta), fd, rtol=1e-5, atol=1e-7)
    times = interleaved({
        "emitted": lambda: mod.jacobian_static(T, *theta),
        "emitted FD": lambda: [_central(mod.chi_isothermal, T, theta, k) for k in range(len(theta))],
        "ED FD": lambda: [_central(ed.static, T, theta, k) for k in range(len(theta))]},
        budget=budget)
    _row(f"Jacobian of chi_T ({len(theta)} parameters)", times)


# ------------------------------------------------------------------------------ timing
def interleaved(calls: dict, *, budget: float) -> dict:
    """Minimum seconds per call of each callable, rounds alternating between them."""
    for f in calls.values():                  # warm up (and size the inner loop)
        f()
    per = {}
    for k, f in calls.items():
        t0 = time.perf_counter()
        f()
        per[k] = max(time.perf_counter() - t0, 1e-7)
    slowest = max(per.values())
    n_inner = {k: max(1, int(0.02 / v)) for k, v in per.items()}
    best = dict(per)
    rounds = max(3, int(budget / max(0.02 * len(calls), slowest * len(calls))))
    for _ in range(rounds):
        for k, f in calls.items():
            t0 = time.perf_counter()
            for _ in range(n_inner[k]):
                f()
            best[k] = min(best[k], (time.perf_counter() - t0) / n_inner[k])
    return best


def _fmt(seconds: float) -> str:
    if seconds < 1e-3:
        return f"{seconds * 1e6:9.1f} us"
    if seconds < 1.0:
        return f"{seconds * 1e3:9.2f} ms"
    return f"{seconds:9.2f} s "


def _row(label: str, times: dict, ref: str = "emitted") -> None:
    parts = [f"{k} {_fmt(v)}" for k, v in times.items()]
    ratios = [f"{k}/{ref} {v / times[ref]:6.2f}" for k, v in times.items() if k != ref]
    print(f"  {label:34s} " + " | ".join(parts))
    if ratios:
        print(f"  {'':34s} " + " | ".join(ratios))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="1e3 points only (under a minute)")
    args = ap.parse_args(argv)
    sizes = [10**3] if args.quick else [10**3, 10**6]
    budget = 0.25 if args.quick else 0.6
    t_start = time.perf_counter()

    print(f"numpy {np.__version__}, sympy {sp.__version__}, python {sys.version.split()[0]}")
    print("times per parameter point (one call over the whole grid), min over interleaved rounds")
    benches = [_ring(2, field=False), _ring(3, field=True), _ring(4, field=True), _ring(6, field=True)]
    hand_ratios, ed16 = [], None
    for bench in benches:
        t0 = time.perf_counter()
        mod_s = compile_module(numpy_module_source(bench.static.derivation))
        mod_d = compile_module(numpy_module_source(bench.dynamic.derivation))
        lam_s = _lambdify_static(bench.static, bench.parameters)
        lam_d = _lambdify_dynamic(bench.dynamic, bench.parameters)
        ed_s = ExactDiagonalisation(bench.static, bench.parameters)
        ed_d = ExactDiagonalisation(bench.dynamic, bench.parameters)
        theta = tuple(PARAMS[n] for n in bench.parameters)
        print(f"\n{bench.name} (dimension {bench.dim}; {len(bench.static.levels)} levels; "
              f"setup {time.perf_counter() - t0:.1f} s)")
        for N in sizes:
            T = np.linspace(0.05, 5.0, N)
            w = np.linspace(-3.0, 3.0, N)
            ref_s = ed_s.static(T, *theta)
            assert np.allclose(mod_s.chi_isothermal(T, *theta), ref_s, rtol=1e-9, atol=1e-12)
            calls = {"emitted": lambda: mod_s.chi_isothermal(T, *theta),
                     "ED": lambda: ed_s.static(T, *theta),
                     "lambdify": lambda: lam_s(T, *theta)}
            if bench.name == "dimer":
                assert np.allclose(hand_bleaney_bowers(T, 1.0), ref_s, rtol=1e-12)
                calls["hand"] = lambda: hand_bleaney_bowers(T, *theta)
            times = interleaved(calls, budget=budget)
            _row(f"chi_T(T), N = {N:.0e}", times)

            ref_d = ed_d.dynamic(w, T_FIXED, *theta, eta=ETA)
            assert np.allclose(mod_d.chi_omega(w, T_FIXED, *theta, eta=ETA), ref_d, rtol=1e-9, atol=1e-12)
            calls = {"emitted": lambda: mod_d.chi_omega(w, T_FIXED, *theta, eta=ETA),
                     "ED": lambda: ed_d.dynamic(w, T_FIXED, *theta, eta=ETA),
                     "ED pruned": lambda: ed_d.dynamic(w, T_FIXED, *theta, eta=ETA, prune=True),
                     "lambdify": lambda: lam_d(w, T_FIXED, *theta, eta=ETA)}
            if N > 10**3 and bench.dim >= 64:
                # The plain O(N d^2) double sum takes ~1 min per call here: time 1e5 points, x10.
                sub = w[: N // 10]
                calls["ED"] = lambda: ed_d.dynamic(sub, T_FIXED, *theta, eta=ETA)
            times = interleaved(calls, budget=budget)
            if N > 10**3 and bench.dim >= 64:
                times["ED"] *= 10
                print("  (ED at 1e6 points on dimension 64: timed on 1e5 points, times 10)")
            _row(f"chi(omega) S^z_0, N = {N:.0e}", times)
            if bench.dim == 16 and N == 10**3:
                ed16 = times["ED"] / times["emitted"]
            if bench.dim == 16 and N == 10**3:
                _jacobian_row(mod_s, ed_s, T, theta, budget)

    tls = _two_level()
    mod = compile_module(numpy_module_source(tls.derivation))
    lam = _lambdify_dynamic(tls, ("Delta",))
    ed = ExactDiagonalisation(tls, ("Delta",))
    print("\ntwo-level system, A = B = sigma_x")
    for N in sizes:
        w = np.linspace(-3.0, 3.0, N)
        D = PARAMS["Delta"]
        assert np.allclose(mod.chi_omega(w, T_FIXED, D, eta=ETA), hand_two_level(w, T_FIXED, D, eta=ETA),
                           rtol=1e-9)
        times = interleaved({"emitted": lambda: mod.chi_omega(w, T_FIXED, D, eta=ETA),
                             "hand": lambda: hand_two_level(w, T_FIXED, D, eta=ETA),
                             "ED": lambda: ed.dynamic(w, T_FIXED, D, eta=ETA),
                             "lambdify": lambda: lam(w, T_FIXED, D, eta=ETA)}, budget=budget)
        _row(f"chi(omega), N = {N:.0e}", times)

    print("\nemitted vs hand-written over grid sizes (fixed per-call costs fade with N)")
    bb_mod = compile_module(numpy_module_source(benches[0].static.derivation))
    for N in ([10**3, 10**4, 10**6] if args.quick else [10**3, 10**4, 10**5, 10**6]):
        T = np.linspace(0.05, 5.0, N)
        w = np.linspace(-3.0, 3.0, N)
        D = PARAMS["Delta"]
        # Two-way comparisons get a longer budget: they set the summary line.
        times = interleaved({"emitted": lambda: bb_mod.chi_isothermal(T, 1.0),
                             "hand": lambda: hand_bleaney_bowers(T, 1.0)}, budget=4 * budget)
        _row(f"Bleaney-Bowers chi(T), N = {N:.0e}", times)
        if N == 10**3:
            hand_ratios.append(("Bleaney-Bowers chi(T)", times["emitted"] / times["hand"]))
        times = interleaved({"emitted": lambda: mod.chi_omega(w, T_FIXED, D, eta=ETA),
                             "hand": lambda: hand_two_level(w, T_FIXED, D, eta=ETA)}, budget=4 * budget)
        _row(f"two-level chi(omega), N = {N:.0e}", times)
        if N == 10**3:
            hand_ratios.append(("two-level chi(omega)", times["emitted"] / times["hand"]))

    print()
    for label, ratio in hand_ratios:
        print(f"emitted / hand-written at 1e3 points, {label}: {ratio:.2f}")
    print(f"ED / emitted, chi(omega) on the 4-site ring at 1e3 points: {ed16:.1f}")
    print(f"total wall time {time.perf_counter() - t_start:.1f} s")
    worst = max(r for _, r in hand_ratios)
    print(f"summary: evaluator/handwritten={worst:.2f} speedup_vs_ed_dim16={ed16:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
