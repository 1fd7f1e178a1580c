"""The tasks of a batch: case files read and checked, one task per response (layer: batch).

Owns :class:`Task`, :class:`CaseFailure`, :func:`plan_batch`, :func:`fingerprint` and the
output file names. Runs on the client: it reads every case file once (a malformed file becomes a
:class:`CaseFailure`, reported in the manifest, and the other files go on), lists the responses
and computes each task's fingerprint. Imports the standard library, :mod:`symresp.cases`,
:mod:`symresp.emit` (the version) and :mod:`symresp.errors`.
"""

from __future__ import annotations

import hashlib
import json
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

from ..cases import find_case, read_case, with_values
from ..emit import symresp_version
from ..errors import InputError
from ._task import LEVELS, Describe, TaskSpec

__all__ = ["Task", "CaseFailure", "plan_batch", "fingerprint", "file_stem", "FORMAT"]

#: Version of the batch output layout; part of every fingerprint.
FORMAT = 1


@dataclass(frozen=True, slots=True)
class Task:
    """A planned task: what travels to the worker, plus what the client keeps.

    Attributes
    ----------
    spec : TaskSpec
        Sent to the worker.
    fingerprint : str
        sha256 of the case text, the label, the symresp version and the output layout: a
        result is fresh while its fingerprint is unchanged.
    stem : str
        Output files are ``<case name>/<stem>.<suffix>`` in the output directory.
    dimension : int
        Dimension of the case's Hilbert space (larger tasks are started first).
    """

    spec: TaskSpec
    fingerprint: str
    stem: str
    dimension: int

    @property
    def key(self) -> str:
        """``"<case name>/<label>"``."""
        return self.spec.key


@dataclass(frozen=True, slots=True)
class CaseFailure:
    """A case file that could not be read or is malformed: no task, one manifest entry."""

    key: str
    source: str
    fingerprint: str
    message: str


def fingerprint(text: str, label: str, *, version: str | None = None,
                describe: Describe | None = None,
                settings: tuple[tuple[str, str], ...] = ()) -> str:
    """sha256 (hex) identifying one result: case text, label, parameters fixed by ``--set``,
    symresp version, output layout.

    Examples
    --------
    >>> from symresp.batch import fingerprint
    >>> a = fingerprint("[model]", "M", version="1.0")
    >>> a == fingerprint("[model]", "M", version="1.0"), a == fingerprint("[model] ", "M", version="1.0")
    (True, False)
    """
    writer = "" if describe is None else f"{describe.__module__}.{describe.__qualname__}"
    doc = {"format": FORMAT, "version": symresp_version() if version is None else version,
           "text": text, "label": label, "describe": writer, "settings": list(settings)}
    return hashlib.sha256(json.dumps(doc, sort_keys=True).encode()).hexdigest()


_UNSAFE = re.compile(r"[^A-Za-z0-9_.-]+")


def file_stem(label: str) -> str:
    """A file-name-safe stem for a response label; unusual labels get a short hash.

    Examples
    --------
    >>> from symresp.batch import file_stem
    >>> file_stem("uniform"), file_stem("chi zz")
    ('uniform', 'chi_zz-e1ec23')
    """
    stem = _UNSAFE.sub("_", label).strip("_.") or "response"
    if stem != label:
        stem += "-" + hashlib.sha256(label.encode()).hexdigest()[:6]
    return stem


def _read_text(path: Path) -> str | None:
    """The text of a case file, or None if it cannot be read (read_case then says why)."""
    try:
        return path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return None


def plan_batch(names: Sequence[str], *, budget: float = 600.0,
               describe: Describe | None = None,
               settings: Mapping[str, str] | None = None
               ) -> tuple[tuple[Task, ...], tuple[CaseFailure, ...]]:
    """Read the case files ``names`` (paths or bundled case names) and list one task per response.

    ``settings`` (``{name: value text}``, as ``--set`` gives) fixes parameters in every case; a
    case that does not declare one of them fails as bad input, like the other commands.

    A case without ``[[response]]`` gives one task, labelled ``"levels"``. A file that cannot be
    read or is malformed gives a :class:`CaseFailure` with the error message; the other files
    are planned as usual. Two files with the same name (``a/x.toml`` and ``b/x.toml``) would
    write to the same place: the second is refused.

    Returns
    -------
    (tasks, failures)

    Examples
    --------
    >>> from symresp.batch import plan_batch
    >>> tasks, failures = plan_batch(["dimer", "ring4"])
    >>> [t.key for t in tasks], failures
    (['dimer/M', 'dimer/Mx', 'ring4/uniform', 'ring4/staggered'], ())
    """
    fixed = dict(settings or {})
    pairs = tuple(sorted((str(k), str(v)) for k, v in fixed.items()))
    tasks: list[Task] = []
    failures: list[CaseFailure] = []
    seen: dict[str, str] = {}
    for name in names:
        source, stem, text = name, Path(name).stem, None
        try:
            path = find_case(name)
            source, stem = str(path), path.stem
            if stem in seen:
                raise InputError(f"{source}: another case file of the same name ({seen[stem]}) is "
                                 f"in this batch; their results would overwrite each other; "
                                 f"rename one of them")
            seen[stem] = source
            text = _read_text(path)
            case = with_values(read_case(path), fixed)  # the checks of the other commands
            if text is None:
                raise InputError(f"{source}: cannot read the case file")
        except InputError as err:
            fp = "" if text is None else fingerprint(text, "", describe=describe, settings=pairs)
            failures.append(CaseFailure(stem, source, fp, str(err)))
            continue
        labels = [r.label for r in case.responses] or [LEVELS]
        stems: set[str] = set()
        dimension = case.system.basis().dimension
        for label in labels:
            fstem = file_stem(label)
            while fstem in stems:  # two labels that sanitise alike (never for plain names)
                fstem += "_"
            stems.add(fstem)
            spec = TaskSpec(f"{stem}/{label}", stem, source, text, label, float(budget), describe,
                            pairs)
            tasks.append(Task(spec, fingerprint(text, label, describe=describe, settings=pairs),
                              fstem, dimension))
    return tuple(tasks), tuple(failures)
