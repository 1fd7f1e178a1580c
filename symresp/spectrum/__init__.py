"""Spectrum (layer: spectrum): symmetry blocks, exact eigen-solution per block, eigenspace weights.

Imports sympy, python-flint, :mod:`symresp.errors`, :mod:`symresp.algebra`, :mod:`symresp.models`.
"""

from ._roots import (ROOT_DIGITS, LevelRoot, atoms_outside_roots, freeze_roots, number_value, real_root,
                     replace_outside_roots, root_float, root_value)
from ._implicit import BlockWeight, ImplicitBlock, implicit_roots, value_at
from ._blocks import Block, BlockStructure, QuantumNumber, decompose
from ._solve import BlockSolution, Factor, Part, Spectrum, clean, is_zero_number, solve
from ._ladder import LadderSpectrum, WeightTable, edge_positions, edge_weights, solve_ladder

__all__ = ["ROOT_DIGITS", "LevelRoot", "real_root", "root_value", "root_float", "freeze_roots", "atoms_outside_roots", "replace_outside_roots", "number_value", "BlockWeight", "ImplicitBlock", "implicit_roots", "value_at", "Block", "BlockStructure", "QuantumNumber", "decompose", "BlockSolution", "Factor",
           "Part", "Spectrum", "clean", "is_zero_number", "solve", "LadderSpectrum", "WeightTable", "solve_ladder",
           "edge_positions", "edge_weights"]
