"""Emitted outputs (layer: emit): standalone numpy evaluators, LaTeX, physical units.

Public surface:

* :func:`numpy_module_source`, :func:`compile_module`, :func:`numpy_functions`: a numpy-only
  module evaluating a derived response (static chi and its parameter Jacobian, chi(omega),
  broadened spectra, chi(t)) that stays finite at low temperature and at level crossings;
* :func:`latex_document`: paper-ready equations;
* energy units and molar magnetic susceptibilities (:mod:`._units`).

Imports the layers below it (response, spectrum, conventions, errors); nothing below imports it.
"""

from ._latex import latex_document
from ._numpy_module import compile_module, numpy_functions, numpy_module_source, symresp_version
from ._units import (AVOGADRO, BOHR_MAGNETON, BOLTZMANN, ELEMENTARY_CHARGE, ENERGY_UNITS, PLANCK,
                     SPEED_OF_LIGHT, VACUUM_PERMEABILITY, convert_energy, curie_constant,
                     energy_factor, energy_in_joule, molar_susceptibility,
                     molar_susceptibility_times_temperature)

__all__ = [
    "numpy_module_source", "compile_module", "numpy_functions", "symresp_version",
    "latex_document",
    "energy_in_joule", "energy_factor", "convert_energy", "molar_susceptibility",
    "molar_susceptibility_times_temperature",
    "curie_constant", "ENERGY_UNITS", "PLANCK", "BOLTZMANN", "ELEMENTARY_CHARGE",
    "SPEED_OF_LIGHT", "AVOGADRO", "BOHR_MAGNETON", "VACUUM_PERMEABILITY",
]
