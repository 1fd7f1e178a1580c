r"""Measured data tables for fits (layer: cases).

Owns :class:`DataTable`, :func:`read_data` and :func:`parse_data`. Imports numpy and
:mod:`symresp.errors`.

A data file is a CSV (commas) or whitespace-separated table of numbers. Lines that are empty
or start with ``#`` are skipped; the first other line is the header naming the columns:

* ``T``: temperature, in the case's ``temperature_unit`` (kelvin unless stated);
* exactly one measured quantity: ``chi`` (molar susceptibility, cm^3/mol or m^3/mol as the
  case's ``[sample] system`` says), ``chiT`` (cm^3 K/mol or m^3 K/mol, T in kelvin) or ``M``
  (magnetisation per formula unit in Bohr magnetons);
* ``B``: the field in tesla (needed for ``M`` unless the case gives a field), optional;
* ``sigma``: the standard error of each measured value, optional.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["DataTable", "read_data", "parse_data", "MEASURED", "COLUMNS", "MAX_DATA_BYTES",
           "MAX_ROWS"]

#: Measured quantities a data file may hold (one per file).
MEASURED = ("chi", "chiT", "M")
#: Every column name a data file may use.
COLUMNS = ("T", "B", "sigma") + MEASURED
#: Largest data file accepted (bytes) and largest number of rows.
MAX_DATA_BYTES = 20_000_000
MAX_ROWS = 200_000


@dataclass(frozen=True, slots=True, eq=False)
class DataTable:
    """A checked data table (arrays are read-only).

    Attributes
    ----------
    source : str
    quantity : {"chi", "chiT", "M"}
    T : ndarray
        Temperatures in the case's temperature unit.
    values : ndarray
        The measured quantity.
    B : ndarray or None
        Fields in tesla, when the file has a ``B`` column.
    sigma : ndarray or None
        Standard errors, when the file has a ``sigma`` column.
    """

    source: str
    quantity: str
    T: np.ndarray
    values: np.ndarray
    B: np.ndarray | None
    sigma: np.ndarray | None

    def __len__(self) -> int:
        return int(self.T.size)


def _frozen(a: list[float]) -> np.ndarray:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


def read_data(path: str | Path) -> DataTable:
    """Read and check a data file (see the module docstring for the format).

    Raises
    ------
    InputError
        Naming the file and line: unreadable file, unknown or missing columns, a cell that is
        not a finite number, T or sigma not positive, B negative.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from symresp.cases import read_data
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "chiT.csv"
    >>> _ = p.write_text("# invented\\nT, chiT\\n2, 0.02\\n300, 0.80\\n")
    >>> d = read_data(p)
    >>> d.quantity, d.T.tolist(), d.sigma is None
    ('chiT', [2.0, 300.0], True)
    """
    p = Path(path)
    try:
        size = p.stat().st_size
        if size > MAX_DATA_BYTES:
            raise InputError(f"{p}: the data file has {size} bytes, more than the limit of "
                             f"{MAX_DATA_BYTES}")
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{p}: no such data file") from None
    except IsADirectoryError:
        raise InputError(f"{p}: is a directory, not a data file") from None
    except UnicodeDecodeError as err:
        raise InputError(f"{p}: the data file is not UTF-8 text ({err.reason} at byte "
                         f"{err.start})") from None
    except OSError as err:
        raise InputError(f"{p}: cannot read the data file ({err.strerror or err})") from None
    return parse_data(text, source=str(p))


def _split(line: str) -> list[str]:
    if "," in line:
        return [c.strip() for c in line.split(",")]
    return line.split()


def parse_data(text: str, *, source: str = "<data>") -> DataTable:
    """Check the text of a data table and build the :class:`DataTable` (see :func:`read_data`).

    Examples
    --------
    >>> from symresp.cases import parse_data
    >>> parse_data("T B M sigma\\n2 1 0.5 0.01\\n2 2 0.8 0.01\\n").B.tolist()
    [1.0, 2.0]
    """
    if not isinstance(text, str):
        raise InputError(f"{source}: expected the text of a data table, got {type(text).__name__}")
    header: list[str] | None = None
    header_line = 0
    rows: list[list[float]] = []
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = _split(line)
        if header is None:
            header, header_line = cells, lineno
            _check_header(header, source, lineno)
            continue
        if len(cells) != len(header):
            raise InputError(f"{source}:{lineno}: {len(cells)} value(s) where the header "
                             f"(line {header_line}) names {len(header)} columns "
                             f"({', '.join(header)})\n    {raw.strip()}")
        row = []
        for name, cell in zip(header, cells):
            try:
                v = float(cell)
            except ValueError:
                raise InputError(f"{source}:{lineno}: column {name}: {cell!r} is not a number"
                                 f"\n    {raw.strip()}") from None
            if not math.isfinite(v):
                raise InputError(f"{source}:{lineno}: column {name}: {cell!r} is not a finite "
                                 f"number\n    {raw.strip()}")
            if name == "T" and v <= 0:
                raise InputError(f"{source}:{lineno}: column T: temperature {cell} must be > 0"
                                 f"\n    {raw.strip()}")
            if name == "sigma" and v <= 0:
                raise InputError(f"{source}:{lineno}: column sigma: {cell} must be > 0 (a "
                                 f"standard error)\n    {raw.strip()}")
            if name == "B" and v < 0:
                raise InputError(f"{source}:{lineno}: column B: field {cell} must be >= 0 (tesla, "
                                 f"along the field direction)\n    {raw.strip()}")
            row.append(v)
        rows.append(row)
        if len(rows) > MAX_ROWS:
            raise InputError(f"{source}: more than {MAX_ROWS} rows")
    if header is None:
        raise InputError(f"{source}: no header line: the first line that is not empty or a "
                         f"comment names the columns, e.g. 'T, chiT' or 'T B M sigma'")
    if not rows:
        raise InputError(f"{source}: the table has a header (line {header_line}) but no rows")
    cols = {name: [r[i] for r in rows] for i, name in enumerate(header)}
    quantity = next(q for q in MEASURED if q in cols)
    return DataTable(source, quantity, _frozen(cols["T"]), _frozen(cols[quantity]),
                     _frozen(cols["B"]) if "B" in cols else None,
                     _frozen(cols["sigma"]) if "sigma" in cols else None)


def _check_header(header: list[str], source: str, lineno: int) -> None:
    lowered = {c.lower(): c for c in COLUMNS}
    for name in header:
        if name not in COLUMNS:
            hint = ""
            if name.lower() in lowered:
                hint = f" (did you mean '{lowered[name.lower()]}'? names are case-sensitive)"
            elif re.fullmatch(r"[-+.0-9eE]+", name):
                hint = " (the first line that is not a comment must be the header)"
            raise InputError(f"{source}:{lineno}: unknown column {name!r}{hint}; columns: "
                             f"{', '.join(COLUMNS)}")
    dup = sorted({n for n in header if header.count(n) > 1})
    if dup:
        raise InputError(f"{source}:{lineno}: column {dup[0]!r} appears twice")
    if "T" not in header:
        raise InputError(f"{source}:{lineno}: no column T (temperature); the header needs T and "
                         f"one of {', '.join(MEASURED)}")
    measured = [n for n in header if n in MEASURED]
    if len(measured) != 1:
        what = "none" if not measured else ", ".join(measured)
        raise InputError(f"{source}:{lineno}: the table must hold exactly one measured quantity "
                         f"({', '.join(MEASURED)}), found {what}")
