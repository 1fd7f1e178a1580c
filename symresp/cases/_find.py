"""Finding case files: paths, bundled cases and the ``SYMRESP_CASES`` search path (layer: cases).

Owns :func:`case_directories`, :func:`bundled_cases`, :func:`find_case` and
:func:`case_summary`. Imports the standard library, :mod:`symresp.errors`, :mod:`symresp._files` and
:mod:`._read` (limits).

Search order for a bare name such as ``dimer``: each directory of the environment variable
``SYMRESP_CASES`` (separated by ``os.pathsep``), then the ``cases/`` directory of the source
tree, then ``symresp/cases/data/`` inside the installed package (when it exists). The
variable is read when a search happens; nothing is cached.
"""

from __future__ import annotations

import difflib
import os
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from .._files import read_text_file
from ..errors import InputError
from ._read import MAX_CASE_BYTES, MAX_CASE_DEPTH, nesting_fault

__all__ = ["case_directories", "bundled_cases", "find_case", "case_summary", "CaseSummary",
           "ENV_VARIABLE"]

#: Environment variable with extra directories of case files.
ENV_VARIABLE = "SYMRESP_CASES"

_SOURCE_TREE_CASES = Path(__file__).resolve().parents[2] / "cases"
_PACKAGE_CASES = Path(__file__).resolve().parent / "data"


@dataclass(frozen=True, slots=True)
class CaseSummary:
    """Name, path and one-line description of a case file (read without building the model)."""

    name: str
    path: Path
    description: str


def case_directories(environ: Mapping[str, str] | None = None) -> tuple[Path, ...]:
    """Directories searched for case names, in order (existing ones only).

    Examples
    --------
    >>> from symresp.cases import case_directories
    >>> case_directories({"SYMRESP_CASES": ""})[-1].name in ("cases", "data")
    True
    """
    env = os.environ if environ is None else environ
    dirs: list[Path] = [Path(p) for p in env.get(ENV_VARIABLE, "").split(os.pathsep) if p.strip()]
    dirs += [_SOURCE_TREE_CASES, _PACKAGE_CASES]
    out: list[Path] = []
    for d in dirs:
        if d.is_dir() and d not in out:
            out.append(d)
    return tuple(out)


def bundled_cases(environ: Mapping[str, str] | None = None) -> tuple[Path, ...]:
    """Every ``*.toml`` case reachable by name; an earlier directory hides a later namesake.

    Examples
    --------
    >>> from symresp.cases import bundled_cases
    >>> "dimer" in [p.stem for p in bundled_cases()]
    True
    """
    seen: dict[str, Path] = {}
    for d in case_directories(environ):
        for p in sorted(d.glob("*.toml")):
            seen.setdefault(p.stem, p)
    return tuple(sorted(seen.values(), key=lambda p: p.stem))


def find_case(name_or_path: str | os.PathLike, environ: Mapping[str, str] | None = None) -> Path:
    """Resolve a case argument: an existing file, or the name of a case on the search path.

    Raises
    ------
    InputError
        If neither exists; the message lists the nearest case names.

    Examples
    --------
    >>> from symresp.cases import find_case
    >>> find_case("dimer").name
    'dimer.toml'
    """
    p = Path(name_or_path)
    if p.is_file():
        return p
    text = str(name_or_path)
    if p.suffix == "" and os.sep not in text and "/" not in text:
        for d in case_directories(environ):
            candidate = d / f"{text}.toml"
            if candidate.is_file():
                return candidate
    names = [c.stem for c in bundled_cases(environ)]
    close = difflib.get_close_matches(p.stem, names, n=1, cutoff=0.5)
    hint = f" (did you mean '{close[0]}'?)" if close else ""
    if p.exists():
        raise InputError(f"{text}: is not a file")
    raise InputError(f"{text}: no such case file or bundled case{hint}; bundled cases: "
                     f"{', '.join(names) or 'none found'} (more directories can be listed in "
                     f"{ENV_VARIABLE})")


def case_summary(path: Path) -> CaseSummary:
    """Name and description from the ``[model]`` table, without building the model.

    Examples
    --------
    >>> from symresp.cases import case_summary, find_case
    >>> case_summary(find_case("dimer")).name
    'dimer'
    """
    try:
        text = read_text_file(path, limit=MAX_CASE_BYTES, what="case file")
        deep = nesting_fault(text)
        if deep is not None:
            raise ValueError(f"nested more than {MAX_CASE_DEPTH} levels deep")
        data = tomllib.loads(text)
        model = data.get("model", {})
        name = model.get("name", path.stem) if isinstance(model, dict) else path.stem
        description = model.get("description", "") if isinstance(model, dict) else ""
        if not isinstance(name, str) or not isinstance(description, str):
            raise ValueError("name and description must be strings")
    except (OSError, UnicodeDecodeError, ValueError, RecursionError, tomllib.TOMLDecodeError) as err:
        return CaseSummary(path.stem, path, f"(unreadable: {err})")
    return CaseSummary(name, path, " ".join(description.split()))
