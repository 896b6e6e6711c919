"""The bundled ILLUSTRATIVE demo scenario (invented numbers; see demo_data/README.md).

A fictitious group screens twelve hypothetical surfaces (alloy facets ALY-01..06, single-atom
sites SAS-01..06) for ORR/OER, HER, CO2RR and NRR. The energies are invented for demonstration
and must not be cited or compared with experiment.
"""

from __future__ import annotations

import pathlib
from importlib import resources

__all__ = ["demo_path", "demo_energies", "DEMO_LABEL"]

DEMO_LABEL = "ILLUSTRATIVE demo data (invented numbers, hypothetical surfaces)"


def demo_path() -> pathlib.Path:
    """Path of the bundled demo CSV (E + ZPE/CpdT/TS/solvation per adsorbate, eV)."""
    return pathlib.Path(str(resources.files("ecatlab") / "data" / "illustrative_screening.csv"))


def demo_energies(temperature: float | None = None):
    """The demo table as an :class:`~ecatlab.energies.EnergyTable` (illustrative numbers)."""
    from ecatlab.energies import read_energies

    return read_energies(demo_path(), temperature=temperature, name="illustrative_screening.csv (bundled demo)")
