"""Single-ion benchmark: writing and calling the evaluators of semi-closed derivations (not
collected by pytest).

    python tests/perf/bench_ion.py            # S = 10 (field along z and x), S = 7/2 tilted
    python tests/perf/bench_ion.py --quick    # S = 10 only, fewer call repetitions
    python tests/perf/bench_ion.py --spins    # S = 7/2 ... 10 in a tilted field: time to evaluator

Each case runs in a fresh interpreter: the derivation (``Model(H).response(A)``), then the
evaluator written and compiled twice, by the block writer (every block diagonalised at the
points, sums over state pairs) and by the per-pair writer (one program line per pair of
levels; the route of the evaluators before the block writer, reached here by switching the
block writer off), each with its source size, and the time per call of ``chi_isothermal`` on
1000 temperatures, of ``chi_omega`` on 1000 frequencies and of ``chi_isothermal`` at 1000
parameter points (median of interleaved repetitions). Ratios are per-pair / block, measured
in the same process.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

CASES = ("ion_s10_z", "ion_s10_x", "ion_s72_tilted")
#: --spins: 2S of the single ions in a tilted field (S = 7/2 ... 10).
SPINS = tuple(range(7, 21))


def _model(name: str):
    import sympy as sp
    import symresp as sr
    D, E = sp.Symbol("D", real=True), sp.Symbol("E", real=True)
    if name == "ion_s72_tilted" or name.startswith("tilted_"):
        hx, hz = sp.Symbol("hx", real=True), sp.Symbol("hz", real=True)
        S2 = 7 if name == "ion_s72_tilted" else int(name.split("_")[1])
        s = sr.spin("s", sp.Rational(S2, 2))
        H = D * s.z**2 + E * (s.x**2 - s.y**2) + hx * s.x + hz * s.z
        return H, s.z, {"D": 1.0, "E": 0.2, "hx": 0.3, "hz": 0.2}
    h = sp.Symbol("h", real=True)
    s = sr.spin("s", 10)
    H = D * s.z**2 + E * (s.x**2 - s.y**2) + h * (s.z if name.endswith("z") else s.x)
    return H, s.z, {"D": 1.0, "E": 0.2, "h": 0.3}


def _per_call(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    times.sort()
    return times[len(times) // 2]


def worker(name: str, repeat: int) -> None:
    import numpy as np
    import symresp as sr
    import symresp._api  # noqa: F401
    import sympy as sp
    from symresp.emit import _numpy_module, compile_module, numpy_module_source
    warm = sr.spin("w", sp.Rational(1, 2))
    sr.Model(sp.Symbol("b", real=True) * warm.z).response(warm.x).numpy()
    H, A, point = _model(name)
    t0 = time.perf_counter()
    r = sr.Model(H).response(A)
    derive = time.perf_counter() - t0
    out = {"case": name, "derive": derive, "levels": len(r.levels)}
    if name.startswith("tilted_"):     # --spins: the time to a working evaluator only
        t0 = time.perf_counter()
        f = r.numpy()
        f.chi_isothermal(0.7, **point)
        out["evaluator"] = time.perf_counter() - t0
        print(json.dumps(out))
        return
    modules = {}
    for route in ("block", "pairwise"):
        switch = _numpy_module.uses_block_evaluator
        if route == "pairwise":
            _numpy_module.uses_block_evaluator = lambda d: False
        try:
            t0 = time.perf_counter()
            src = numpy_module_source(r.derivation)
            f = compile_module(src)
            write = time.perf_counter() - t0
        finally:
            _numpy_module.uses_block_evaluator = switch
        modules[route] = f
        out[route] = {"write": write, "lines": src.count("\n"), "bytes": len(src.encode())}
    T = np.linspace(0.5, 30.0, 1000)
    omega = np.linspace(-5.0, 5.0, 1000)
    rng = np.random.default_rng(1)
    grid = {k: v * (1 + 0.1 * rng.standard_normal(1000)) for k, v in point.items()}
    calls = {
        "chi_T(T)": lambda f: f.chi_isothermal(T, **point),
        "chi(omega)": lambda f: f.chi_omega(omega, 2.0, **point, eta=0.05),
        "chi_T(params)": lambda f: f.chi_isothermal(2.0, **grid),
    }
    for label, call in calls.items():
        a = np.asarray(call(modules["block"]))
        b = np.asarray(call(modules["pairwise"]))
        diff = float(np.max(np.abs(a - b)) / max(1.0, float(np.max(np.abs(b)))))
        tb, tp = [], []
        for _ in range(3):       # interleaved rounds
            tb.append(_per_call(lambda: call(modules["block"]), repeat))
            tp.append(_per_call(lambda: call(modules["pairwise"]), repeat))
        out[label] = {"block": min(tb), "pairwise": min(tp), "max_rel_diff": diff}
    print(json.dumps(out))


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="S = 10 only, fewer repetitions")
    ap.add_argument("--spins", action="store_true", help="S = 7/2 ... 10 in a tilted field")
    ap.add_argument("--worker", help=argparse.SUPPRESS)
    ap.add_argument("--repeat", type=int, default=None, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    repeat = args.repeat or (5 if args.quick else 15)
    if args.worker:
        worker(args.worker, repeat)
        return
    names = CASES[:2] if args.quick else CASES
    if args.spins:
        names = tuple(f"tilted_{S2}" for S2 in SPINS)
    one, five, _ = os.getloadavg()
    print(f"# {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}, {os.cpu_count()} cores, "
          f"load average at start {one:.2f} (1 min), {five:.2f} (5 min)")
    rows = []
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    for name in names:
        done = subprocess.run([sys.executable, __file__, "--worker", name, "--repeat", str(repeat)],
                              capture_output=True, text=True, env=env, cwd=ROOT)
        lines = [ln for ln in done.stdout.splitlines() if ln.startswith("{")]
        if done.returncode != 0 or not lines:
            print(f"# {name}: failed: {(done.stderr or done.stdout).strip().splitlines()[-1:]}")
            continue
        res = json.loads(lines[-1])
        print(f"#   {json.dumps(res)}", flush=True)
        rows.append(res)
    one, five, _ = os.getloadavg()
    print(f"# load average at end {one:.2f} (1 min), {five:.2f} (5 min)")
    print()
    if args.spins:
        print("| S | model | levels | derive (s) | evaluator (s) | total (s) |")
        print("|---|---|---:|---:|---:|---:|")
        for r in rows:
            S2 = int(r["case"].split("_")[1])
            S = f"{S2 // 2}" if S2 % 2 == 0 else f"{S2}/2"
            print(f"| {S} | D Sz^2 + E (Sx^2 - Sy^2) + hx Sx + hz Sz, A = Sz | {r['levels']} | "
                  f"{r['derive']:.2f} | {r['evaluator']:.2f} | {r['derive'] + r['evaluator']:.2f} |")
        return
    print("| case | levels | derive (s) | write block (s) | write per-pair (s) | ratio | "
          "lines block / per-pair | KB block / per-pair |")
    print("|---|---:|---:|---:|---:|---:|---:|---:|")
    for r in rows:
        b, p = r["block"], r["pairwise"]
        print(f"| {r['case']} | {r['levels']} | {r['derive']:.2f} | {b['write']:.2f} | "
              f"{p['write']:.2f} | {p['write'] / b['write']:.1f} | {b['lines']} / {p['lines']} | "
              f"{b['bytes'] / 1024:.0f} / {p['bytes'] / 1024:.0f} |")
    print()
    print("| case | call | block (ms) | per-pair (ms) | per-pair / block | max rel. difference |")
    print("|---|---|---:|---:|---:|---:|")
    for r in rows:
        for label in ("chi_T(T)", "chi(omega)", "chi_T(params)"):
            c = r[label]
            print(f"| {r['case']} | {label} | {1e3 * c['block']:.3g} | {1e3 * c['pairwise']:.3g} | "
                  f"{c['pairwise'] / c['block']:.2f} | {c['max_rel_diff']:.1e} |")


if __name__ == "__main__":
    main()
