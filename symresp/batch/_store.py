"""The output directory of a batch: result files and the manifest (layer: batch).

Owns :class:`Store` and :data:`MANIFEST`. Runs on the client only. Every file is written
atomically (a temporary file in the same directory, then ``os.replace``), and an interrupt
(Ctrl-C) that arrives while one result is being written is held back until its files and the
manifest are complete, so the directory only ever holds complete files. The manifest
(``manifest.json``) has one entry per task: case fingerprint, symresp version, status, message,
times, the worker, and the files with their sha256; times live only there, never inside the
result files, so results are byte-for-byte reproducible. A lock file keeps two batch runs from
writing into one directory at the same time. Imports the standard library and the batch
modules below it.
"""

from __future__ import annotations

import contextlib
import datetime
import hashlib
import json
import os
import signal
import socket
import threading
from collections.abc import Iterator, Sequence
from pathlib import Path

from .._files import replace_file
from ..errors import InputError
from ._plan import FORMAT, CaseFailure, Task
from ._task import CANCELLED, OK, TaskResult

__all__ = ["Store", "MANIFEST", "LOCK", "write_atomic", "utc_now"]

#: File name of the manifest in the output directory.
MANIFEST = "manifest.json"
#: File name of the lock held while a batch writes into the directory.
LOCK = ".symresp-batch.lock"
_KIND = "symresp batch manifest"
_TEMP_PREFIX = ".tmp-"


