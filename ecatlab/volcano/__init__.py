r"""Volcanoes, activity maps and selectivity maps built on scaling relations.

Model
-----
Scaling relations (:mod:`ecatlab.scaling`) express every adsorbate of a pathway as an affine
function of one or two *descriptors* :math:`D` (eV), each an adsorbate or a linear combination of
adsorbates such as ``"O* - OH*"``. Relations may chain (OOH* from OH*, OH* from O*). With the base
adsorbates :math:`g` (those not predicted by any relation)

.. math::

    \Delta G_s = C_s \cdot g + d_s, \qquad D = M g + m \;\Rightarrow\; g = M^{-1}(D - m)

so on a grid of descriptor values every adsorbate has a synthetic free energy. These synthetic
surfaces go through the CHE engine unchanged
(:meth:`ecatlab.che.CompiledPathway.affine`, vectorised over the grid), giving per step
:math:`\Delta G_i(U) = a_i + n_i U` and the onset line :math:`U_i = -a_i/n_i` (V on the chosen
scale). The limiting potential is the envelope

.. math::

    U_L = \min_i U_i \;\text{(reduction)}, \qquad U_L = \max_i U_i \;\text{(oxidation)}

over electrochemical steps (chemical steps are reported separately as ``max_chemical_dG``, as in
:func:`ecatlab.che.limiting_potentials`). The *apex* is the best :math:`U_L` over the descriptor
range: found exactly from the intersections of the step lines (1D) or by linear programming
(2D, :func:`scipy.optimize.linprog`), not from the grid. The theoretical overpotential at the apex
is the scaling-imposed minimum, e.g. 0.37 V for ORR/OER with
:math:`\Delta G(OOH^*) = \Delta G(OH^*) + 3.2` eV (Man et al., ChemCatChem 3, 1159 (2011);
Koper, J. Electroanal. Chem. 660, 254 (2011)).

Computed surfaces are placed at their own descriptor values with their *exact* limiting
potentials from :func:`ecatlab.che.limiting_potentials` (not the scaling prediction, which is given
alongside as ``scaling_limiting_potential``).

Selectivity maps compare products by the kernel's ranking rule (:func:`ecatlab.che.kernel.ranking_order`):
products whose route has no uphill chemical step come first (an uphill CO desorption blocks CO at
every potential), then the least negative onset potential (RHE scale by default) wins; a blocked
product wins only where every product is blocked. By default (``basis="auto"``) the onset of a product is the limiting
potential of its best route in the reaction network (:mod:`ecatlab.network`), searched on the
synthetic surfaces of the whole grid at once; HER comes from the engine's
``her-volmer-heyrovsky`` pathway. When the scaling relations do not cover the network, the
built-in pathways (CO, HCOOH, CH4, CH3OH and HER) are compared instead, and the map says so.

Layers: :class:`VolcanoAnalysis` computes, the result objects (:class:`VolcanoCurve`,
:class:`ActivityMap`, :class:`SelectivityMap`) hold arrays and give DataFrames; plotting lives in
:mod:`ecatlab.plotting.volcano`.
"""

import sys as _sys
import types as _types

from ecatlab.volcano.space import DescriptorSpace, build_space
from ecatlab.volcano.results import ActivityMap, Apex, SelectivityMap, VolcanoCurve
from ecatlab.volcano.selectivity import DEFAULT_PRODUCTS, SELECTIVITY_BASES
from ecatlab.volcano.analysis import VolcanoAnalysis
from ecatlab.volcano.api import activity_map, selectivity_map, volcano, volcano_summary

__all__ = [
    "VolcanoAnalysis",
    "VolcanoCurve",
    "Apex",
    "ActivityMap",
    "SelectivityMap",
    "DescriptorSpace",
    "build_space",
    "volcano",
    "activity_map",
    "selectivity_map",
    "volcano_summary",
    "DEFAULT_PRODUCTS",
    "SELECTIVITY_BASES",
]


class _CallableModule(_types.ModuleType):
    """``ecatlab.volcano`` is both this package and the function :func:`volcano`.

    ``import ecatlab.volcano`` (done by the report, the explorer, ...) makes the attribute
    ``ecatlab.volcano`` this module instead of the lazily exported function; calling the module
    calls the function, so ``ecatlab.volcano(table, "orr-4e", "OH*")`` works either way."""

    def __call__(self, *args, **kwargs):
        return volcano(*args, **kwargs)


_sys.modules[__name__].__class__ = _CallableModule
