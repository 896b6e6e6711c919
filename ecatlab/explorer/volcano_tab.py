"""The explorer's "volcano" tab: the 1D volcano of the pathway shown on the diagram tab.

Nothing is computed here: :func:`ecatlab.volcano.volcano` fits the scaling relations to the
explorer's energy table (all its surfaces) and evaluates the CHE engine on the descriptor grid;
:func:`ecatlab.plotting.volcano.plot_volcano` draws it (together they are
:func:`ecatlab.plotting.volcano.volcano_figure`); the table under the figure is the curve's
``summary()``, the same table as :func:`ecatlab.volcano.volcano_summary`.

The volcano depends on the pathway, the descriptor, pH, scale and temperature, **not** on the
applied potential, so a potential move never redraws it. It is redrawn only while its tab is
visible and only when one of those inputs changed since the last drawing; inputs that change
while the tab is hidden are drawn when the tab is opened.

The tab owns one bare matplotlib Figure (never registered with pyplot, so no figure count grows)
and shows it as a PNG in an ``ipywidgets.Image``.
"""

from __future__ import annotations

import html
import io
import math

__all__ = ["VolcanoPanel", "DEFAULT_DESCRIPTORS", "descriptor_options", "FIT_AGAINST"]

#: Default descriptor per reaction family (adsorption free energy, eV, or a difference of two).
DEFAULT_DESCRIPTORS: dict[str, str] = {"ORR": "OH*", "OER": "O* - OH*", "HER": "H*", "CO2RR": "CO*", "NRR": "N*"}
#: Descriptors that are combinations: the adsorbate the missing relations are fitted against
#: (see docs/scaling_and_volcanoes.md: for OER vs O* - OH*, OOH* and O* are fitted against OH*).
FIT_AGAINST: dict[str, str] = {"O* - OH*": "OH*"}
_DPI = 90


def descriptor_options(family: str, pathway) -> list[str]:
    """Descriptor choices: the family default first, then every adsorbate of ``pathway`` (and
    ``"O* - OH*"`` when the pathway has both O* and OH*)."""
    keys = [s.key for s in pathway.adsorbates]
    out = []
    default = DEFAULT_DESCRIPTORS.get(family)
    if default is not None:
        out.append(default)
    out += [k for k in keys if k not in out]
    if "O*" in keys and "OH*" in keys and "O* - OH*" not in out:
        out.append("O* - OH*")
    return out


#: Conditions are shown unsigned with two decimals (pH, K); potentials and energies signed with three (V, eV).
_CONDITION_ROWS = frozenset({"pH", "temperature"})


def _cell(value, quantity: str = "") -> str:
    if not isinstance(value, float):
        return html.escape(str(value))
    if not math.isfinite(value):
        return "n/a"
    text = f"{value:.2f}" if quantity in _CONDITION_ROWS else f"{value:+.3f}"
    return text.replace("-", "\N{MINUS SIGN}")


def summary_html(summary, caption: str) -> str:
    """HTML of a volcano summary table (quantity / value / unit / note)."""
    rows = "".join(
        f'<tr><th style="text-align:left;padding:1px 6px">{html.escape(str(r.quantity))}</th>'
        f'<td style="padding:1px 6px;text-align:right;font-variant-numeric:tabular-nums">{_cell(r.value, str(r.quantity))}</td>'
        f'<td style="padding:1px 6px">{html.escape(str(r.unit))}</td><td style="padding:1px 6px;color:#444">{html.escape(str(r.note))}</td></tr>'
        for r in summary.itertuples(index=False)
    )
    return (
        '<div class="ecatlab-volcano-summary"><table style="border-collapse:collapse;font-size:12px">'
        f'<caption style="caption-side:top;text-align:left">{html.escape(caption)}</caption>'
        "<thead><tr><th>quantity</th><th>value</th><th>unit</th><th>note</th></tr></thead>"
        f"<tbody>{rows}</tbody></table></div>"
    )


