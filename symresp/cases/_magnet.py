r"""The magnetic sections of a case file: ``[zeeman]`` and ``[sample]`` (layer: cases).

Owns :class:`ZeemanSpec`, :class:`SampleSpec`, :class:`Magnetism` and :func:`read_magnetism`
(called by the case reader). Imports sympy, :mod:`symresp.algebra`, :mod:`symresp.emit`
(g tensors, the Zeeman term, units) and :mod:`symresp.text`.

``[zeeman]`` puts the Zeeman term of ``docs/conventions.md`` (section 8) into the Hamiltonian:
per-site g (a scalar, ``{ parallel = ..., perpendicular = ... }`` or three rows of a tensor), a
field in tesla (``field``, a number or a formula in the parameters) and its direction. The
coefficient :math:`\mu_B/E_u` is the exact rational of the CODATA 2018 values in the case's
``energy_unit``. ``[sample]`` states what a magnetometry fit adds to the cluster model: the
orientation average, the unit system of molar susceptibilities, temperature-independent
paramagnetism, a diamagnetic correction, a paramagnetic impurity and a mean-field coupling.
Format: ``docs/case-files.md``, sections 13 and 14.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from fractions import Fraction

import sympy as sp

from ..algebra import Operator, Site, SpinSite
from ..emit import (SYSTEMS, GTensor, energy_unit_name, field_direction, g_tensor,
                    temperature_unit_name, zeeman, zeeman_constant)
from ..errors import InputError
from ..text import ParseError, parse_scalar

__all__ = ["ZeemanSpec", "SampleSpec", "Magnetism", "read_magnetism", "ORIENTATIONS",
           "ZEEMAN_KEYS", "SAMPLE_KEYS"]

#: How a magnetometry model averages over field directions.
ORIENTATIONS = ("powder", "oriented")
ZEEMAN_KEYS = ("g", "field", "direction")
SAMPLE_KEYS = ("orientation", "system", "tip", "diamagnetic", "impurity", "mean_field",
               "quadrature_order")
_IMPURITY_KEYS = ("fraction", "spin", "g")


@dataclass(frozen=True, slots=True)
class ZeemanSpec:
    """The ``[zeeman]`` section: g tensor per spin site, field (tesla) and direction.

    ``term`` is the operator added to the Hamiltonian (zero when the field is 0)."""

    g: tuple[tuple[Site, GTensor], ...]
    field: sp.Expr
    direction: tuple[sp.Expr, sp.Expr, sp.Expr]
    term: Operator

    def handles(self) -> dict[SpinSite, GTensor]:
        """``{spin_site: g}`` as :func:`symresp.zeeman` takes it."""
        return {SpinSite(site): g for site, g in self.g}

    def subs(self, mapping: Mapping) -> ZeemanSpec:
        """The spec with parameters substituted."""
        return ZeemanSpec(tuple((s, g.subs(mapping)) for s, g in self.g),
                          sp.sympify(self.field).subs(mapping), self.direction,  # safe: sympy object
                          self.term.subs(mapping))

    def describe(self, energy_unit: str) -> str:
        """One line: the term, the g of each site, the field and the exact Zeeman constant."""
        def g_text(g: GTensor) -> str:
            m = g.matrix
            if g.kind == "isotropic":
                return sp.sstr(m[0][0])
            if g.kind == "axial":
                return f"(par {sp.sstr(m[2][2])}, perp {sp.sstr(m[0][0])})"
            return "[" + "; ".join(", ".join(sp.sstr(e) for e in row) for row in m) + "]"
        c = zeeman_constant(energy_unit)
        gs = ", ".join(f"{site.name}: {g_text(g)}" for site, g in self.g)
        n = ", ".join(sp.sstr(x) for x in self.direction)
        return (f"+ mu_B B n.g.S with g {gs}; B = {sp.sstr(self.field)} T along n = ({n}); "
                f"mu_B = {float(c):.11g} {energy_unit}/T = {c.numerator}/{c.denominator} "
                f"(CODATA 2018)")

    @property
    def free_symbols(self) -> set[sp.Symbol]:
        """Parameters of the g tensors and of the field."""
        out = set(sp.sympify(self.field).free_symbols)  # safe: sympy object
        for _, g in self.g:
            out |= g.free_symbols
        return out


@dataclass(frozen=True, slots=True)
class SampleSpec:
    """The ``[sample]`` section. Entries are numbers or parameter symbols."""

    orientation: str = "powder"
    system: str = "cgs"
    tip: sp.Expr = sp.Integer(0)
    diamagnetic: sp.Expr = sp.Integer(0)
    impurity_fraction: sp.Expr = sp.Integer(0)
    impurity_spin: sp.Rational = sp.Rational(1, 2)
    impurity_g: sp.Expr = sp.Integer(2)
    mean_field: sp.Expr = sp.Integer(0)
    quadrature_order: int = 8

    def entries(self) -> dict[str, sp.Expr]:
        """The correction entries by name (tip, diamagnetic, impurity_fraction, impurity_g,
        mean_field)."""
        return {"tip": self.tip, "diamagnetic": self.diamagnetic,
                "impurity_fraction": self.impurity_fraction, "impurity_g": self.impurity_g,
                "mean_field": self.mean_field}

    def subs(self, mapping: Mapping) -> SampleSpec:
        """The spec with parameters substituted."""
        return replace(self, **{k: sp.sympify(v).subs(mapping)  # safe: sympy objects
                                for k, v in self.entries().items()})


@dataclass(frozen=True, slots=True)
class Magnetism:
    """Magnetic data of a case: the Zeeman spec (or None) and the sample spec."""

    zeeman: ZeemanSpec | None
    sample: SampleSpec

    def subs(self, mapping: Mapping) -> Magnetism:
        """The data with parameters substituted."""
        return Magnetism(None if self.zeeman is None else self.zeeman.subs(mapping),
                         self.sample.subs(mapping))


def _scalar(reader, value: object, symbols: Mapping[str, sp.Symbol], where: str,
            place) -> sp.Expr:
    """A number (TOML number or "3/2") or a formula in the parameters."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return reader.number(value, where, place)
    if isinstance(value, str):
        try:
            return sp.Rational(Fraction(value.strip()))
        except (ValueError, ZeroDivisionError):
            pass
        try:
            return parse_scalar(value, symbols, source=reader.source)
        except ParseError as err:
            raise reader.fail(where, f"{err.reason} (in {value!r})", place) from None
    raise reader.fail(where, f"expected a number or a formula in the parameters, got "
                             f"{type(value).__name__} {value!r}", place)


