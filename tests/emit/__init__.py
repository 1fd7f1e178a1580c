"""Tests of the emit layer: numpy evaluator modules, LaTeX, units, fitting with the evaluators.

Numeric references are built from plain Kronecker products (``tests/numeric/_kron.py``) and
solved with :mod:`symresp.numeric`; emitted modules are run in a process without sympy.
"""
