"""The explorer's "surface states" tab: the surface Pourbaix diagram of the focus surface.

Added with ``Explorer.add_surface_states_tab(states=None)`` (after the diagram and volcano tabs).

Nothing is computed here: :func:`ecatlab.pourbaix.pourbaix_map` finds the most stable surface
state over (pH, U) with the CHE kernel, :func:`ecatlab.pourbaix.limiting_potential_vs_pH` gives the
shown pathway's limiting potential at several pH, :func:`ecatlab.pourbaix.flag_surface_states` the
state at the pathway's own U_L, and :func:`ecatlab.plotting.pourbaix.plot_pourbaix` draws it. The
explorer's applied potential and pH are marked on the map.

States: by default the clean surface and H*, OH*, O* from the explorer's energy table (one
adsorbate per cell of that table); give a surface-state table with several coverages with
:meth:`PourbaixPanel.set_states` (e.g. ``explorer.pourbaix.set_states(read_surface_states("states.csv"))``).

The tab is redrawn only while it is visible and only when an input changed (focus surface,
pathway, potential, pH, scale, temperature or the states).
"""

from __future__ import annotations

import html
import io

__all__ = ["PourbaixPanel"]

_DPI = 90


class PourbaixPanel:
    """Surface Pourbaix map and read-out of the explorer's third tab.

    Attributes
    ----------
    image : ipywidgets.Image
    info : ipywidgets.HTML
        What is drawn and the state at the applied potential and at the pathway's U_L.
    figure : Figure
        The one Figure of the tab (never registered with pyplot).
    map : PourbaixMap or None
        The last map drawn.
    draws : int
        Finished drawings (for tests).
    states : SurfaceStates or None
        States given with :meth:`set_states` (None: built from the energy table).
    """

    def __init__(self, error_line=None, with_widget: bool = True):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        from ecatlab.plotting.style import preset

        p = preset("notebook")
        self.figure = Figure(figsize=(p.figsize[0], p.figsize[1]), dpi=_DPI)
        FigureCanvasAgg(self.figure)
        self.ax = self.figure.add_subplot()
        self.map = None
        self.draws = 0
        self.states = None
        self.last_png: bytes | None = None
        self.last_text = ""
        self._key = None
        self._auto = None  # (id(table), SurfaceStates) built from the energy table
        self.widget = None
        if with_widget:
            import ipywidgets as w

            self.info = w.HTML()
            self.image = w.Image(format="png", layout=w.Layout(max_width="100%", display="none"))  # shown once drawn (no broken-image icon)
            self.widget = w.VBox(([error_line] if error_line is not None else []) + [self.info, self.image])

    def set_states(self, states) -> None:
        """Use these surface states (SurfaceStates, DataFrame or CSV path) instead of the energy table's."""
        from ecatlab.pourbaix import read_surface_states

        self.states = read_surface_states(states)
        self._key = None

    def _states_for(self, state):
        if self.states is not None:
            return self.states
        if self._auto is None or self._auto[0] != id(state.table):
            from ecatlab.pourbaix import surface_states_from_energies

            self._auto = (id(state.table), surface_states_from_energies(state.table))
        return self._auto[1]

    def key(self, state) -> tuple:
        return (state.focus, state.pathway, state.potential, state.pH, state.scale, state.temperature, id(state.table), id(self.states))

    def refresh(self, state, visible: bool) -> bool:
        """Redraw if visible and the inputs changed; returns True when a drawing was made (errors propagate)."""
        if not visible:
            return False
        key = self.key(state)
        if key == self._key:
            return False
        import numpy as np

        from ecatlab.plotting.pourbaix import plot_pourbaix
        from ecatlab.plotting.style import preset, style_context
        from ecatlab.pourbaix import flag_surface_states, limiting_potential_vs_pH, pourbaix_map

        self._key = key
        self.ax.clear()
        try:
            states = self._states_for(state)
            surface = state.focus
            if surface not in states.surfaces:
                from ecatlab.errors import SurfaceStateError

                raise SurfaceStateError(states.source, f"no surface states for the focus surface {surface}; surfaces with states: "
                                        f"{', '.join(states.surfaces[:8])}", column="surface")
            lo, hi = min(-1.0, state.potential - 0.2), max(2.0, state.potential + 0.2)
            pmap = pourbaix_map(states, surface, np.linspace(lo, hi, 301), np.linspace(0.0, 14.0, 71), state.scale, state.temperature)
            lines = None
            text_ul = ""
            if state.route is None and surface in state.table.surfaces:
                lines = limiting_potential_vs_pH(state.table, state.pathway, surface, scale=state.scale, temperature=state.temperature)
                from ecatlab.che.engine import limiting_potentials

                lp = limiting_potentials(state.table, state.pathway, pH=state.pH, scale=state.scale, temperature=state.temperature, surfaces=[surface])
                row = flag_surface_states(lp, states).iloc[0]
                if row["surface_state_at_U_L"]:
                    text_ul = (f" At the pathway's own U<sub>L</sub> = {row['limiting_potential']:.3f} V the stable state is "
                               f"<b>{html.escape(str(row['surface_state_at_U_L']))}</b>"
                               + (f" ({html.escape(str(row['surface_state_flag']))})." if row["surface_state_flag"] else " (as the pathway assumes)."))
            p = preset("notebook")
            with style_context(p):
                plot_pourbaix(pmap, ax=self.ax, style=p, limiting=lines)
                self.ax.plot([state.pH], [state.potential], marker="X", ms=9, color="#111111", ls="none", zorder=7, label="applied U, pH")
            here = pmap.state_at(state.potential, state.pH)
            self.map = pmap
            self.last_text = (f"Surface Pourbaix diagram of <b>{html.escape(surface)}</b> (focus surface) from {html.escape(states.source)}, "
                              f"{state.temperature:g} K, V vs {state.scale}. At U = {state.potential:.3f} V, pH {state.pH:g} the stable state is "
                              f"<b>{html.escape(here)}</b>.{text_ul} Theoretical estimates (CHE, thermodynamics only).")
        except Exception:
            self.map = None
            self._key = None
            self.ax.clear()
            self.ax.set_axis_off()
            self.ax.text(0.5, 0.5, "no surface Pourbaix diagram for these inputs\n(see the error line above)", ha="center", va="center",
                         transform=self.ax.transAxes, fontsize=11, color="#9B1C1C")
            self.last_text = "No surface Pourbaix diagram for these inputs."
            self._show()
            raise
        self.draws += 1
        self._show()
        return True

    def _show(self) -> None:
        buf = io.BytesIO()
        self.figure.savefig(buf, format="png", dpi=_DPI, bbox_inches="tight", pad_inches=0.08, facecolor="white")
        self.last_png = buf.getvalue()
        if self.widget is not None:
            self.image.value = self.last_png
            self.image.layout.display = None
            self.info.value = f'<div class="ecatlab-pourbaix-info" style="font-size:12px">{self.last_text}</div>'

    def invalidate(self) -> None:
        self._key = None
