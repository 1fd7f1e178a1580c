"""Batch derivations: in this process one after the other, against dask LocalClusters.

Run::

    python tests/perf/bench_batch.py              # the full catalogue (26 responses)
    python tests/perf/bench_batch.py --quick      # the two smallest clusters of each spin (19 responses)
    python tests/perf/bench_batch.py --no-extras  # skip the pickling and memory sections
    python tests/perf/bench_batch.py --rounds 2   # each mode twice, alternating; keep the faster

Catalogue (case files written to a temporary directory; every task derives one response and
writes its summary, JSON, LaTeX and evaluator module, as ``symresp batch`` does):

* spin-1/2 Heisenberg rings of 4 to 8 sites in a field, ``H = J sum S_i.S_{i+1} - h M``;
  spin-1 clusters (dimer, triangle, 4- and 5-site rings) and spin-3/2 clusters (dimer,
  triangle, 4-site ring), the same Hamiltonian. Responses (see ``SPIN_CLUSTERS``): ``uniform``
  (A = B = M = sum S^z_i) on every cluster, ``site`` (A = B = S^z_1) and ``transverse``
  (A = B = sum S^x_i) on the smaller ones: a site response of the 6-ring takes minutes (its
  presentation), which would hide the scheduling behind one task;
* Hubbard rings, ``H = -tc sum (c+_i c_j + h.c.) + U sum n_up n_dn`` in a particle-number
  sector: 3 sites with 2 electrons (``spin`` and ``site_charge``), and 4 sites at half filling
  (``spin``). The 4-site ring needs the fermion lattice symmetries (its Sz = 0 block of 36
  states mixes tc and U); a row of ``PENDING`` that fails is reported as ``pending`` and left
  out of the ratios, so the benchmark also runs on an engine without them.

Runs, all in one process, each into its own output directory and with the same code as the
command (:func:`symresp.batch.run_batch`):

``serial``     ``workers=0``: every task in this process, one after the other (the baseline);
``local-2``    a LocalCluster of 2 worker processes (one thread each), started and stopped by
               the run, as ``symresp batch`` does by default on a 2-core machine;
``local-4``    4 worker processes: a stand-in for a cluster with more workers than cores.

Printed: the time of each task in each run, the wall time of each run, the speed-ups
serial / local-N measured in this run, the start-and-stop time of a cluster, the scheduler's
overhead per task (200 no-op tasks through a running 2-worker cluster), and the batch overhead
per task (wall time - start - the tasks' own time / workers, divided by the tasks; includes load
imbalance). Every run's files are compared byte for byte with the serial run's.

Extras (also measured here; docs/batch.md quotes them): the size and time of pickling a
derivation of the largest models against sending their case text, and the peak memory of one
task of the largest models in a fresh process (what a worker needs).

The last line reads::

    summary: tasks=<n> serial_s=<s> local2_speedup=<x> local4_speedup=<x> overhead_ms=<ms>
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import logging
import os
import pickle
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))  # this checkout's symresp

import dask  # noqa: E402
from distributed import Client, LocalCluster  # noqa: E402

from symresp.batch import OK, plan_batch, run_batch  # noqa: E402
from symresp.cases import derive_case, parse_case  # noqa: E402
from symresp.cli._batch import describe_outputs  # noqa: E402

#: Cases that need engine work not yet on this branch: reported as pending when they fail.
PENDING = {"hubbard_ring4": "fermion lattice symmetries (block of 36 states mixing tc and U)"}
#: Tasks of the pickling and memory sections (the largest models of the catalogue).
LARGEST = ("ring8_s12/uniform", "ring5_s1/uniform", "ring4_s32/uniform")


def _spin_cluster(name: str, n: int, spin: str, description: str,
                  labels: tuple[str, ...] = ("uniform",)) -> str:
    bonds = [(1, 2)] if n == 2 else [(i, i % n + 1) for i in range(1, n + 1)]
    exchange = " + ".join(f"dot(s{i}, s{j})" for i, j in bonds)
    m = " + ".join(f"s{i}.z" for i in range(1, n + 1))
    mx = " + ".join(f"s{i}.x" for i in range(1, n + 1))
    sites = "\n".join(f's{i} = "spin {spin}"' for i in range(1, n + 1))
    responses = {"uniform": 'label = "uniform"\nA = "M"',
                 "site": 'label = "site"\nA = "s1.z"',
                 "transverse": f'label = "transverse"\nA = "{mx}"'}
    return f'''[model]
name = "{name}"
description = "{description}"
hamiltonian = "J*({exchange}) - h*({m})"
[parameters]
J = {{ assume = "real", value = 1 }}
h = {{ assume = "real", value = 0.1 }}
[sites]
{sites}
[observables]
M = "{m}"
''' + "".join(f"[[response]]\n{responses[label]}\n" for label in labels)


def _hubbard_ring(name: str, n: int, electrons: int, labels: tuple[str, ...]) -> str:
    hop = " + ".join(f"adj(c{i}_{s})*c{i % n + 1}_{s} + adj(c{i % n + 1}_{s})*c{i}_{s}"
                     for i in range(1, n + 1) for s in ("up", "dn"))
    u = " + ".join(f"n(c{i}_up)*n(c{i}_dn)" for i in range(1, n + 1))
    number = " + ".join(f"n(c{i}_up) + n(c{i}_dn)" for i in range(1, n + 1))
    sz = " + ".join(f"n(c{i}_up) - n(c{i}_dn)" for i in range(1, n + 1))
    sites = "\n".join(f'c{i} = "spinful fermion"' for i in range(1, n + 1))
    responses = {"spin": 'label = "spin"\nA = "Sz"',
                 "site_charge": 'label = "site_charge"\nA = "n(c1_up) + n(c1_dn)"'}
    return f'''[model]
name = "{name}"
description = "Hubbard ring of {n} sites with {electrons} electrons (invented quantum-dot array)"
hamiltonian = "-tc*({hop}) + U*({u})"
[parameters]
tc = {{ assume = "positive", value = 1 }}
U = {{ assume = "positive", value = 4 }}
[sites]
{sites}
[observables]
Sz = "({sz})/2"
[[sector]]
operator = "{number}"
value = {electrons}
''' + "".join(f"[[response]]\n{responses[label]}\n" for label in labels)


#: (sites, spin, responses) of the spin clusters; "quick" keeps the first of each spin.
SPIN_CLUSTERS = {
    "1/2": [(4, ("uniform", "site", "transverse")), (5, ("uniform", "transverse")),
            (6, ("uniform", "transverse")), (7, ("uniform",)), (8, ("uniform",))],
    "1": [(2, ("uniform", "site", "transverse")), (3, ("uniform", "site", "transverse")),
          (4, ("uniform",)), (5, ("uniform",))],
    "3/2": [(2, ("uniform", "site", "transverse")), (3, ("uniform", "site")), (4, ("uniform",))],
}
_SPIN_TAG = {"1/2": "s12", "1": "s1", "3/2": "s32"}


def catalogue(quick: bool) -> dict[str, str]:
    """Case name -> case text."""
    cases = {}
    for spin, clusters in SPIN_CLUSTERS.items():
        for n, labels in (clusters[:2] if quick else clusters):
            name = f"ring{n}_{_SPIN_TAG[spin]}"
            cases[name] = _spin_cluster(name, n, spin, f"Spin-{spin} cluster of {n} sites "
                                                         f"(invented ring molecule)", labels)
    cases["hubbard_ring3"] = _hubbard_ring("hubbard_ring3", 3, 2, ("spin", "site_charge"))
    cases["hubbard_ring4"] = _hubbard_ring("hubbard_ring4", 4, 4, ("spin",))
    return cases


def _noop(i: int) -> int:
    return i


def _cluster_costs(workers: int, tasks: int = 200) -> tuple[float, float]:
    """Start-and-stop time of a LocalCluster like the command's, and the round-trip time per
    no-op task through it (seconds)."""
    t0 = time.perf_counter()
    with dask.config.set({"distributed.scheduler.worker-saturation": 1.0}):
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                               host="127.0.0.1", dashboard_address=None,
                               silence_logs=logging.CRITICAL)
    client = Client(cluster, set_as_default=False)
    started = time.perf_counter() - t0
    client.gather(client.map(_noop, range(10), pure=False))      # warm the connections
    t1 = time.perf_counter()
    client.gather(client.map(_noop, range(tasks), pure=False))
    per_task = (time.perf_counter() - t1) / tasks
    t2 = time.perf_counter()
    client.close()
    cluster.close()
    return started + time.perf_counter() - t2, per_task


def _files(out: Path) -> dict[str, bytes]:
    return {p.relative_to(out).as_posix(): p.read_bytes() for p in sorted(out.rglob("*"))
            if p.is_file() and p.name != "manifest.json"}


def _run(files: list[str], out: Path, **options) -> tuple[float, dict]:
    t0 = time.perf_counter()
    report = run_batch(files, out, describe=describe_outputs, progress=False, force=True,
                       **options)
    wall = time.perf_counter() - t0
    entries = json.loads((out / "manifest.json").read_text())["results"]
    return wall, {r.key: (r.status, r.seconds, entries[r.key].get("peak_rss_mb")) for r in
                  report.rows} | {"__report__": report}


def _pickle_row(what: str, obj: object, text_bytes: int) -> str:
    try:
        t0 = time.perf_counter()
        blob = pickle.dumps(obj, protocol=pickle.HIGHEST_PROTOCOL)
        t1 = time.perf_counter()
        pickle.loads(blob)
        t2 = time.perf_counter()
    except Exception as err:  # report, do not stop the benchmark
        return f"{what:<40} {text_bytes:>6} B  cannot be pickled: {type(err).__name__}: {err}"
    return (f"{what:<40} {text_bytes:>6} B {len(blob) / 1e3:>9.1f} kB {(t1 - t0) * 1e3:>8.1f} ms "
            f"{(t2 - t1) * 1e3:>8.1f} ms")


def _pickling(texts: dict[str, str], keys: tuple[str, ...]) -> list[str]:
    """Pickle a derivation, and the formulas of its result, against sending the case text."""
    lines = [f"{'what':<40} {'text':>8} {'pickle':>12} {'dumps':>11} {'loads':>11}"]
    for key in keys:
        name, label = key.split("/")
        case = parse_case(texts[name], name=name)
        case = dataclasses.replace(case, responses=(case.response(label),))
        derived = derive_case(case)
        d = derived[0][1]
        describe_outputs(case, label, d)           # fills the presented forms, as a task does
        size = len(texts[name].encode())
        t0 = time.perf_counter()
        parse_case(texts[name], name=name)
        lines.append(f"{key + ': parse the case text':<40} {size:>6} B {'':>12} "
                     f"{(time.perf_counter() - t0) * 1e3:>20.1f} ms")
        lines.append(_pickle_row(f"{key}: Derivation", d, size))
        formulas = ([lv.energy for lv in d.levels], d.partition(), d.static("isothermal"),
                    d.static("isolated"), d.poles())
        lines.append(_pickle_row(f"{key}: levels, Z, chi, poles", formulas, size))
    return lines


_MEMORY_CHILD = r'''
import json, sys
sys.path.insert(0, sys.argv[1])
from symresp.batch import TaskSpec, run_task
from symresp.cli._batch import describe_outputs


def status(field):
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(field + ":"):
                return int(line.split()[1]) / 1024          # kB -> MiB
    return float("nan")


base = status("VmRSS")
spec = TaskSpec(sys.argv[3], sys.argv[3].split("/")[0], "bench", open(sys.argv[2]).read(),
                sys.argv[3].split("/")[1], 3600.0, describe_outputs)
result = run_task(spec)
print(json.dumps([result.status, base, status("VmHWM"), status("VmRSS"), result.seconds]))
'''


def _memory(folder: Path, keys: tuple[str, ...]) -> list[str]:
    """Resident memory of one task in a fresh interpreter (Linux /proc): after the imports,
    the peak, and after the task: what a worker process needs for that task."""
    root = str(Path(__file__).resolve().parents[2])
    lines = [f"{'task':<22} {'after imports':>14} {'peak':>9} {'after task':>11} {'task time':>10}"]
    for key in keys:
        path = folder / f"{key.split('/')[0]}.toml"
        out = subprocess.run([sys.executable, "-c", _MEMORY_CHILD, root, str(path), key],
                             capture_output=True, text=True, timeout=3600)
        if out.returncode != 0:
            lines.append(f"{key:<22} failed: {out.stderr.strip()[-200:]}")
            continue
        status, base, peak, after, seconds = json.loads(out.stdout.strip().splitlines()[-1])
        lines.append(f"{key:<22} {base:>11.0f} MB {peak:>6.0f} MB {after:>8.0f} MB "
                     f"{seconds:>8.1f} s  ({status})")
    return lines


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--quick", action="store_true", help="smaller models only")
    parser.add_argument("--no-extras", action="store_true",
                        help="skip the pickling and memory sections")
    parser.add_argument("--rounds", type=int, default=1,
                        help="run every mode this many times, alternating the order, and keep "
                             "the faster round of each (default 1)")
    parser.add_argument("--extras-only", action="store_true",
                        help="only the pickling and memory sections")
    args = parser.parse_args(argv)

    texts = catalogue(args.quick)
    root = Path(tempfile.mkdtemp(prefix="bench-batch-"))
    folder = root / "cases"
    folder.mkdir()
    files = []
    for name, text in texts.items():
        (folder / f"{name}.toml").write_text(text)
        files.append(str(folder / f"{name}.toml"))
    tasks, failures = plan_batch(files)
    assert not failures, failures
    if args.extras_only:
        keys = tuple(k for k in LARGEST if k in {t.key for t in tasks})
        print("\n".join(_pickling(texts, keys) + [""] + _memory(folder, keys)))
        return 0
    print(f"catalogue: {len(tasks)} responses of {len(texts)} models "
          f"(dimensions {min(t.dimension for t in tasks)} to "
          f"{max(t.dimension for t in tasks)}); machine: {os.cpu_count()} CPUs, load {os.getloadavg()[0]:.1f}")

    # Other work on the machine changes over minutes: with --rounds 2 the modes run in the
    # order serial, local-2, local-4, local-4, local-2, serial and each keeps its faster round.
    modes = {"serial": 0, "local-2": 2, "local-4": 4}
    runs: dict[str, tuple[float, dict]] = {}
    for r in range(args.rounds):
        for name in (list(modes) if r % 2 == 0 else list(modes)[::-1]):
            print(f"round {r + 1}: running {name} ...", flush=True)
            run = _run(files, root / name, workers=modes[name])
            if name not in runs or run[0] < runs[name][0]:
                runs[name] = run
    print("measuring cluster start and scheduler overhead ...", flush=True)
    costs = {2: _cluster_costs(2), 4: _cluster_costs(4)}

    serial_files = _files(root / "serial")
    for name in ("local-2", "local-4"):
        same = _files(root / name) == serial_files
        print(f"{name}: files byte for byte equal to the serial run's: {same}")

    pending = {t.key for t in tasks if t.spec.case_name in PENDING
               and runs["serial"][1][t.key][0] != OK}
    keys = [t.key for t in tasks]
    print()
    print(f"{'task':<24} {'dim':>4} {'serial':>8} {'local-2':>8} {'local-4':>8} {'peak MB':>8}"
          f"  status")
    for t in sorted(tasks, key=lambda t: (t.dimension, t.key)):
        row = [runs[r][1][t.key] for r in ("serial", "local-2", "local-4")]
        status = row[0][0]
        if t.key in pending:
            status = f"pending: needs {PENDING[t.spec.case_name]} ({status})"
        print(f"{t.key:<24} {t.dimension:>4} {row[0][1]:>7.2f}s {row[1][1]:>7.2f}s "
              f"{row[2][1]:>7.2f}s {row[2][2] or 0:>8.0f}  {status}")
    counted = [k for k in keys if k not in pending]
    work = sum(runs["serial"][1][k][1] for k in counted)
    wall_serial = runs["serial"][0]
    print()
    print(f"serial:  wall {wall_serial:7.1f} s (tasks {work:.1f} s)")
    summary = {}
    for name, workers in (("local-2", 2), ("local-4", 4)):
        wall = runs[name][0]
        task_time = sum(runs[name][1][k][1] for k in counted)
        start, per_task = costs[workers]
        overhead = (wall - start - task_time / workers) / len(keys)
        speedup = wall_serial / wall
        summary[workers] = (speedup, per_task)
        print(f"{name}: wall {wall:7.1f} s (tasks {task_time:.1f} s on the workers, "
              f"{task_time / work:.2f}x their serial time); speed-up serial/{name} "
              f"{speedup:.2f}x; cluster start+stop {start:.1f} s; scheduler overhead "
              f"{per_task * 1e3:.1f} ms per no-op task; batch overhead "
              f"{overhead:.2f} s per task (imbalance included)")
    if not args.no_extras:
        print()
        print("pickling a derivation vs sending the case text:")
        print("\n".join(_pickling(texts, tuple(k for k in LARGEST if k in keys))))
        print()
        print("memory of one task in a fresh process:")
        print("\n".join(_memory(folder, tuple(k for k in LARGEST if k in keys))))
    print()
    print(f"summary: tasks={len(counted)} pending={len(pending)} serial_s={wall_serial:.1f} "
          f"local2_speedup={summary[2][0]:.2f} local4_speedup={summary[4][0]:.2f} "
          f"overhead_ms={summary[2][1] * 1e3:.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
