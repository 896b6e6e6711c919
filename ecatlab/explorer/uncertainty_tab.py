"""The explorer's "show uncertainty" option: how sure are the ranking and the determining steps.

A section at the foot of the diagram tab. Nothing is computed here:
:func:`ecatlab.uncertainty.propagate` samples a Gaussian error model (sigma and binding-atom
correlation set in the section) for the pathway, surfaces and conditions of the diagram tab;
:func:`ecatlab.plotting.uncertainty.plot_ranking_probabilities` and
:func:`~ecatlab.plotting.uncertainty.plot_determining_step_probabilities` draw it.

and, for the focus surface, :func:`~ecatlab.plotting.uncertainty.plot_diagram_bands` draws its
free-energy levels with the central 90 % band of the samples on every level, at the pathway's
equilibrium potential (where G_max is defined; the band widths do not depend on the potential,
since every sample's levels shift by the same n e U).

Budget: nothing is sampled until "show uncertainty" is ticked. The three panels are independent of
the applied potential, so a potential move costs one comparison of the inputs (the diagram
itself keeps its budget); pathway, surfaces, pH, scale, temperature, sigma or correlation
changes sample again (default 400 samples) and redraw; a new focus surface redraws. The section owns one bare matplotlib
Figure (never registered with pyplot) shown as a PNG in an ``ipywidgets.Image``. Diagrams with
bands on the levels are :func:`ecatlab.plotting.uncertainty.plot_diagram_bands` (notebook 06).
"""

from __future__ import annotations

import html
import io

__all__ = ["UncertaintyPanel", "DEFAULT_SAMPLES"]

#: Samples drawn by the tab (Monte-Carlo standard error of a probability <= 0.5/sqrt(400) = 0.025).
DEFAULT_SAMPLES = 400
_DPI = 90


