r"""Reaction networks from molecular structure: every intermediate a molecular graph, every step a
bond change, best routes per surface by a bottleneck shortest-path search.

The package, along its seams:

* :mod:`ecatlab.network.graphs` -- intermediates as RDKit molecular graphs with the surface bond on
  dummy atoms; canonical identity (isomers distinct: ``COOH*`` vs ``OCHO*``); ecatlab names <->
  graphs; user SMILES with the binding atom marked.
* :mod:`ecatlab.network.rules` -- elementary-step rules that record the bond they change
  (proton-electron transfer to a named atom, C-O / C-OH scission releasing water or OH,
  dehydrogenation, desorption / adsorption, C-C coupling).
* :mod:`ecatlab.network.build` -- :func:`build_network`: states and steps from the reactant with
  filters (max carbons, max steps, allow / forbid by name, pattern or bond, products of interest).
* :mod:`ecatlab.network.model` -- :class:`NetworkState`, :class:`NetworkEdge`,
  :class:`ReactionNetwork` (structure only).
* :mod:`ecatlab.network.estimate` -- energies for adsorbates the table lacks (scaling with the
  binding atom, or group additivity fitted on the table), with error estimates.
* :mod:`ecatlab.network.routes` -- the vectorised bottleneck (minimax) search.
* :mod:`ecatlab.network.analysis` -- :class:`NetworkAnalysis`: step free energies from the CHE
  engine, best routes and alternatives, product ranking with HER, where each surface gets stuck,
  the network pruned at a potential, selectivity read-outs.

**Route cost.** Every step cost comes from the CHE kernel: an electrochemical step costs
:math:`-U_e = a_e/n_e` (eV), a chemical step with :math:`\Delta G \le 0` costs nothing and one with
:math:`\Delta G > 0` makes the route *blocked* (cost 1000 eV + :math:`\Delta G`). The best route
minimises the largest step cost, so a route blocked by an uphill desorption is never preferred
to an open one; for open routes the cost is :math:`-U_L`.

Results are theoretical estimates (CHE thermodynamics, no kinetics); they do not replace
experiments, and any experiment follows local safety rules (CO is toxic, H2 flammable).
"""

from __future__ import annotations

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.network.analysis import RANKING_COLUMNS, ROUTE_COLUMNS, STUCK_COLUMNS, NetworkAnalysis, RankedRoute
from ecatlab.network.build import build_network
from ecatlab.network.model import (
    MAX_ROUTES,
    TIE_TOLERANCE_EV,
    NetworkEdge,
    NetworkState,
    ReactionNetwork,
    default_molecules,
)
from ecatlab.network.routes import BLOCKED_OFFSET
from ecatlab.notation import Pathway

__all__ = [
    "NetworkState",
    "NetworkEdge",
    "ReactionNetwork",
    "NetworkAnalysis",
    "RankedRoute",
    "build_network",
    "best_route",
    "best_routes",
    "product_ranking",
    "selectivity",
    "edge_table",
    "ROUTE_COLUMNS",
    "RANKING_COLUMNS",
    "STUCK_COLUMNS",
    "TIE_TOLERANCE_EV",
    "BLOCKED_OFFSET",
    "MAX_ROUTES",
    "default_molecules",
]

_ANALYSIS_KEYS = ("estimates", "computed_only")


def _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit) -> NetworkAnalysis:
    table = energies if isinstance(energies, EnergyTable) else as_energy_table(energies, None)
    opts = dict(network_options or {})
    extra = {k: opts.pop(k) for k in _ANALYSIS_KEYS if k in opts}
    if extra.get("estimates") is not None:
        opts.setdefault("uncomputed", True)
    net = build_network(table, reactant, **opts)
    return NetworkAnalysis(net, table, pH=pH, scale=scale, temperature=temperature, surfaces=surfaces, chemical_limit=chemical_limit, **extra)


def best_route(
    energies,
    surface: str,
    reactant: str,
    product: str,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    chemical_limit: float | None = None,
    **network_options,
) -> Pathway:
    """Best route from ``reactant`` to ``product`` on one surface, as a Pathway.

    The Pathway works everywhere a built-in pathway does; ``ecatlab.che.limiting_potentials``
    on it gives the route's limiting potential. ``network_options`` go to :func:`build_network`
    (``allow``, ``forbid``, ``molecules``, ``sites``, ``coupling``, ``structures``, ...) and
    ``estimates`` / ``computed_only`` to :class:`NetworkAnalysis`.

    Examples
    --------
    >>> from ecatlab.demo import demo_energies
    >>> best_route(demo_energies(), "ALY-01", "CO2", "CH4").adsorbates[0].key in ("COOH*", "OCHO*")
    True
    """
    an = _analysis(energies, reactant, pH, scale, temperature, [surface], network_options, chemical_limit)
    return an.best_route(surface, product)


def best_routes(energies, reactant: str, product: str, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                surfaces=None, top: int = 1, chemical_limit: float | None = None, **network_options):
    """Best route (and alternatives) to ``product`` on every surface; see :meth:`NetworkAnalysis.best_routes`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit).best_routes(product, top=top)


def product_ranking(energies, reactant: str, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                    surfaces=None, products=None, her: str | None = "her-volmer-heyrovsky", chemical_limit: float | None = None,
                    **network_options):
    """Products ranked per surface, HER included; see :meth:`NetworkAnalysis.product_ranking`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit).product_ranking(products, her)


def selectivity(energies, reactant: str, potential: float = 0.0, pH: float = 0.0, scale: str = "RHE",
                temperature: float = STANDARD_TEMPERATURE, surfaces=None, chemical_limit: float | None = None,
                **network_options):
    """Selectivity read-outs at U; see :meth:`NetworkAnalysis.selectivity`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit).selectivity(potential)


def edge_table(energies, reactant: str, potential: float = 0.0, pH: float = 0.0, scale: str = "RHE",
               temperature: float = STANDARD_TEMPERATURE, surfaces=None, **network_options):
    """Every network step with its dG (eV) at ``potential`` on every surface; see :meth:`NetworkAnalysis.edge_table`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, None).edge_table(potential)
