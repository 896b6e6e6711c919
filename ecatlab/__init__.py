"""ecatlab: computational-hydrogen-electrode free-energy analysis for electrocatalysis.

Import is light: heavy dependencies (pymatgen, scipy submodules, matplotlib, ipywidgets) load
only when the function that needs them is first used. Public names are resolved lazily.

Results are theoretical estimates (CHE model, thermodynamics only, no kinetics); any experiment
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
    # notebook explorer
    "explore": "ecatlab.explorer",
    "Explorer": "ecatlab.explorer",
    "ExplorerState": "ecatlab.explorer",
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
