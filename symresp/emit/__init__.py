"""Emitted outputs (layer: emit): standalone numpy evaluators, LaTeX, physical units.

Public surface:

* :func:`numpy_module_source`, :func:`compile_module`, :func:`numpy_functions`: a numpy-only
  module evaluating a derived response (static chi and its parameter Jacobian, chi(omega),
  broadened spectra, chi(t)) that stays finite at low temperature and at level crossings;
* :func:`latex_document`: paper-ready equations; :func:`latex_report`: a complete LaTeX
  document (or its body) of presented responses; :func:`presentation_record`: JSON-ready data;
* pictures (:mod:`._pictures` computes, :mod:`._plots` draws with the optional matplotlib):
  level diagrams with transition arrows, level sweeps, stick spectra, chi''(omega, T) maps,
  chi(T), chi*T and 1/chi;
* energy units and molar magnetic susceptibilities (:mod:`._units`);
* the Zeeman term from g tensors and a field in tesla, magnetic moments and orientation
  quadratures (:mod:`._magnet`); molar magnetometry and its corrections
  (:mod:`._magnetometry`); magnetisation from the closed-form levels
  (:mod:`._levelfunctions`); resonance (ESR) fields at a fixed frequency (:mod:`._resonance`).

Imports the layers below it (response, spectrum, conventions, errors); nothing below imports it.
"""

from ._json import JSON_FORMAT, presentation_record
from ._latex import latex_comment, latex_document, latex_text
from ._levelfunctions import LevelFunctions, evaluator_parameters, level_functions
from ._magnet import (AXES, GTensor, Quadrature, field_direction, g_tensor, magnetic_moment,
                      orientation_quadrature, zeeman)
from ._magnetometry import (SYSTEMS, Corrections, brillouin, effective_moment, molar_factor,
                            moment_factor, powder_average)
from ._numpy_module import compile_module, numpy_functions, numpy_module_source, symresp_version
from ._pictures import (LevelScheme, SpectralMap, Spectrum, StaticCurves, Sweep, level_scheme,
                        level_sweep, spectral_map, spectrum, static_curves)
from ._plots import (COLOUR_MAP, DASHES, HAVE_MATPLOTLIB, PALETTE, STATIC_KINDS, draw_levels,
                     draw_map, draw_spectrum, draw_static, draw_sweep, figure_bytes, fit_figure,
                     new_figure, save_figure)
from ._report import (escape_text, formula_latex, latex_names, latex_report, presentation_aligned,
                      presentation_latex)
from ._resonance import DEFAULT_FREQUENCY_GHZ, DEFAULT_MAX_FIELD, Resonance, resonance_fields
from ._units import (AVOGADRO, BOHR_MAGNETON, BOLTZMANN, ELEMENTARY_CHARGE, ENERGY_UNITS, EXACT,
                     PLANCK, SPEED_OF_LIGHT, TEMPERATURE_UNITS, VACUUM_PERMEABILITY,
                     convert_energy, curie_constant, energy_factor, energy_in_joule,
                     energy_in_joule_exact, energy_unit_name, molar_susceptibility,
                     molar_susceptibility_times_temperature, temperature_factor,
                     temperature_unit_name, zeeman_constant)

__all__ = [
    "numpy_module_source", "compile_module", "numpy_functions", "symresp_version",
    "latex_document", "latex_text", "latex_comment", "latex_report", "presentation_latex", "presentation_aligned",
    "formula_latex", "latex_names", "escape_text", "presentation_record", "JSON_FORMAT",
    "LevelScheme", "Sweep", "Spectrum", "SpectralMap", "StaticCurves", "level_scheme",
    "level_sweep", "spectrum", "spectral_map", "static_curves",
    "HAVE_MATPLOTLIB", "PALETTE", "DASHES", "COLOUR_MAP", "STATIC_KINDS", "new_figure",
    "save_figure", "figure_bytes", "draw_levels", "draw_sweep", "draw_spectrum", "draw_map",
    "draw_static", "fit_figure",
    "energy_in_joule", "energy_factor", "convert_energy", "molar_susceptibility",
    "molar_susceptibility_times_temperature",
    "curie_constant", "ENERGY_UNITS", "PLANCK", "BOLTZMANN", "ELEMENTARY_CHARGE",
    "SPEED_OF_LIGHT", "AVOGADRO", "BOHR_MAGNETON", "VACUUM_PERMEABILITY",
    "EXACT", "TEMPERATURE_UNITS", "energy_in_joule_exact", "zeeman_constant", "temperature_factor",
    "energy_unit_name", "temperature_unit_name",
    "GTensor", "g_tensor", "field_direction", "zeeman", "magnetic_moment", "orientation_quadrature",
    "Quadrature", "AXES",
    "molar_factor", "moment_factor", "effective_moment", "brillouin", "Corrections",
    "powder_average", "SYSTEMS",
    "LevelFunctions", "level_functions", "evaluator_parameters",
    "Resonance", "resonance_fields", "DEFAULT_FREQUENCY_GHZ", "DEFAULT_MAX_FIELD",
]
