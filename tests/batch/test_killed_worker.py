"""A worker process killed in the middle of a task: the task is retried on another worker, or,
once the retries are used up, reported as lost while the other tasks finish.

These tests start the batch command's own local cluster (worker processes on the loopback
interface), so they also cover starting and stopping it.
"""

from __future__ import annotations

import json
import os
import signal
import threading
import time
from pathlib import Path

import pytest

from symresp.batch import MANIFEST, OK, WORKER_LOST, run_batch

from ._cases import FIELD_SPIN, TUNNEL, write_cases

dask = pytest.importorskip("dask")
pytest.importorskip("distributed")

#: Environment variable naming the directory where the victim task leaves its process id.
MARKER_DIR = "SYMRESP_TEST_KILL_MARKERS"
#: Longest wait for the victim task to start, and longest a task may hang (seconds).
WAIT_LIMIT = 120.0


def _victim_writer(case, label, derivation):
    """Runs on a worker: the first attempt of the 'victim' case announces its process and waits
    to be killed; any later attempt (on another worker) goes through at once."""
    if case.name != "victim":
        return ()
    folder = Path(os.environ[MARKER_DIR])
    attempt = len(list(folder.glob("attempt-*")))
    (folder / f"attempt-{attempt}.part").write_text(str(os.getpid()))
    (folder / f"attempt-{attempt}.part").rename(folder / f"attempt-{attempt}")
    if attempt < int(os.environ.get(MARKER_DIR + "_KILLS", "1")):
        deadline = time.monotonic() + WAIT_LIMIT
        while time.monotonic() < deadline:
            time.sleep(0.05)
    return (("txt", f"attempt {attempt}\n"),)


def _killer(folder: Path, kills: int, killed: list[int], bystanders_done: threading.Event) -> None:
    """Once the other tasks have finished (so that no task but the victim is on the worker),
    kill the worker of each of the first ``kills`` attempts as soon as it announces itself."""
    bystanders_done.wait(WAIT_LIMIT)
    deadline = time.monotonic() + WAIT_LIMIT
    while len(killed) < kills and time.monotonic() < deadline:
        marker = folder / f"attempt-{len(killed)}"
        if marker.exists():
            pid = int(marker.read_text())
            os.kill(pid, signal.SIGKILL)   # a worker process this test's cluster started
            killed.append(pid)
        time.sleep(0.05)


def _run(tmp_path, monkeypatch, kills: int):
    markers = tmp_path / "markers"
    markers.mkdir()
    monkeypatch.setenv(MARKER_DIR, str(markers))
    monkeypatch.setenv(MARKER_DIR + "_KILLS", str(kills))
    files = write_cases(tmp_path / "cases", victim=TUNNEL, bystander=FIELD_SPIN)
    killed: list[int] = []
    finished: list[str] = []
    bystanders_done = threading.Event()

    def on_result(key, result):
        finished.append(key)
        if sum(k.startswith("bystander/") for k in finished) == 2:
            bystanders_done.set()

    thread = threading.Thread(target=_killer, args=(markers, kills, killed, bystanders_done),
                              daemon=True)
    thread.start()
    report = run_batch(files, tmp_path / "out", workers=2, describe=_victim_writer,
                       progress=False, on_result=on_result)
    bystanders_done.set()
    thread.join(WAIT_LIMIT)
    manifest = json.loads((tmp_path / "out" / MANIFEST).read_text())["results"]
    return report, manifest, killed


@pytest.mark.slow   # tens of seconds; CI runs it in the slow tier
def test_a_killed_workers_task_is_retried_on_another_worker(tmp_path, monkeypatch):
    report, manifest, killed = _run(tmp_path, monkeypatch, kills=1)
    status = {r.key: r.status for r in report.rows}
    assert status == {"victim/dipole": OK, "bystander/mz": OK, "bystander/mx": OK}
    assert len(killed) == 1
    entry = manifest["victim/dipole"]
    assert not entry["worker"].endswith(f":{killed[0]}")     # finished by another process
    assert (tmp_path / "out/victim/dipole.txt").read_text() == "attempt 1\n"


@pytest.mark.slow
def test_a_task_whose_workers_keep_dying_is_reported_and_the_others_finish(tmp_path,
                                                                            monkeypatch):
    with dask.config.set({"distributed.scheduler.allowed-failures": 0}):
        report, manifest, killed = _run(tmp_path, monkeypatch, kills=1)
    status = {r.key: r.status for r in report.rows}
    assert status == {"victim/dipole": WORKER_LOST, "bystander/mz": OK, "bystander/mx": OK}
    assert manifest["victim/dipole"]["status"] == WORKER_LOST and len(killed) == 1
    assert not (tmp_path / "out/victim").exists()
