"""Uncertainty of CHE results: error models, one seeded sampler, propagation through the kernel.

Pure computation (no files, plots or widgets): :mod:`~ecatlab.uncertainty.models`,
:mod:`~ecatlab.uncertainty.sampler`, :mod:`~ecatlab.uncertainty.propagate`, network read-outs in
:mod:`~ecatlab.uncertainty.network`, the volcano band in :mod:`~ecatlab.uncertainty.volcano`.
Readers for ensemble files live in :mod:`ecatlab.ingest.ensembles`, figures in
:mod:`ecatlab.plotting.uncertainty`, the report section in
:mod:`ecatlab.uncertainty.report_section` (presentation; the computation never imports it).
Results are theoretical estimates.
"""

from ecatlab.uncertainty.models import (
    CovarianceErrors,
    DescriptorErrors,
    EnsembleErrors,
    ErrorModel,
    GaussianErrors,
    binding_atom,
)
from ecatlab.uncertainty.propagate import QUANTITY_UNITS, SUMMARY_COLUMNS, PathwaySamples, UncertaintyResult, propagate

#: The same function under the name exported from the top-level package.
propagate_uncertainty = propagate

__all__ = [
    "ErrorModel",
    "EnsembleErrors",
    "GaussianErrors",
    "DescriptorErrors",
    "CovarianceErrors",
    "binding_atom",
    "propagate",
    "propagate_uncertainty",
    "UncertaintyResult",
    "PathwaySamples",
    "SUMMARY_COLUMNS",
    "QUANTITY_UNITS",
]
