"""Writing output files safely (layer: bottom; imports the standard library and errors only).

Owns :func:`read_text_file` (every text file the commands read: case files, formula files)
and :func:`write_files`, used by every command that writes files (``emit``, ``plot``, and
those to come). Reading: regular files only (a pipe or a device such as ``/dev/zero`` is
refused before any byte is read), at most a stated number of bytes, UTF-8. Writing:

* an existing file is never replaced unless the caller says so (``--force``);
* an input of the command (the case file, a formula file) is never written over, even with
  ``--force``;
* only regular files are replaced: a directory, a device or a pipe at the target is an error;
* every file is written to a temporary file in the target directory and renamed over the
  target (``os.replace``, atomic on POSIX), so a full disk, a missing directory or an
  interrupted run leaves either the old file or none, never a truncated one;
* when several files are written together, all targets are checked before the first is
  written.

Failures raise :class:`~symresp.errors.InputError` naming the option, the file and the fix.
"""

from __future__ import annotations

import os
import stat
import tempfile
from collections.abc import Iterable, Sequence
from pathlib import Path

from .errors import InputError

__all__ = ["write_files", "write_file", "replace_file", "read_text_file", "read_text_stream"]


def _same(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _check_target(path: Path, *, force: bool, inputs: Sequence[Path], option: str) -> None:
    for src in inputs:
        if _same(path, src) or path.resolve() == src.resolve():
            raise InputError(f"{option} {path}: that is an input of this command ({src}); "
                             f"choose another output file")
    try:
        st = path.lstat()
    except FileNotFoundError:
        st = None
    except OSError as err:
        raise InputError(f"{option} {path}: cannot inspect the target ({err.strerror or err})") from None
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise InputError(f"{option} {path}: is a directory; give a file name")
        if not (stat.S_ISREG(st.st_mode) or stat.S_ISLNK(st.st_mode)):
            raise InputError(f"{option} {path}: exists and is not a regular file (a device or a "
                             f"pipe); give the name of a regular file")
        if not force:
            raise InputError(f"{option} {path}: the file exists; add --force to overwrite it, "
                             f"or choose another name")
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(f"{option} {path}: the directory {parent} does not exist; create it "
                         f"first")
    if not os.access(parent, os.W_OK):
        raise InputError(f"{option} {path}: the directory {parent} is not writable")


def replace_file(path: Path, data: bytes, *, option: str = "--out",
                 temp_prefix: str | None = None) -> None:
    """Put ``data`` at ``path`` atomically, with no checks of the target (callers check first).

    The data go to a temporary file in the target directory (named ``temp_prefix`` + random,
    default ``.NAME.``), flushed to disk and renamed over ``path``; on any failure the temporary
    file is removed, so ``path`` is either the old file or the complete new one. ``OSError``
    becomes :class:`~symresp.errors.InputError` naming ``option`` and the file.
    """
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    target = path.resolve() if path.is_symlink() else path   # replace the file a link points to
    try:
        mode = stat.S_IMODE(target.stat().st_mode)
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        mode = 0o666 & ~mask
    fd, tmp = tempfile.mkstemp(dir=target.parent if target is not path else parent,
                               prefix=temp_prefix or f".{path.name}.", suffix=".part")
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException as err:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(err, OSError):
            raise InputError(f"{option} {path}: cannot write the file ({err.strerror or err}); "
                             f"nothing was written") from None
        raise


def write_files(items: Iterable[tuple[str | os.PathLike, str | bytes]], *, force: bool = False,
                inputs: Iterable[str | os.PathLike] = (), option: str = "--out") -> list[Path]:
    """Write several files atomically after checking every target first (see the module).

    Parameters
    ----------
    items : iterable of (path, data)
        Text is written as UTF-8.
    force : bool
        Replace existing regular files (never inputs).
    inputs : iterable of paths
        Files the command read; they are never written over.
    option : str
        The option that named the target, for messages (e.g. ``"--out"``).

    Returns
    -------
    list of Path
        The files written, in order.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from symresp._files import write_files
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> [p.name for p in write_files([(d / "a.txt", "one")])]
    ['a.txt']
    >>> write_files([(d / "a.txt", "two")])  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    symresp.errors.InputError: --out ...a.txt: the file exists; add --force to overwrite it, or choose another name
    >>> (d / "a.txt").read_text(), [p.name for p in write_files([(d / "a.txt", "two")], force=True)]
    ('one', ['a.txt'])
    """
    pending = [(Path(p), d.encode("utf-8") if isinstance(d, str) else bytes(d)) for p, d in items]
    srcs = [Path(i) for i in inputs]
    seen: set[Path] = set()
    for path, _ in pending:
        if path in seen:
            raise InputError(f"{option} {path}: the same file is written twice")
        seen.add(path)
        _check_target(path, force=force, inputs=srcs, option=option)
    for path, data in pending:
        replace_file(path, data, option=option)
    return [p for p, _ in pending]


def write_file(path: str | os.PathLike, data: str | bytes, *, force: bool = False,
               inputs: Iterable[str | os.PathLike] = (), option: str = "--out") -> Path:
    """Write one file atomically (see :func:`write_files`)."""
    return write_files([(path, data)], force=force, inputs=inputs, option=option)[0]


def read_text_file(path: str | os.PathLike, *, limit: int, what: str) -> str:
    """The UTF-8 text of a regular file of at most ``limit`` bytes.

    ``what`` names the file in messages (``"the case file"``, ``"--formula-file"``). A pipe, a
    device or a directory is refused before reading (opening does not block on a pipe).

    Examples
    --------
    >>> from symresp._files import read_text_file
    >>> read_text_file("/dev/zero", limit=100, what="--formula-file")
    Traceback (most recent call last):
    ...
    symresp.errors.InputError: --formula-file /dev/zero: not a regular file (a device, a pipe or a socket); give the path of a text file
    """
    p = Path(path)
    try:
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise InputError(f"{what} {p}: no such file") from None
    except IsADirectoryError:
        raise InputError(f"{what} {p}: is a directory, not a file") from None
    except OSError as err:
        raise InputError(f"{what} {p}: cannot open the file ({err.strerror or err})") from None
    st = os.fstat(fd)
    if not stat.S_ISREG(st.st_mode):
        os.close(fd)
        if stat.S_ISDIR(st.st_mode):
            raise InputError(f"{what} {p}: is a directory, not a file")
        raise InputError(f"{what} {p}: not a regular file (a device, a pipe or a socket); "
                         f"give the path of a text file")
    with os.fdopen(fd, "rb") as f:
        if st.st_size > limit:
            raise InputError(f"{what} {p}: the file has {st.st_size} bytes, more than the limit "
                             f"of {limit} (see docs/limits.md)")
        try:
            data = f.read(limit + 1)
        except OSError as err:
            raise InputError(f"{what} {p}: cannot read the file ({err.strerror or err})") from None
    return _decode(data, limit, f"{what} {p}")


def read_text_stream(stream, *, limit: int, what: str) -> str:
    """At most ``limit`` bytes of UTF-8 text from a binary stream (standard input)."""
    data = stream.read(limit + 1)
    return _decode(data, limit, what)


def _decode(data: bytes, limit: int, where: str) -> str:
    if len(data) > limit:
        raise InputError(f"{where}: more than the limit of {limit} bytes (see docs/limits.md)")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise InputError(f"{where}: not UTF-8 text ({err.reason} at byte {err.start})") from None