def _number_or_parameter(reader, value: object, symbols: Mapping[str, sp.Symbol], where: str,
                         place) -> sp.Expr:
    out = _scalar(reader, value, symbols, where, place)
    if not (out.is_Number or isinstance(out, sp.Symbol)):
        raise reader.fail(where, f"expected a number or the name of one parameter (so that it can "
                                 f"be fitted), got {value!r}", place)
    return out


def read_magnetism(reader, data: Mapping, parameters, site_scope: Mapping[str, object],
                   energy_unit: str, temperature_unit: str) -> Magnetism | None:
    """Read ``[zeeman]`` and ``[sample]`` (None when neither is present).

    ``reader`` is the case reader (it names the file and line in errors); ``parameters`` the
    declared parameters and ``site_scope`` the site handles by name.
    """
    if "zeeman" not in data and "sample" not in data:
        if temperature_unit:
            _temperature_unit(reader, temperature_unit)
        return None
    symbols = {p.name: p.symbol for p in parameters}
    z = None
    if "zeeman" in data:
        z = _read_zeeman(reader, data["zeeman"], symbols, site_scope, energy_unit)
    s = _read_sample(reader, data.get("sample", {}), symbols)
    if temperature_unit:
        _temperature_unit(reader, temperature_unit)
    return Magnetism(z, s)


def _temperature_unit(reader, unit: str) -> str:
    try:
        return temperature_unit_name(unit.strip(), name="temperature_unit")
    except InputError as err:
        raise reader.fail("[model] temperature_unit", str(err),
                          reader.place(("model",), "temperature_unit")) from None


def _read_zeeman(reader, table: object, symbols, site_scope, energy_unit: str) -> ZeemanSpec:
    if not isinstance(table, dict):
        raise reader.fail("[zeeman]", f"expected a table, got {type(table).__name__}",
                          reader.locator.key((), "zeeman"))
    reader.check_keys(table, ZEEMAN_KEYS, ("zeeman",), "[zeeman]")
    try:
        unit = energy_unit_name(energy_unit.strip(), name="energy_unit")
    except InputError as err:
        raise reader.fail("[model] energy_unit", f"{err}; the Zeeman term of [zeeman] is written "
                                                 f"in this unit", reader.place(("model",), "energy_unit")
                          ) from None
    if "g" not in table:
        raise reader.fail("[zeeman]", "missing key 'g': the g factor of each spin site, e.g. "
                                      "g = { a = \"g\", b = \"g\" }", reader.place(("zeeman",)))
    gtab = table["g"]
    if not isinstance(gtab, dict) or not gtab:
        raise reader.fail("[zeeman] g", "expected a table of sites, e.g. g = { a = 2.0, b = \"g\" }",
                          reader.place(("zeeman",), "g"))
    pairs = [_site_g(reader, sname, spec, symbols, site_scope) for sname, spec in gtab.items()]
    if "field" not in table:
        raise reader.fail("[zeeman]", "missing key 'field': the field in tesla, a number or a "
                                      "parameter such as field = \"B\"", reader.place(("zeeman",)))
    field = _scalar(reader, table["field"], symbols, "[zeeman] field",
                    reader.place(("zeeman",), "field"))
    direction_value = table.get("direction", "z")
    try:
        direction = field_direction(direction_value, where="[zeeman] direction")
    except InputError as err:
        raise reader.fail("[zeeman] direction", str(err),
                          reader.place(("zeeman",), "direction")) from None
    term = _zeeman_term({SpinSite(site): g for site, g in pairs}, field, direction, unit)
    return ZeemanSpec(tuple(pairs), field, direction, term)


