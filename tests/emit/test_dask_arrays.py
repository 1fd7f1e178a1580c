"""Emitted evaluators over dask arrays: a chunked sweep equals the in-memory one.

The evaluator's numpy code runs unchanged on every block (dask.array.blockwise); the module
imports dask only when a dask array is passed, so a module used with numpy alone stays
standalone (checked in a child process where dask cannot be imported).
"""

from __future__ import annotations

import subprocess
import sys
import textwrap

import numpy as np
import pytest

from ..conftest import assert_close
from ._models import module, source

da = pytest.importorskip("dask.array")
cloudpickle = pytest.importorskip("cloudpickle")

#: Chunked and in-memory sweeps run the same numpy code on the same numbers; they may differ
#: only by the rounding of a matrix product over levels whose blocking follows the chunk size.
RTOL_CHUNKED = 1e-13
ATOL_CHUNKED = 1e-15

#: A T x parameter x omega grid, the parameter along the middle axis.
TEMPERATURES = np.linspace(0.05, 6.0, 12).reshape(-1, 1, 1)
OMEGAS = np.linspace(-4.0, 4.0, 50)
CHUNKS = {"T": (5, 1, 1), "p": (1, 4, 1), "omega": 17}


def _grid(name: str, values: np.ndarray):
    return da.from_array(values, chunks=CHUNKS[name])


def _parameters(mod, sweep: np.ndarray):
    """The first parameter swept along axis 1, the others fixed at 0.7, 0.4, ..."""
    first, *rest = mod.PARAMETERS
    fixed = [0.7 - 0.3 * k for k in range(len(rest))]
    return [sweep] + fixed


@pytest.mark.parametrize("name", ["dimer_zz", "rhombic", "tilted_field"])
def test_a_chunked_sweep_equals_the_in_memory_one(name):
    mod = module(name)
    sweep = np.linspace(0.5, 2.5, 8).reshape(1, -1, 1)
    ps = _parameters(mod, sweep)
    lazy_ps = [_grid("p", sweep)] + ps[1:]
    T, lazy_T = TEMPERATURES, _grid("T", TEMPERATURES)
    w, lazy_w = OMEGAS, _grid("omega", OMEGAS)
    calls = [
        ("chi_isothermal", (T[..., 0], *[p[..., 0] if np.ndim(p) else p for p in ps]),
         (lazy_T[..., 0], *[p[..., 0] if np.ndim(p) else p for p in lazy_ps]), {}),
        ("chi_isolated", (T, *ps), (lazy_T, *lazy_ps), {}),
        ("jacobian_static", (T, *ps), (lazy_T, *lazy_ps), {"kind": "isothermal"}),
        ("chi_omega", (w, T, *ps), (lazy_w, lazy_T, *lazy_ps), {"eta": 0.05}),
        ("chi_spectral", (w, T, *ps), (lazy_w, lazy_T, *lazy_ps),
         {"eta": 0.05, "shape": "gaussian"}),
        ("chi_time", (w + 4.0, T, *ps), (lazy_w + 4.0, lazy_T, *lazy_ps), {}),
        ("energies", tuple(ps), tuple(lazy_ps), {}),
    ]
    for fname, args, lazy_args, kwargs in calls:
        expected = getattr(mod, fname)(*args, **kwargs)
        lazy = getattr(mod, fname)(*lazy_args, **kwargs)
        assert isinstance(lazy, da.Array), fname            # nothing computed yet
        assert lazy.shape == expected.shape and lazy.dtype == expected.dtype, fname
        assert np.prod(lazy.numblocks) > 1, fname                # really chunked
        assert_close(lazy.compute(), expected, RTOL_CHUNKED, ATOL_CHUNKED, what=f"{name} {fname}")


def test_the_lazy_result_travels_to_other_processes():
    """A cluster's workers receive the block function by value (cloudpickle), without the
    module on their path."""
    mod = module("dimer_zz")
    lazy = mod.chi_isothermal(_grid("T", TEMPERATURES)[..., 0, 0], 1.0, 0.3)
    copy = cloudpickle.loads(cloudpickle.dumps(lazy))
    assert_close(copy.compute(), mod.chi_isothermal(TEMPERATURES[:, 0, 0], 1.0, 0.3),
                 RTOL_CHUNKED, ATOL_CHUNKED)


def test_bad_values_inside_a_block_raise_when_computed():
    mod = module("dimer_zz")
    lazy = mod.chi_isothermal(da.from_array(np.array([1.0, -1.0]), chunks=1), 1.0, 0.3)
    with pytest.raises(ValueError, match="T must be > 0"):
        lazy.compute()


_CHILD = textwrap.dedent(r'''
    import importlib.util, sys
    sys.modules["dask"] = None           # any "import dask" below raises ImportError
    sys.modules["sympy"] = None
    import numpy as np
    spec = importlib.util.spec_from_file_location("evaluator", sys.argv[1])
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    T = np.linspace(0.5, 3.0, 7)
    print(mod.chi_isothermal(T, 1.0, 0.2).shape, mod.jacobian_static(T, 1.0, 0.2).shape,
          mod.chi_omega(np.linspace(-1, 1, 5), 1.0, 1.0, 0.2, eta=0.1).shape,
          mod.energies(np.array([1.0, 2.0]), 0.2).shape)
    print(sorted(m for m in sys.modules if m.split(".")[0] == "dask" and sys.modules[m]))
''')


def test_the_module_needs_no_dask_for_numpy_inputs(tmp_path):
    path = tmp_path / "evaluator.py"
    path.write_text(source("dimer_zz"))
    out = subprocess.run([sys.executable, "-c", _CHILD, str(path)], capture_output=True,
                         text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.split("\n")[:2] == ["(7,) (7, 2) (5,) (2, 4)", "[]"]