class VolcanoPanel:
    """Volcano figure, descriptor selector and summary table of the explorer's second tab.

    Attributes
    ----------
    descriptor : ipywidgets.Dropdown
        Descriptor of the volcano ("descriptor").
    image : ipywidgets.Image
        The figure as PNG.
    summary : ipywidgets.HTML
        Apex, minimum overpotential, equilibrium potential and the scaling relations with their
        fit statistics (R², RMSE, n).
    info : ipywidgets.HTML
        What the volcano is drawn for (pathway and conditions, set on the diagram tab).
    figure : Figure
        The one Figure of the tab.
    curve : VolcanoCurve or None
        The last curve drawn (``None`` after an error).
    draws : int
        Number of finished volcano drawings (for tests).
    widget : ipywidgets.VBox
    """

    def __init__(self, error_line=None, with_widget: bool = True):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        from ecatlab.plotting.style import preset

        p = preset("notebook")
        self.figure = Figure(figsize=(p.figsize[0], p.figsize[1]), dpi=_DPI)
        FigureCanvasAgg(self.figure)
        self.ax = self.figure.add_subplot()
        self.curve = None
        self.draws = 0
        self.last_png: bytes | None = None
        self.last_error: Exception | None = None
        self._key = None
        self.widget = None
        if with_widget:
            import ipywidgets as w

            self.descriptor = w.Dropdown(options=["OH*"], value="OH*", description="descriptor",
                                         style={"description_width": "initial"}, layout=w.Layout(width="260px"))
            self.info = w.HTML()
            self.image = w.Image(format="png", layout=w.Layout(max_width="100%"))
            self.summary = w.HTML()
            parts = [error_line] if error_line is not None else []
            self.widget = w.VBox(parts + [self.info, self.descriptor, self.image, self.summary])

    # -- inputs ------------------------------------------------------------------------------------
    def sync_options(self, family: str, pathway) -> None:
        """Descriptor choices for the shown pathway; keeps the chosen one while it stays valid."""
        options = descriptor_options(family, pathway)
        current = self.descriptor.value if family == getattr(self, "_family", None) else None
        self._family = family
        if list(self.descriptor.options) != options:
            self.descriptor.options = options
        self.descriptor.value = current if current in options else options[0]

    def key(self, state, descriptor: str) -> tuple:
        """Inputs the volcano depends on (the applied potential is not one of them)."""
        return (state.pathway, descriptor, state.pH, state.scale, state.temperature, id(state.table))

    # -- drawing -----------------------------------------------------------------------------------
    def compute(self, state, descriptor: str):
        """The volcano curve for the state's table, pathway and conditions (ScalingError etc. propagate)."""
        from ecatlab.volcano import volcano

        return volcano(state.table, state.pathway, descriptor, pH=state.pH, scale=state.scale, temperature=state.temperature,
                       fit_against=FIT_AGAINST.get(descriptor))

    def refresh(self, state, descriptor: str, visible: bool) -> bool:
        """Redraw if visible and the inputs changed; returns True when a drawing was made.

        Errors propagate (the explorer shows them in its error line); the tab then shows a
        placeholder naming the failed inputs, and the next refresh with the same inputs retries.
        """
        if not visible:
            return False
        key = self.key(state, descriptor)
        if key == self._key:
            return False
        from ecatlab.plotting.style import preset, style_context

        self._key = key
        self.ax.clear()
        what = f"{state.pathway.name} vs {descriptor}"
        if self.widget is not None:
            self.info.value = (
                f'<div class="ecatlab-volcano-info" style="font-size:12px">Volcano of <b>{html.escape(what)}</b> at pH {state.pH:g}, '
                f"{state.temperature:g} K, potentials vs {state.scale}; scaling relations fitted to all "
                f"{len(state.table.surfaces)} surfaces of the table ({html.escape(str(state.table.source))}). "
                "Pathway, pH, scale and temperature are set on the diagram tab. Theoretical estimates (CHE, thermodynamics only).</div>"
            )
        try:
            curve = self.compute(state, descriptor)
            from ecatlab.plotting.volcano import plot_volcano

            p = preset("notebook")
            with style_context(p):
                plot_volcano(curve, ax=self.ax, style=p)
                if state.route is not None:  # route names are long: name the choice instead
                    better = "higher is better" if curve.direction == "reduction" else "lower is better"
                    self.ax.set_title(f"Volcano of the {state.route.describe()} ({better})\n"
                                      f"pH {state.pH:g}, {state.temperature:g} K, potentials vs {state.scale}")
        except Exception as exc:
            self.curve = None
            self.last_error = exc
            self._key = None  # retry next time
            self.ax.clear()
            self.ax.set_axis_off()
            self.ax.text(0.5, 0.5, f"no volcano for {what}:\n{type(exc).__name__} (see the error line above)", ha="center",
                         va="center", transform=self.ax.transAxes, fontsize=11, color="#9B1C1C", wrap=True)
            self._show(f"No volcano for {what}: {exc}")
            raise
        self.curve = curve
        self.last_error = None
        self.draws += 1
        self._show(None)
        return True

    def _show(self, failure: str | None) -> None:
        buf = io.BytesIO()
        self.figure.savefig(buf, format="png", dpi=_DPI, bbox_inches="tight", pad_inches=0.08, facecolor="white")
        self.last_png = buf.getvalue()
        if self.widget is None:
            return
        self.image.value = self.last_png
        if failure is not None:
            self.summary.value = f'<div class="ecatlab-volcano-summary" style="color:#9B1C1C">{html.escape(failure)}</div>'
        else:
            c = self.curve.conditions
            caption = (f"Volcano summary, {self.curve.pathway.name} vs {self.curve.descriptor.text}: pH {c['pH']:g}, "
                       f"{c['temperature']:g} K, potentials in V vs {c['scale']}")
            self.summary.value = summary_html(self.curve.summary(), caption)

    def invalidate(self) -> None:
        """Forget the last inputs (the next visible refresh redraws)."""
        self._key = None
