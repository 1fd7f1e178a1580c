"""No user text reaches anything that evaluates strings (eval, exec, sympify, nsimplify,
parse_expr, ...). Checked on the package source with ast: every such call either has only
literal arguments or sits on a line that says why it is safe (``# safe: ...``), and the sites
are pinned per module, so a new one fails here until someone has looked at it.

Behaviour is tested too: text given where a number belongs is refused, and a string that
would run code if evaluated leaves no trace.
"""

from __future__ import annotations

import ast
from collections import Counter
from pathlib import Path

import pytest
import sympy as sp

import symresp as sr

PACKAGE = Path(__file__).resolve().parents[1] / "symresp"
#: Callables that evaluate text (or can be handed text): by their last name.
EVALUATORS = {"sympify", "nsimplify", "parse_expr", "S", "import_module", "literal_eval"}
#: Builtins that evaluate text, when called by their bare name.
BUILTINS = {"eval", "exec", "compile", "__import__"}
#: Reviewed call sites with non-literal arguments, per module: (count, why they are safe).
REVIEWED = {
    "emit/_numpy_module.py": (2, "exec(compile(...)) of the module source symresp generated"),
    "emit/_eigen.py": (2, "sympy objects of a derivation"),
    "emit/_plan.py": (7, "sympy objects of a derivation"),
    "emit/_inplace.py": (1, "sympy objects of a program"),
    "emit/_program.py": (4, "sympy objects of a program"),
    "emit/_latex.py": (4, "strict sympify (refuses text) of user mappings; sympy objects"),
    "emit/_levelfunctions.py": (3, "sympy objects of a derivation"),
    "emit/_magnet.py": (1, "sympy objects of a g tensor"),
    "emit/_resonance.py": (4, "nsimplify of sympy numbers computed there"),
    "response/_motion.py": (5, "sympy objects built there"),
    "emit/_pole_module.py": (6, "sympy objects of a ladder or motion derivation"),
    "emit/_multiplet_module.py": (1, "sympy objects of a derivation"),
    "spectrum/_ladder.py": (1, "sympy objects built there"),
    "response/_presentation.py": (10, "sympy objects of a derivation"),
    "response/_render.py": (1, "a sympy object or number from symresp"),
    "emit/_pictures.py": (1, "sympy objects of a derivation"),
    "spectrum/_solve.py": (1, "sympy expressions built by symresp"),
    "spectrum/_symmetry.py": (1, "nsimplify of a sympy number computed there"),
    "algebra/_matrix.py": (1, "a sympy object or number from symresp"),
    "algebra/_constructors.py": (1, "nsimplify of a solution of a sympy linear system"),
    "cases/_fit.py": (5, "sympy objects; nsimplify of the float components of a direction"),
    "cases/_magnet.py": (3, "sympy objects of the Zeeman and sample tables"),
    "__init__.py": (1, "import_module of a module named in the fixed table of lazy exports"),
}


def _callee(node: ast.Call) -> str:
    f = node.func
    if isinstance(f, ast.Name):
        return f.id
    if isinstance(f, ast.Attribute):
        return f.attr
    return ""


def _sites() -> tuple[Counter, list[str]]:
    counts: Counter = Counter()
    unexplained: list[str] = []
    for path in sorted(PACKAGE.rglob("*.py")):
        text = path.read_text()
        lines = text.splitlines()
        rel = path.relative_to(PACKAGE).as_posix()
        for node in ast.walk(ast.parse(text)):
            if not isinstance(node, ast.Call):
                continue
            bare = isinstance(node.func, ast.Name) and node.func.id in BUILTINS
            if not bare and _callee(node) not in EVALUATORS:
                continue
            args = list(node.args) + [k.value for k in node.keywords]
            if all(isinstance(a, ast.Constant) for a in args):   # literals we wrote
                continue
            counts[rel] += 1
            if "# safe:" not in lines[node.lineno - 1]:
                unexplained.append(f"{rel}:{node.lineno}: {lines[node.lineno - 1].strip()}")
    return counts, unexplained


def test_every_string_evaluating_call_is_reviewed_and_pinned():
    counts, unexplained = _sites()
    assert not unexplained, ("calls that can evaluate text need a '# safe: <why>' comment and a "
                             "review:\n" + "\n".join(unexplained))
    pinned = {k: n for k, (n, _) in REVIEWED.items()}
    new = {k: v for k, v in counts.items() if v > pinned.get(k, 0)}
    assert not new, (f"new call sites of {sorted(EVALUATORS)} with non-literal arguments: {new}; "
                     f"make sure no user text can reach them, then pin them in REVIEWED")


def test_no_module_calls_eval_or_exec_on_anything_but_generated_code():
    counts, _ = _sites()
    for path in sorted(PACKAGE.rglob("*.py")):
        for node in ast.walk(ast.parse(path.read_text())):
            if (isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
                    and node.func.id in ("eval", "exec")):
                assert path.name == "_numpy_module.py", f"{path}: {ast.dump(node)[:80]}"


MARK = "symresp_was_here"


@pytest.mark.parametrize("call", [
    lambda r: r.evaluate("time", params={"h": 1}, T=1, time_value=f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"),
    lambda r: r.evaluate("isothermal", params={"h": f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"}, T=1),
    lambda r: r.evaluate("isothermal", params={"h": 1}, T=f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"),
    lambda r: r.evaluate("frequency", params={"h": 1}, T=1, omega_value=f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"),
    lambda r: r.latex_document(substitutions={sp.Symbol("h", positive=True): f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"}),
    lambda r: r.check(f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"),
    lambda r: sr.Model(sr.spin("s", "1/2").z, sector={sr.spin("s", "1/2").z: f"__import__('builtins').setattr(__import__('builtins'), '{MARK}', 1)"}),
])
def test_code_in_text_arguments_never_runs(call):
    import builtins
    s = sr.spin("s", sp.Rational(1, 2))
    r = sr.Model(sp.Symbol("h", positive=True) * s.z).response(s.x)
    with pytest.raises(sr.InputError):
        call(r)
    assert not hasattr(builtins, MARK)
