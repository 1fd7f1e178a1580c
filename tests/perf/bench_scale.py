"""Scale benchmark: every model of the practitioner-scale target list, each derived with its
numpy evaluator in a fresh interpreter under a time limit (not collected by pytest).

    python tests/perf/bench_scale.py                      # all cases, 600 s limit each
    python tests/perf/bench_scale.py --timeout 120        # shorter limit
    python tests/perf/bench_scale.py --only ion_s10_z,spin52_dimer

For each case the worker imports symresp and writes the evaluator of a free spin 1/2 (the
lazy imports of the emit layer; not timed), then times ``Model(H)``, ``response(A)``
and ``numpy()`` (writing and compiling the standalone evaluator) plus one evaluation of
``chi_isothermal`` at a fixed point; it reports that wall time and its peak resident memory.
The baseline, measured in the same run and the same way, is the 4-site spin-1/2 Heisenberg
ring in a field with A = B = total S^z; the table gives each case's time over the baseline's
(``x base``) and over its target (``x target``, <= 1 meets it). A case past the limit is
reported as such, with the limit as a lower bound of its time.
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
    sys.path.insert(0, str(ROOT))          # this checkout's symresp, installed or not

#: name -> (target seconds or None for the baseline, description)
CASES = {
    "baseline_ring4": (None, "baseline: spin-1/2 Heisenberg ring, 4 sites, total S^z"),
    "oscillator_200": (2.0, "one boson mode, cutoff 200, x = a + a^+"),
    "oscillator_200_lehmann": (2.0, "the same oscillator on the truncated Lehmann route (levels)"),
    "jaynes_cummings_200": (10.0, "qubit + boson (Jaynes-Cummings), cutoff 200, sigma^x"),
    "ion_s10_z": (5.0, "single ion S = 10, D, E, field along z, S^z"),
    "ion_s10_x": (5.0, "single ion S = 10, D, E, field along x, S^z"),
    "spin52_dimer": (0.5, "S = 5/2 dimer, isotropic J, field, total S^z"),
    "spin52_ring4": (5.0, "S = 5/2 four-site ring, isotropic J, field, total S^z"),
    "hubbard_ring3": (10.0, "Hubbard ring, 3 sites, all fillings, total S^z"),
    "hubbard_ring4": (60.0, "Hubbard ring, 4 sites, all fillings, total S^z"),
    "heisenberg6_total_sx": (2.0, "spin-1/2 Heisenberg ring in a field, 6 sites, total S^x"),
    "heisenberg8_local_sx": (60.0, "spin-1/2 Heisenberg ring in a field, 8 sites, local S^x_0"),
    "heisenberg10_total_sz": (60.0, "spin-1/2 Heisenberg ring in a field, 10 sites, total S^z"),
}


# ------------------------------------------------------------------------------- models
def _heisenberg_ring(n: int):
    import sympy as sp
    import symresp as sr
    J, h = sp.Symbol("J", positive=True), sp.Symbol("h", real=True)
    s = [sr.spin(f"s{i}", sp.Rational(1, 2)) for i in range(n)]
    H = sum(J * (s[i].vec @ s[(i + 1) % n].vec) for i in range(n)) + h * sum(x.z for x in s)
    return H, s, {"J": 1.0, "h": 0.3}


def _spin52(n: int):
    import sympy as sp
    import symresp as sr
    J, h = sp.Symbol("J", positive=True), sp.Symbol("h", real=True)
    s = [sr.spin(f"s{i}", sp.Rational(5, 2)) for i in range(n)]
    bonds = [(0, 1)] if n == 2 else [(i, (i + 1) % n) for i in range(n)]
    H = sum(J * (s[i].vec @ s[j].vec) for i, j in bonds) + h * sum(x.z for x in s)
    return H, sum(x.z for x in s), {"J": 1.0, "h": 0.3}


def _ion(field: str):
    import sympy as sp
    import symresp as sr
    D, E, h = sp.Symbol("D", real=True), sp.Symbol("E", real=True), sp.Symbol("h", real=True)
    s = sr.spin("s", 10)
    H = D * s.z**2 + E * (s.x**2 - s.y**2) + h * (s.z if field == "z" else s.x)
    return H, s.z, {"D": 1.0, "E": 0.2, "h": 0.3}


def _hubbard_ring(n: int):
    import sympy as sp
    import symresp as sr
    tc, U = sp.Symbol("tc", positive=True), sp.Symbol("U", positive=True)
    c = [sr.spinful_fermion(f"c{i}") for i in range(n)]
    H = 0
    for i in range(n):
        for s in (0, 1):
            a, b = c[i][s], c[(i + 1) % n][s]
            H += -tc * (sr.dagger(a) * b + sr.dagger(b) * a)
    H += U * sum(sr.dagger(up) * up * sr.dagger(dn) * dn for up, dn in c)
    Sz = sum((sr.dagger(up) * up - sr.dagger(dn) * dn) / 2 for up, dn in c)
    return H, Sz, {"tc": 1.0, "U": 4.0}


def _oscillator():
    import sympy as sp
    import symresp as sr
    w0 = sp.Symbol("w0", positive=True)
    a = sr.boson("a", 200)
    return w0 * sr.dagger(a) * a, a + sr.dagger(a), {"w0": 1.0}


def _jaynes_cummings():
    import sympy as sp
    import symresp as sr
    wc, wq, g = (sp.Symbol(x, positive=True) for x in ("wc", "wq", "g"))
    a, q = sr.boson("a", 200), sr.spin("q", sp.Rational(1, 2))
    H = wc * sr.dagger(a) * a + wq * q.z + g * (a * q.plus + sr.dagger(a) * q.minus)
    return H, q.x, {"wc": 1.0, "wq": 1.1, "g": 0.05}


def build(name: str):
    """(H, A, point) of a case; every model is built from the public API."""
    if name == "baseline_ring4":
        H, s, pt = _heisenberg_ring(4)
        return H, sum(x.z for x in s), pt
    if name == "heisenberg6_total_sx":
        H, s, pt = _heisenberg_ring(6)
        return H, sum(x.x for x in s), pt
    if name == "heisenberg8_local_sx":
        H, s, pt = _heisenberg_ring(8)
        return H, s[0].x, pt
    if name == "heisenberg10_total_sz":
        H, s, pt = _heisenberg_ring(10)
        return H, sum(x.z for x in s), pt
    if name == "spin52_dimer":
        return _spin52(2)
    if name == "spin52_ring4":
        return _spin52(4)
    if name.startswith("ion_s10_"):
        return _ion(name[-1])
    if name == "hubbard_ring3":
        return _hubbard_ring(3)
    if name == "hubbard_ring4":
        return _hubbard_ring(4)
    if name in ("oscillator_200", "oscillator_200_lehmann"):
        return _oscillator()
    if name == "jaynes_cummings_200":
        return _jaynes_cummings()
    raise SystemExit(f"unknown case {name!r}; known: {', '.join(CASES)}")


# ------------------------------------------------------------------------------- worker
def worker(name: str) -> None:
    """Runs one case in this (fresh) interpreter and prints one JSON line."""
    import resource

    import symresp as sr
    import symresp._api  # noqa: F401  (the lazy facade: imported before the clock starts)
    import symresp.emit  # noqa: F401
    import sympy as sp
    warm = sr.spin("w", sp.Rational(1, 2))     # warm-up: lazy imports of the emit layer
    sr.Model(sp.Symbol("b", real=True) * warm.z).response(warm.x).numpy()
    H, A, point = build(name)
    t0 = time.perf_counter()
    route = "lehmann" if name.endswith("_lehmann") else "auto"
    r = sr.Model(H).response(A, route=route)
    t1 = time.perf_counter()
    f = r.numpy()
    try:
        value = complex(f.chi_isothermal(0.7, **point))
    except TypeError:       # evaluators of some routes take the parameters in declared order
        value = complex(f.chi_isothermal(0.7, *[point[p.name] for p in r.model.parameters]))
    t2 = time.perf_counter()
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps({"case": name, "derive": t1 - t0, "evaluator": t2 - t1,
                      "seconds": t2 - t0, "peak_mb": peak_mb, "route": r.route,
                      "levels": len(r.levels) if r.route == "lehmann" else None,
                      "chi": [value.real, value.imag]}))


def run_case(name: str, timeout: float) -> dict:
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    try:
        done = subprocess.run([sys.executable, __file__, "--worker", name], capture_output=True,
                              text=True, timeout=timeout, env=env, cwd=ROOT)
    except subprocess.TimeoutExpired:
        return {"case": name, "timeout": timeout}
    lines = [ln for ln in done.stdout.splitlines() if ln.startswith("{")]
    if done.returncode != 0 or not lines:
        tail = (done.stderr or done.stdout).strip().splitlines()[-1:] or ["no output"]
        return {"case": name, "error": tail[0][:200]}
    return json.loads(lines[-1])


def _load() -> str:
    one, five, _ = os.getloadavg()
    return f"{one:.2f} (1 min), {five:.2f} (5 min)"


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--timeout", type=float, default=600.0, help="seconds per case (default 600)")
    ap.add_argument("--only", default="", help="comma-separated case names (the baseline always runs)")
    ap.add_argument("--worker", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.worker:
        worker(args.worker)
        return
    names = [n for n in CASES if not args.only or n in args.only.split(",") or n == "baseline_ring4"]
    print(f"# {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}, {os.cpu_count()} cores, "
          f"load average at start {_load()}; limit {args.timeout:g} s per case")
    results = {}
    for name in names:
        results[name] = res = run_case(name, args.timeout)
        print(f"#   {name}: {json.dumps(res)}", flush=True)
    base = results["baseline_ring4"].get("seconds")
    print(f"# load average at end {_load()}")
    print()
    print("| case | model | target (s) | time (s) | derive (s) | evaluator (s) | x target | x base | peak MB |")
    print("|---|---|---:|---:|---:|---:|---:|---:|---:|")
    for name in names:
        target, what = CASES[name]
        res = results[name]
        tgt = "-" if target is None else f"{target:g}"
        if "timeout" in res:
            row = [f"> {res['timeout']:g} (limit)", "", "",
                   f"> {res['timeout'] / target:.3g}" if target else "",
                   f"> {res['timeout'] / base:.3g}" if base else "", ""]
        elif "error" in res:
            row = [f"error: {res['error']}", "", "", "", "", ""]
        else:
            row = [f"{res['seconds']:.3g}", f"{res['derive']:.3g}", f"{res['evaluator']:.3g}",
                   f"{res['seconds'] / target:.3g}" if target else "-",
                   f"{res['seconds'] / base:.3g}" if base else "-", f"{res['peak_mb']:.0f}"]
        print(f"| {name} | {what} | {tgt} | " + " | ".join(row) + " |")


if __name__ == "__main__":
    main()
