"""Batch runs: results equal serial ones byte for byte, failures are isolated, reruns skip fresh
results, interrupts leave only complete files.

One in-process dask cluster (threads, no child processes) is shared by the module; the killed
worker test, which needs worker processes, lives in test_killed_worker.py.
"""

from __future__ import annotations

import hashlib
import io
import json
import logging
import os
import signal
import threading
from pathlib import Path

import pytest

from symresp.batch import (BAD_INPUT, CANCELLED, ERROR, LOCK, MANIFEST, OK, OVER_BUDGET,
                           WORKER_LOST, ProgressBar, Store, TaskSpec, plan_batch, run_batch,
                           run_task, write_atomic)
from symresp.batch._store import _interrupts_held
from symresp.cli import main
from symresp.cli._batch import describe_outputs
from symresp.errors import InputError

from ._cases import FIELD_SPIN, LEVELS_ONLY, MALFORMED, TUNNEL, write_cases

distributed = pytest.importorskip("distributed")


@pytest.fixture(scope="module")
def scheduler():
    """Address of an in-process cluster: two workers of one thread each."""
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None,
                                  silence_logs=logging.CRITICAL) as cluster:
        yield cluster.scheduler_address


@pytest.fixture(scope="module")
def case_files(tmp_path_factory) -> list[str]:
    return write_cases(tmp_path_factory.mktemp("cases"), field_spin=FIELD_SPIN, tunnel=TUNNEL,
                       levels_only=LEVELS_ONLY)


def _files(out: Path) -> dict[str, bytes]:
    """Every file of an output directory but the manifest, by relative path."""
    return {p.relative_to(out).as_posix(): p.read_bytes() for p in sorted(out.rglob("*"))
            if p.is_file() and p.name != MANIFEST}


def _manifest(out: Path) -> dict:
    return json.loads((out / MANIFEST).read_text())["results"]


def _assert_only_complete_files(out: Path) -> None:
    """No temporary file or lock left; every file on disk is listed, with its hash."""
    results = _manifest(out)
    listed = {rel: digest for e in results.values() for rel, digest in e["files"].items()}
    on_disk = _files(out)
    assert set(on_disk) == set(listed), (sorted(on_disk), sorted(listed))
    for rel, data in on_disk.items():
        assert hashlib.sha256(data).hexdigest() == listed[rel], rel
    assert not (out / LOCK).exists()


@pytest.fixture(scope="module")
def serial_run(case_files, tmp_path_factory):
    out = tmp_path_factory.mktemp("serial")
    return out, run_batch(case_files, out, workers=0, describe=describe_outputs, progress=False)


def test_serial_run_writes_every_output_and_a_manifest(serial_run):
    out, report = serial_run
    assert report.ok and not report.fresh
    assert sorted(r.key for r in report.rows) == ["field_spin/mx", "field_spin/mz",
                                                  "levels_only/levels", "tunnel/dipole"]
    assert sorted(_files(out)) == [
        "field_spin/mx.json", "field_spin/mx.py", "field_spin/mx.tex", "field_spin/mx.txt",
        "field_spin/mz.json", "field_spin/mz.py", "field_spin/mz.tex", "field_spin/mz.txt",
        "levels_only/levels.json", "levels_only/levels.txt",
        "tunnel/dipole.json", "tunnel/dipole.py", "tunnel/dipole.tex", "tunnel/dipole.txt"]
    entry = _manifest(out)["tunnel/dipole"]
    assert entry["status"] == OK and entry["symresp_version"] and entry["finished"]
    assert len(entry["fingerprint"]) == 64 and entry["peak_rss_mb"] > 0
    _assert_only_complete_files(out)


def test_results_are_what_derive_and_emit_write(serial_run, case_files, tmp_path, capsys):
    out, _ = serial_run
    tunnel = next(p for p in case_files if p.endswith("tunnel.toml"))
    assert main(["derive", tunnel, "-r", "dipole", "-q"]) == 0
    assert capsys.readouterr().out == (out / "tunnel/dipole.txt").read_text()
    assert main(["derive", tunnel, "-r", "dipole", "-q", "--json"]) == 0
    assert capsys.readouterr().out == (out / "tunnel/dipole.json").read_text()
    assert main(["emit", tunnel, "-r", "dipole", "-q", "--out", str(tmp_path / "e.py")]) == 0
    assert (tmp_path / "e.py").read_bytes() == (out / "tunnel/dipole.py").read_bytes()


