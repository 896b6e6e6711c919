"""Uncertainty of CHE results: error models, one seeded sampler, propagation through the kernel.

Pure computation (no files, plots or widgets). Readers for ensemble files live in
:mod:`ecatlab.ingest.ensembles`, figures in :mod:`ecatlab.plotting.uncertainty`.
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