class UncertaintyPanel:
    """Controls, figure and notes of the explorer's uncertainty tab.

    Attributes
    ----------
    show : ipywidgets.Checkbox
        "show uncertainty": nothing is computed while unticked.
    sigma, correlation : ipywidgets.FloatSlider
        Gaussian error of every adsorbate (eV) and correlation within a binding-atom group.
    result : UncertaintyResult or None
        The last propagation.
    bands : Drawn or None
        The last levels-with-bands panel (``data``: surface, state, level, low, median, high; eV).
    draws, propagations : int
        Counters (for tests).
    """

    def __init__(self, error_line=None, state_getter=None, visible_getter=None, with_widget: bool = True):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        from ecatlab.plotting.style import preset

        p = preset("notebook")
        self.figure = Figure(figsize=(p.figsize[0], p.figsize[1] * 2.5), dpi=_DPI)
        FigureCanvasAgg(self.figure)
        # ranking; determining steps; the focus surface's levels with bands
        self.ax_rank, self.ax_diagram, self.ax_bands = self.figure.subplots(3, 1)
        self.result = None
        self.bands = None
        self.draws = 0
        self.propagations = 0
        self.last_error: Exception | None = None
        self.last_png: bytes | None = None
        self._result_key = None
        self._draw_key = None
        self._state_getter = state_getter
        self._visible_getter = visible_getter
        self.widget = None
        if with_widget:
            import ipywidgets as w

            wide = {"description_width": "initial"}
            self.show = w.Checkbox(value=False, description="show uncertainty", indent=False)
            self.sigma = w.FloatSlider(value=0.1, min=0.0, max=0.4, step=0.01, description="sigma / eV", style=wide, continuous_update=False)
            self.correlation = w.FloatSlider(value=0.5, min=0.0, max=1.0, step=0.05, description="correlation (same binding atom)",
                                             style=wide, continuous_update=False, layout=w.Layout(width="380px"))
            self.info = w.HTML()
            self.image = w.Image(format="png", layout=w.Layout(max_width="100%", display="none"))  # shown once drawn (no broken-image icon)
            self.error = error_line
            parts = [error_line] if error_line is not None else []
            self.widget = w.VBox(parts + [w.HBox([self.show, self.sigma, self.correlation]), self.info, self.image])
            for control in (self.show, self.sigma, self.correlation):
                control.observe(self._on_control, names="value")

    def _on_control(self, change) -> None:
        """Thin callback: refresh with the explorer's state; errors go to the info line, never into ipywidgets."""
        if self._state_getter is None:
            return
        try:
            self.refresh(self._state_getter(), visible=bool(self._visible_getter()) if self._visible_getter else True)
        except Exception as exc:  # noqa: BLE001 - shown to the user
            self.last_error = exc
            self.info.value = f'<div style="color:#9B1C1C">{html.escape(type(exc).__name__)}: {html.escape(str(exc))}</div>'

    def model(self):
        from ecatlab.uncertainty import GaussianErrors

        return GaussianErrors(float(self.sigma.value), float(self.correlation.value))

    def refresh(self, state, visible: bool, sigma: float | None = None, correlation: float | None = None, show: bool | None = None) -> bool:
        """Propagate (when the inputs changed) and redraw (when anything shown changed); True if drawn."""
        if show is not None:
            self.show.value = show
        if sigma is not None:
            self.sigma.value = sigma
        if correlation is not None:
            self.correlation.value = correlation
        if not visible:
            return False
        if not self.show.value:
            if self.widget is not None:
                self.info.value = ('<div style="font-size:12px">Tick "show uncertainty" to sample Gaussian energy errors for the '
                                   "pathway, surfaces and conditions of the diagram tab. Theoretical estimates.</div>")
            return False
        from ecatlab.uncertainty import propagate

        rkey = (state.pathway, tuple(state.surfaces), state.pH, state.scale, state.temperature, id(state.table),
                float(self.sigma.value), float(self.correlation.value), DEFAULT_SAMPLES)
        if rkey != self._result_key:
            self.result = propagate(state.table, state.pathway, self.model(), n_samples=DEFAULT_SAMPLES, pH=state.pH,
                                    scale=state.scale, temperature=state.temperature, surfaces=list(state.surfaces), seed=0)
            self.propagations += 1
            self._result_key = rkey
        focus = state.focus if state.focus in state.surfaces else state.surfaces[0]
        dkey = rkey + (focus,)  # the figures do not depend on the potential
        if dkey == self._draw_key:
            return False
        from ecatlab.plotting.style import preset, style_context
        from ecatlab.plotting.uncertainty import plot_determining_step_probabilities, plot_diagram_bands, plot_ranking_probabilities

        self.ax_rank.clear()
        self.ax_diagram.clear()
        self.ax_bands.clear()
        p = preset("notebook")
        with style_context(p):
            plot_ranking_probabilities(self.result, state.pathway.name, top=min(3, len(state.surfaces)), ax=self.ax_rank, caption=False)
            plot_determining_step_probabilities(self.result, state.pathway.name, ax=self.ax_diagram, caption=False)
            self.bands = plot_diagram_bands(self.result, state.pathway.name, focus, potential=float(state.equilibrium_potential()),
                                            interval=0.9, ax=self.ax_bands, caption=False)
        self.figure.subplots_adjust(left=0.2, right=0.62, top=0.96, bottom=0.08, hspace=0.6)  # fixed: no extra layout draw
        buf = io.BytesIO()
        self.figure.savefig(buf, format="png", dpi=_DPI, facecolor="white")
        self.last_png = buf.getvalue()
        self._draw_key = dkey
        self.draws += 1
        if self.widget is not None:
            self.image.value = self.last_png
            self.image.layout.display = None
            c = self.result.conditions
            self.info.value = (
                f'<div class="ecatlab-uncertainty-info" style="font-size:12px">{self.result.n_samples} samples (seed 0); {html.escape(c["model"])}; '
                f"pH {c['pH']:g}, {c['temperature']:g} K, potentials vs {c['scale']}; energies: {html.escape(str(c['energy_source']))}. "
                "Ranking per sample: unblocked first, then lower G_max. Probabilities carry a Monte-Carlo standard error of up to "
                f"{0.5 / self.result.n_samples ** 0.5:.3f}. Theoretical estimates (CHE with the stated error model).</div>"
            )
        return True
