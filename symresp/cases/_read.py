r"""TOML case files: read, check and turn into a validated system (layer: cases).

Owns :class:`Case`, :class:`Parameter`, :class:`SiteSpec`, :class:`ResponseRequest`,
:func:`read_case` and :func:`parse_case`. Imports the standard library (``tomllib``), sympy,
:mod:`symresp.errors`, :mod:`symresp.conventions`, :mod:`symresp.algebra`,
:mod:`symresp.text` and :mod:`symresp.models`.

The format is described completely in ``docs/case-files.md``. In short::

    [model]
    name = "dimer"
    description = "Spin-1/2 dimer compound Tandrel salt in a field along z"
    hamiltonian = "J*dot(a, b) - h*(a.z + b.z)"

    [parameters]
    J = { assume = "positive", value = 1.5, unit = "K" }
    h = { assume = "real", value = 0.2, unit = "K" }

    [sites]
    a = "spin 1/2"
    b = "spin 1/2"

    [observables]
    M = "a.z + b.z"

    [[response]]
    A = "M"

Every error names the file, the TOML key and, where it can, the line and column, with a caret
under the fault.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path

import sympy as sp

from ..algebra import (CASE_SITE_WORDS, LEVEL, MAX_DIMENSION, MAX_SPIN, SITE_KINDS, SPIN,
                       LevelSite, Operator, SpinSite, fermion)
from ..conventions import name_problem
from .._files import read_text_file
from ..emit import temperature_unit_name
from ..errors import InputError, NotConservedError, NotHermitianError
from ..models import System
from ..response import CASE_QUANTITIES as QUANTITIES
from ..response import DEFAULT_CASE_QUANTITIES as DEFAULT_QUANTITIES
from ..text import RESERVED_WORDS, ParseError, parse_operator
from ._locate import KeyPlace, Locator
from ._magnet import Magnetism, read_magnetism

__all__ = ["Case", "Parameter", "SiteSpec", "ResponseRequest", "read_case", "parse_case",
           "QUANTITIES", "DEFAULT_QUANTITIES", "ASSUMPTIONS", "CASE_SITE_WORDS", "MAX_CASE_BYTES",
           "MAX_CASE_DEPTH", "nesting_fault"]

#: Assumptions a parameter may carry, and the sympy assumptions they stand for.
ASSUMPTIONS: Mapping[str, Mapping[str, bool]] = {
    "real": {"real": True},
    "positive": {"positive": True},
    "nonnegative": {"nonnegative": True, "real": True},
}
#: Kinds of site, as written in the [sites] table.
#: The case-file words of the site kinds.
_BY_WORD = {info.word: info for info in SITE_KINDS.values()}
#: Largest case file accepted (bytes).
MAX_CASE_BYTES = 1_000_000
#: Deepest nesting of arrays and inline tables in a case file (a case needs 3 or 4).
MAX_CASE_DEPTH = 16

_TOP_KEYS = ("model", "parameters", "sites", "observables", "sector", "response", "zeeman",
             "sample")
_MODEL_KEYS = ("name", "description", "hamiltonian", "energy_unit", "temperature_unit")
_PARAMETER_KEYS = ("assume", "value", "unit", "description")
_RESPONSE_KEYS = ("label", "A", "B", "quantities")
_SECTOR_KEYS = ("operator", "value")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


@dataclass(frozen=True, slots=True)
class Parameter:
    """A declared parameter: its symbol (with assumptions), default value, unit and description."""

    symbol: sp.Symbol
    assume: str
    value: sp.Rational | None
    unit: str
    description: str

    @property
    def name(self) -> str:
        """The parameter's name."""
        return self.symbol.name


