"""Wall time of deriving Heisenberg rings in a field, numpy evaluator included.

Run::

    python tests/perf/bench_rings.py                  # every target, each in a fresh interpreter
    python tests/perf/bench_rings.py --quick          # the baseline and the 6-site targets only
    python tests/perf/bench_rings.py --only ring8_local_x
    python tests/perf/bench_rings.py --profile DIR    # also write a cProfile dump per target

Model (fixed inputs, so runs are repeatable): spin-1/2 sites on a ring with symbolic ``J > 0``
and real ``h``,

    H = J sum_i S_i . S_{i+1} + h sum_i S^z_i .

Each case runs in a fresh interpreter (``python <this file> --worker NAME``) with every import
done before the clock starts, so no cache of an earlier case carries over. The time reported is
``Model(H)``, ``model.response(A)`` and ``response.numpy()`` (the derivation and the compiled
evaluator), measured inside the worker; its phases are printed beside it, with the peak
resident memory of the worker. The evaluator is then called once at a fixed point and its
isothermal value compared with the numeric reference (exact diagonalisation), untimed.

The baseline is the 4-site ring with the local operator S^x of site 0, measured in the same run:
every other case prints its time as a ratio to it, so runs on a loaded machine compare. Cases
with a target print it and whether it is met. The last line reads::

    summary: ring6_total_x=<s> ring8_local_x=<s> ring10_total_z=<s> baseline=<s>
"""

from __future__ import annotations

import argparse
import cProfile
import json
import os
import resource
import subprocess
import sys
import time

#: name -> (sites, operator, target seconds or None). Operators: "total_x", "total_z", "local_x"
#: (S^x of site 0).
CASES = {
    "ring4_local_x": (4, "local_x", None),
    "ring6_local_x": (6, "local_x", None),
    "ring6_total_x": (6, "total_x", 2.0),
    "ring8_local_x": (8, "local_x", 60.0),
    "ring10_total_z": (10, "total_z", 60.0),
}
BASELINE = "ring4_local_x"
QUICK = ("ring4_local_x", "ring6_local_x", "ring6_total_x")
POINT = {"J": 1.0, "h": 0.3}
TEMPERATURE = 0.8
TIMEOUT = 900.0


def worker(name: str, profile: str | None) -> dict:
    import numpy as np
    import sympy as sp

    import symresp as sr
    from symresp import numeric
    from symresp._api import Model  # noqa: F401  (the facade's imports happen before the clock)

    n, which, _ = CASES[name]
    J = sp.Symbol("J", positive=True)
    h = sp.Symbol("h", real=True)
    s = [sr.spin(f"s{i}", sp.Rational(1, 2)) for i in range(n)]
    zero = 0 * s[0].z
    H = sum((J * (s[i].vec @ s[(i + 1) % n].vec) for i in range(n)), zero)
    H = H + h * sum((x.z for x in s), zero)
    A = {"total_x": sum((x.x for x in s), zero), "total_z": sum((x.z for x in s), zero),
         "local_x": s[0].x}[which]
    prof = cProfile.Profile() if profile else None
    steps = {}
    if prof:
        prof.enable()
    t0 = time.perf_counter()
    model = sr.Model(H, name=f"{n}-site ring")
    r = model.response(A)
    t1 = time.perf_counter()
    mod = r.numpy()
    t2 = time.perf_counter()
    if prof:
        prof.disable()
        prof.dump_stats(os.path.join(profile, f"{name}.prof"))
    steps["derive"] = t1 - t0
    steps["numpy"] = t2 - t1
    got = float(mod.chi_isothermal(TEMPERATURE, **POINT))
    # Reference: exact diagonalisation of the same ring (numpy Kronecker products).
    sx = np.array([[0, 0.5], [0.5, 0]])
    sy = np.array([[0, -0.5j], [0.5j, 0]])
    sz = np.array([[0.5, 0], [0, -0.5]])

    def site(op, i):
        out = np.eye(1)
        for k in range(n):
            out = np.kron(out, op if k == i else np.eye(2))
        return out

    ops = {c: [site(m, i) for i in range(n)] for c, m in (("x", sx), ("y", sy), ("z", sz))}
    Hn = sum(POINT["J"] * sum(ops[c][i] @ ops[c][(i + 1) % n] for c in "xyz") for i in range(n))
    Hn = Hn + POINT["h"] * sum(ops["z"])
    An = {"total_x": sum(ops["x"]), "total_z": sum(ops["z"]), "local_x": ops["x"][0]}[which]
    ref = numeric.solve(Hn, An, An, 1.0 / TEMPERATURE).isothermal
    return {"seconds": t2 - t0, "steps": steps, "levels": len(r.levels),
            "poles": len(r.derivation.transitions()),
            "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
            "value": got, "reference": float(np.real(ref))}


