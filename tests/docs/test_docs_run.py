"""Every example of README.md and docs/*.md runs as shown (the conventions: tests/docs/_markdown.py).

Each page runs in a fresh working directory that holds a link ``cases`` to the bundled case
files, so ``cases/dimer.toml`` works as it does from a checkout. ``symresp ...`` commands run
in this process (``symresp.cli.main``, stdout and stderr together, in order); commands with
pipes, redirections or other programs run in bash with ``symresp`` meaning
``python -m symresp.cli`` of this checkout.
"""

from __future__ import annotations

import contextlib
import doctest
import io
import os
import re
import shlex
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from symresp.cli import main

from ._markdown import (Block, PageError, console_commands, normalise, output_matches,
                        parse_blocks, read_blocks)

ROOT = Path(__file__).resolve().parents[2]
PAGES = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
#: Seconds a command run in bash may take.
COMMAND_TIMEOUT = 600
#: Shell operators (outside quotes) that need bash rather than a direct call of the command line.
_OPERATORS = {"|", "||", "&", "&&", ";", "<", ">", ">>", "(", ")", "2>", "2>&1"}


def _words(text: str) -> list[str]:
    """The words of a command line; unquoted shell operators are words of their own."""
    lexer = shlex.shlex(text, posix=True, punctuation_chars=True)
    lexer.whitespace_split = True
    lexer.commenters = "#"
    return list(lexer)


def _page_id(path: Path) -> str:
    return path.relative_to(ROOT).as_posix()


def _has_slow_blocks(path: Path) -> bool:
    try:
        return any(b.slow for b in read_blocks(path, name=_page_id(path)))
    except PageError:  # reported by test_page_runs_as_shown
        return False


class _Page:
    """Runs the blocks of one page in order, in one working directory and one namespace."""

    def __init__(self, path: Path, workdir: Path, *, with_slow: bool) -> None:
        self.name = _page_id(path)
        self.blocks = read_blocks(path, name=self.name)
        self.workdir = workdir
        self.with_slow = with_slow
        self.namespace: dict = {"__name__": "__docs__"}
        (workdir / "cases").symlink_to(ROOT / "cases")

    def run(self) -> int:
        ran = 0
        for block in self.blocks:
            if block.file:
                (self.workdir / block.file).write_text(block.text, encoding="utf-8")
            if block.slow and not self.with_slow:
                continue
            getattr(self, f"run_{block.label}")(block)
            ran += 1
        return ran

    def run_text(self, block: Block) -> None:
        pass

    def run_toml(self, block: Block) -> None:
        try:
            tomllib.loads(block.text)
        except tomllib.TOMLDecodeError as err:
            pytest.fail(f"{block.where}: not valid TOML: {err}")

    def run_python(self, block: Block) -> None:
        if any(line.lstrip().startswith(">>>") for line in block.text.splitlines()):
            self._run_session(block)
        else:
            code = compile(block.text, block.where, "exec")
            exec(code, self.namespace)  # the page's own example code

    def _run_session(self, block: Block) -> None:
        test = doctest.DocTestParser().get_doctest(block.text, self.namespace, block.where,
                                                   block.where, block.line)
        runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
        report: list[str] = []
        test.globs = self.namespace  # DocTest copies its globals; the page shares one namespace
        result = runner.run(test, out=report.append, clear_globs=False)
        if result.failed:
            pytest.fail(f"{block.where}: the session differs:\n" + "".join(report), pytrace=False)

    def run_console(self, block: Block) -> None:
        for command in console_commands(block):
            status, output = self._run_command(command.text)
            where = f"{block.page}:{command.line}: $ {command.text}"
            if command.expected is None and status != 0:
                pytest.fail(f"{where}\nexit status {status}:\n{output}", pytrace=False)
            if command.expected is not None and not output_matches(command.expected, output):
                pytest.fail(f"{where}\nshown:\n{normalise(command.expected)}\n\nactual (exit "
                            f"status {status}):\n{normalise(output)}", pytrace=False)

    def _run_command(self, text: str) -> tuple[int, str]:
        words = _words(text)
        target = None
        if len(words) > 2 and words[-2] == ">":
            words, target = words[:-2], words[-1]  # symresp ... > FILE: stdout to the file
        settings = {}
        while words and re.fullmatch(r"[A-Z_][A-Z0-9_]*=\S*", words[0]):
            name, _, value = words.pop(0).partition("=")  # NAME=value symresp ...
            settings[name] = value
        if words and words[0] == "symresp" and not any(w in _OPERATORS or "$" in w for w in words):
            shown, stdout = io.StringIO(), io.StringIO()
            with contextlib.redirect_stdout(stdout if target else shown), \
                    contextlib.redirect_stderr(shown), _environment(settings):
                status = main(words[1:])
            if target:
                (self.workdir / target).write_text(stdout.getvalue(), encoding="utf-8")
            return status, shown.getvalue()
        env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONUNBUFFERED="1",
                   PATH=f"{Path(sys.executable).parent}{os.pathsep}{os.environ.get('PATH', '')}")
        env.pop("SYMRESP_CASES", None)
        script = f'symresp() {{ "{sys.executable}" -m symresp.cli "$@"; }}\n{text}\n'
        done = subprocess.run(["bash", "-c", script], cwd=self.workdir, env=env, text=True,
                              stdout=subprocess.PIPE, stderr=subprocess.STDOUT,
                              timeout=COMMAND_TIMEOUT)
        return done.returncode, done.stdout


