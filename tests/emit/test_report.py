"""LaTeX documents of presented responses (symresp.emit.latex_report, derive --latex).

The document compiles with pdflatex where a TeX engine is installed; everywhere its structure
is checked with a LaTeX parser (pylatexenc): preamble, one document environment, the level
table as a longtable, formulas and where-list in align* blocks, user text escaped.
"""

from __future__ import annotations

import shutil
import subprocess

import pytest
import sympy as sp
from pylatexenc.latexwalker import (LatexCharsNode, LatexEnvironmentNode, LatexMacroNode,
                                    LatexWalker)

import symresp as sr
from symresp.cli import main
from symresp.emit import escape_text, latex_report, presentation_latex

SUBPROCESS_TIMEOUT = 120
TRICKY = 'a_b & 50% #1 {x} $y$ ~ ^ \\ end'


def _walk(nodes, depth=0):
    for n in nodes or []:
        yield n, depth
        if isinstance(n, LatexEnvironmentNode):
            yield from _walk(n.nodelist, depth + 1)


def _structure(doc: str):
    nodes, _, _ = LatexWalker(doc, tolerant_parsing=False).get_latex_nodes()
    return list(_walk(nodes))


def _zfs_document(capsys, *extra) -> str:
    assert main(["derive", "zfs_ion", "-q", *extra]) == 0
    return capsys.readouterr().out


def test_latex_document_has_preamble_tables_and_aligned_blocks(capsys):
    doc = _zfs_document(capsys, "--latex")
    items = _structure(doc)
    top = [n for n, depth in items if depth == 0]
    macros = [n.macroname for n in top if isinstance(n, LatexMacroNode)]
    assert macros[0] == "documentclass" and macros.count("usepackage") >= 2
    assert "\\usepackage{amsmath}" in doc
    envs = [n.environmentname for n, _ in items if isinstance(n, LatexEnvironmentNode)]
    assert envs.count("document") == 1
    # Level table once (shared), one transition table per response, formulas and where-lists.
    assert envs.count("longtable") == 3 and envs.count("align*") >= 4
    table = next(n for n, _ in items if isinstance(n, LatexEnvironmentNode)
                 and n.environmentname == "longtable")
    assert table.latex_verbatim().count("\\\\") >= 4          # header + three levels
    assert "R &= \\sqrt{Erh^{2} + h^{2}}" in doc                  # the where-list names R once
    assert doc.count("\\sqrt") == 1


def test_latex_body_is_the_document_without_preamble(capsys):
    body = _zfs_document(capsys, "--latex-body")
    assert "\\documentclass" not in body and "\\begin{document}" not in body
    envs = [n.environmentname for n, _ in _structure(body) if isinstance(n, LatexEnvironmentNode)]
    assert "longtable" in envs and "align*" in envs


def test_user_text_is_escaped():
    assert escape_text(TRICKY) == ("a\\_b \\& 50\\% \\#1 \\{x\\} \\$y\\$ \\textasciitilde{} "
                                   "\\textasciicircum{} \\textbackslash{} end")
    q = sr.spin("q", sp.Rational(1, 2))
    D = sp.Symbol("Delta", positive=True)
    p = sr.Model(D * q.z).response(2 * q.x).presented()
    doc = latex_report(TRICKY, [TRICKY], [(TRICKY, TRICKY, TRICKY, p)])
    items = _structure(doc)                   # parses: no stray & % $ # { } in text mode
    text = "".join(n.chars for n, _ in items if isinstance(n, LatexCharsNode))
    assert "%" not in text.replace("\\%", "")
    assert doc.count(escape_text(TRICKY)) >= 4


@pytest.mark.skipif(shutil.which("pdflatex") is None, reason="no TeX engine installed; the "
                    "structure is checked by the parser tests above")
@pytest.mark.parametrize("name", ["zfs_ion", "frustrated_ring"])
def test_latex_document_compiles(name, tmp_path, capsys):
    assert main(["derive", name, "-q", "--latex"]) == 0
    tex = tmp_path / f"{name}.tex"
    tex.write_text(capsys.readouterr().out, encoding="utf-8")
    run = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", tex.name],
                         cwd=tmp_path, capture_output=True, text=True, timeout=SUBPROCESS_TIMEOUT)
    assert run.returncode == 0, run.stdout[-2000:]
    assert (tmp_path / f"{name}.pdf").exists()
    log = (tmp_path / f"{name}.log").read_text(errors="replace")
    assert "Overfull \\hbox" not in log


def test_long_formulas_are_broken_into_rows():
    J1, J2 = sp.Symbol("J1", positive=True), sp.Symbol("J2", positive=True)
    s = [sr.spin(f"s{k}", sp.Rational(1, 2)) for k in range(4)]
    H = J1 * sum((s[k].vec @ s[(k + 1) % 4].vec for k in range(4)), sr.Operator.scalar(0)) \
        + J2 * (s[0].vec @ s[2].vec + s[1].vec @ s[3].vec)
    p = sr.Model(H).response(s[0].z - s[1].z + s[2].z - s[3].z).presented()
    body = presentation_latex(p)
    rows = [r for r in body.splitlines() if "&" in r]
    assert rows and max(len(r) for r in rows) < 400
