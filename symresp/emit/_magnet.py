r"""Zeeman coupling from physical quantities, magnetic moments and orientation averages
(layer: emit).

Owns :class:`GTensor`, :func:`g_tensor`, :func:`field_direction`, :func:`zeeman`,
:func:`magnetic_moment` and :func:`orientation_quadrature`. Imports numpy, sympy,
:mod:`symresp.algebra`, :mod:`symresp.errors` and :mod:`._units`.

Convention (``docs/conventions.md``, section 8): a spin :math:`\mathbf S_i` with g tensor
:math:`g_i` has the magnetic moment :math:`\boldsymbol\mu_i = -\mu_B g_i \mathbf S_i` (electron
sign), and a field :math:`\mathbf B = B\,\mathbf n` (tesla) adds

.. math:: H_Z = -\sum_i \mathbf B\cdot\boldsymbol\mu_i
              = \frac{\mu_B}{E_u}\,B \sum_i \sum_{ab} n_a (g_i)_{ab} S_i^b

to a Hamiltonian written in the energy unit :math:`E_u`; :math:`\mu_B/E_u` is the exact
rational of :func:`~symresp.emit.zeeman_constant`. Row index :math:`a` of a g tensor is the
field component, column :math:`b` the spin component. An axial tensor has its unique axis
along z: :math:`g = \mathrm{diag}(g_\perp, g_\perp, g_\parallel)`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from numbers import Real

import numpy as np
import sympy as sp

from .._public import public
from ..algebra import Operator, SpinSite, as_coefficient
from ..errors import InputError
from ._units import zeeman_constant

__all__ = ["GTensor", "g_tensor", "field_direction", "zeeman", "magnetic_moment",
           "orientation_quadrature", "Quadrature", "AXES"]

#: Unit vectors of the named axes.
AXES = {"x": (1, 0, 0), "y": (0, 1, 0), "z": (0, 0, 1)}


@dataclass(frozen=True, slots=True)
class GTensor:
    """A g tensor: ``kind`` is ``"isotropic"``, ``"axial"`` (unique axis z) or ``"tensor"``;
    ``matrix`` holds the 3x3 entries (rows: field component, columns: spin component)."""

    kind: str
    matrix: tuple[tuple[sp.Expr, sp.Expr, sp.Expr], ...]

    @property
    def free_symbols(self) -> set[sp.Symbol]:
        """Parameters in the entries."""
        out: set[sp.Symbol] = set()
        for row in self.matrix:
            for e in row:
                out |= e.free_symbols
        return out

    def along(self, n: Sequence[sp.Expr]) -> tuple[sp.Expr, sp.Expr, sp.Expr]:
        r"""The row vector :math:`\mathbf n^T g` (the spin components the field along n couples to)."""
        return tuple(sp.expand(sum((n[a] * self.matrix[a][b] for a in range(3)), sp.Integer(0)))
                     for b in range(3))

    def subs(self, mapping: Mapping) -> GTensor:
        """The tensor with parameters substituted."""
        rows = tuple(tuple(sp.sympify(e).subs(mapping) for e in row)  # safe: sympy objects
                     for row in self.matrix)
        return GTensor(self.kind, rows)


def _entry(value: object, where: str) -> sp.Expr:
    if isinstance(value, float):
        if not np.isfinite(value):
            raise InputError(f"{where}: {value!r} is not a finite number")
        return sp.Rational(repr(value))  # the decimal as written, exactly
    e = as_coefficient(value, where=where)
    if e.has(sp.I) or any(not s.is_real for s in e.free_symbols):
        raise InputError(f"{where}: g entries must be real (declare parameters real=True), got {e}")
    return e


def g_tensor(value: object, *, where: str = "g") -> GTensor:
    r"""A g tensor from a scalar, an axial pair or a full 3x3 tensor.

    Parameters
    ----------
    value : number, sympy expression, mapping or 3x3 sequence
        A scalar (isotropic g); ``{"parallel": g_par, "perpendicular": g_perp}`` (axial, unique
        axis z); or three rows of three entries (rows: field component x, y, z; columns: spin
        component). Entries are numbers or real sympy expressions (parameters).
    where : str
        Name used in error messages.

    Returns
    -------
    GTensor

    Raises
    ------
    InputError
        On any other shape, a non-real entry or unknown keys.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.emit import g_tensor
    >>> gpar, gperp = sp.symbols("gpar gperp", positive=True)
    >>> g_tensor({"parallel": gpar, "perpendicular": gperp}).matrix[2]
    (0, 0, gpar)
    >>> g_tensor(2).kind
    'isotropic'
    """
    if isinstance(value, GTensor):
        return value
    if isinstance(value, Mapping):
        keys = set(value)
        if keys != {"parallel", "perpendicular"}:
            raise InputError(f"{where}: an axial g is {{parallel = ..., perpendicular = ...}}, got "
                             f"keys {', '.join(sorted(map(str, keys))) or 'none'}")
        par = _entry(value["parallel"], f"{where} parallel")
        perp = _entry(value["perpendicular"], f"{where} perpendicular")
        z = sp.Integer(0)
        return GTensor("axial", ((perp, z, z), (z, perp, z), (z, z, par)))
    if isinstance(value, sp.MatrixBase):
        value = value.tolist()
    if isinstance(value, (list, tuple)):
        if len(value) != 3 or any(not isinstance(r, (list, tuple)) or len(r) != 3 for r in value):
            raise InputError(f"{where}: a g tensor is three rows of three entries, e.g. "
                             f"[[gx, 0, 0], [0, gy, 0], [0, 0, gz]]")
        rows = tuple(tuple(_entry(e, f"{where} [{i}][{j}]") for j, e in enumerate(r))
                     for i, r in enumerate(value))
        return GTensor("tensor", rows)  # type: ignore[arg-type]
    g = _entry(value, where)
    z = sp.Integer(0)
    return GTensor("isotropic", ((g, z, z), (z, g, z), (z, z, g)))


def field_direction(direction: object, *, where: str = "direction") -> tuple[sp.Expr, sp.Expr, sp.Expr]:
    """The unit vector of a field direction: ``"x"``, ``"y"``, ``"z"`` or three numbers.

    Exact numbers stay exact (``[1, 1, 0]`` gives ``(sqrt(2)/2, sqrt(2)/2, 0)``).

    Examples
    --------
    >>> from symresp.emit import field_direction
    >>> field_direction([1, 1, 0])
    (sqrt(2)/2, sqrt(2)/2, 0)
    >>> field_direction("z")
    (0, 0, 1)
    """
    if isinstance(direction, str):
        if direction not in AXES:
            raise InputError(f"{where}={direction!r} must be 'x', 'y', 'z' or three numbers")
        return tuple(sp.Integer(v) for v in AXES[direction])  # type: ignore[return-value]
    if not isinstance(direction, (list, tuple)) or len(direction) != 3:
        raise InputError(f"{where}={direction!r} must be 'x', 'y', 'z' or three numbers")
    comps = []
    for k, v in enumerate(direction):
        if isinstance(v, bool) or not isinstance(v, (Real, sp.Rational)):
            raise InputError(f"{where}: component {k} = {v!r} is not a number")
        comps.append(sp.Rational(repr(v)) if isinstance(v, float) else sp.Rational(v))
    norm2 = sum(c * c for c in comps)
    if norm2 == 0:
        raise InputError(f"{where}: the direction {list(direction)} is the zero vector")
    norm = sp.sqrt(norm2)
    return tuple(sp.radsimp(c / norm) for c in comps)  # type: ignore[return-value]


def _spin_handles(g_by_site: object, what: str) -> list[tuple[SpinSite, GTensor]]:
    if not isinstance(g_by_site, Mapping) or not g_by_site:
        raise InputError(f"{what}: give the g of each spin site as a mapping {{site: g}}")
    out = []
    for site, g in g_by_site.items():
        if not isinstance(site, SpinSite):
            raise InputError(f"{what}: {site!r} is not a spin site (made with symresp.spin)")
        out.append((site, g_tensor(g, where=f"{what}: g of site {site.site.name!r}")))
    return out


def _projection(pairs: list[tuple[SpinSite, GTensor]], n: Sequence[sp.Expr]) -> Operator:
    total = Operator((), frozenset(s.site for s, _ in pairs))
    for s, g in pairs:
        cx, cy, cz = g.along(n)
        total = total + cx * s.x + cy * s.y + cz * s.z
    return total


@public
def zeeman(g_by_site: Mapping, field: object, *, direction: object = "z",
           energy_unit: str = "K") -> Operator:
    r"""The Zeeman term of spins with g tensors in a field of ``field`` tesla along ``direction``.

    .. math:: H_Z = \frac{\mu_B}{E_u}\,B \sum_i \mathbf n\cdot g_i\cdot\mathbf S_i

    (electron sign: the moment is :math:`-\mu_B g\mathbf S`, ``docs/conventions.md`` section 8),
    with :math:`\mu_B/E_u` the exact rational of the CODATA 2018 values in ``energy_unit``.

    Parameters
    ----------
    g_by_site : mapping
        ``{spin_site: g}``; g a scalar, ``{"parallel": ..., "perpendicular": ...}`` or a 3x3
        tensor (see :func:`symresp.emit.g_tensor`).
    field : number or sympy expression
        Field strength in tesla (a symbol such as ``B`` keeps it a parameter).
    direction : {"x", "y", "z"} or three numbers
        Field direction (normalised here).
    energy_unit : str
        Unit of the Hamiltonian the term is added to.

    Returns
    -------
    Operator

    Raises
    ------
    InputError
        On a site that is not a spin, a bad g, direction or unit.

    Examples
    --------
    A spin 1/2 with g = 2 at 1 T, energies in kelvin: levels at :math:`\pm\mu_B B/k_B`.

    >>> import sympy as sp, symresp as sr
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> m = sr.Model(sr.zeeman({s: 2}, 1, energy_unit="K"))
    >>> sorted(round(float(lv.energy), 5) for lv in m.levels())
    [-0.67171, 0.67171]

    See Also
    --------
    magnetic_moment, symresp.emit.zeeman_constant
    """
    pairs = _spin_handles(g_by_site, "zeeman")
    B = _entry(field, "zeeman: field")
    n = field_direction(direction, where="zeeman: direction")
    c = zeeman_constant(energy_unit)
    return sp.Rational(c.numerator, c.denominator) * B * _projection(pairs, n)


@public
def magnetic_moment(g_by_site: Mapping, *, direction: object = "z") -> Operator:
    r"""The magnetic moment along ``direction`` in Bohr magnetons,
    :math:`\mu_n/\mu_B = -\sum_i \mathbf n\cdot g_i\cdot\mathbf S_i`.

    Its isothermal susceptibility is the magnetic one in units of :math:`\mu_B^2`/energy, and its
    thermal average is the magnetisation per formula unit in :math:`\mu_B`.

    Parameters
    ----------
    g_by_site : mapping
        ``{spin_site: g}`` as for :func:`zeeman`.
    direction : {"x", "y", "z"} or three numbers

    Returns
    -------
    Operator

    Examples
    --------
    Curie law of a spin 1/2 with g = 2: :math:`\chi = g^2\beta/4 = \beta`.

    >>> import sympy as sp, symresp as sr
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> sr.Model(0 * s.z).response(sr.magnetic_moment({s: 2})).static("isothermal")
    beta

    See Also
    --------
    zeeman
    """
    pairs = _spin_handles(g_by_site, "magnetic_moment")
    n = field_direction(direction, where="magnetic_moment: direction")
    return -_projection(pairs, n)


# ------------------------------------------------------------------------------ orientations
@dataclass(frozen=True, slots=True, eq=False)
class Quadrature:
    """Directions (unit vectors, rows) and weights (summing to 1) of an orientation average."""

    rule: str
    directions: np.ndarray
    weights: np.ndarray

    def describe(self) -> str:
        """The rule in words, with its number of directions."""
        return f"{self.rule} ({len(self.weights)} directions)"


#: Default number of Gauss-Legendre nodes in cos(theta) of the orientation quadrature.
DEFAULT_ORDER = 8


def orientation_quadrature(symmetry: str, order: int = DEFAULT_ORDER) -> Quadrature:
    r"""Directions and weights for the orientation (powder) average of a field-direction
    dependent quantity :math:`f(\mathbf n)` with :math:`f(-\mathbf n) = f(\mathbf n)`.

    * ``"isotropic"``: one direction (z), weight 1.
    * ``"axial"`` (symmetric about z): :math:`\frac12\int_{-1}^1 f\,d\cos\theta` by the
      Gauss-Legendre rule with ``order`` nodes on :math:`\cos\theta \in [0, 1]`, directions in
      the xz plane; exact for polynomials in :math:`\cos\theta` of degree :math:`2\,order - 1`.
    * ``"general"``: the product of that rule with the midpoint rule of :math:`2\,order` nodes
      in :math:`\varphi \in [0, 2\pi)`; exact for spherical harmonics of degree up to
      :math:`2\,order - 1` (common practice).

    The half range :math:`\cos\theta \ge 0` uses :math:`f(-\mathbf n) = f(\mathbf n)`, which holds
    for the magnetisation along the field by time reversal.

    Examples
    --------
    >>> from symresp.emit import orientation_quadrature
    >>> q = orientation_quadrature("axial", 4)
    >>> q.describe(), round(float(q.weights.sum()), 12)
    ('Gauss-Legendre in cos(theta), order 4, half sphere (4 directions)', 1.0)
    >>> round(float((q.weights * q.directions[:, 2] ** 2).sum()), 12)     # <cos^2> = 1/3
    0.333333333333
    """
    if symmetry not in ("isotropic", "axial", "general"):
        raise InputError(f"orientation_quadrature: symmetry={symmetry!r} must be 'isotropic', "
                         f"'axial' or 'general'")
    if isinstance(order, bool) or not isinstance(order, int) or not 1 <= order <= 64:
        raise InputError(f"orientation_quadrature: order={order!r} must be an integer from 1 to 64")
    if symmetry == "isotropic":
        return Quadrature("one direction (isotropic)", np.array([[0.0, 0.0, 1.0]]), np.array([1.0]))
    x, w = np.polynomial.legendre.leggauss(order)
    u = 0.5 * (x + 1.0)                       # cos(theta) in [0, 1]
    wu = 0.5 * w                              # weights sum to 1 on [0, 1]
    s = np.sqrt(1.0 - u * u)
    if symmetry == "axial":
        dirs = np.stack([s, np.zeros_like(u), u], axis=1)
        return Quadrature(f"Gauss-Legendre in cos(theta), order {order}, half sphere", dirs, wu)
    m = 2 * order
    phi = (np.arange(m) + 0.5) * 2.0 * np.pi / m
    dirs = np.stack([np.outer(s, np.cos(phi)).ravel(), np.outer(s, np.sin(phi)).ravel(),
                     np.repeat(u, m)], axis=1)
    weights = np.repeat(wu, m) / m
    return Quadrature(f"Gauss-Legendre in cos(theta), order {order}, times the midpoint rule "
                      f"in phi with {m} nodes, half sphere", dirs, weights)