@contextlib.contextmanager
def _environment(settings: dict[str, str]):
    """Environment variables set for one command."""
    saved = {name: os.environ.get(name) for name in settings}
    os.environ.update(settings)
    try:
        yield
    finally:
        for name, value in saved.items():
            if value is None:
                os.environ.pop(name, None)
            else:
                os.environ[name] = value


@pytest.fixture
def in_workdir(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.delenv("SYMRESP_CASES", raising=False)
    before = set(sys.modules)
    yield tmp_path
    for name in set(sys.modules) - before:  # modules the page wrote and imported
        if str(getattr(sys.modules[name], "__file__", "") or "").startswith(str(tmp_path)):
            del sys.modules[name]


@pytest.mark.parametrize("path", PAGES, ids=_page_id)
def test_page_runs_as_shown(path, in_workdir):
    _Page(path, in_workdir, with_slow=False).run()


@pytest.mark.slow
@pytest.mark.parametrize("path", [p for p in PAGES if _has_slow_blocks(p)], ids=_page_id)
def test_page_runs_as_shown_with_its_slow_blocks(path, in_workdir):
    _Page(path, in_workdir, with_slow=True).run()


# ------------------------------------------------------------------ the harness itself

def test_unlabelled_and_unknown_fences_are_refused():
    with pytest.raises(PageError, match=r"p\.md:2: the block has no label"):
        parse_blocks("text\n```\nsymresp list\n```\n", "p.md")
    with pytest.raises(PageError, match="label 'sh'"):
        parse_blocks("```sh\nls\n```\n", "p.md")
    with pytest.raises(PageError, match="unknown marker 'skip'"):
        parse_blocks("<!-- docs: skip -->\n```text\nx\n```\n", "p.md")
    with pytest.raises(PageError, match="never closed"):
        parse_blocks("```text\nx\n", "p.md")


def test_markers_and_console_commands_are_read():
    page = ("<!-- docs: file a.toml -->\n<!-- docs: slow -->\n````toml\nx = 1\n```\n````\n\n"
            "```console\n$ symresp list \\\n    --paths\nline 1\n\n$ true\n```\n")
    toml_block, console = parse_blocks(page, "p.md")
    assert (toml_block.label, toml_block.file, toml_block.slow) == ("toml", "a.toml", True)
    assert toml_block.text == "x = 1\n```\n" and toml_block.line == 3
    first, second = console_commands(console)
    assert (first.line, first.text, first.expected) == (9, "symresp list  --paths", "line 1")
    assert (second.text, second.expected) == ("true", None)


def test_output_comparison_masks_time_stamps_and_honours_ellipses():
    actual = "[  12.5 s] reading x\nresult 0.125  \nrow 1\nrow 2\nlast\n\n"
    assert output_matches("[   0.0 s] reading x\nresult 0.125\n...\nlast", actual)
    assert output_matches("[   0.0 s] reading ...\nresult 0.1...\nrow 1\nrow 2\nlast", actual)
    assert not output_matches("[   0.0 s] reading x\nresult 0.126\n...\nlast", actual)
    assert not output_matches("[   0.0 s] reading x\nresult 0.125", actual)   # lines missing
    assert not output_matches("...\nrow 2\nlast\nmore", actual)
