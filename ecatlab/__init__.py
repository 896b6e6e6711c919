"""ecatlab: computational-hydrogen-electrode free-energy analysis for electrocatalysis.

Import is light: heavy dependencies (pymatgen, scipy submodules, matplotlib, ipywidgets) load
only when the function that needs them is first used. Public names are resolved lazily.

Results are theoretical estimates (CHE thermodynamics; microkinetics from stated, often estimated barriers); any experiment
they inform follows local safety codes and licensed practice.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS: dict[str, str] = {
    # notation
    "Species": "ecatlab.notation",
    "Step": "ecatlab.notation",
    "Pathway": "ecatlab.notation",
    # references and energies
    "ReferenceScheme": "ecatlab.references",
    "EnergyTable": "ecatlab.energies",
    "read_energies": "ecatlab.energies",
    # pathways
    "pathway": "ecatlab.pathways",
    "list_pathways": "ecatlab.pathways",
    "REACTION_FAMILIES": "ecatlab.pathways",
    # CHE engine
    "step_free_energies": "ecatlab.che",
    "state_free_energies": "ecatlab.che",
    "limiting_potentials": "ecatlab.che",
    "equilibrium_potential": "ecatlab.che",
    "nernst_shift": "ecatlab.che",
    "LIMITING_POTENTIAL_COLUMNS": "ecatlab.che",
    # demo data
    "demo_energies": "ecatlab.demo",
    "demo_path": "ecatlab.demo",
    # thermochemistry and the gas library
    "HarmonicAdsorbate": "ecatlab.thermochemistry",
    "IdealGasMolecule": "ecatlab.thermochemistry",
    "LowFrequencyTreatment": "ecatlab.thermochemistry",
    "ThermoCorrection": "ecatlab.thermochemistry",
    "ModeChange": "ecatlab.thermochemistry",
    "detect_rotational_symmetry": "ecatlab.thermochemistry",
    "gas_molecule": "ecatlab.molecules",
    "reference_corrections": "ecatlab.molecules",
    "available_gases": "ecatlab.molecules",
    "water_vapour_pressure_bar": "ecatlab.molecules",
    # ingestion of DFT results
    "energy_table_from_vasp": "ecatlab.ingest",
    "adsorption_energies": "ecatlab.ingest",
    "read_vasp_run": "ecatlab.ingest",
    "read_vasp_modes": "ecatlab.ingest",
    # figures, tables, report
    "plot_free_energy_diagram": "ecatlab.plotting.diagram",
    "plot_diagram_at_potentials": "ecatlab.plotting.diagram",
    "plot_diagram_grid": "ecatlab.plotting.diagram",
    "plot_product_comparison": "ecatlab.plotting.diagram",
    "save_figure": "ecatlab.plotting.export",
    "limiting_potential_table": "ecatlab.tables",
    "rank_surfaces": "ecatlab.tables",
    "export_table": "ecatlab.tables",
    "build_report": "ecatlab.report",
    "write_report": "ecatlab.report",
    # reaction networks
    "build_network": "ecatlab.network",
    "NetworkAnalysis": "ecatlab.network",
    "best_route": "ecatlab.network",
    "best_routes": "ecatlab.network",
    "product_ranking": "ecatlab.network",
    "selectivity": "ecatlab.network",
    "EnergyEstimator": "ecatlab.network.estimate",
    "RouteSearch": "ecatlab.network.routes",
    "skeleton_from_smiles": "ecatlab.network.graphs",
    # scaling relations and volcanoes
    "fit_scaling": "ecatlab.scaling",
    "fit_scaling_relations": "ecatlab.scaling",
    "ScalingRelation": "ecatlab.scaling",
    "scaling_table": "ecatlab.scaling",
    "bond_counting_slope": "ecatlab.scaling",
    "volcano": "ecatlab.volcano",
    "activity_map": "ecatlab.volcano",
    "selectivity_map": "ecatlab.volcano",
    "volcano_summary": "ecatlab.volcano",
    "VolcanoAnalysis": "ecatlab.volcano",
    # descriptors (PCA), automatic scaling relations, surface Pourbaix diagrams
    "analyse_descriptors": "ecatlab.descriptors",
    "DescriptorAnalysis": "ecatlab.descriptors",
    "auto_scaling": "ecatlab.scaling",
    "AutoScaling": "ecatlab.scaling",
    "fill_missing_energies": "ecatlab.scaling",
    "SurfaceStates": "ecatlab.pourbaix",
    "read_surface_states": "ecatlab.pourbaix",
    "surface_states_from_energies": "ecatlab.pourbaix",
    "demo_surface_states": "ecatlab.pourbaix",
    "pourbaix_map": "ecatlab.pourbaix",
    "stable_states": "ecatlab.pourbaix",
    "transition_potential": "ecatlab.pourbaix",
    "flag_surface_states": "ecatlab.pourbaix",
    # notebook explorer
    "explore": "ecatlab.explorer",
    "Explorer": "ecatlab.explorer",
    "ExplorerState": "ecatlab.explorer",
    # safe output and pathway files (hostile-input handling)
    "read_pathway_file": "ecatlab.notation",
    "render_table": "ecatlab.tables",
    # uncertainty (error models, propagation, ensemble readers)
    "propagate_uncertainty": "ecatlab.uncertainty",
    "GaussianErrors": "ecatlab.uncertainty",
    "DescriptorErrors": "ecatlab.uncertainty",
    "CovarianceErrors": "ecatlab.uncertainty",
    "EnsembleErrors": "ecatlab.uncertainty",
    "UncertaintyResult": "ecatlab.uncertainty",
    "read_beef_ensemble": "ecatlab.ingest.ensembles",
    "read_deviations": "ecatlab.ingest.ensembles",
    "ensemble_from_structures": "ecatlab.ingest.ensembles",
    "network_uncertainty": "ecatlab.uncertainty.network",
    "volcano_band": "ecatlab.uncertainty.volcano",
    # steady-state microkinetics
    "build_kinetic_model": "ecatlab.kinetics",
    "KineticModel": "ecatlab.kinetics",
    "BarrierSettings": "ecatlab.kinetics",
    "Barriers": "ecatlab.kinetics",
    "solve_steady_state": "ecatlab.kinetics",
    "SteadyState": "ecatlab.kinetics",
    "polarization_curve": "ecatlab.kinetics",
    "coverage_table": "ecatlab.kinetics",
    "faradaic_efficiencies": "ecatlab.kinetics",
    "degree_of_rate_control": "ecatlab.kinetics",
    "kinetic_onset_potentials": "ecatlab.kinetics",
    "gmax_descriptor": "ecatlab.kinetics",
    "kinetics_summary": "ecatlab.kinetics",
    "plot_polarization": "ecatlab.plotting.kinetics",
    "plot_tafel": "ecatlab.plotting.kinetics",
    "plot_coverages": "ecatlab.plotting.kinetics",
    "plot_faradaic_efficiency": "ecatlab.plotting.kinetics",
    # columnar limiting potentials (large screens)
    "limiting_potential_arrays": "ecatlab.che",
    "LimitingPotentialArrays": "ecatlab.che",
    # Parquet datasets and the Dask path (screening beyond one machine's memory)
    "open_energy_dataset": "ecatlab.datasets",
    "read_energies_parquet": "ecatlab.datasets",
    "write_energies_parquet": "ecatlab.datasets",
    "EnergyDataset": "ecatlab.datasets",
    "EnergyDatasetWriter": "ecatlab.datasets",
    "dask_client": "ecatlab.scaleout",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'ecatlab' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return __all__
