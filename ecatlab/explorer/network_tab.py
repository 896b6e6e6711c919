"""The explorer's "network" tab: the reaction network of a reactant on one surface, its best route
(and alternatives) to a product, and where the surface gets stuck.

Nothing is computed here: :func:`ecatlab.network.build_network` builds the network from the
explorer's table (intermediates as molecular graphs), :class:`ecatlab.network.NetworkAnalysis`
gives the routes at the explorer's pH, scale and temperature, and
:func:`ecatlab.plotting.network.plot_network` draws them. Callbacks are thin wrappers over
:meth:`NetworkPanel.compute` (a pure function of the inputs, tested directly).

The tab owns one bare matplotlib Figure (never registered with pyplot) shown as a PNG; it is
redrawn only while visible and only when an input changed.
"""

from __future__ import annotations

import html
import io

__all__ = ["NetworkPanel", "REACTANTS"]

#: Reactant per reaction family (the network is built from it).
REACTANTS: dict[str, str] = {"CO2RR": "CO2", "NRR": "N2", "ORR": "O2"}
_DPI = 80


class NetworkPanel:
    """Widgets and figure of the network tab.

    Parameters
    ----------
    table : EnergyTable
    error_line : ipywidgets.HTML, optional
        Where problems are reported (the explorer's error line).
    with_widget : bool
        Build the ipywidgets (False: figure and tables only, for tests and scripts).
    """

    def __init__(self, table, error_line=None, with_widget: bool = True):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        self.table = table
        self.error_line = error_line
        self.figure = Figure(figsize=(11.0, 5.5), dpi=_DPI)
        FigureCanvasAgg(self.figure)
        self._networks: dict = {}
        self._analyses: dict = {}
        self._drawn_key = None
        self.widget = None
        if with_widget:
            import ipywidgets as w

            self.reactant = w.Dropdown(options=list(REACTANTS.values()), value="CO2", description="reactant")
            self.product = w.Dropdown(options=self.products("CO2"), description="product")
            self.surface = w.Dropdown(options=list(table.surfaces), value=table.surfaces[0], description="surface")
            self.potential = w.FloatText(value=0.0, step=0.05, description="U [V]")
            self.full = w.Checkbox(value=False, description="whole network")
            self.estimate = w.Dropdown(options=[("table species only", ""), ("+ estimated (additivity)", "additivity"),
                                                ("+ estimated (scaling)", "scaling")], value="", description="species")
            self.image = w.Image(format="png", layout=w.Layout(max_width="100%", display="none"))  # shown once drawn (no broken-image icon)
            self.table_html = w.HTML()
            self.reactant.observe(self._on_reactant, names="value")
            for c in (self.product, self.surface, self.potential, self.full, self.estimate):
                c.observe(self._on_input, names="value")
            self.widget = w.VBox([w.HBox([self.reactant, self.product, self.surface]), w.HBox([self.potential, self.full, self.estimate]),
                                  self.image, self.table_html])

    # -- model ---------------------------------------------------------------------------------------
    def network(self, reactant: str, estimate: str = ""):
        from ecatlab.network import build_network

        key = (reactant, bool(estimate))
        if key not in self._networks:
            self._networks[key] = build_network(self.table, reactant, uncomputed=bool(estimate))
        return self._networks[key]

    def products(self, reactant: str) -> list[str]:
        try:
            return list(self.network(reactant).products)
        except Exception:  # noqa: BLE001 - a table without the reactant's species has no products
            return []

    def analysis(self, reactant: str, pH: float, scale: str, temperature: float, estimate: str = ""):
        from ecatlab.network import NetworkAnalysis

        key = (reactant, pH, scale, temperature, estimate)
        if key not in self._analyses:
            self._analyses[key] = NetworkAnalysis(self.network(reactant, estimate), self.table, pH=pH, scale=scale,
                                                  temperature=temperature, estimates=estimate or None)
        return self._analyses[key]

    def compute(self, reactant: str, product: str, surface: str, potential: float, pH: float = 0.0, scale: str = "RHE",
                temperature: float = 298.15, full: bool = False, estimate: str = ""):
        """Draw the figure and return ``(png bytes, routes table html)``."""
        from ecatlab.plotting.network import plot_network

        an = self.analysis(reactant, pH, scale, temperature, estimate)
        self.figure.clear()
        ax = self.figure.add_subplot(111)
        plot_network(an, surface, product, potential=potential, ax=ax, full=full, style="notebook")
        buf = io.BytesIO()
        self.figure.savefig(buf, format="png", bbox_inches="tight")
        routes = an.best_routes(product, top=3)
        rows = routes[routes["surface"] == surface]
        stuck = an.stuck_points(product, potential=potential).set_index("surface").loc[surface]
        body = "".join(
            f"<tr><td>{int(r['rank'])}</td><td>{r['limiting_potential']:+.3f}</td><td>{'yes' if r['blocked'] else 'no'}</td>"
            f"<td>{html.escape(str(r['determining_step']))}</td><td>{'yes (±%.2f eV)' % r['estimate_error'] if r['estimated'] else 'no'}</td>"
            f"<td>{html.escape(str(r['route']).split(' via ')[-1])}</td></tr>"
            for _, r in rows.iterrows()
        )
        table = (
            f"<table><tr><th>rank</th><th>U_L [V vs {an.scale}]</th><th>blocked</th><th>determining step</th><th>estimated</th>"
            f"<th>route</th></tr>{body}</table>"
            f"<p>At U = {potential:+.2f} V the surface gets stuck at <b>{html.escape(str(stuck['stuck_at']))}</b> "
            f"(next step {html.escape(str(stuck['bottleneck_step']))}, dG = {stuck['bottleneck_dG']:+.2f} eV). "
            "Theoretical estimates (CHE thermodynamics); demo data are ILLUSTRATIVE.</p>"
        )
        return buf.getvalue(), table

    # -- widget glue ----------------------------------------------------------------------------------
    #: set by the explorer: () -> (pH, scale, temperature) and () -> bool (tab shown)
    conditions = None
    is_visible = None

    def _on_reactant(self, change) -> None:
        self.product.options = self.products(change["new"])

    def _on_input(self, change) -> None:
        if self.conditions is not None:
            self.refresh(*self.conditions(), visible=self.is_visible() if self.is_visible else True)

    def refresh(self, pH: float, scale: str, temperature: float, visible: bool = True) -> None:
        """Redraw when visible and an input changed."""
        if self.widget is None or not visible or not self.product.value:
            return
        key = (self.reactant.value, self.product.value, self.surface.value, float(self.potential.value), pH, scale, temperature,
               self.full.value, self.estimate.value)
        if key == self._drawn_key:
            return
        try:
            png, table = self.compute(*key)
        except Exception as exc:  # shown on the error line, never a silent blank
            if self.error_line is not None:
                self.error_line.value = f"<b>{html.escape(type(exc).__name__)}</b> (network tab): {html.escape(str(exc))}"
            return
        self.image.value = png
        self.image.layout.display = None
        self.table_html.value = table
        self._drawn_key = key
