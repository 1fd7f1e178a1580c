"""Case files (layer: cases): TOML descriptions of models, checked and turned into systems.

Imports the standard library, numpy, sympy, mpmath and the lower layers of symresp (errors,
conventions, algebra, text, models, response, numeric, emit). The format is documented in
``docs/case-files.md``; expressions use the safe formula language of :mod:`symresp.text`.
"""

from ._curves import Curves, response_curves
from ._find import (ENV_VARIABLE, CaseSummary, bundled_cases, case_directories, case_summary,
                    find_case)
from ._columns import read_columns
from ._json import Presented, case_json, decimal, present_case
from ._read import (ASSUMPTIONS, DEFAULT_QUANTITIES, MAX_CASE_BYTES, MAX_CASE_DEPTH, QUANTITIES,
                    CASE_SITE_WORDS, Case, Parameter, ResponseRequest, SiteSpec, nesting_fault,
                    parse_case, read_case)
from ._data import COLUMNS, MEASURED, DataTable, parse_data, read_data
from ._fit import Curve, FitResult, MagnetometryModel, fit_case, magnetometry_model
from ._magnet import ORIENTATIONS, Magnetism, SampleSpec, ZeemanSpec
from ._values import parameter_values, parse_assignments, with_values
from ._verify import (VERIFY_ATOL, VERIFY_RTOL, Check, Verification, derive_case, energy_scale,
                      sample_point, verify_case)

__all__ = [
    "Case", "Parameter", "SiteSpec", "ResponseRequest", "read_case", "parse_case",
    "QUANTITIES", "DEFAULT_QUANTITIES", "ASSUMPTIONS", "CASE_SITE_WORDS", "MAX_CASE_BYTES",
    "MAX_CASE_DEPTH", "nesting_fault", "find_case", "bundled_cases", "case_directories", "case_summary", "CaseSummary", "ENV_VARIABLE",
    "derive_case", "verify_case", "Check", "Verification", "sample_point", "energy_scale",
    "VERIFY_RTOL", "VERIFY_ATOL", "Curves", "response_curves",
    "Magnetism", "ZeemanSpec", "SampleSpec", "ORIENTATIONS",
    "parse_assignments", "parameter_values", "with_values",
    "DataTable", "read_data", "parse_data", "MEASURED", "COLUMNS",
    "fit_case", "FitResult", "Curve", "magnetometry_model", "MagnetometryModel",
    "present_case", "case_json", "decimal", "Presented", "read_columns",
]