def test_cluster_results_equal_serial_results_byte_for_byte(serial_run, case_files, scheduler,
                                                            tmp_path):
    out, _ = serial_run
    report = run_batch(case_files, tmp_path, scheduler=scheduler, describe=describe_outputs,
                       progress=False)
    assert report.ok, report.failures
    assert _files(tmp_path) == _files(out)
    _assert_only_complete_files(tmp_path)


def test_a_malformed_case_is_reported_and_the_others_finish(scheduler, tmp_path):
    files = write_cases(tmp_path / "cases", broken=MALFORMED, tunnel=TUNNEL)
    out = tmp_path / "out"
    report = run_batch(files + [str(tmp_path / "missing.toml")], out, scheduler=scheduler,
                       progress=False)
    status = {r.key: (r.status, r.message) for r in report.rows}
    assert status["tunnel/dipole"][0] == OK
    assert status["broken"][0] == BAD_INPUT and "has no component 'w'" in status["broken"][1]
    assert status["missing"][0] == BAD_INPUT and "no such case file" in status["missing"][1]
    entry = _manifest(out)["broken"]
    assert entry["status"] == BAD_INPUT and "broken.toml:3:" in entry["message"]
    assert not report.ok
    _assert_only_complete_files(out)


def test_rerun_skips_fresh_results_and_redoes_changed_ones(tmp_path):
    files = write_cases(tmp_path / "cases", field_spin=FIELD_SPIN, tunnel=TUNNEL)
    out = tmp_path / "out"
    first = run_batch(files, out, workers=0, progress=False)
    assert first.ok and len(first.rows) == 3
    again = run_batch(files, out, workers=0, progress=False)
    assert again.rows == () and sorted(again.fresh) == ["field_spin/mx", "field_spin/mz",
                                                        "tunnel/dipole"]
    # An edited case file is derived again; a damaged result file too.
    Path(files[1]).write_text(TUNNEL.replace("value = 2", "value = 3"))
    (out / "field_spin/mx.py").write_text("damaged")
    third = run_batch(files, out, workers=0, progress=False)
    assert sorted(r.key for r in third.rows) == ["field_spin/mx", "tunnel/dipole"]
    assert third.fresh == ("field_spin/mz",)
    forced = run_batch(files[1:], out, workers=0, progress=False, force=True)
    assert [r.key for r in forced.rows] == ["tunnel/dipole"] and not forced.fresh
    _assert_only_complete_files(out)


def test_a_response_removed_from_the_case_loses_its_entry_and_files(tmp_path):
    files = write_cases(tmp_path / "cases", field_spin=FIELD_SPIN)
    out = tmp_path / "out"
    assert run_batch(files, out, workers=0, progress=False).ok
    Path(files[0]).write_text(FIELD_SPIN.split("[[response]]\nlabel = \"mx\"")[0])
    report = run_batch(files, out, workers=0, progress=False)
    assert [r.key for r in report.rows] == ["field_spin/mz"]   # a new text: derived again
    assert sorted(_manifest(out)) == ["field_spin/mz"]
    assert not (out / "field_spin/mx.py").exists()
    _assert_only_complete_files(out)


def test_set_fixes_parameters_as_on_the_other_commands(tmp_path, capsys):
    files = write_cases(tmp_path / "cases", tunnel=TUNNEL, field_spin=FIELD_SPIN)
    out = tmp_path / "out"
    assert main(["batch", files[0], "--out", str(out), "--workers", "0", "-q",
                 "--set", "Delta=3/2"]) == 0
    capsys.readouterr()
    assert main(["derive", files[0], "-r", "dipole", "-q", "--set", "Delta=3/2"]) == 0
    assert capsys.readouterr().out == (out / "tunnel/dipole.txt").read_text()
    # Other values are another result; a case without the parameter is bad input.
    plain, _ = plan_batch(files[:1])
    tasks, failures = plan_batch(files, settings={"Delta": "3/2"})
    assert [t.key for t in tasks] == ["tunnel/dipole"]
    assert tasks[0].fingerprint != plain[0].fingerprint
    assert failures[0].key == "field_spin" and "declares no parameter 'Delta'" in failures[0].message