def run(name: str, profile: str | None) -> dict:
    cmd = [sys.executable, __file__, "--worker", name]
    if profile:
        cmd += ["--profile", profile]
    # The checkout this script belongs to is imported, whatever is installed.
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        [root] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]))
    t = time.perf_counter()
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=TIMEOUT, env=env)
    except subprocess.TimeoutExpired:
        return {"error": f"did not finish in {TIMEOUT:.0f} s"}
    wall = time.perf_counter() - t
    if proc.returncode != 0:
        return {"error": proc.stderr.strip().splitlines()[-1] if proc.stderr.strip() else "failed"}
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    out["wall"] = wall
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="baseline and 6-site cases only")
    ap.add_argument("--only", action="append", choices=sorted(CASES), help="run this case (repeatable)")
    ap.add_argument("--profile", metavar="DIR", help="write a cProfile dump per case into DIR")
    ap.add_argument("--worker", choices=sorted(CASES), help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.worker:
        print(json.dumps(worker(args.worker, args.profile)))
        return 0
    if args.profile:
        os.makedirs(args.profile, exist_ok=True)
    names = list(QUICK if args.quick else CASES)
    if args.only:
        names = [BASELINE] + [n for n in args.only if n != BASELINE]
    print(f"python {sys.version.split()[0]}, {os.cpu_count()} cores, "
          f"load average {os.getloadavg()[0]:.2f} at start")
    results = {}
    for name in names:
        res = run(name, args.profile)
        results[name] = res
        n, which, target = CASES[name]
        if "error" in res:
            print(f"{name:16s} {res['error']}")
            continue
        base = results.get(BASELINE, {}).get("seconds")
        ratio = f"{res['seconds'] / base:7.1f}x baseline" if base else ""
        aim = ""
        if target is not None:
            aim = f"  target <= {target:g} s: {'met' if res['seconds'] <= target else 'NOT met'}"
        agree = abs(res["value"] - res["reference"]) <= 1e-9 * max(1.0, abs(res["reference"]))
        print(f"{name:16s} {res['seconds']:8.2f} s  (derive {res['steps']['derive']:.2f}, "
              f"numpy {res['steps']['numpy']:.2f})  {ratio}  levels {res['levels']}, "
              f"poles {res['poles']}, peak {res['peak_mb']:.0f} MB, "
              f"value {'agrees' if agree else 'DISAGREES'} with the reference{aim}")
    fields = []
    for name in ("ring6_total_x", "ring8_local_x", "ring10_total_z", BASELINE):
        res = results.get(name)
        key = "baseline" if name == BASELINE else name
        if res is None:
            fields.append(f"{key}=skipped")
        elif "error" in res:
            fields.append(f"{key}=failed")
        else:
            fields.append(f"{key}={res['seconds']:.2f}")
    print(f"load average {os.getloadavg()[0]:.2f} at end")
    print("summary: " + " ".join(fields))
    return 0


if __name__ == "__main__":
    sys.exit(main())
