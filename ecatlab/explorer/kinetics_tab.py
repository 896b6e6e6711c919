"""The explorer's "kinetics" tab: steady-state polarization and Tafel curves of the pathway shown
on the diagram tab, for the surfaces selected there.

Nothing physical is computed here: :func:`ecatlab.kinetics.build_model` and
:func:`ecatlab.kinetics.solve_steady_state` give the steady state on a potential grid,
:mod:`ecatlab.kinetics.analysis` the current, Tafel slope and onset potentials, and
:mod:`ecatlab.plotting.kinetics` draws them. The tab's own controls are the estimated-barrier
parameters (intrinsic barrier and symmetry factor) and the onset current density; barriers are
always ESTIMATED in this tab (the caption says so), use :func:`ecatlab.kinetics.build_model`
with ``barriers=`` for transition-state data.

Like the volcano tab, the curves depend on the pathway, surfaces, pH, scale and temperature but
not on the applied potential, so a potential move never redraws them; they are redrawn only while
the tab is visible and only when an input changed. The tab owns one bare matplotlib Figure and
shows it as a PNG in an ``ipywidgets.Image``.
"""

from __future__ import annotations

import html
import io
import math

__all__ = ["KineticsPanel", "onset_table_html"]

_DPI = 90
#: Kinetic current density (mA/cm^2) above which the onset table flags a value as beyond mass transport.
TRANSPORT_NOTE_MA_CM2 = 1000.0
_POINTS = 111


def onset_table_html(summary, caption: str) -> str:
    """HTML of :func:`ecatlab.kinetics.analysis.kinetics_summary` (surface, onset, max |j|, barriers)."""
    def num(v, fmt):
        return "n/a" if not (isinstance(v, float) and math.isfinite(v)) else format(v, fmt).replace("-", "\N{MINUS SIGN}")

    # kinetic currents only (no mass transport): above ~1 A/cm^2 (common practice, no source) a value
    # says "not rate-limited by the surface", not a current a cell would carry. Such cells are set in
    # italics with a tooltip (the cell text stays the number), and a note under the table says why.
    beyond = summary["max_abs_current_density"].to_numpy(float) > TRANSPORT_NOTE_MA_CM2

    def jmax(v) -> str:
        text = num(float(v), ".2e")
        if math.isfinite(float(v)) and float(v) > TRANSPORT_NOTE_MA_CM2:
            return (f'<td class="ecatlab-beyond-transport" title="beyond mass transport" '
                    f'style="padding:1px 6px;text-align:right;font-style:italic;color:#7A5A00">{text}</td>')
        return f'<td style="padding:1px 6px;text-align:right">{text}</td>'

    note = (f'<p style="font-size:11px;color:#444;margin:2px 0">In italics: kinetic current above '
            f'{TRANSPORT_NOTE_MA_CM2:g} mA/cm\N{SUPERSCRIPT TWO}, far beyond what mass transport delivers; ecatlab has no '
            "transport model, so read it as \N{LEFT DOUBLE QUOTATION MARK}the surface is not the limit\N{RIGHT DOUBLE QUOTATION MARK}.</p>"
            if beyond.any() else "")
    rows = "".join(
        f'<tr><th style="text-align:left;padding:1px 6px">{html.escape(str(r.surface))}</th>'
        f'<td style="padding:1px 6px;text-align:right">{num(float(r.onset_potential), "+.3f") if r.reached else "not reached"}</td>'
        f'<td style="padding:1px 6px;text-align:right">{num(float(r.onset_overpotential), ".3f") if r.reached else "n/a"}</td>'
        f"{jmax(r.max_abs_current_density)}"
        f'<td style="padding:1px 6px">{html.escape(str(r.barriers))}</td>'
        f'<td style="padding:1px 6px">{"yes" if r.all_converged else "NO"}</td></tr>'
        for r in summary.itertuples(index=False)
    )
    return (
        '<div class="ecatlab-kinetics-summary"><table style="border-collapse:collapse;font-size:12px">'
        f'<caption style="caption-side:top;text-align:left">{html.escape(caption)}</caption>'
        "<thead><tr><th>surface</th><th>onset potential (V)</th><th>onset overpotential (V)</th>"
        "<th>max |j| on grid (mA/cm²)</th><th>barriers</th><th>converged</th></tr></thead>"
        f"<tbody>{rows}</tbody></table>{note}</div>"
    )