def utc_now() -> str:
    """The current UTC time, ISO 8601, to the second (manifest times)."""
    return datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def write_atomic(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` so that ``path`` is either the old file or the complete new
    one (the package's one atomic writer, with the batch's temporary-file prefix)."""
    replace_file(path, text.encode("utf-8"), option="--out", temp_prefix=_TEMP_PREFIX)


@contextlib.contextmanager
def _interrupts_held() -> Iterator[None]:
    """Hold back SIGINT (Ctrl-C) for the duration, then deliver it as KeyboardInterrupt.

    Only the main thread can set signal handlers; elsewhere this does nothing.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught: list[int] = []
    previous = signal.signal(signal.SIGINT, lambda signum, frame: caught.append(signum))
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)
    if caught:
        raise KeyboardInterrupt


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class Store:
    """Result files and manifest of one output directory (client side, one run at a time).

    Parameters
    ----------
    out : str or pathlib.Path
        The output directory; created if needed.

    Raises
    ------
    InputError
        If ``out`` exists and is not a directory, cannot be created or written, holds a
        manifest that is not one, or another batch run is writing into it.
    """

    def __init__(self, out: str | Path) -> None:
        self.out = Path(out)
        if self.out.exists() and not self.out.is_dir():
            raise InputError(f"--out {self.out}: exists and is not a directory")
        try:
            self.out.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            raise InputError(f"--out {self.out}: cannot create the directory "
                             f"({err.strerror or err})") from None
        self.entries: dict[str, dict] = self._load()
        self._lock = self.out / LOCK
        self._take_lock()

    # ------------------------------------------------------------------ manifest
    def _load(self) -> dict[str, dict]:
        path = self.out / MANIFEST
        if not path.exists():
            return {}
        try:
            doc = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as err:
            raise InputError(f"{path}: cannot read the batch manifest ({err}); move the file "
                             f"away or choose another --out") from None
        if not (isinstance(doc, dict) and doc.get("kind") == _KIND
                and isinstance(doc.get("results"), dict)):
            raise InputError(f"{path}: not a symresp batch manifest; choose another --out")
        return {k: v for k, v in doc["results"].items() if isinstance(v, dict)}

    def save(self) -> None:
        """Write the manifest (atomically)."""
        doc = {"kind": _KIND, "format": FORMAT, "updated": utc_now(),
               "results": dict(sorted(self.entries.items()))}
        write_atomic(self.out / MANIFEST, json.dumps(doc, indent=2) + "\n")

    def _take_lock(self) -> None:
        me = f"{socket.gethostname()} {os.getpid()}"
        for _ in range(2):
            try:
                fd = os.open(self._lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                try:
                    host, pid = self._lock.read_text().split()
                except (OSError, ValueError):
                    host, pid = "", "0"
                if host == socket.gethostname() and not _pid_alive(int(pid)):
                    self._lock.unlink(missing_ok=True)  # left by a run that was killed
                    continue
                raise InputError(f"--out {self.out}: another batch run (process {pid} on "
                                 f"{host or 'an unknown host'}) is writing there; wait for it "
                                 f"to finish, or remove {self._lock} if it is gone") from None
            except OSError as err:
                raise InputError(f"--out {self.out}: cannot write there "
                                 f"({err.strerror or err})") from None
            with os.fdopen(fd, "w") as f:
                f.write(me)
            return

    def close(self) -> None:
        """Release the directory (remove the lock file)."""
        self._lock.unlink(missing_ok=True)

    # ------------------------------------------------------------------ results
    def is_fresh(self, task: Task) -> bool:
        """True when the directory holds a complete successful result with this fingerprint."""
        entry = self.entries.get(task.key)
        if not entry or entry.get("status") != OK or entry.get("fingerprint") != task.fingerprint:
            return False
        files = entry.get("files")
        if not isinstance(files, dict) or not files:
            return False
        for rel, digest in files.items():
            try:
                if _sha256((self.out / rel).read_bytes()) != digest:
                    return False
            except OSError:
                return False
        return True

    def _replace_files(self, key: str, new: dict[str, str]) -> None:
        """Remove the files the previous entry of ``key`` listed and this one does not."""
        old = self.entries.get(key, {}).get("files")
        if isinstance(old, dict):
            for rel in old:
                if rel not in new and "/" in rel and ".." not in rel.split("/"):
                    with contextlib.suppress(OSError):
                        (self.out / rel).unlink()

    def record(self, task: Task, result: TaskResult, started: str | None = None) -> list[str]:
        """Write the files of a finished task and its manifest entry; return the file paths.

        The files (if ``ok``) and the manifest are written with Ctrl-C held back, so an
        interrupt never leaves half a result.
        """
        spec = task.spec
        written: list[str] = []
        with _interrupts_held():
            files: dict[str, str] = {}
            if result.status == OK:
                folder = self.out / spec.case_name
                folder.mkdir(parents=True, exist_ok=True)
                for suffix, text in result.outputs:
                    rel = f"{spec.case_name}/{task.stem}.{suffix}"
                    write_atomic(self.out / rel, text)
                    files[rel] = _sha256(text.encode("utf-8"))
                    written.append(str(self.out / rel))
            self._replace_files(spec.key, files)
            self.entries[spec.key] = {
                "case": spec.case_name, "label": spec.label, "source": spec.source,
                "fingerprint": task.fingerprint, "symresp_version": result.version,
                "status": result.status, "message": result.message, "notes": list(result.notes),
                "files": files, "started": started, "finished": utc_now(),
                "seconds": result.seconds, "worker": result.worker,
                "peak_rss_mb": result.peak_rss_mb,
            }
            self.save()
        return written

    def forget_other_labels(self, tasks: Sequence[Task]) -> None:
        """Drop the entries (and files) of responses the planned cases no longer ask for."""
        planned = {t.key for t in tasks}
        cases = {t.spec.case_name for t in tasks}
        gone = [k for k in self.entries if k.split("/")[0] in cases and k not in planned]
        if gone:
            with _interrupts_held():
                for key in gone:
                    self._replace_files(key, {})
                    del self.entries[key]
                self.save()

    def record_failure(self, failure: CaseFailure, status: str) -> None:
        """The manifest entry of a case file that gave no task (unreadable or malformed)."""
        with _interrupts_held():
            for key in [k for k in self.entries if k.split("/")[0] == failure.key]:
                self._replace_files(key, {})
                del self.entries[key]
            self.entries[failure.key] = {
                "case": failure.key, "label": None, "source": failure.source,
                "fingerprint": failure.fingerprint, "symresp_version": None, "status": status,
                "message": failure.message, "notes": [], "files": {}, "started": None,
                "finished": utc_now(), "seconds": 0.0, "worker": None, "peak_rss_mb": None,
            }
            self.save()

    def record_cancelled(self, tasks: list[Task]) -> None:
        """Entries for tasks stopped by an interrupt: a task that had an earlier result keeps
        its entry and files; the others are listed as cancelled."""
        with _interrupts_held():
            for task in tasks:
                if task.key not in self.entries:
                    spec = task.spec
                    self.entries[task.key] = {
                        "case": spec.case_name, "label": spec.label, "source": spec.source,
                        "fingerprint": task.fingerprint, "symresp_version": None,
                        "status": CANCELLED, "message": "interrupted before it finished",
                        "notes": [], "files": {}, "started": None, "finished": utc_now(),
                        "seconds": 0.0, "worker": None, "peak_rss_mb": None}
            self.save()

    def leftovers(self) -> list[Path]:
        """Temporary files of writes that never completed (there should be none)."""
        return sorted(self.out.rglob(_TEMP_PREFIX + "*"))
