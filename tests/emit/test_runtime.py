"""The runtime of emitted modules, tested as the module it is (symresp/emit/_runtime.py).

The stable helpers are compared with mpmath at 50 digits (an outside reference); the copied
text is checked to stand alone.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import mpmath as mp
import numpy as np
import pytest

from symresp._tolerances import DEGENERACY_RTOL
from symresp.emit import _runtime as rt

from ..conftest import RTOL_EXACT

#: Spacings beta*|w| from far below the series threshold to far above it.
Y = [0.0, 1e-14, 1e-9, 1e-4, 0.009999, 0.01, 0.010001, 0.3, 1.0, 7.5, 40.0, 700.0]


def _phi(y):
    """(1 - e^{-y})/y, limit 1 at y = 0 (common practice: the Bose/Boltzmann difference
    quotient)."""
    with mp.workdps(50):
        y = mp.mpf(y)
        return mp.mpf(1) if y == 0 else -mp.expm1(-y) / y


def _psi(y):
    """(1 - e^{-y} - y)/y^2, limit -1/2 at y = 0 (its Taylor series)."""
    with mp.workdps(50):
        y = mp.mpf(y)
        return mp.mpf(-0.5) if y == 0 else (-mp.expm1(-y) - y) / y**2


def _psiphi(y):
    """psi(y) + phi(y) = (1 - e^{-y}(1 + y))/y^2, limit 1/2 at y = 0."""
    with mp.workdps(50):
        y = mp.mpf(y)
        return mp.mpf(0.5) if y == 0 else (-mp.expm1(-y) - y * mp.exp(-y)) / y**2


@pytest.mark.parametrize("y", Y)
def test_series_and_closed_forms_agree_with_mpmath(y):
    for ours, ref in ((rt._psi_s, _psi), (rt._psiphi_s, _psiphi)):
        assert ours(y) == pytest.approx(float(ref(y)), rel=1e-12, abs=1e-300)
    grid = np.array([y, y])
    assert rt._psi_grid(grid.copy()) == pytest.approx([float(_psi(y))] * 2, rel=1e-12)
    assert rt._psiphi_grid(grid.copy()) == pytest.approx([float(_psiphi(y))] * 2, rel=1e-12)


@pytest.mark.parametrize("y", Y)
@pytest.mark.parametrize("sign", [1.0, -1.0])
def test_difference_quotient_of_boltzmann_factors_is_stable(y, sign):
    # (x_a - x_b) / (beta (E_b - E_a)) with x = exp(-beta E); equals the lower level's factor
    # times phi(beta |w|); the limit at w = 0 is x_a.
    beta, Ea = 2.0, 0.3
    w = sign * y / beta
    xa, xb = math.exp(-beta * Ea), math.exp(-beta * (Ea + w))
    lower = xa if w >= 0 else xb
    expected = float(lower * _phi(y))
    assert rt._expdiv_s(xa, xb, beta, w) == pytest.approx(expected, rel=RTOL_EXACT)
    arr = rt._expdiv_a(np.array([xa]), np.array([xb]), np.array([beta]), w)
    assert np.asarray(arr) == pytest.approx([expected], rel=RTOL_EXACT)


def test_level_grouping_is_relative_to_the_largest_level():
    for scale in (1.0, 1e-23, 1e8):   # kelvin, joules, ...: the same levels group
        E = [0.0 * scale, 1.0 * scale, -2.0 * scale]
        assert rt._degtol_s(DEGENERACY_RTOL, *E) == pytest.approx(2.0 * scale * DEGENERACY_RTOL)
        assert rt._degtol_a(DEGENERACY_RTOL, *map(np.array, E)) == pytest.approx(
            2.0 * scale * DEGENERACY_RTOL)


def test_temperatures_must_be_positive_numbers():
    assert rt._temperature(2.0) == 2.0
    assert np.array_equal(rt._temperature([1.0, 2.0]), [1.0, 2.0])
    for bad in (0.0, -1.0, float("nan"), [1.0, float("nan")]):
        with pytest.raises(ValueError, match="T must be > 0"):
            rt._temperature(bad)
    with pytest.raises(TypeError, match="must be a real number"):
        rt._temperature("3")


def test_copied_text_is_the_module_after_its_marker_and_stands_alone():
    text = rt.runtime_source()
    own = Path(rt.__file__).read_text(encoding="utf-8")
    assert text == f"_DEGENERACY_RTOL = {DEGENERACY_RTOL!r}\n" + own.split(rt.MARKER + "\n", 1)[1]
    assert not any(line.startswith(("import ", "from ")) for line in text.splitlines())
    # In a fresh interpreter that refuses sympy and symresp, the text runs with numpy, math
    # and cmath alone (the imports of every emitted module).
    code = ("import sys\n"
            "class Refuse:\n"
            "    def find_spec(self, name, path, target=None):\n"
            "        if name.split('.')[0] in ('sympy', 'symresp'):\n"
            "            raise ImportError(name)\n"
            "sys.meta_path.insert(0, Refuse())\n"
            "import cmath, math, numpy\n"
            "namespace = {'cmath': cmath, 'math': math, 'numpy': numpy, 'PARAMETERS': ()}\n"
            "exec(sys.stdin.read(), namespace)\n"
            "print(namespace['_expdiv_s'](1.0, math.exp(-0.5), 2.0, 0.25))\n")
    done = subprocess.run([sys.executable, "-c", code], input=text, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert float(done.stdout) == pytest.approx(-math.expm1(-0.5) / 0.5, rel=RTOL_EXACT)
