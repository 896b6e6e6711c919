"""Steady-state microkinetics on CHE free energies: rate constants, steady states, currents.

Layers: :mod:`~ecatlab.kinetics.rates` (rate constants, barriers) -> :mod:`~ecatlab.kinetics.model`
(model arrays from pathways + energies + conditions) -> :mod:`~ecatlab.kinetics.solver` (steady
states over surfaces x potentials) -> :mod:`~ecatlab.kinetics.analysis` (DataFrames). Pure
computation: no plotting, no files.

Results are theoretical estimates (mean-field kinetics on CHE free energies, estimated barriers
flagged as such); any experiment they inform follows local safety codes and licensed practice.
"""

from ecatlab.kinetics.analysis import (
    coverage_table,
    degree_of_rate_control,
    faradaic_efficiencies,
    gmax_descriptor,
    kinetics_summary,
    onset_potentials,
    polarization_curve,
)
from ecatlab.kinetics.model import KineticModel, PathwayInfo, build_model
from ecatlab.kinetics.rates import BarrierSettings, Barriers, DEFAULT_SITE_DENSITY_PER_CM2
from ecatlab.kinetics.solver import SteadyState, solve_steady_state

__all__ = [
    "KineticModel",
    "PathwayInfo",
    "build_model",
    "BarrierSettings",
    "Barriers",
    "DEFAULT_SITE_DENSITY_PER_CM2",
    "SteadyState",
    "solve_steady_state",
    "polarization_curve",
    "coverage_table",
    "faradaic_efficiencies",
    "degree_of_rate_control",
    "onset_potentials",
    "kinetic_onset_potentials",
    "gmax_descriptor",
    "kinetics_summary",
    "build_kinetic_model",
]

#: Top-level names (``ecatlab.build_kinetic_model``, ``ecatlab.kinetic_onset_potentials``): distinct
#: from the CHE engine's and the network's functions of similar names.
build_kinetic_model = build_model
kinetic_onset_potentials = onset_potentials
