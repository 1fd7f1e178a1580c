"""Imports point down the layer order only (STYLE.md section 1); checked with ast."""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "symresp"

#: Rank of each layer; a module may import only from its own rank or lower ones.
RANKS = {
    "conventions": 0, "errors": 0, "_public": 0,
    "algebra": 1, "text": 2, "models": 3, "spectrum": 4, "response": 5,
    "checks": 6, "emit": 7, "cases": 8, "_api": 9, "cli": 10, "__init__": 11,
    "numeric": 1,
}
#: The numeric reference is a leaf: numpy, errors and conventions only.
NUMERIC_ALLOWED = {"errors", "conventions"}


def _layer(path: Path) -> str:
    rel = path.relative_to(PACKAGE)
    head = rel.parts[0]
    return head[:-3] if head.endswith(".py") else head


def _imported_layers(path: Path) -> list[tuple[int, str]]:
    tree = ast.parse(path.read_text())
    out = []
    pkg_parts = path.relative_to(PACKAGE).parts[:-1]
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level == 0:
                if node.module and node.module.split(".")[0] == "symresp":
                    parts = node.module.split(".")[1:]
                    target = parts[0] if parts else "__init__"
                    out.append((node.lineno, target))
                continue
            base = list(pkg_parts[: len(pkg_parts) - (node.level - 1)])
            parts = base + (node.module.split(".") if node.module else [])
            if parts:
                out.append((node.lineno, parts[0]))
            else:
                for alias in node.names:
                    out.append((node.lineno, alias.name))
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.split(".")[0] == "symresp":
                    parts = alias.name.split(".")[1:]
                    out.append((node.lineno, parts[0] if parts else "__init__"))
    return out


def test_every_import_points_down_the_layer_order():
    bad = []
    for path in PACKAGE.rglob("*.py"):
        layer = _layer(path)
        rank = RANKS[layer]
        for line, target in _imported_layers(path):
            if target not in RANKS:
                continue
            if layer == "numeric" and target not in NUMERIC_ALLOWED | {"numeric"}:
                bad.append(f"{path.relative_to(PACKAGE)}:{line} numeric imports {target}")
            elif RANKS[target] > rank:
                bad.append(f"{path.relative_to(PACKAGE)}:{line} {layer} imports {target}")
    assert not bad, "upward imports:\n" + "\n".join(bad)


def test_no_import_inside_function_bodies():
    bad = []
    for path in PACKAGE.rglob("*.py"):
        tree = ast.parse(path.read_text())
        for fn in ast.walk(tree):
            if isinstance(fn, (ast.FunctionDef, ast.AsyncFunctionDef)):
                for node in ast.walk(fn):
                    if isinstance(node, (ast.Import, ast.ImportFrom)) and not (
                            isinstance(node, ast.ImportFrom) and node.module == "__future__"):
                        bad.append(f"{path.relative_to(PACKAGE)}:{node.lineno}")
    assert not bad, "imports inside function bodies (move them to module top):\n" + "\n".join(bad)


def test_reserved_symbols_are_created_only_in_conventions():
    bad = []
    for path in PACKAGE.rglob("*.py"):
        if path.name == "conventions.py":
            continue
        for i, line in enumerate(path.read_text().splitlines(), 1):
            for name in ("omega", "beta", "eta"):
                if f'Symbol("{name}"' in line or f"Symbol('{name}'" in line:
                    bad.append(f"{path.relative_to(PACKAGE)}:{i}")
    assert not bad, "reserved symbols built outside conventions.py:\n" + "\n".join(bad)