class KineticsPanel:
    """Polarization (linear and Tafel) figure and onset table of the explorer's kinetics tab.

    Attributes
    ----------
    intrinsic_barrier, symmetry_factor, onset_current : ipywidgets.FloatText
        Estimated-barrier parameters (eV, -) and the onset current density (mA/cm^2).
    image : ipywidgets.Image
    summary, info : ipywidgets.HTML
    result : SteadyState or None
        The last steady state drawn.
    draws : int
        Number of finished drawings (for tests).
    """

    def __init__(self, error_line=None, with_widget: bool = True):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        self.figure = Figure(figsize=(11.0, 4.2), dpi=_DPI)
        FigureCanvasAgg(self.figure)
        self.ax_lin, self.ax_tafel = self.figure.subplots(1, 2)
        self.result = None
        self.draws = 0
        self.last_png: bytes | None = None
        self.last_error: Exception | None = None
        self._key = None
        self.widget = None
        self._params = {"intrinsic_barrier": 0.3, "symmetry_factor": 0.5, "onset_current": 10.0}
        if with_widget:
            import ipywidgets as w

            style = {"description_width": "initial"}
            self.intrinsic_barrier = w.BoundedFloatText(value=0.3, min=0.0, max=2.0, step=0.05, description="intrinsic barrier (eV)", style=style,
                                                        layout=w.Layout(width="220px"))
            self.symmetry_factor = w.BoundedFloatText(value=0.5, min=0.05, max=0.95, step=0.05, description="symmetry factor", style=style,
                                                      layout=w.Layout(width="200px"))
            self.onset_current = w.BoundedFloatText(value=10.0, min=1e-6, max=1e6, description="onset j (mA/cm²)", style=style,
                                                    layout=w.Layout(width="200px"))
            self.info = w.HTML()
            self.image = w.Image(format="png", layout=w.Layout(max_width="100%", display="none"))  # shown once drawn (no broken-image icon)
            self.summary = w.HTML()
            parts = [error_line] if error_line is not None else []
            self.widget = w.VBox(parts + [self.info, w.HBox([self.intrinsic_barrier, self.symmetry_factor, self.onset_current]), self.image, self.summary])

    # -- inputs ------------------------------------------------------------------------------------
    def parameters(self) -> dict:
        if self.widget is None:
            return dict(self._params)
        return {"intrinsic_barrier": float(self.intrinsic_barrier.value), "symmetry_factor": float(self.symmetry_factor.value),
                "onset_current": float(self.onset_current.value)}

    def key(self, state) -> tuple:
        """Inputs the curves depend on (the applied potential is not one of them)."""
        return (state.pathway, tuple(state.surfaces), state.pH, state.scale, state.temperature, id(state.table), tuple(sorted(self.parameters().items())))

    def compute(self, state):
        """Steady state of the state's pathway on its surfaces over U_eq -/+ 1 V (errors propagate)."""
        import numpy as np

        from ecatlab.che.conditions import Conditions
        from ecatlab.kinetics import BarrierSettings, build_model, solve_steady_state

        prm = self.parameters()
        settings = BarrierSettings(intrinsic_barrier=prm["intrinsic_barrier"], symmetry_factor=prm["symmetry_factor"])
        model = build_model(state.table, state.pathway, Conditions(state.scale, state.pH, state.temperature), settings=settings,
                            surfaces=list(state.surfaces), on_missing="drop")
        info = model.pathways[0]
        u_eq = info.equilibrium_potential_at_activities
        lo, hi = (u_eq - 1.0, u_eq + 0.1) if info.direction == "reduction" else (u_eq - 0.1, u_eq + 1.0)
        return solve_steady_state(model, np.linspace(lo, hi, _POINTS), warn=False)

    # -- drawing -----------------------------------------------------------------------------------
    def refresh(self, state, visible: bool) -> bool:
        """Redraw if visible and the inputs changed; returns True when a drawing was made."""
        if not visible:
            return False
        key = self.key(state)
        if key == self._key:
            return False
        from ecatlab.kinetics import analysis as A
        from ecatlab.plotting.kinetics import plot_polarization, plot_tafel

        self._key = key
        name = state.pathway.name
        if self.widget is not None:
            self.info.value = (
                f'<div class="ecatlab-kinetics-info" style="font-size:12px">Steady-state microkinetics of <b>{html.escape(name)}</b> '
                f"at pH {state.pH:g}, {state.temperature:g} K, potentials vs {state.scale}, for the surfaces selected on the diagram tab. "
                "<b>ESTIMATED barriers</b> (intrinsic barrier + symmetry factor on the CHE step free energy); site density 1e15 cm⁻²; "
                "no mass transport. Theoretical estimates.</div>"
            )
        for ax in (self.ax_lin, self.ax_tafel):
            ax.clear()
            ax.set_axis_on()
        try:
            result = self.compute(state)
            pol = A.polarization_curve(result)
            plot_polarization(pol, ax=self.ax_lin, surfaces=list(result.model.surfaces)[:8], caption=False,
                              current_limit=20 * self.parameters()["onset_current"])
            plot_tafel(pol, ax=self.ax_tafel, surfaces=list(result.model.surfaces)[:8], caption=False)
            summary = A.kinetics_summary(result, self.parameters()["onset_current"])
        except Exception as exc:
            self.result = None
            self.last_error = exc
            self._key = None
            for ax in (self.ax_lin, self.ax_tafel):
                ax.clear()
                ax.set_axis_off()
            self.ax_lin.text(0.5, 0.5, f"no kinetics for {name}:\n{type(exc).__name__} (see the error line above)", ha="center", va="center",
                             transform=self.ax_lin.transAxes, fontsize=11, color="#9B1C1C")
            self._show(None)
            raise
        self.result = result
        self.last_error = None
        self.draws += 1
        self._show(summary)
        return True

    def _show(self, summary) -> None:
        buf = io.BytesIO()
        self.figure.savefig(buf, format="png", dpi=_DPI, bbox_inches="tight", pad_inches=0.08, facecolor="white")
        self.last_png = buf.getvalue()
        if self.widget is None:
            return
        self.image.value = self.last_png
        self.image.layout.display = None
        if summary is None:
            self.summary.value = ""
        else:
            j = self.parameters()["onset_current"]
            self.summary.value = onset_table_html(summary, f"Onset potential at {j:g} mA/cm² (moving from U_eq in the driving direction); "
                                                           "ESTIMATED barriers; theoretical estimates.")
