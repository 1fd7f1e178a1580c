"""The layer order of DEVELOPERS.md, checked on the source with ast (STYLE.md section 1).

What is checked:

* every module of the package belongs to a layer with a rank, and every import of another
  part of symresp (absolute or relative, including re-exports from a package ``__init__`` and
  the public facade's table of names) points to its own rank or lower;
* every third-party import of a layer is one the layer may use (THIRD_PARTY), and an optional
  dependency is imported only in its one module, guarded by ``except ImportError``;
* the numeric reference is a leaf: its modules import numpy, the standard library,
  ``symresp.errors`` and ``symresp._tolerances`` only, and ``import symresp.numeric`` in a
  fresh interpreter loads neither sympy nor mpmath nor flint (so the package facade must not
  load them either);
* no import sits inside a function body, except the lazy imports listed in LAZY with a reason;
* the reserved symbols of ``symresp.conventions`` (beta, omega, t, eta, T, nu) are created
  nowhere else, neither in code nor in doctest examples.
"""

from __future__ import annotations

import ast
import re
import subprocess
import sys
from pathlib import Path

import symresp
from symresp import conventions

PACKAGE = Path(__file__).resolve().parents[1] / "symresp"

#: Rank of each layer; a module may import only from its own rank or lower ones.
RANKS = {
    "conventions": 0, "errors": 0, "_public": 0, "_tolerances": 0, "_files": 0,
    "algebra": 1, "numeric": 1, "text": 2, "models": 3, "spectrum": 4, "response": 5,
    "checks": 6, "emit": 7, "cases": 8, "_api": 9, "_evaluation": 9, "_display": 9, "batch": 9,
    "cli": 10, "__main__": 11, "__init__": 11,
}

#: Third-party packages each layer may import (the standard library is always allowed).
_SYMBOLIC = {"sympy", "mpmath", "numpy"}
THIRD_PARTY = {
    "errors": set(), "_public": set(), "_files": set(), "_tolerances": set(), "conventions": {"sympy"},
    "numeric": {"numpy"},
    "algebra": {"sympy", "numpy"}, "text": {"sympy"}, "models": {"sympy"},
    "spectrum": _SYMBOLIC | {"flint"}, "response": _SYMBOLIC, "checks": _SYMBOLIC,
    "emit": _SYMBOLIC, "cases": _SYMBOLIC | {"scipy"},  # scipy: least-squares fits of data
    "_api": _SYMBOLIC, "_evaluation": _SYMBOLIC, "_display": _SYMBOLIC, "batch": set(),
    "cli": _SYMBOLIC,
    "__main__": set(), "__init__": set(),
}
#: Optional dependencies: the one module that may import each, always under ``try``.
OPTIONAL = {"matplotlib": {"emit/_plots.py"}, "dask": {"batch/_cluster.py"},
            "distributed": {"batch/_cluster.py"}}
#: Imports made inside a function on purpose, with the reason: (module, imported package).
LAZY = {
    # the runtime copied into emitted modules imports dask only when a dask array is passed,
    # so an evaluator stays numpy-only otherwise
    ("emit/_runtime.py", "dask"): "evaluators over dask arrays",
    ("emit/_plots.py", "matplotlib"): "about a second to import; only when a picture is drawn",
    ("cases/_fit.py", "scipy"): "scipy.optimize takes a second to import; only when fitting",
    ("emit/_runtime.py", "uuid"): "a fresh dask task name, only with dask arrays",
}

#: The sympy-based packages the numeric reference must not load.
SYMBOLIC_PACKAGES = ("sympy", "mpmath", "flint")


def _modules() -> list[Path]:
    return sorted(PACKAGE.rglob("*.py"))


def _layer(path: Path) -> str:
    head = path.relative_to(PACKAGE).parts[0]
    return head[:-3] if head.endswith(".py") else head


def _internal_targets(path: Path, tree: ast.AST) -> list[tuple[int, str]]:
    """(line, layer) of every import of another part of symresp."""
    out = []
    pkg_parts = path.relative_to(PACKAGE).parts[:-1]
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level == 0:
                if node.module and node.module.split(".")[0] == "symresp":
                    parts = node.module.split(".")[1:]
                    if parts:
                        out.append((node.lineno, parts[0]))
                    else:  # from symresp import X: X is a layer or a public name
                        out += [(node.lineno, _layer_of_name(a.name)) for a in node.names]
                continue
            base = list(pkg_parts[: len(pkg_parts) - (node.level - 1)])
            parts = base + (node.module.split(".") if node.module else [])
            if parts:
                out.append((node.lineno, parts[0]))
            else:  # from . import numeric (in the package root)
                out += [(node.lineno, _layer_of_name(a.name)) for a in node.names]
        elif isinstance(node, ast.Import):
            for alias in node.names:
                parts = alias.name.split(".")
                if parts[0] == "symresp":
                    out.append((node.lineno, parts[1] if len(parts) > 1 else "__init__"))
    return out


def _layer_of_name(name: str) -> str:
    """Layer of ``symresp.<name>``: a layer, or a public name of the facade."""
    if name in RANKS:
        return name
    source = symresp._SOURCES.get(name)
    return source.lstrip(".").split(".")[0] if source else "__init__"


def _third_party(tree: ast.AST) -> list[tuple[int, str, bool]]:
    """(line, top-level package, guarded by try/except ImportError) of each outside import."""
    guarded_lines = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Try) and any(
                isinstance(h.type, ast.Name) and h.type.id in ("ImportError", "ModuleNotFoundError")
                for h in node.handlers):
            guarded_lines |= {n.lineno for stmt in node.body for n in ast.walk(stmt)
                              if isinstance(n, (ast.Import, ast.ImportFrom))}
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            names = [node.module]
        else:
            continue
        for name in names:
            top = name.split(".")[0]
            if top != "symresp" and top not in sys.stdlib_module_names and top != "__future__":
                out.append((node.lineno, top, node.lineno in guarded_lines))
    return out