def test_an_over_budget_task_is_reported_alone():
    spec = TaskSpec("t/dipole", "t", "t.toml", TUNNEL, "dipole", 1e-9)
    result = run_task(spec)
    assert result.status == OVER_BUDGET and "budget" in result.message and not result.outputs


def test_a_task_without_answer_is_abandoned_and_the_others_finish(scheduler, tmp_path,
                                                                  monkeypatch):
    cluster = pytest.importorskip("symresp.batch._cluster")
    monkeypatch.setattr(cluster, "abandon_after", lambda budget: ABANDON_AFTER)
    monkeypatch.setattr(cluster, "_WATCH", 0.1)
    files = write_cases(tmp_path / "cases", stalled=TUNNEL, field_spin=FIELD_SPIN)
    try:
        report = run_batch(files, tmp_path / "out", scheduler=scheduler, describe=_stall,
                           progress=False)
    finally:
        _RELEASE.set()
    status = {r.key: r.status for r in report.rows}
    assert status == {"stalled/dipole": OVER_BUDGET, "field_spin/mz": OK, "field_spin/mx": OK}
    _assert_only_complete_files(tmp_path / "out")


#: Seconds after which the client gives up on a task in the test above; the other tasks of that
#: test take about half a second each.
ABANDON_AFTER = 2.5
_RELEASE = threading.Event()


def _stall(case, label, derivation):
    """A writer that hangs for the 'stalled' case (a step that never looks at the clock) until
    the test releases it, so the worker thread does not stay busy after the test."""
    if case.name == "stalled":
        _RELEASE.wait(60.0)
    return ()


def test_internal_errors_and_lost_workers_are_reported(monkeypatch):
    cluster = pytest.importorskip("symresp.batch._cluster")
    tasks, _ = plan_batch(["two_level"])

    class Lost:
        status = "error"
        key = "x"

        def exception(self):
            return distributed.KilledWorker("symresp-derive-x", "tcp://127.0.0.1:1", 3)

    class Missing(Lost):
        def exception(self):
            return ModuleNotFoundError("No module named 'symresp'")

    assert cluster._result(Lost(), tasks[0], "0.1.0").status == WORKER_LOST
    missing = cluster._result(Missing(), tasks[0], "0.1.0")
    assert missing.status == ERROR and "symresp 0.1.0 installed" in missing.message
    result = run_task(TaskSpec("t/dipole", "t", "t.toml", TUNNEL, "dipole", 60.0, _broken_writer))
    assert result.status == ERROR and "internal error: ZeroDivisionError" in result.message


def _broken_writer(case, label, derivation):
    return (("txt", str(1 / 0)),)


class _Interrupter:
    """on_result hook: Ctrl-C (a real SIGINT to this process) after the first result."""

    def __init__(self) -> None:
        self.seen: list[str] = []

    def __call__(self, key, result) -> None:
        self.seen.append(key)
        if len(self.seen) == 1:
            signal.raise_signal(signal.SIGINT)


@pytest.fixture
def ctrl_c_raises():
    """Python's own SIGINT handler for the test: a process started in the background by a
    shell that has no job control inherits SIGINT ignored, and Ctrl-C would never arrive."""
    previous = signal.signal(signal.SIGINT, signal.default_int_handler)
    yield
    signal.signal(signal.SIGINT, previous)


@pytest.mark.parametrize("where", ["serial", "cluster"])
def test_ctrl_c_cancels_and_leaves_only_complete_files(where, scheduler, case_files, tmp_path,
                                                       ctrl_c_raises):
    hook = _Interrupter()
    options = {"workers": 0} if where == "serial" else {"scheduler": scheduler}
    with pytest.raises(KeyboardInterrupt):
        run_batch(case_files, tmp_path, describe=describe_outputs, progress=False,
                  on_result=hook, **options)
    results = _manifest(tmp_path)
    assert results[hook.seen[0]]["status"] == OK
    assert CANCELLED in {e["status"] for e in results.values()}
    _assert_only_complete_files(tmp_path)
    if where == "serial":
        # The next run derives what was cancelled and skips what was finished.
        report = run_batch(case_files, tmp_path, workers=0, describe=describe_outputs,
                           progress=False)
        assert report.ok and hook.seen[0] in report.fresh
        _assert_only_complete_files(tmp_path)


