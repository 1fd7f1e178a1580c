"""User text that reaches LaTeX is escaped: no character of a name or description can start a
command, end a comment early or break the aligned environment."""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr
from symresp.emit import latex_comment, latex_document, latex_text

SPECIAL = "\\{}$&#_%~^"


@pytest.mark.parametrize("text", ["plain", "50% A_1 & B#2 $x$ {y} ~z^2 \\input{evil}",
                                  "line\nbreak\r\n\\end{aligned}", "tab\tand\x07bell", ""])
def test_escaped_text_has_no_active_character(text):
    out = latex_text(text)
    # Remove the escapes we emit, then no special character may remain.
    rest = out
    for esc in (r"\textbackslash{}", r"\textasciitilde{}", r"\textasciicircum{}"):
        rest = rest.replace(esc, "")
    for ch in "{}$&#_%":
        rest = rest.replace("\\" + ch, "")
    assert not any(ch in rest for ch in SPECIAL), out
    assert "\n" not in out and "\r" not in out


def test_every_special_character_is_kept_visible():
    assert latex_text("a_b") == r"a\_b"
    assert latex_text("100%") == r"100\%"
    assert latex_text("R&D") == r"R\&D"
    assert latex_text("\\") == r"\textbackslash{}"


def test_comment_text_stays_on_one_line():
    assert latex_comment("name\n\\documentclass{article}") == "name \\documentclass{article}"
    assert "\n" not in latex_comment("a\rb\nc")


def test_a_model_name_with_a_line_break_cannot_escape_the_comment():
    s = sr.spin("s", sp.Rational(1, 2))
    r = sr.Model(0 * s.z, name="evil\n\\input{/etc/passwd}").response(s.z)
    doc = latex_document(r.derivation)
    for line in doc.splitlines():
        assert "input" not in line or line.startswith("%"), line


@pytest.mark.parametrize("bad", [None, 3, b"bytes"])
def test_escaping_refuses_non_text(bad):
    with pytest.raises(sr.InputError, match="expected a string"):
        latex_text(bad)