def test_every_module_belongs_to_a_ranked_layer():
    unknown = sorted({_layer(p) for p in _modules()} - set(RANKS))
    assert not unknown, (f"layers without a rank: {unknown}; add them to RANKS and THIRD_PARTY "
                         f"here and to the table in DEVELOPERS.md")
    assert set(THIRD_PARTY) == set(RANKS)


def test_every_import_points_down_the_layer_order():
    bad = []
    for path in _modules():
        layer = _layer(path)
        for line, target in _internal_targets(path, ast.parse(path.read_text())):
            where = f"{path.relative_to(PACKAGE)}:{line}"
            if target not in RANKS:
                bad.append(f"{where} imports symresp.{target}, which has no rank")
            elif layer == "numeric" and target not in ("numeric", "errors", "_tolerances"):
                bad.append(f"{where} numeric (a leaf) imports {target}")
            elif RANKS[target] > RANKS[layer]:
                bad.append(f"{where} {layer} (rank {RANKS[layer]}) imports {target} "
                           f"(rank {RANKS[target]})")
    assert not bad, "imports against the layer order:\n" + "\n".join(bad)


def test_the_facade_table_names_real_modules_below_it():
    for name, source in symresp._SOURCES.items():
        layer = source.lstrip(".").split(".")[0]
        assert layer in RANKS and RANKS[layer] < RANKS["__init__"], (name, source)
        assert getattr(symresp, name) is not None
    assert set(symresp._SOURCES) == set(symresp.__all__)


def test_third_party_imports_match_the_layer():
    bad = []
    for path in _modules():
        rel = path.relative_to(PACKAGE).as_posix()
        allowed = THIRD_PARTY[_layer(path)]
        for line, top, guarded in _third_party(ast.parse(path.read_text())):
            if top in OPTIONAL:
                if (rel, top) in LAZY:
                    continue
                if rel not in OPTIONAL[top] or not guarded:
                    bad.append(f"{rel}:{line} optional {top} belongs only in "
                               f"{sorted(OPTIONAL[top])}, under try/except ImportError")
            elif top not in allowed:
                bad.append(f"{rel}:{line} {_layer(path)} imports {top} (allowed: "
                           f"{sorted(allowed) or 'the standard library only'})")
    assert not bad, "third-party imports outside their layer:\n" + "\n".join(bad)


def test_importing_the_numeric_reference_loads_no_symbolic_package():
    code = ("import sys, symresp.numeric\n"
            f"print(' '.join(m for m in {SYMBOLIC_PACKAGES!r} if m in sys.modules))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120, cwd=PACKAGE.parent)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "", f"import symresp.numeric loaded: {done.stdout.strip()}"


def test_no_import_inside_function_bodies():
    bad = []
    for path in _modules():
        tree = ast.parse(path.read_text())
        for fn in ast.walk(tree):
            if isinstance(fn, (ast.FunctionDef, ast.AsyncFunctionDef)):
                for node in ast.walk(fn):
                    if isinstance(node, ast.Import):
                        names = [a.name for a in node.names]
                    elif isinstance(node, ast.ImportFrom):
                        names = [node.module or ""]
                    else:
                        continue
                    rel = path.relative_to(PACKAGE).as_posix()
                    if not all((rel, n.split(".")[0]) in LAZY for n in names):
                        bad.append(f"{rel}:{node.lineno}")
    assert not bad, "imports inside function bodies (move them to module top):\n" + "\n".join(bad)


#: The reserved symbols, by their sympy name (``T`` and ``t`` both).
RESERVED = sorted({str(getattr(conventions, n)) for n in conventions.__all__
                   if isinstance(getattr(conventions, n), conventions.sp.Symbol)})
_CONSTRUCTORS = {"Symbol", "Dummy", "symbols", "var"}
_DOCTEST_SYMBOL = re.compile(r"(Symbol|Dummy|symbols|var)\(\s*[\"']([^\"']*)[\"']")


def _called_name(node: ast.Call) -> str:
    f = node.func
    return f.attr if isinstance(f, ast.Attribute) else f.id if isinstance(f, ast.Name) else ""


def test_reserved_symbols_are_created_only_in_conventions():
    assert RESERVED == ["T", "beta", "eta", "nu", "omega", "t"]
    bad = []
    for path in _modules():
        if path.name == "conventions.py":
            continue
        text = path.read_text()
        for node in ast.walk(ast.parse(text)):
            if (isinstance(node, ast.Call) and _called_name(node) in _CONSTRUCTORS and node.args
                    and isinstance(node.args[0], ast.Constant)
                    and isinstance(node.args[0].value, str)):
                names = re.split(r"[\s,]+", node.args[0].value.strip())
                bad += [f"{path.relative_to(PACKAGE)}:{node.lineno} {n}" for n in names
                        if n in RESERVED]
        for i, line in enumerate(text.splitlines(), 1):  # doctest examples are text
            if ">>>" in line or "..." in line:
                for _, names in _DOCTEST_SYMBOL.findall(line):
                    bad += [f"{path.relative_to(PACKAGE)}:{i} {n} (doctest)"
                            for n in re.split(r"[\s,]+", names.strip()) if n in RESERVED]
    assert not bad, ("reserved symbols built outside conventions.py (import them from "
                     "symresp.conventions):\n" + "\n".join(bad))
