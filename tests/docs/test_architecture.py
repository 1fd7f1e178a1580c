"""docs/architecture.md names only packages, files and entry points that exist, and names
every package of symresp, so the page cannot drift from the code."""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

import symresp

ROOT = Path(__file__).resolve().parents[2]
PAGE = ROOT / "docs" / "architecture.md"
PACKAGE = ROOT / "symresp"

#: Top-level parts of symresp: the packages and the single-file modules.
PARTS = sorted(p.name for p in PACKAGE.iterdir() if p.is_dir() and (p / "__init__.py").exists())
MODULES = sorted(p.stem for p in PACKAGE.glob("*.py") if p.stem != "__init__")

#: ``package.name`` or ``package.Name.attribute`` where package is a part of symresp.
_DOTTED = re.compile(r"(?<![\w./])(?:symresp\.)?(" + "|".join(map(re.escape, PARTS + MODULES))
                     + r")((?:\.[A-Za-z_]\w*)*)")
#: A file of the package, as the page writes it.
_FILE = re.compile(r"symresp/[\w/]+\.py")


def _text() -> str:
    return PAGE.read_text(encoding="utf-8")


def _names(text: str) -> list[tuple[str, tuple[str, ...]]]:
    """(part, attribute path) of every dotted name of the page: ``symresp.part...`` or
    ``part.name...`` (a bare word such as "text" or "response" in prose is not a name)."""
    out = []
    for m in _DOTTED.finditer(text):
        attrs = tuple(a for a in m.group(2).split(".") if a)
        if attrs or m.group(0).startswith("symresp."):
            out.append((m.group(1), attrs))
    return out


def _resolve(part: str, attrs: tuple[str, ...]) -> object:
    obj = importlib.import_module(f"symresp.{part}")
    for i, a in enumerate(attrs):
        if hasattr(obj, a):
            obj = getattr(obj, a)
            continue
        try:  # a submodule written out in full
            obj = importlib.import_module(f"symresp.{part}." + ".".join(attrs[:i + 1]))
        except ImportError:
            raise AttributeError(f"symresp.{part}.{'.'.join(attrs[:i + 1])}") from None
    return obj


def test_every_name_on_the_page_exists():
    text = _text()
    names = _names(text)
    assert len(names) > 40, "the page should name the entry points of every box"
    missing = []
    for part, attrs in names:
        try:
            _resolve(part, attrs)
        except (AttributeError, ImportError) as err:
            missing.append(f"{part}.{'.'.join(attrs)} ({err})")
    assert not missing, "docs/architecture.md names what does not exist:\n" + "\n".join(missing)


def test_every_file_on_the_page_exists():
    files = _FILE.findall(_text())
    assert files, "the page names the facade's files"
    missing = [f for f in files if not (ROOT / f).is_file()]
    assert not missing, f"docs/architecture.md names files that do not exist: {missing}"


def test_every_part_of_the_package_is_on_the_page():
    text = _text()
    named = {p for p, _ in _names(text)} | {Path(f).stem for f in _FILE.findall(text)}
    absent = [p for p in PARTS + MODULES if p not in named and p not in ("_public", "_files",
                                                                         "_tolerances", "__main__")]
    assert not absent, (f"docs/architecture.md does not mention {absent}; add each new layer to "
                        f"the picture or to 'Around the path'")


def test_the_public_entry_points_of_the_rank_table_exist():
    rows = [line for line in _text().splitlines() if re.match(r"\| \d+ \|", line)]
    assert len(rows) >= 12
    for row in rows:
        entry = row.rstrip(" |").rsplit("|", 1)[1]
        for name in re.findall(r"`([\w.]+)`", entry):
            if "." not in name:  # a public name of the facade
                assert name in symresp.__all__, f"{name} is not a public name of symresp"


@pytest.mark.parametrize("bogus", ["response.derive_everything", "spectrum.Nothing",
                                   "symresp/response/_nowhere.py"])
def test_a_name_that_does_not_exist_is_caught(bogus):
    """The checks above can fail: a made-up name or file is refused."""
    if bogus.endswith(".py"):
        assert not (ROOT / _FILE.findall(bogus)[0]).is_file()
    else:
        (part, attrs), = _names(bogus)
        with pytest.raises(AttributeError):
            _resolve(part, attrs)
