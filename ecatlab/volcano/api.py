"""Functional front ends of the volcano analysis (one call each; see :class:`ecatlab.volcano.VolcanoAnalysis`)."""

from __future__ import annotations

from typing import Iterable, Mapping, Sequence

import pandas as pd

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.references import ReferenceScheme
from ecatlab.scaling import ScalingRelation
from ecatlab.volcano.analysis import VolcanoAnalysis
from ecatlab.volcano.results import ActivityMap, SelectivityMap, VolcanoCurve

__all__ = ["volcano", "activity_map", "selectivity_map", "volcano_summary"]


def _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against=None) -> VolcanoAnalysis:
    return VolcanoAnalysis(energies, relations or (), fixed_slopes, pH, scale, temperature, references, fit_against)


def volcano(
    energies,
    pathway,
    descriptor,
    relations: Iterable[ScalingRelation] = (),
    fixed_slopes: Mapping[str, float] | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    grid=None,
    span=None,
    points: int = 401,
    references: ReferenceScheme | None = None,
    fit_against: str | None = None,
    chemical_steps: bool = True,
) -> VolcanoCurve:
    """1D limiting-potential volcano of ``pathway`` vs ``descriptor``; see :meth:`VolcanoAnalysis.volcano`.

    ``chemical_steps=True`` (default) puts the pathway's chemical steps on the curve (effective
    limiting potential U_eq -/+ G_max/e); ``False`` gives the purely electrochemical envelope.

    ``energies`` may be None when ``relations`` cover every adsorbate. ``fixed_slopes`` and
    ``fit_against`` control the relations fitted to ``energies`` (see :class:`VolcanoAnalysis`).

    Examples
    --------
    >>> from ecatlab.scaling import ScalingRelation
    >>> rels = [ScalingRelation.given("OOH*", "OH*", 1.0, 3.2), ScalingRelation.given("O*", "OH*", 2.0, 0.0)]
    >>> round(volcano(None, "orr-4e", "OH*", rels).apex.overpotential, 2)
    0.37
    """
    return _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against).volcano(
        pathway, descriptor, grid, span, points, chemical_steps
    )


def activity_map(
    energies,
    pathway,
    descriptors: Sequence,
    relations: Iterable[ScalingRelation] = (),
    fixed_slopes: Mapping | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    x=None,
    y=None,
    points=161,
    references: ReferenceScheme | None = None,
    fit_against: Sequence[str] | None = None,
) -> ActivityMap:
    """Limiting potential over two descriptors; see :meth:`VolcanoAnalysis.activity_map`."""
    return _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against).activity_map(pathway, descriptors, x, y, points)


def selectivity_map(
    energies,
    descriptors: Sequence,
    products: Sequence | None = None,
    relations: Iterable[ScalingRelation] = (),
    fixed_slopes: Mapping | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    x=None,
    y=None,
    points=None,
    references: ReferenceScheme | None = None,
    fit_against: Sequence[str] | None = None,
    basis: str = "auto",
    reactant: str = "CO2",
    network_options: Mapping | None = None,
    chemical_limit: float | None = None,
) -> SelectivityMap:
    """Winning product over two descriptors; see :meth:`VolcanoAnalysis.selectivity_map`.

    The winner at each point: products whose route has no uphill chemical step first, then the
    least negative onset potential (the kernel's ranking rule, as in the network's
    ``product_ranking``); a blocked product wins only where every product is blocked.

    ``basis="auto"`` (default) compares the best routes of the reaction network when the scaling
    relations cover its adsorbates, else the built-in pathways; ``smap.basis`` and
    ``smap.basis_note`` say which was used and what was left out. ``chemical_limit`` (eV, default
    None) drops routes/pathways with a chemical step uphill by more than that;
    ``smap.winner_max_chemical_dG`` (eV) shows the largest chemical step of the winner's route.

    Examples
    --------
    >>> from ecatlab.demo import demo_energies          # ILLUSTRATIVE invented numbers
    >>> s = selectivity_map(demo_energies(), ("CO*", "OH*"), points=21)
    >>> s.basis, s.product_labels[-1]
    ('network', 'H2')
    """
    return _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against).selectivity_map(
        descriptors, products, x, y, points, basis, reactant, network_options, chemical_limit
    )


def volcano_summary(energies, pathway, descriptor, **kwargs) -> pd.DataFrame:
    """Apex, equilibrium potential and scaling relations of a 1D volcano as a quantity/value/unit/note table.

    Keyword arguments are those of :func:`volcano`.
    """
    return volcano(energies, pathway, descriptor, **kwargs).summary()
