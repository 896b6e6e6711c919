"""Interactive free-energy explorer for Jupyter (ipywidgets over the CHE engine and the diagram plotter).

``ecatlab.explorer.explore(energies)`` opens it. The pieces are usable on their own:
:class:`ExplorerState` (plain state object, engine numbers, no widgets), :class:`DiagramView`
(one Figure, artists moved in place), :class:`~ecatlab.explorer.volcano_tab.VolcanoPanel` (the
volcano tab) and :class:`Explorer` (the controls). ipywidgets and
matplotlib are imported only when an explorer is built.
"""

from ecatlab.explorer.model import (Conditions, ExplorerState, PATHWAY_LABELS, ROUTE_REACTANTS, RouteChoice, UPHILL_TOLERANCE,
                                    pathway_options, route_key)
from ecatlab.explorer.widget import Explorer, ExplorerSnapshot, explore, export_snapshot, readout_html, step_table_html

__all__ = [
    "explore",
    "Explorer",
    "ExplorerState",
    "ExplorerSnapshot",
    "Conditions",
    "export_snapshot",
    "step_table_html",
    "readout_html",
    "pathway_options",
    "PATHWAY_LABELS",
    "UPHILL_TOLERANCE",
    "RouteChoice",
    "ROUTE_REACTANTS",
    "route_key",
]