@dataclass(frozen=True, slots=True)
class SiteSpec:
    """A declared site: its name, the kind as written, and the mode names it provides."""

    name: str
    kind: str
    modes: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class ResponseRequest:
    """A ``[[response]]`` entry: measured operator A, driving operator B, quantities wanted."""

    label: str
    A: Operator
    B: Operator
    A_text: str
    B_text: str
    quantities: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class Case:
    """A checked case file: the system, the responses it asks for, parameter values and units.

    Attributes
    ----------
    name, description : str
    source : str
        File name (or ``"<case>"`` for text).
    system : symresp.models.System
        The validated model (all declared sites, sector and observables included).
    parameters : tuple of Parameter
        In declaration order.
    sites : tuple of SiteSpec
        In declaration order (which is the site and fermion-mode order).
    hamiltonian_text : str
    observables_text : tuple of (name, text)
    sector_text : tuple of (text, value)
        The sector as written: operator expressions and the value each is fixed to.
    responses : tuple of ResponseRequest
    energy_unit : str
        Unit of energies and temperatures (k_B = 1), empty when not given.
    magnetism : Magnetism or None
        The ``[zeeman]`` and ``[sample]`` sections (``docs/case-files.md``); the Zeeman term is
        already part of ``system``'s Hamiltonian.
    temperature_unit : str
        Unit of measured temperatures (data files, magnetometry), ``"K"`` unless given.

    Examples
    --------
    >>> from symresp.cases import parse_case
    >>> case = parse_case('''
    ... [model]
    ... hamiltonian = "Delta*q.z"
    ... [parameters]
    ... Delta = { assume = "positive", value = 2, unit = "K" }
    ... [sites]
    ... q = "spin 1/2"
    ... [[response]]
    ... A = "q.x"
    ... ''')
    >>> [(str(k), v) for k, v in case.defaults.items()], case.responses[0].quantities
    ([('Delta', 2)], ('isothermal', 'isolated', 'frequency'))
    """

    name: str
    description: str
    source: str
    system: System
    parameters: tuple[Parameter, ...]
    sites: tuple[SiteSpec, ...]
    hamiltonian_text: str
    observables_text: tuple[tuple[str, str], ...]
    sector_text: tuple[tuple[str, sp.Rational], ...]
    responses: tuple[ResponseRequest, ...]
    energy_unit: str
    magnetism: Magnetism | None = None
    temperature_unit: str = "K"

    @property
    def defaults(self) -> dict[sp.Symbol, sp.Rational]:
        """Default values of the parameters that have one (a fresh dict)."""
        return {p.symbol: p.value for p in self.parameters if p.value is not None}

    @property
    def units(self) -> dict[sp.Symbol, str]:
        """Units of the parameters that declare one (a fresh dict)."""
        return {p.symbol: p.unit for p in self.parameters if p.unit}

    @property
    def symbols(self) -> dict[str, sp.Symbol]:
        """Parameter symbols by name (a fresh dict)."""
        return {p.name: p.symbol for p in self.parameters}

    def response(self, label: str) -> ResponseRequest:
        """The response request called ``label``."""
        for r in self.responses:
            if r.label == label:
                return r
        known = ", ".join(r.label for r in self.responses) or "none"
        raise InputError(f"{self.source}: no response labelled {label!r} (known: {known})")


def read_case(path: str | Path) -> Case:
    """Read and check a TOML case file.

    Parameters
    ----------
    path : str or pathlib.Path

    Returns
    -------
    Case

    Raises
    ------
    InputError
        If the file cannot be read or is not a valid case; the message names the file, the
        key and, where possible, line and column (:class:`~symresp.text.ParseError`).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from symresp.cases import read_case
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "free.toml").write_text('[model]\\nhamiltonian = "0"\\n[sites]\\ns = "spin 1/2"\\n')
    >>> read_case(d / "free.toml").system.basis().dimension
    2
    """
    p = Path(path)
    if not p.exists():
        raise InputError(f"{p}: no such case file")
    text = read_text_file(p, limit=MAX_CASE_BYTES, what="case file")
    return parse_case(text, source=str(p), name=p.stem)