def test_an_interrupt_during_a_write_waits_for_the_complete_file(tmp_path):
    target = tmp_path / "result.txt"
    with pytest.raises(KeyboardInterrupt):
        with _interrupts_held():
            signal.raise_signal(signal.SIGINT)
            write_atomic(target, "complete\n")
    assert target.read_text() == "complete\n"
    with pytest.raises(UnicodeEncodeError):
        write_atomic(target, "half \ud800 written")
    assert target.read_text() == "complete\n" and sorted(tmp_path.iterdir()) == [target]


def test_one_run_at_a_time_per_directory(tmp_path):
    store = Store(tmp_path)
    with pytest.raises(InputError, match="another batch run"):
        Store(tmp_path)
    store.close()
    (tmp_path / LOCK).write_text(f"{os.uname().nodename} 999999999")  # a run that was killed
    Store(tmp_path).close()
    (tmp_path / MANIFEST).write_text("{}")
    with pytest.raises(InputError, match="not a symresp batch manifest"):
        Store(tmp_path)


def test_same_named_case_files_are_refused(tmp_path):
    a = write_cases(tmp_path / "a", tunnel=TUNNEL)
    b = write_cases(tmp_path / "b", tunnel=TUNNEL)
    tasks, failures = plan_batch(a + b)
    assert [t.key for t in tasks] == ["tunnel/dipole"]
    assert "another case file of the same name" in failures[0].message


def test_bad_arguments_are_input_errors(tmp_path):
    for kwargs in ({"workers": -1}, {"workers": 1, "scheduler": "tcp://127.0.0.1:1"},
                   {"budget": 0}, {"scheduler": 5}):
        with pytest.raises(InputError):
            run_batch(["two_level"], tmp_path, **kwargs)
    with pytest.raises(InputError, match="no case files"):
        run_batch([], tmp_path)
    (tmp_path / "file").write_text("")
    with pytest.raises(InputError, match="not a directory"):
        run_batch(["two_level"], tmp_path / "file")


def test_an_unreachable_scheduler_is_named(tmp_path, monkeypatch):
    cluster = pytest.importorskip("symresp.batch._cluster")
    monkeypatch.setattr(cluster, "CONNECT_TIMEOUT", 0.5)
    with pytest.raises(InputError, match="no dask scheduler answers there"):
        run_batch(["two_level"], tmp_path, scheduler="tcp://127.0.0.1:1", progress=False)
    assert not (tmp_path / LOCK).exists()


def test_progress_bar_draws_on_a_terminal_only():
    class Terminal(io.StringIO):
        def isatty(self):
            return True

    tty, pipe = Terminal(), io.StringIO()
    for stream in (tty, pipe):
        bar = ProgressBar(4, 1, stream=stream)
        bar.update(running=2)
        bar.finished(True)
        bar.finished(False)
        bar.close()
    assert pipe.getvalue() == ""
    assert "\r[" in tty.getvalue() and "2/4 done, 1 failed" in tty.getvalue()
    quiet = Terminal()
    ProgressBar(3, stream=quiet, enabled=False).finished(True)
    assert quiet.getvalue() == ""


def test_the_command_reports_and_sets_the_exit_status(tmp_path, capsys):
    files = write_cases(tmp_path / "cases", tunnel=TUNNEL, broken=MALFORMED)
    out = tmp_path / "out"
    assert main(["batch", files[0], "--out", str(out), "--workers", "0", "-q"]) == 0
    text = capsys.readouterr().out
    assert "ok            tunnel/dipole" in text and "1 derived, 0 fresh" in text
    assert main(["batch", *files, "--out", str(out), "--workers", "0", "-q"]) == 1
    text = capsys.readouterr().out
    assert "fresh         tunnel/dipole" in text and "bad input     broken" in text
    assert main(["batch", files[0], "--out", str(out), "--workers", "2",
                 "--scheduler", "tcp://127.0.0.1:1"]) == 2
    assert "not allowed with argument" in capsys.readouterr().err