def _site_g(reader, sname: str, spec: object, symbols, site_scope) -> tuple[Site, GTensor]:
    """The g tensor of one spin site of [zeeman] g: a scalar, an axial table or three rows."""
    where = f"[zeeman] g {sname}"
    place = reader.place(("zeeman", "g"), sname) or reader.place(("zeeman",), "g")
    handle = site_scope.get(sname)
    if handle is None:
        known = ", ".join(n for n, h in site_scope.items() if isinstance(h, SpinSite)) or "none"
        raise reader.fail(where, f"no site named '{sname}' (spin sites: {known})", place)
    if not isinstance(handle, SpinSite):
        raise reader.fail(where, f"site '{sname}' is not a spin; a g factor belongs to spin "
                                 f"sites", place)
    if isinstance(spec, dict):
        extra = set(spec) - {"parallel", "perpendicular"}
        if extra or len(spec) != 2:
            raise reader.fail(where, "an axial g is { parallel = ..., perpendicular = ... }",
                              place)
        value: object = {k: _scalar(reader, v, symbols, f"{where} {k}", place)
                         for k, v in spec.items()}
    elif isinstance(spec, list):
        if len(spec) != 3 or any(not isinstance(r, list) or len(r) != 3 for r in spec):
            raise reader.fail(where, "a g tensor is three rows of three entries, e.g. "
                                     "[[2.0, 0, 0], [0, 2.0, 0], [0, 0, \"gz\"]]", place)
        value = [[_scalar(reader, v, symbols, f"{where} [{i}][{j}]", place)
                  for j, v in enumerate(r)] for i, r in enumerate(spec)]
    else:
        value = _scalar(reader, spec, symbols, where, place)
    try:
        return handle.site, g_tensor(value, where=where)
    except InputError as err:
        raise reader.fail(where, str(err), place) from None


def _zeeman_term(handles: dict[SpinSite, GTensor], field: sp.Expr,
                 direction: tuple[sp.Expr, sp.Expr, sp.Expr], unit: str) -> Operator:
    """The Zeeman operator along an exact unit vector (a sum over the axes, the term being
    linear in the field)."""
    total = Operator((), frozenset(h.site for h in handles))
    for c, axis in zip(direction, ("x", "y", "z")):
        if c != 0:
            total = total + zeeman(handles, field * c, direction=axis, energy_unit=unit)
    return total


def _read_sample(reader, table: object, symbols) -> SampleSpec:
    if not isinstance(table, dict):
        raise reader.fail("[sample]", f"expected a table, got {type(table).__name__}",
                          reader.locator.key((), "sample"))
    reader.check_keys(table, SAMPLE_KEYS, ("sample",), "[sample]")
    out = SampleSpec()
    if "orientation" in table:
        o = table["orientation"]
        if o not in ORIENTATIONS:
            raise reader.fail("[sample] orientation", f"{o!r} must be \"powder\" (orientation "
                                                      f"average) or \"oriented\" (field along the "
                                                      f"[zeeman] direction)",
                              reader.place(("sample",), "orientation"))
        out = replace(out, orientation=o)
    if "system" in table:
        if table["system"] not in SYSTEMS:
            raise reader.fail("[sample] system", f"{table['system']!r} must be \"cgs\" (cm^3/mol) "
                                                 f"or \"SI\" (m^3/mol)",
                              reader.place(("sample",), "system"))
        out = replace(out, system=table["system"])
    if "quadrature_order" in table:
        q = table["quadrature_order"]
        if isinstance(q, bool) or not isinstance(q, int) or not 1 <= q <= 64:
            raise reader.fail("[sample] quadrature_order", f"{q!r} must be a whole number from 1 "
                                                           f"to 64",
                              reader.place(("sample",), "quadrature_order"))
        out = replace(out, quadrature_order=q)
    for key in ("tip", "diamagnetic", "mean_field"):
        if key in table:
            out = replace(out, **{key: _number_or_parameter(
                reader, table[key], symbols, f"[sample] {key}", reader.place(("sample",), key))})
    if "impurity" in table:
        imp = table["impurity"]
        place = reader.place(("sample",), "impurity")
        if not isinstance(imp, dict):
            raise reader.fail("[sample] impurity", "expected a table such as "
                                                   "{ fraction = \"rho\", spin = \"1/2\", g = 2.0 }",
                              place)
        reader.check_keys(imp, _IMPURITY_KEYS, ("sample", "impurity"), "[sample] impurity")
        if "fraction" in imp:
            out = replace(out, impurity_fraction=_number_or_parameter(
                reader, imp["fraction"], symbols, "[sample] impurity fraction", place))
        if "g" in imp:
            out = replace(out, impurity_g=_number_or_parameter(
                reader, imp["g"], symbols, "[sample] impurity g", place))
        if "spin" in imp:
            S = reader.number(imp["spin"], "[sample] impurity spin", place)
            if S <= 0 or (2 * S).q != 1:
                raise reader.fail("[sample] impurity spin", f"{S} is not a positive integer or "
                                                            f"half-integer", place)
            out = replace(out, impurity_spin=S)
    return out