def nesting_fault(text: str, limit: int = MAX_CASE_DEPTH) -> int | None:
    """Offset of the first bracket nested deeper than ``limit`` in TOML text, or None.

    Strings and comments are skipped; table headers count like arrays. Checked before the TOML
    parser runs, whose recursion would otherwise end in an internal error on deep input.

    Examples
    --------
    >>> from symresp.cases import nesting_fault
    >>> nesting_fault('x = [[1], {a = "[[[["}]  # [[[[', limit=2) is None
    True
    >>> nesting_fault("x = [[[1]]]", limit=2)
    6
    """
    depth, i, n = 0, 0, len(text)
    while i < n:
        c = text[i]
        if c == "#":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if c in "\"'":
            if text.startswith(c * 3, i):
                j = i + 3
                while True:
                    j = text.find(c * 3, j)
                    if j < 0 or c == "'" or text[j - 1] != "\\":
                        break
                    j += 1
                i = n if j < 0 else j + 3
                continue
            j = i + 1
            while j < n and text[j] != c and text[j] != "\n":
                j += 2 if c == '"' and text[j] == "\\" else 1
            i = j + 1
            continue
        if c in "[{":
            depth += 1
            if depth > limit:
                return i
        elif c in "]}":
            depth = max(depth - 1, 0)
        i += 1
    return None


def parse_case(text: str, *, source: str = "<case>", name: str | None = None) -> Case:
    """Check the text of a case file and build the :class:`Case` (see :func:`read_case`).

    Parameters
    ----------
    text : str
        TOML text.
    source : str
        Name used in error messages.
    name : str, optional
        Model name used when ``[model] name`` is absent (default: ``"model"``).

    Returns
    -------
    Case

    Examples
    --------
    >>> from symresp.cases import parse_case
    >>> parse_case('[model]\\nhamiltonian = "0"\\n[sites]\\nc = "fermion"\\n').sites[0].kind
    'fermion'
    """
    if not isinstance(text, str):
        raise InputError(f"{source}: expected the text of a case file, got {type(text).__name__}")
    return _Reader(text, source, name or "model").read()


def _nearest(word: str, allowed: tuple[str, ...] | list[str]) -> str:
    close = difflib.get_close_matches(word, list(allowed), n=1, cutoff=0.5)
    return f" (did you mean '{close[0]}'?)" if close else ""


