"""The computational hydrogen electrode (CHE): kernel, conditions and the engine built on them.

* :mod:`ecatlab.che.kernel` -- the primitives (dG(U), onsets, envelope, signed overpotential,
  chemical-step obstacle, G_max, ranking order). The only module that turns free energies into
  potentials.
* :mod:`ecatlab.che.conditions` -- :class:`Conditions` (scale, pH, T), validated once.
* :mod:`ecatlab.che.engine` -- compiles pathways into arrays and builds the public tables
  (:func:`step_free_energies`, :func:`state_free_energies`, :func:`limiting_potentials`,
  :func:`equilibrium_potential`).
"""

from ecatlab.che import kernel
from ecatlab.che.conditions import Conditions, PH_RANGE, SCALES, TEMPERATURE_RANGE_K
from ecatlab.che.engine import *  # noqa: F401,F403
from ecatlab.che.engine import __all__ as _engine_all
from ecatlab.che.engine import _check_conditions, _select_surfaces  # noqa: F401  (used by ecatlab.network)

__all__ = ["kernel", "Conditions", "PH_RANGE", "SCALES", "TEMPERATURE_RANGE_K", *_engine_all]
