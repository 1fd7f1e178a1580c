"""Output files are written safely, and `python -m symresp` runs the command line."""

from __future__ import annotations

import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest

from symresp._files import read_text_file, write_file, write_files
from symresp.cli import main
from symresp.errors import InputError


def test_an_existing_file_is_replaced_only_with_force(tmp_path):
    target = tmp_path / "out.py"
    write_file(target, "one")
    with pytest.raises(InputError, match="exists; add --force"):
        write_file(target, "two")
    assert target.read_text() == "one"
    write_file(target, "two", force=True)
    assert target.read_text() == "two"


def test_an_input_is_never_written_over(tmp_path):
    case = tmp_path / "case.toml"
    case.write_text("keep")
    with pytest.raises(InputError, match="input of this command"):
        write_file(case, "x", force=True, inputs=[case])
    link = tmp_path / "link.toml"
    link.symlink_to(case)
    with pytest.raises(InputError, match="input of this command"):
        write_file(link, "x", force=True, inputs=[case])
    assert case.read_text() == "keep"


def test_a_failed_write_leaves_neither_a_partial_file_nor_a_temporary_one(tmp_path, monkeypatch):
    target = tmp_path / "module.py"
    target.write_text("old contents")

    def full_disk(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
    monkeypatch.setattr(os, "fsync", full_disk)
    with pytest.raises(InputError, match="No space left on device.*nothing was written"):
        write_file(target, "new contents " * 1000, force=True)
    assert target.read_text() == "old contents"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["module.py"]


def test_a_missing_directory_is_a_clear_error(tmp_path):
    with pytest.raises(InputError, match="does not exist; create it"):
        write_file(tmp_path / "no" / "such" / "x.py", "x")


def test_all_targets_are_checked_before_the_first_is_written(tmp_path):
    (tmp_path / "b.png").write_bytes(b"old")
    with pytest.raises(InputError, match="b.png: the file exists"):
        write_files([(tmp_path / "a.png", b"1"), (tmp_path / "b.png", b"2")])
    assert not (tmp_path / "a.png").exists()


def test_new_files_get_the_usual_permissions(tmp_path):
    mask = os.umask(0o022)
    try:
        path = write_file(tmp_path / "x.py", "x")
    finally:
        os.umask(mask)
    assert path.stat().st_mode & 0o777 == 0o644


@pytest.mark.parametrize("target", ["/dev/zero", "/dev/null"])
def test_devices_are_not_read(target):
    with pytest.raises(InputError, match="not a regular file"):
        read_text_file(target, limit=10, what="--formula-file")


def test_emit_refuses_to_overwrite_and_keeps_the_file(tmp_path, capsys):
    out = tmp_path / "two.py"
    assert main(["emit", "two_level", "-r", "dipole", "--out", str(out), "-q"]) == 0
    first = out.read_text()
    out.write_text("# my edits\n")
    assert main(["emit", "two_level", "-r", "dipole", "--out", str(out), "-q"]) == 2
    assert "add --force" in capsys.readouterr().err
    assert out.read_text() == "# my edits\n"
    assert main(["emit", "two_level", "-r", "dipole", "--out", str(out), "--force", "-q"]) == 0
    assert out.read_text() == first


def test_python_dash_m_symresp_runs_the_command_line():
    env = dict(os.environ)
    env["PYTHONPATH"] = str(Path(__file__).resolve().parents[1]) + os.pathsep + env.get("PYTHONPATH", "")
    done = subprocess.run([sys.executable, "-m", "symresp", "list"], capture_output=True, text=True,
                          timeout=120, env=env)
    assert done.returncode == 0, done.stderr
    assert "dimer" in done.stdout
    bad = subprocess.run([sys.executable, "-m", "symresp", "derive", "no-such-case", "-q"],
                         capture_output=True, text=True, timeout=120, env=env)
    assert bad.returncode == 2 and "no such case file" in bad.stderr