def _shown(value: object) -> str:
    """A value as it is written in TOML (true, not True)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    return repr(value)


def _type_name(value: object) -> str:
    return {bool: "a boolean", int: "an integer", float: "a number", str: "a string",
            dict: "a table", list: "an array"}.get(type(value), type(value).__name__)


class _Reader:
    """Reads one case file; collects nothing between uses."""

    def __init__(self, text: str, source: str, default_name: str) -> None:
        self.text = text
        self.source = source
        self.default_name = default_name
        self.locator = Locator(text, source)

    # ------------------------------------------------------------ error helpers
    def fail(self, where: str, reason: str, place: KeyPlace | None = None,
             cls: type[InputError] = InputError) -> InputError:
        """An error naming the file, the line (when known) and the key."""
        at = f"{where}: " if where else ""
        if place is not None:
            return cls(f"{self.source}:{place.line}: {at}{reason}\n    {place.text.strip()}")
        return cls(f"{self.source}: {at}{reason}")

    def place(self, table: tuple[str, ...], key: str | None = None,
              index: int | None = None) -> KeyPlace | None:
        if key is None:
            return self.locator.table(table, index)
        return self.locator.key(table, key, index) or self.locator.table(table, index)

    def check_keys(self, data: Mapping, allowed: tuple[str, ...], table: tuple[str, ...],
                   where: str, index: int | None = None) -> None:
        for key in data:
            if key not in allowed:
                raise self.fail(f"{where} {key}", f"unknown key '{key}'{_nearest(key, allowed)}; "
                                                  f"allowed keys: {', '.join(allowed)}",
                                self.place(table, key, index))

    def string(self, data: Mapping, key: str, table: tuple[str, ...], where: str, *,
               required: bool = False, index: int | None = None, default: str = "") -> str:
        if key not in data:
            if required:
                raise self.fail(where, f"missing key '{key}'", self.place(table, None, index))
            return default
        value = data[key]
        if not isinstance(value, str):
            raise self.fail(f"{where} {key}", f"expected a string, got {_type_name(value)} "
                                              f"{_shown(value)}", self.place(table, key, index))
        return value

    def expression(self, text: str, scope: Mapping[str, object], table: tuple[str, ...],
                   key: str, where: str, index: int | None = None,
                   place: KeyPlace | None = None) -> Operator:
        if not text.strip():
            raise self.fail(where, "the expression is empty", place or self.place(table, key, index))
        try:
            return parse_operator(text, scope, source=self.source, unknown_hint=(
                "declare parameters under [parameters] and sites under [sites]"))
        except ParseError as err:
            if place is None:
                place = self.locator.key(table, key, index)
            raise self.locator.expression_error(err, place, text, where) from None

    def number(self, value: object, where: str, place: KeyPlace | None) -> sp.Rational:
        """An exact number from a TOML integer, float or a string such as ``"3/2"``."""
        if isinstance(value, bool):
            raise self.fail(where, f"expected a number, got a boolean {_shown(value)}", place)
        if isinstance(value, int):
            return sp.Integer(value)
        if isinstance(value, float):
            if not math.isfinite(value):
                raise self.fail(where, f"expected a finite number, got {value!r}", place)
            f = Fraction(repr(value))  # the decimal as written, exactly: 0.1 -> 1/10
            return sp.Rational(f.numerator, f.denominator)
        if isinstance(value, str):
            try:
                f = Fraction(value.strip())
            except (ValueError, ZeroDivisionError):
                raise self.fail(where, f"expected a number such as 2, 0.5 or \"3/2\", got "
                                       f"{value!r}", place) from None
            return sp.Rational(f.numerator, f.denominator)
        raise self.fail(where, f"expected a number, got {_type_name(value)} {_shown(value)}", place)

    # ------------------------------------------------------------ the file
    def read(self) -> Case:
        data = self.sections()
        model = data["model"]
        self.check_keys(model, _MODEL_KEYS, ("model",), "[model]")
        name = self.string(model, "name", ("model",), "[model]", default=self.default_name)
        if not name.strip():
            raise self.fail("[model] name", "the name is empty", self.place(("model",), "name"))
        description = self.string(model, "description", ("model",), "[model]")
        energy_unit = self.string(model, "energy_unit", ("model",), "[model]")
        temperature_unit = self.string(model, "temperature_unit", ("model",), "[model]")
        h_text = self.string(model, "hamiltonian", ("model",), "[model]", required=True)

        parameters = self.parameters(data.get("parameters", {}))
        sites, site_scope = self.sites(data["sites"], {p.name for p in parameters})
        scope: dict[str, object] = dict(site_scope)
        scope.update({p.name: p.symbol for p in parameters})

        if not h_text.strip():
            raise self.fail("[model] hamiltonian", "the Hamiltonian is empty; write \"0\" for a "
                                                   "model of free sites",
                            self.place(("model",), "hamiltonian"))
        H = self.expression(h_text, scope, ("model",), "hamiltonian", "[model] hamiltonian")
        magnetism = read_magnetism(self, data, parameters, site_scope, energy_unit,
                                   temperature_unit)
        if magnetism is not None and magnetism.zeeman is not None:
            H = H + magnetism.zeeman.term
        observables, obs_text = self.observables(data.get("observables", {}), scope)
        sector, sector_text = self.sector(data.get("sector"), scope)
        all_sites = [s for h in site_scope.values() for s in _sites_of(h)]
        system = self.build_system(H, sector, observables, all_sites, name.strip(), parameters)
        response_scope = dict(scope)
        response_scope.update(observables)
        responses = self.responses(data.get("response", []), response_scope, system)
        return Case(name.strip(), description.strip(), self.source, system, tuple(parameters),
                    tuple(sites), h_text, tuple(obs_text), tuple(sector_text), tuple(responses),
                    energy_unit.strip(), magnetism,
                    temperature_unit_name(temperature_unit.strip()) if temperature_unit else "K")

    def sections(self) -> dict:
        """The parsed TOML, with known top-level sections and the [model] and [sites] tables."""
        deep = nesting_fault(self.text)
        if deep is not None:
            raise ParseError.at(self.text, deep, f"arrays and inline tables are nested more than "
                                                 f"{MAX_CASE_DEPTH} levels deep; a case file "
                                                 f"needs only a few (see docs/limits.md)",
                                source=self.source)
        try:
            data = tomllib.loads(self.text)
        except tomllib.TOMLDecodeError as err:
            raise self.toml_error(err) from None
        except RecursionError:
            raise self.fail("", "the TOML structure is nested too deeply") from None
        for key in data:
            if key not in _TOP_KEYS:
                where = f"top-level key '{key}'"
                raise self.fail(where, f"unknown section{_nearest(key, _TOP_KEYS)}; sections: "
                                       f"{', '.join(_TOP_KEYS)}",
                                self.locator.table((key,)) or self.locator.key((), key))
        for key in ("model", "sites"):
            if key not in data:
                raise self.fail("", f"missing section [{key}]")
            if not isinstance(data[key], dict):
                raise self.fail(f"[{key}]", f"expected a table, got {_type_name(data[key])}",
                                self.locator.key((), key))
        return data

    def build_system(self, H, sector, observables, all_sites, name: str, parameters) -> System:
        """The validated model; its errors point at [model] or [sector]."""
        try:
            return System.build(H, sector=dict(sector), observables=dict(observables),
                                extra_sites=all_sites, name=name,
                                parameters=[p.symbol for p in parameters])
        except NotHermitianError as err:
            raise self.fail("[model] hamiltonian", f"{err} In a case file, add the conjugate "
                                                   f"terms with adj(...).",
                            self.place(("model",), "hamiltonian"), NotHermitianError) from None
        except NotConservedError as err:
            raise self.fail("[sector]", str(err), self.place(("sector",)), NotConservedError) from None
        except InputError as err:
            if sector and "sector" in str(err):
                raise self.fail("[sector]", str(err), self.place(("sector",))) from None
            raise self.fail("[model]", str(err), self.place(("model",))) from None

    def toml_error(self, err: tomllib.TOMLDecodeError) -> ParseError:
        msg = str(err)
        m = re.search(r"\(at line (\d+), column (\d+)\)\s*$", msg)
        reason = f"not valid TOML: {msg[:m.start()].strip() if m else msg}"
        if m:
            line, column = int(m.group(1)), int(m.group(2))
            lines = self.text.splitlines()
            excerpt = lines[line - 1] if 0 < line <= len(lines) else ""
            return ParseError(reason, source=self.source, line=line, column=column,
                              excerpt=excerpt)
        m = re.search(r"\(at end of document\)\s*$", msg)
        if m:
            reason = f"not valid TOML: {msg[:m.start()].strip()} (at the end of the file)"
        return ParseError(reason, source=self.source)

    # ------------------------------------------------------------ sections
    def parameters(self, table: object) -> list[Parameter]:
        if not isinstance(table, dict):
            raise self.fail("[parameters]", f"expected a table, got {_type_name(table)}",
                            self.locator.key((), "parameters"))
        out = []
        for pname, spec in table.items():
            where = f"[parameters] {pname}"
            place = self.place(("parameters",), pname)
            self.check_name(pname, where, place, "parameter")
            if isinstance(spec, dict):
                self.check_keys(spec, _PARAMETER_KEYS, ("parameters", pname), f"[parameters.{pname}]")
                assume = spec.get("assume", "real")
                if not isinstance(assume, str) or assume not in ASSUMPTIONS:
                    shown = repr(assume)
                    hint = _nearest(assume, list(ASSUMPTIONS)) if isinstance(assume, str) else ""
                    raise self.fail(f"{where} assume", f"{shown} is not one of "
                                                       f"{', '.join(map(repr, ASSUMPTIONS))}{hint}",
                                    self.place(("parameters", pname), "assume"))
                value = None
                if "value" in spec:
                    value = self.number(spec["value"], f"{where} value",
                                        self.place(("parameters", pname), "value"))
                unit = self.string(spec, "unit", ("parameters", pname), where)
                description = self.string(spec, "description", ("parameters", pname), where)
            elif isinstance(spec, (int, float, str)) and not isinstance(spec, bool):
                assume, unit, description = "real", "", ""
                value = self.number(spec, where, place)
            else:
                raise self.fail(where, f"expected a table such as {{ assume = \"real\", value = "
                                       f"1.0 }} or a number, got {_type_name(spec)}", place)
            if value is not None:
                if assume == "positive" and not value > 0:
                    raise self.fail(f"{where} value", f"{value} is not positive, but the parameter "
                                                      f"is declared assume = \"positive\"", place)
                if assume == "nonnegative" and value < 0:
                    raise self.fail(f"{where} value", f"{value} is negative, but the parameter is "
                                                      f"declared assume = \"nonnegative\"", place)
            out.append(Parameter(sp.Symbol(pname, **ASSUMPTIONS[assume]), assume, value,
                                 unit.strip(), description.strip()))
        return out

    def check_name(self, name: str, where: str, place: KeyPlace | None, what: str) -> None:
        if name in RESERVED_WORDS:
            raise self.fail(where, f"the {what} name '{name}' is a word of the formula language "
                                   f"({', '.join(sorted(RESERVED_WORDS))}); rename it", place)
        problem = name_problem(name, f"{what} name")
        if problem:
            raise self.fail(where, problem, place)

    def sites(self, table: dict, parameter_names: set[str]) -> tuple[list[SiteSpec], dict[str, object]]:
        if not table:
            raise self.fail("[sites]", "no sites are declared; add e.g. a = \"spin 1/2\"",
                            self.place(("sites",)))
        specs: list[SiteSpec] = []
        scope: dict[str, object] = {}
        dimension = 1
        for sname, kind in table.items():
            where = f"[sites] {sname}"
            place = self.place(("sites",), sname)
            self.check_name(sname, where, place, "site")
            if not isinstance(kind, str):
                raise self.fail(where, f"expected a string such as \"spin 1/2\", \"levels 3\", "
                                       f"\"fermion\", \"spinful fermion\" or \"boson 6\", got "
                                       f"{_type_name(kind)}", place)
            handles, dim = self.make_site(sname, kind, where, place)
            for mode, handle in handles:
                if mode in parameter_names:
                    raise self.fail(where, f"the name '{mode}' is both a parameter and a site; "
                                           f"rename one of them", place)
                if mode in scope:
                    raise self.fail(where, f"duplicate site name '{mode}'", place)
                self.check_name(mode, where, place, "site")
                scope[mode] = handle
            dimension *= dim
            if dimension > MAX_DIMENSION:
                raise self.fail(where, f"the product space of the sites up to '{sname}' has "
                                       f"dimension {dimension}, above the limit {MAX_DIMENSION}; "
                                       f"use fewer sites or a lower boson cutoff", place)
            specs.append(SiteSpec(sname, " ".join(kind.split()), tuple(m for m, _ in handles)))
        return specs, scope

    def make_site(self, sname: str, kind: str, where: str,
                  place: KeyPlace | None) -> tuple[list[tuple[str, object]], int]:
        words = kind.split()
        head = " ".join(words[:2]) if words[:2] == ["spinful", "fermion"] else (words[0] if words else "")
        rest = words[2:] if head == "spinful fermion" else words[1:]
        if head not in CASE_SITE_WORDS:
            kinds = ", ".join(f'"{w} {i.size}"' if i.size else f'"{w}"' for w, i in _BY_WORD.items())
            raise self.fail(where, f"unknown kind of site {kind!r}"
                                   f"{_nearest(head, CASE_SITE_WORDS)}; kinds: {kinds}, "
                                   f"\"spinful fermion\"", place)
        if head == "spinful fermion":
            if rest:
                raise self.fail(where, f"{kind!r} is malformed: write \"spinful fermion\"", place)
            return [(m, fermion(m)) for m in (sname + "_up", sname + "_dn")], 4
        info = _BY_WORD[head]
        if (info.size is not None) != (len(rest) == 1) or len(rest) > 1:
            raise self.fail(where, f"{kind!r} is malformed: write \"{info.example}\"", place)
        if info.kind == SPIN:
            number = self.spin_value(rest[0], where, place)
        elif info.size is not None:
            low = 2 if info.kind == LEVEL else 1
            what = "number of levels" if info.kind == LEVEL else f"{info.word} cutoff"
            number = self.integer(rest[0], where, place, what, low, info.largest)
        else:
            number = None
        handle = info.build(sname, number)
        (site,) = handle.sites if isinstance(handle, Operator) else (handle.site,)
        return [(sname, handle)], site.dim

    def spin_value(self, word: str, where: str, place: KeyPlace | None) -> sp.Rational:
        try:
            f = Fraction(word)
        except (ValueError, ZeroDivisionError):
            raise self.fail(where, f"spin {word!r} is not a number: write e.g. \"spin 1/2\" or "
                                   f"\"spin 1\"", place) from None
        if f <= 0 or (2 * f).denominator != 1:
            raise self.fail(where, f"spin {word} is not a positive integer or half-integer "
                                   f"(1/2, 1, 3/2, ...)", place)
        if f > MAX_SPIN:
            raise self.fail(where, f"spin {word} is larger than the supported maximum {MAX_SPIN}",
                            place)
        return sp.Rational(f.numerator, f.denominator)

    def integer(self, word: str, where: str, place: KeyPlace | None, what: str, low: int,
                high: int) -> int:
        if not word.isdigit() or len(word) > 6:
            raise self.fail(where, f"the {what} {word!r} is not a whole number", place)
        if not low <= int(word) <= high:
            raise self.fail(where, f"the {what} must be from {low} to {high}, got {word}", place)
        return int(word)

    def observables(self, table: object,
                    scope: dict[str, object]) -> tuple[dict[str, Operator], list[tuple[str, str]]]:
        if not isinstance(table, dict):
            raise self.fail("[observables]", f"expected a table, got {_type_name(table)}",
                            self.locator.key((), "observables"))
        out: dict[str, Operator] = {}
        texts: list[tuple[str, str]] = []
        for oname, text in table.items():
            where = f"[observables] {oname}"
            place = self.place(("observables",), oname)
            self.check_name(oname, where, place, "observable")
            if oname in scope:
                raise self.fail(where, f"the observable name '{oname}' is already a site or "
                                       f"parameter name; rename it", place)
            if not isinstance(text, str):
                raise self.fail(where, f"expected an expression string, got {_type_name(text)}",
                                place)
            out[oname] = self.expression(text, scope, ("observables",), oname, where)
            texts.append((oname, text))
        return out, texts

    def sector(self, spec: object, scope: dict[str, object]
               ) -> tuple[list[tuple[Operator, sp.Rational]], list[tuple[str, sp.Rational]]]:
        if spec is None:
            return [], []
        out: list[tuple[Operator, sp.Rational]] = []
        texts: list[tuple[str, sp.Rational]] = []
        if isinstance(spec, dict):
            for expr, value in spec.items():
                where = f"[sector] \"{expr}\""
                place = self.place(("sector",), expr)
                op = self.expression(expr, scope, ("sector",), expr, where, place=None)
                out.append((op, self.number(value, where, place)))
                texts.append((expr.strip(), out[-1][1]))
            return out, texts
        if isinstance(spec, list):
            for i, item in enumerate(spec):
                where = f"[[sector]] #{i + 1}"
                if not isinstance(item, dict):
                    raise self.fail(where, f"expected a table with keys operator and value, got "
                                           f"{_type_name(item)}", self.place(("sector",), None, i))
                self.check_keys(item, _SECTOR_KEYS, ("sector",), where, i)
                text = self.string(item, "operator", ("sector",), where, required=True, index=i)
                if "value" not in item:
                    raise self.fail(where, "missing key 'value'", self.place(("sector",), None, i))
                op = self.expression(text, scope, ("sector",), "operator", f"{where} operator", i)
                out.append((op, self.number(item["value"], f"{where} value",
                                            self.place(("sector",), "value", i))))
                texts.append((text.strip(), out[-1][1]))
            return out, texts
        raise self.fail("[sector]", f"expected a table {{\"operator\" = value}} or [[sector]] "
                                    f"entries, got {_type_name(spec)}", self.locator.key((), "sector"))

    def responses(self, spec: object, scope: dict[str, object], system: System) -> list[ResponseRequest]:
        if isinstance(spec, dict):
            spec = [spec]
        if not isinstance(spec, list):
            raise self.fail("[[response]]", f"expected [[response]] tables, got {_type_name(spec)}",
                            self.locator.key((), "response"))
        out: list[ResponseRequest] = []
        labels: set[str] = set()
        for i, item in enumerate(spec):
            where = f"[[response]] #{i + 1}"
            if not isinstance(item, dict):
                raise self.fail(where, f"expected a table, got {_type_name(item)}",
                                self.place(("response",), None, i))
            self.check_keys(item, _RESPONSE_KEYS, ("response",), where, i)
            a_text = self.string(item, "A", ("response",), where, required=True, index=i)
            b_text = self.string(item, "B", ("response",), where, index=i, default=a_text)
            same = a_text.strip() == b_text.strip()
            default_label = a_text.strip() if same and _NAME.fullmatch(a_text.strip()) else f"response{i + 1}"
            label = self.string(item, "label", ("response",), where, index=i,
                                default=default_label).strip()
            if not label:
                raise self.fail(f"{where} label", "the label is empty",
                                self.place(("response",), "label", i))
            if label == "levels":
                raise self.fail(f"{where} label", "the label 'levels' is reserved; choose another",
                                self.place(("response",), "label", i))
            if label in labels:
                raise self.fail(f"{where} label", f"duplicate response label '{label}'; give each "
                                                  f"[[response]] its own label",
                                self.place(("response",), "label", i))
            labels.add(label)
            A = self.expression(a_text, scope, ("response",), "A", f"{where} A", i)
            B = self.expression(b_text, scope, ("response",), "B" if "B" in item else "A",
                                f"{where} {'B' if 'B' in item else 'A'}", i)
            for op, key in ((A, "A"), (B, "B")):
                try:
                    system.operator(op, role=f"response {key}")
                except NotConservedError as err:
                    raise self.fail(f"{where} {key}", str(err), self.place(("response",), key, i),
                                    NotConservedError) from None
            quantities = item.get("quantities", list(DEFAULT_QUANTITIES))
            qplace = self.place(("response",), "quantities", i)
            if not isinstance(quantities, list) or not quantities:
                raise self.fail(f"{where} quantities", f"expected a non-empty array of names from "
                                                       f"{', '.join(QUANTITIES)}", qplace)
            for q in quantities:
                if not isinstance(q, str) or q not in QUANTITIES:
                    hint = _nearest(q, QUANTITIES) if isinstance(q, str) else ""
                    raise self.fail(f"{where} quantities", f"unknown quantity {q!r}{hint}; "
                                                           f"quantities: {', '.join(QUANTITIES)}",
                                    qplace)
            ordered = tuple(q for q in QUANTITIES if q in quantities)
            out.append(ResponseRequest(label, A, B, a_text.strip(), b_text.strip(), ordered))
        return out


def _sites_of(handle: object):
    if isinstance(handle, (SpinSite, LevelSite)):
        return [handle.site]
    assert isinstance(handle, Operator)
    return list(handle.sites)
