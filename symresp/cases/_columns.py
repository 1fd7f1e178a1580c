"""Two-column tables of measured points for the overlay of pictures (layer: cases).

Owns :func:`read_columns`. Imports numpy and :mod:`symresp.errors`. The file holds two numbers
per line (temperature, value), separated by white space or a comma; empty lines, lines that
start with ``#`` and a first line of column names are skipped.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np

from .._files import read_text_file
from ..errors import InputError

__all__ = ["read_columns", "MAX_COLUMN_BYTES"]

#: Largest file accepted.
MAX_COLUMN_BYTES = 20_000_000


def read_columns(path: str | Path) -> tuple[np.ndarray, np.ndarray]:
    """(x, y) arrays of a two-column file of numbers.

    Raises
    ------
    InputError
        Naming the file and line: missing, not a regular file, too large, not UTF-8, a line
        without exactly two numbers.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from symresp.cases import read_columns
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "chi.txt"
    >>> _ = p.write_text("# T chi\\nT, chi\\n2, 0.5\\n4 0.25\\n")
    >>> [a.tolist() for a in read_columns(p)]
    [[2.0, 4.0], [0.5, 0.25]]
    """
    p = Path(path)
    text = read_text_file(p, limit=MAX_COLUMN_BYTES, what="the data file")
    xs: list[float] = []
    ys: list[float] = []
    first = True
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [c for c in re.split(r"[,\s]+", line) if c]
        try:
            values = [float(c) for c in cells]
        except ValueError:
            if first:                               # a header line of column names
                first = False
                continue
            raise InputError(f"{p}:{lineno}: {line!r} is not two numbers") from None
        first = False
        if len(values) != 2 or not all(math.isfinite(v) for v in values):
            raise InputError(f"{p}:{lineno}: expected two finite numbers (x, y), got {line!r}")
        xs.append(values[0])
        ys.append(values[1])
    if not xs:
        raise InputError(f"{p}: no data lines (two numbers per line: temperature and value)")
    return np.array(xs), np.array(ys)
