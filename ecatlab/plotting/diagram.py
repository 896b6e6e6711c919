r"""Free-energy diagrams: one flat level per state, drawn from the CHE engine's numbers.

This module has two layers:

* **data** — :func:`diagram_data` asks the engine (:func:`ecatlab.che.state_free_energies` and
  :func:`ecatlab.che.limiting_potentials`) for the cumulative free energy of every state and the
  potential-determining step, at the requested potential(s), and returns a frozen
  :class:`DiagramData`. Nothing here re-derives CHE physics.
* **drawing** — :func:`draw_levels` draws one series of levels on an Axes and returns a
  :class:`LevelDrawing` handle; the ``plot_*`` functions compose it into complete figures.

Geometry and look
-----------------
State *k* (0-based) is a thick flat bar centred at x = k, from k - 0.32 to k + 0.32, at height
:math:`G_k = \sum_{i \le k} \Delta G_i(U)` (eV, first state 0). Step *i* (0-based) joins the right
end of level *i* to the left end of level *i + 1* with a thin dotted connector of the same colour.
The potential-determining step is underlaid with a broad translucent stroke in
:data:`ecatlab.plotting.style.HIGHLIGHT`; for a single series its free energy is written beside it.
Single-series diagrams carry the state label above each level and the level energy below it;
overlays label the states along the x axis and tell series apart by colour *and* dash pattern.

Fast updates (for widgets)
--------------------------
:func:`draw_levels` returns a :class:`LevelDrawing` that keeps every artist it made::

    drawing = draw_levels(ax, levels, state_labels, highlight_index=2)
    ...
    drawing.update(new_levels, highlight_index=1, title="U = 0.50 V vs RHE")
    ax.figure.canvas.draw_idle()

``update(levels, highlight_index=None, title=None, rescale=True)`` only moves existing artists
(``Line2D.set_data``, ``Text.set_position``/``set_text``, ``set_visible``): no artist is created or
removed, so it is cheap enough for a slider. ``levels`` must have the same number of states as the
drawing; ``highlight_index`` is the **0-based step index** (``determining_step_index - 1`` of
:func:`ecatlab.che.limiting_potentials`), ``None`` hides the highlight; ``title`` replaces the
Axes title when given; ``rescale`` refits the y-limits to the new levels. The handle's attributes
(``level_line``, ``connector_line``, ``state_texts``, ``value_texts``, ``highlight_line``,
``highlight_text``) are public for tests and custom styling; a series is three Line2D artists
(all its level bars in one, NaN-separated; all its connectors in one; the highlight), read one
bar or connector back with ``level_xy(k)`` / ``connector_xy(i)``.

All plotting functions take an optional ``ax=`` and return a :class:`~ecatlab.plotting.handles.Drawn`:
``drawn.ax`` (the first panel; every panel in ``drawn.axes``), ``drawn.figure``, ``drawn.data``
(the :class:`DiagramData` drawn; a list of them for :func:`plot_product_comparison`) and
``drawn.parts["series"]`` (one :class:`LevelDrawing` per drawn series, panel by panel; the
multi-panel plotters also give ``parts["panels"]``, one ``Drawn`` per panel). ``style=`` picks a
preset of :mod:`ecatlab.plotting.style`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Iterable, Sequence

import numpy as np

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import DASHES, HIGHLIGHT, PALETTE, pathway_title, preset, style_context

__all__ = [
    "DiagramSeries",
    "DiagramData",
    "LevelDrawing",
    "diagram_data",
    "draw_levels",
    "plot_free_energy_diagram",
    "plot_diagram_at_potentials",
    "plot_diagram_grid",
    "plot_product_comparison",
    "state_label_mathtext",
    "state_label_text",
    "conditions_text",
    "conditions_parts",
    "LEVEL_HALF_WIDTH",
]

#: Half width of a level bar in x units (states sit at x = 0, 1, 2, ...).
LEVEL_HALF_WIDTH = 0.32
_MINUS = "\N{MINUS SIGN}"
_POTENTIAL_WORDS = {"zero": "zero", "0": "zero", "equilibrium": "equilibrium", "eq": "equilibrium", "u_eq": "equilibrium",
                    "limiting": "limiting", "u_l": "limiting", "onset": "limiting"}


# ------------------------------------------------------------------------------------------------
# labels
# ------------------------------------------------------------------------------------------------
def state_label_mathtext(label: str) -> str:
    """Mathtext form of a state label (see :func:`ecatlab.chemtext.mathtext`): subscripted counts,
    superscript charges, the site mark ``∗`` on the baseline.

    ``"2 O*"`` -> ``$2\\,\\mathrm{O}{\\ast}$``; ``"H+ + e-"`` -> ``$\\mathrm{H}^{+}$ + $\\mathrm{e}^{-}$``.
    Text that is not chemistry is kept as text.
    """
    from ecatlab import chemtext

    return chemtext.mathtext(label)


def state_label_text(label: str) -> str:
    """Unicode form of a state label (see :func:`ecatlab.chemtext.unicode`).

    ``"NH2NH2*"`` -> ``"NH₂NH₂∗"``, ``"2 O*"`` -> ``"2 O∗"`` (thin space), ``"H+ + e-"`` -> ``"H⁺ + e⁻"``.
    Used for every label ecatlab draws: real text in SVG/PDF (searchable, editable) and fast to
    lay out (no mathtext parsing). :func:`state_label_mathtext` gives the mathtext form instead.
    """
    from ecatlab import chemtext

    return chemtext.unicode(label)


def _fmt(value: float, signed: bool = False) -> str:
    if not np.isfinite(value):
        return "n/a"
    text = f"{value:+.2f}" if signed else f"{value:.2f}"
    if text in ("-0.00", "+0.00"):
        text = "0.00" if not signed else "±0.00"
    return text.replace("-", _MINUS)


# ------------------------------------------------------------------------------------------------
# data
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class DiagramSeries:
    """One drawn series: a surface at one potential.

    Attributes
    ----------
    surface : str
    potential : float
        Applied potential U in V on the data's scale.
    potential_kind : str
        ``"value"``, ``"zero"``, ``"equilibrium"`` or ``"limiting"`` (how U was chosen).
    levels : ndarray (n_states,)
        Cumulative free energy of each state at U, eV (first state 0), from
        :func:`ecatlab.che.state_free_energies`.
    step_dG : ndarray (n_steps,)
        Free energy of each step at U, eV (differences of ``levels``).
    determining_index : int
        0-based index of the potential-determining step (from
        :func:`ecatlab.che.limiting_potentials`), -1 when undefined.
    limiting_potential : float
        U_L of the surface for this pathway, V on the scale.
    overpotential : float
        Theoretical overpotential, V.
    """

    surface: str
    potential: float
    potential_kind: str
    levels: np.ndarray = field(repr=False)
    step_dG: np.ndarray = field(repr=False)
    determining_index: int
    limiting_potential: float
    overpotential: float

    def legend_label(self, show_surface: bool = True, show_potential: bool = False, show_limiting: bool = True) -> str:
        parts = []
        if show_surface:
            parts.append(self.surface)
            if show_limiting and not show_potential and np.isfinite(self.limiting_potential):
                parts.append(rf"$U_\mathrm{{L}}$ = {_fmt(self.limiting_potential)} V")
        if show_potential:
            word = {"equilibrium": r"$U_\mathrm{eq}$ = ", "limiting": r"$U_\mathrm{L}$ = "}.get(self.potential_kind, "U = ")
            parts.append(f"{word}{_fmt(self.potential)} V")
        return "  ".join(parts)


@dataclass(frozen=True)
class DiagramData:
    """Everything a free-energy diagram shows, computed by the engine.

    Attributes
    ----------
    pathway : Pathway
    state_labels : tuple of str
        Plain labels of the states (``len(steps) + 1``).
    series : tuple of DiagramSeries
    scale : str
        ``"RHE"`` or ``"SHE"``.
    pH, temperature : float
        pH and temperature in K.
    equilibrium_potential : float
        U_eq of the overall reaction, V on the scale.
    references : str
        One-line description of the reference scheme.
    source : str
        Where the energies came from.
    """

    pathway: object
    state_labels: tuple[str, ...]
    series: tuple[DiagramSeries, ...]
    scale: str
    pH: float
    temperature: float
    equilibrium_potential: float
    references: str
    source: str

    @property
    def levels(self) -> np.ndarray:
        """(n_series, n_states) cumulative free energies in eV."""
        return np.vstack([s.levels for s in self.series])


def _potential_kind(spec) -> str:
    if isinstance(spec, str):
        kind = _POTENTIAL_WORDS.get(spec.strip().lower())
        if kind is None:
            try:
                float(spec)
            except ValueError:
                from ecatlab.errors import ConditionError

                raise ConditionError(
                    f"unknown potential {spec!r}; give a number in V or one of 'zero', 'equilibrium', 'limiting'"
                ) from None
            return "value"
        return kind
    return "value"


def diagram_data(
    energies,
    pathway,
    surfaces: str | Iterable[str] | None = None,
    potential=0.0,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
) -> DiagramData:
    """Compute the levels of a free-energy diagram with the CHE engine.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
    pathway : str or Pathway
        Built-in key, Pathway or step text.
    surfaces : str or list of str, optional
        Surfaces to draw (default: all surfaces of the table).
    potential : float, str or list of them
        U in V on ``scale``, or ``"zero"``, ``"equilibrium"`` (U_eq of the overall reaction) or
        ``"limiting"`` (each surface's own U_L). A list gives one series per surface and potential.
    pH : float
    scale : {"RHE", "SHE"}
    temperature : float
        K.

    Returns
    -------
    DiagramData
        Series ordered surface-major, potential-minor.

    Raises
    ------
    MissingSpeciesError
        When a requested surface lacks an adsorbate of the pathway (the message names them).
    """
    from ecatlab.che import limiting_potentials, state_free_energies
    from ecatlab.energies import EnergyTable, read_energies
    from ecatlab.pathways import resolve

    table = energies if isinstance(energies, EnergyTable) else read_energies(energies)
    path = resolve(pathway)
    if surfaces is None:
        names = list(table.surfaces)
    else:
        names = [surfaces] if isinstance(surfaces, str) else list(surfaces)
    specs = list(potential) if isinstance(potential, (list, tuple, np.ndarray)) else [potential]
    lp = limiting_potentials(table, path, pH=pH, scale=scale, temperature=temperature, surfaces=names, on_missing="raise")
    u_l = lp["limiting_potential"].to_numpy(dtype=float)
    u_eq = float(lp["equilibrium_potential"].iloc[0])
    pds = lp["determining_step_index"].to_numpy(dtype=int) - 1
    eta = lp["overpotential"].to_numpy(dtype=float)
    per_spec = []
    for spec in specs:
        kind = _potential_kind(spec)
        if kind == "zero":
            u = np.zeros(len(names))
        elif kind == "equilibrium":
            u = np.full(len(names), u_eq)
        elif kind == "limiting":
            u = u_l.copy()
        else:
            u = np.full(len(names), float(spec))
        states = state_free_energies(table, path, potential=u, pH=pH, scale=scale, temperature=temperature, surfaces=names)
        per_spec.append((kind, u, states.to_numpy(dtype=float)))
    series = []
    for s_idx, name in enumerate(names):
        for kind, u, levels in per_spec:
            lev = levels[s_idx].copy()
            series.append(
                DiagramSeries(name, float(u[s_idx]), kind, lev, np.diff(lev), int(pds[s_idx]), float(u_l[s_idx]), float(eta[s_idx]))
            )
    return DiagramData(
        pathway=path,
        state_labels=tuple(path.labels),
        series=tuple(series),
        scale=str(lp["scale"].iloc[0]),
        pH=float(pH),
        temperature=float(temperature),
        equilibrium_potential=u_eq,
        references=table.scheme.describe(),
        source=table.source,
    )


def _reference_names(references: str) -> list[str]:
    part = references.split(";")[1] if ";" in references else references
    part = part.replace("references", "").strip()
    import re

    part = re.sub(r"\s+at\s+[-+0-9.eE]+\s*K\s*$", "", part)  # "... N2(g) at 298.15 K": the temperature is shown apart
    return [r.strip() for r in part.split(",") if r.strip()]


def conditions_parts(data: DiagramData, potential: str | None = None, short: bool = True) -> list[str]:
    """The conditions of a diagram as separate phrases (potential, pH, T, reference scheme)."""
    if potential is None:
        kinds = {s.potential_kind for s in data.series}
        values = {round(s.potential, 6) for s in data.series}
        if len(data.series) and kinds == {"limiting"} and len(values) > 1:
            potential = rf"U = $U_\mathrm{{L}}$ of each surface (V vs {data.scale})"
        elif len(values) == 1:
            u = data.series[0].potential
            kind = data.series[0].potential_kind
            prefix = {"equilibrium": r"U = $U_\mathrm{eq}$ = ", "limiting": r"U = $U_\mathrm{L}$ = "}.get(kind, "U = ")
            potential = f"{prefix}{_fmt(u)} V vs {data.scale}"
        else:
            potential = f"several potentials (V vs {data.scale})"
    pieces = [potential, f"pH {data.pH:g}", f"{data.temperature:.2f} K"]
    if short:
        refs = ", ".join(state_label_text(r) for r in _reference_names(data.references))
        pieces.append(f"CHE, references {refs}" if refs else "CHE")
    else:
        pieces.append(data.references)
    return pieces


def conditions_text(data: DiagramData, potential: str | None = None, short: bool = True) -> str:
    """Conditions of a diagram as one line: potential, pH, T and the reference scheme
    (``short=False``: the full one-line description of the scheme)."""
    return " · ".join(conditions_parts(data, potential, short))


def _visible_length(text: str) -> float:
    """Rough printed width of a (mathtext) string in em units."""
    import re as _re

    plain = _re.sub(r"\\mathrm|\\,|[{}$\\]", "", text)
    plain = _re.sub(r"[_^]", "", plain)
    return 0.6 * len(plain)


def _wrap_phrases(parts: Sequence[str], width_pt: float, font_pt: float, sep: str = " · ") -> str:
    lines: list[str] = []
    current = ""
    for part in parts:
        trial = part if not current else current + sep + part
        if current and _visible_length(trial) * font_pt > width_pt:
            lines.append(current)
            current = part
        else:
            current = trial
    if current:
        lines.append(current)
    return "\n".join(lines)


# ------------------------------------------------------------------------------------------------
# drawing
# ------------------------------------------------------------------------------------------------
@dataclass
class LevelDrawing:
    """Artists of one drawn series, updatable in place (see the module docstring).

    Every series is drawn with three Line2D artists whatever its number of states (a slider
    redraw of ten surfaces paints ~30 lines instead of ~180): all level bars in one Line2D, all
    connectors in another (segments separated by NaN, so the dash pattern restarts on every
    segment in Agg, SVG and PDF), and the highlight stroke.

    Attributes
    ----------
    ax : Axes
    level_line : Line2D
        All flat bars of the series: state *k* is the segment ``x = k - h .. k + h`` at its free
        energy (eV); use :meth:`level_xy` or :attr:`levels` to read one back.
    connector_line : Line2D
        All dotted connectors: step *i* joins the right end of level *i* to the left end of level
        *i + 1*; see :meth:`connector_xy`.
    state_texts : list of Text
        State labels riding on the levels (empty when the labels are on the x axis).
    value_texts : list of Text
        Level energies under the levels (empty when not annotated).
    highlight_line : Line2D
        Broad stroke under the potential-determining step's connector.
    highlight_text : Text or None
        The determining step's free energy (single-series drawings).
    highlight_index : int or None
        0-based index of the highlighted step, ``None`` if hidden.
    n_states : int
    linestyle : str or tuple
        The dash pattern of the level bars, as given to :func:`draw_levels` (matplotlib form).
    """

    ax: object
    level_line: object
    connector_line: object
    state_texts: list
    value_texts: list
    highlight_line: object
    highlight_text: object | None
    highlight_index: int | None = None
    n_states: int = 0
    linestyle: object = "-"

    @property
    def artists(self) -> list:
        """The artists that :meth:`update` moves (highlight, connectors, levels, texts)."""
        return [self.highlight_line, self.connector_line, self.level_line, *self.state_texts, *self.value_texts]

    @property
    def levels(self) -> np.ndarray:
        """Current drawn levels (eV), read back from the level artist (one value per state)."""
        return np.asarray(self.level_line.get_ydata(), dtype=float)[0::3].copy()

    def level_xy(self, k: int) -> tuple[np.ndarray, np.ndarray]:
        """x and y (data units) of the bar of state ``k`` (0-based) as drawn."""
        x, y = (np.asarray(v, dtype=float) for v in self.level_line.get_data())
        return x[3 * k : 3 * k + 2], y[3 * k : 3 * k + 2]

    def connector_xy(self, i: int) -> tuple[np.ndarray, np.ndarray]:
        """x and y (data units) of the connector of step ``i`` (0-based) as drawn."""
        if not 0 <= i < self.n_states - 1:
            raise IndexError(f"step index {i} out of range 0..{self.n_states - 2}")
        x, y = (np.asarray(v, dtype=float) for v in self.connector_line.get_data())
        return x[3 * i : 3 * i + 2], y[3 * i : 3 * i + 2]

    def update(self, levels, highlight_index: int | None = None, title: str | None = None, rescale: bool = True) -> None:
        """Move the artists to new levels (eV) and highlight step ``highlight_index`` (0-based)."""
        y = np.asarray(levels, dtype=float)
        if y.shape != (self.n_states,):
            from ecatlab.errors import OptionError

            raise OptionError(f"LevelDrawing.update: levels must hold {self.n_states} values (one per state of the drawn "
                              f"pathway, eV), got shape {y.shape}; pass the levels of the same pathway")
        self.level_line.set_data(*_level_segments(y))
        self.connector_line.set_data(*_connector_segments(y))
        for k, text in enumerate(self.state_texts):
            text.set_position((k, y[k]))
        for k, text in enumerate(self.value_texts):
            text.set_position((k, y[k]))
            text.set_text(_fmt(y[k]))
        self._place_highlight(y, highlight_index)
        if title is not None:
            self.ax.set_title(title)
        if rescale:
            _fit_ylim(self.ax)

    def _place_highlight(self, y: np.ndarray, index: int | None) -> None:
        h = LEVEL_HALF_WIDTH
        valid = index is not None and 0 <= int(index) < self.n_states - 1
        self.highlight_index = int(index) if valid else None
        if not valid:
            self.highlight_line.set_visible(False)
            if self.highlight_text is not None:
                self.highlight_text.set_visible(False)
            return
        i = int(index)
        self.highlight_line.set_data([i + h, i + 1 - h], [y[i], y[i + 1]])
        self.highlight_line.set_visible(True)
        if self.highlight_text is not None:
            self.highlight_text.set_text(_highlight_caption(i, y[i + 1] - y[i]))
            self.highlight_text.set_visible(True)


def _level_segments(y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """x, y of all level bars in one polyline: (k - h, k + h, NaN) per state."""
    n = len(y)
    k = np.arange(n, dtype=float)
    h = LEVEL_HALF_WIDTH
    xs = np.column_stack([k - h, k + h, np.full(n, np.nan)]).ravel()
    ys = np.column_stack([y, y, np.full(n, np.nan)]).ravel()
    return xs, ys


def _connector_segments(y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """x, y of all connectors in one polyline: (i + h, i + 1 - h, NaN) per step."""
    m = max(len(y) - 1, 0)
    i = np.arange(m, dtype=float)
    h = LEVEL_HALF_WIDTH
    xs = np.column_stack([i + h, i + 1 - h, np.full(m, np.nan)]).ravel()
    ys = np.column_stack([y[:-1], y[1:], np.full(m, np.nan)]).ravel() if m else np.zeros(0)
    return xs, ys


def _highlight_caption(index: int, dG: float) -> str:
    value = _fmt(dG, signed=abs(dG) >= 0.005)
    return f"potential-determining step {index + 1}: ΔG = {value} eV"


def _fit_ylim(ax) -> None:
    ys = []
    for line in ax.lines:
        if line.get_gid() in ("ecatlab-level", "ecatlab-connector"):
            ys.extend(np.asarray(line.get_ydata(), dtype=float))
    ys = np.asarray([v for v in ys if np.isfinite(v)])
    if ys.size == 0:
        return
    lo, hi = float(ys.min()), float(ys.max())
    span = max(hi - lo, 0.5)
    ax.set_ylim(lo - 0.14 * span, hi + 0.2 * span)


def draw_levels(
    ax,
    levels,
    state_labels: Sequence[str] | None = None,
    *,
    color: str = PALETTE[0],
    linestyle="-",
    label: str | None = None,
    highlight_index: int | None = None,
    annotate: bool = True,
    labels_on_levels: bool = True,
    value_fontsize: float | None = None,
    style: str = "notebook",
    highlight_colour: str | None = None,
) -> LevelDrawing:
    """Draw one series of levels on ``ax`` and return its :class:`LevelDrawing` handle.

    ``highlight_colour``: colour of the potential-determining-step band (default the shared
    :data:`~ecatlab.plotting.style.HIGHLIGHT`; overlays pass each series' colour).

    Parameters
    ----------
    ax : Axes
    levels : array_like (n_states,)
        Cumulative free energies in eV (as given by the engine; not recomputed here).
    state_labels : sequence of str, optional
        Plain state labels (``"OOH*"``); drawn in chemical notation above the levels when
        ``labels_on_levels``.
    color, linestyle
        Colour of levels and connectors; dash pattern of the levels.
    label : str, optional
        Legend entry.
    highlight_index : int, optional
        0-based index of the step to highlight (the potential-determining step).
    annotate : bool
        Write each level's energy (eV, 2 decimals) under it.
    labels_on_levels : bool
        Put state labels above the levels (otherwise none are drawn by this function).
    value_fontsize : float, optional
        Font size of the level energies in pt (default: preset base size minus 1.5).
    style : str
        Preset name (line widths and fonts).
    """
    from matplotlib.transforms import offset_copy

    p = preset(style)
    y = np.asarray(levels, dtype=float)
    h = LEVEL_HALF_WIDTH
    fig = ax.figure
    n = len(y)
    # the determining-step band takes the series' own colour when several series share the axes
    band = HIGHLIGHT if highlight_colour is None else highlight_colour
    highlight_line = ax.plot([0, 1], [0, 0], color=band, linewidth=p.level_width_pt * 3.2, alpha=0.75 if highlight_colour is None else 0.35,
                             solid_capstyle="round", zorder=1, gid="ecatlab-highlight")[0]
    connector_line = ax.plot(*_connector_segments(y), color=color, linewidth=p.connector_width_pt,
                             linestyle=(0, (1, 1.6)), zorder=2, gid="ecatlab-connector")[0]
    level_line = ax.plot(*_level_segments(y), color=color, linewidth=p.level_width_pt, linestyle=linestyle,
                         solid_capstyle="round", dash_capstyle="round", zorder=3, gid="ecatlab-level",
                         label=label)[0]
    above = offset_copy(ax.transData, fig=fig, x=0, y=2.5, units="points")
    below = offset_copy(ax.transData, fig=fig, x=0, y=-2.5, units="points")
    state_texts = []
    if labels_on_levels and state_labels is not None:
        for k in range(n):
            state_texts.append(ax.text(k, y[k], state_label_text(state_labels[k]), transform=above, ha="center",
                                       va="bottom", fontsize=p.font_pt, color="#222222", zorder=5, gid="ecatlab-state-label"))
    value_texts = []
    if annotate:
        for k in range(n):
            value_texts.append(ax.text(k, y[k], _fmt(y[k]), transform=below, ha="center", va="top",
                                       fontsize=value_fontsize or (p.font_pt - 1.5), color=color, zorder=5,
                                       gid="ecatlab-level-value"))
    drawing = LevelDrawing(ax, level_line, connector_line, state_texts, value_texts, highlight_line, None, None, n, linestyle)
    drawing._place_highlight(y, highlight_index)
    return drawing


def _prepare_axes(ax, data: DiagramData, labels_on_axis: bool, p) -> None:
    n = len(data.state_labels)
    ax.set_xlim(-0.6, n - 0.4)
    ax.set_ylabel("ΔG (eV)")
    ax.spines["bottom"].set_visible(labels_on_axis)
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)
    if labels_on_axis:
        ax.set_xticks(range(n))
        ax.set_xticklabels([state_label_text(lab) for lab in data.state_labels])
        ax.tick_params(axis="x", length=0, pad=3)
        _rotate_if_crowded(ax, data.state_labels, p)
    else:
        ax.set_xticks([])
    ax.axhline(0.0, color="#BBBBBB", linewidth=0.6, zorder=0, linestyle="-", gid="ecatlab-zero")


def _axes_width_pt(ax) -> float:
    return ax.get_position().width * ax.figure.get_size_inches()[0] * 72.0


def _level_width_pt(ax, n_states: int) -> float:
    return 2 * LEVEL_HALF_WIDTH * _axes_width_pt(ax) / (n_states + 0.2)


def _rotate_if_crowded(ax, labels: Sequence[str], p) -> None:
    per_state = _axes_width_pt(ax) / max(len(labels), 1)
    longest = max(_visible_length(state_label_text(lab)) for lab in labels) * (p.font_pt - 1)
    if longest > 0.8 * per_state:
        for t in ax.get_xticklabels():
            t.set_rotation(35)
            t.set_ha("right")
            t.set_rotation_mode("anchor")


def _annotation_fit(ax, labels: Sequence[str], p) -> tuple[bool, float | None]:
    """Whether state labels fit on the levels, and the font size (pt) at which level energies
    fit under them (None: they would not be readable, leave them out)."""
    width = _level_width_pt(ax, len(labels))
    longest = max(_visible_length(state_label_text(lab)) for lab in labels)
    on_levels = longest * p.font_pt <= 1.25 * width
    value_font = min(p.font_pt - 1.5, width / (0.6 * 5.2))
    return on_levels, (value_font if value_font >= 5.0 else None)


def _title(ax, data: DiagramData, title, conditions: str | None, potential_text: str | None = None) -> None:
    font = ax.title.get_fontsize()
    width = max(_axes_width_pt(ax) * 1.1, 120.0)
    text = _wrap_phrases(conditions_parts(data, potential_text), width, font)
    if title is False:
        head = None
    elif title is None:
        head = pathway_title(data.pathway)
    else:
        head = str(title)
    if conditions == "title":
        ax.set_title(text if head is None else f"{head}\n{text}", loc="left")
    else:
        if head is not None:
            ax.set_title(head, loc="left")
        if conditions == "caption":
            small = ax.xaxis.label.get_size() - 1
            cap = _wrap_phrases(conditions_parts(data, potential_text), width, small)
            ax.annotate(cap, xy=(0, 0), xycoords="axes fraction", xytext=(0, -8), textcoords="offset points",
                        ha="left", va="top", fontsize=small, color="#444444", annotation_clip=False,
                        gid="ecatlab-caption")


def _new_axes(ax, style):
    from ecatlab.plotting.style import figure

    if ax is not None:
        return ax
    fig, new = figure(preset(style))
    return new


def plot_free_energy_diagram(
    energies,
    pathway,
    surfaces: str | Iterable[str] | None = None,
    potential=0.0,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    *,
    ax=None,
    style: str = "notebook",
    annotate: bool | None = None,
    highlight: bool = True,
    title=None,
    conditions: str | None = "title",
    legend: bool = True,
    data: DiagramData | None = None,
):
    """Free-energy diagram of one pathway for one or several surfaces (overlaid).

    Parameters
    ----------
    energies, pathway, surfaces, potential, pH, scale, temperature
        As in :func:`diagram_data` (``potential`` may be ``"zero"``, ``"equilibrium"``,
        ``"limiting"`` or a number in V on ``scale``; a list of potentials needs one surface, see
        :func:`plot_diagram_at_potentials`).
    ax : Axes, optional
        Draw here; a new preset-sized figure otherwise.
    style : {"single", "double", "notebook"}
    annotate : bool, optional
        Write level energies (default: only for a single series).
    highlight : bool
        Highlight the potential-determining step of every series.
    title : str, False or None
        Heading; ``None`` uses the pathway key, ``False`` none.
    conditions : {"title", "caption", None}
        Where the conditions (U and scale, pH, T, references) go.
    legend : bool
    data : DiagramData, optional
        Precomputed data (then ``energies``... are ignored).

    Returns
    -------
    Drawn
        ``ax``, ``figure``, ``data`` (the :class:`DiagramData`), ``parts["series"]`` (one
        :class:`LevelDrawing` per series) and ``parts["legend"]`` (the Legend, or None).
    """
    if data is None:
        data = diagram_data(energies, pathway, surfaces, potential, pH, scale, temperature)
    return _draw_data(data, ax=ax, style=style, annotate=annotate, highlight=highlight, title=title,
                      conditions=conditions, legend=legend)


def _draw_data(data: DiagramData, *, ax, style, annotate, highlight, title, conditions, legend,
               show_surface: bool = True, show_potential: bool = False, potential_text: str | None = None,
               highlight_legend: bool = True):
    p = preset(style)
    with style_context(p):
        ax = _new_axes(ax, p)
        single = len(data.series) == 1
        if annotate is None:
            annotate = single
        on_levels, value_font = _annotation_fit(ax, data.state_labels, p)
        on_levels = on_levels and single
        annotate = bool(annotate) and value_font is not None
        _prepare_axes(ax, data, labels_on_axis=not on_levels, p=p)
        drawings = []
        for j, s in enumerate(data.series):
            drawings.append(
                draw_levels(
                    ax, s.levels, data.state_labels,
                    # past the palette length the dash pattern shifts, so no two series look alike
                    color=PALETTE[j % len(PALETTE)], linestyle=DASHES[(j + j // len(PALETTE)) % len(DASHES)],
                    label=s.legend_label(show_surface, show_potential) or None,
                    highlight_index=s.determining_index if (highlight and s.determining_index >= 0) else None,
                    annotate=annotate, labels_on_levels=on_levels, value_fontsize=value_font, style=p,
                    highlight_colour=None if single else PALETTE[j % len(PALETTE)],
                )
            )
        _fit_ylim(ax)
        _title(ax, data, title, conditions, potential_text)
        leg = None
        if legend or (single and highlight and highlight_legend):
            leg = _legend(ax, highlight, p, series=legend and (len(data.series) > 1 or show_potential))
            if single and highlight and leg is not None and drawings[0].highlight_index is not None:
                drawings[0].highlight_text = leg.get_texts()[-1]
                i = drawings[0].highlight_index
                drawings[0].highlight_text.set_text(_highlight_caption(i, float(data.series[0].step_dG[i])))
    return Drawn(ax=ax, data=data, parts={"series": drawings, "legend": leg})


def _legend(ax, highlight: bool, p, series: bool = True):
    from matplotlib.lines import Line2D

    handles, labels = ax.get_legend_handles_labels() if series else ([], [])
    if highlight:
        several = len(handles) > 1
        handles.append(Line2D([0, 1], [0, 0], color="#9a9a9a" if several else HIGHLIGHT, linewidth=p.level_width_pt * 2.5,
                              alpha=0.5 if several else 0.75, solid_capstyle="round"))
        labels.append("potential-determining step (band in each surface's colour)" if several else "potential-determining step")
    if not handles:
        return None
    if len(handles) > 4:  # many series: outside the axes, right of the plot, so no level line is covered
        return ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, handlelength=2.4,
                         borderaxespad=0.0)
    return ax.legend(handles, labels, loc="best", frameon=False, handlelength=2.4, borderaxespad=0.3)


def _figure_highlight_legend(fig, p) -> None:
    from matplotlib.lines import Line2D

    handle = Line2D([0, 1], [0, 0], color=HIGHLIGHT, linewidth=p.level_width_pt * 2.5, alpha=0.75, solid_capstyle="round")
    fig.legend([handle], ["potential-determining step"], loc="outside lower right", frameon=False, handlelength=2.4)


def plot_diagram_at_potentials(
    energies,
    pathway,
    surface: str,
    potentials=(0.0, "equilibrium", "limiting"),
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    *,
    ax=None,
    style: str = "notebook",
    annotate: bool = False,
    highlight: bool = True,
    title=None,
    conditions: str | None = "title",
    legend: bool = True,
):
    """One surface's diagram at several potentials in one Axes (e.g. U = 0, U_eq and U_L).

    Returns a :class:`~ecatlab.plotting.handles.Drawn` (``parts["series"]``: one
    :class:`LevelDrawing` per potential); the legend names each potential (V on ``scale``).
    """
    data = diagram_data(energies, pathway, [surface], list(potentials), pH, scale, temperature)
    head = f"{data.pathway.name} on {surface}" if title is None else title
    return _draw_data(data, ax=ax, style=style, annotate=annotate, highlight=highlight, title=head,
                      conditions=conditions, legend=legend, show_surface=False, show_potential=True,
                      potential_text=f"potentials vs {data.scale}")


def _panel_figure(n: int, ncols: int, p, ax, sharey: bool = True):
    import matplotlib.pyplot as plt

    if ax is not None:
        axes = list(np.ravel(ax))
        if len(axes) < n:
            from ecatlab.errors import OptionError

            raise OptionError(f"ax: this figure has {n} panels (one per series), but {len(axes)} Axes were given; "
                              f"pass {n} Axes or leave ax out")
        return axes[0].figure, axes[:n]
    ncols = max(1, min(ncols, n))
    nrows = int(np.ceil(n / ncols))
    width, height = p.figsize
    height = height * max(1.0, 0.62 * nrows) if nrows > 1 else height
    fig, grid = plt.subplots(nrows, ncols, figsize=(width, height), sharey=sharey, squeeze=False, layout="constrained")
    axes = list(grid.ravel())
    for extra in axes[n:]:
        extra.set_visible(False)
    return fig, axes[:n]


def plot_diagram_grid(
    energies,
    pathway,
    surfaces: Iterable[str] | None = None,
    potential=0.0,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    *,
    ax=None,
    ncols: int = 3,
    style: str = "notebook",
    annotate: bool = False,
    highlight: bool = True,
    sharey: bool = True,
):
    """Small multiples: one panel per surface for one pathway, shared energy axis.

    ``ax`` may be a sequence of Axes (one per surface). Returns a
    :class:`~ecatlab.plotting.handles.Drawn`: ``axes`` (one panel per surface), ``data`` (the
    :class:`DiagramData` of all surfaces), ``parts["panels"]`` (one ``Drawn`` per panel) and
    ``parts["series"]`` (their :class:`LevelDrawing`, panel by panel). The conditions are the
    figure's title and each panel is titled with its surface and U_L.
    """
    data = diagram_data(energies, pathway, surfaces, potential, pH, scale, temperature)
    p = preset(style)
    with style_context(p):
        fig, axes = _panel_figure(len(data.series), ncols, p, ax, sharey)
        panels = []
        for a, s in zip(axes, data.series):
            sub = DiagramData(data.pathway, data.state_labels, (s,), data.scale, data.pH, data.temperature,
                              data.equilibrium_potential, data.references, data.source)
            panels.append(_draw_data(sub, ax=a, style=p, annotate=annotate, highlight=highlight,
                                     title=f"{s.surface}  ($U_\\mathrm{{L}}$ = {_fmt(s.limiting_potential)} V)", conditions=None,
                                     legend=False, highlight_legend=False))
            if a.get_subplotspec() is not None and not a.get_subplotspec().is_first_col():
                a.set_ylabel("")
        fig.suptitle(_wrap_phrases([data.pathway.name] + conditions_parts(data), fig.get_size_inches()[0] * 72, p.font_pt + 1),
                     fontsize=p.font_pt + 1, x=0.01, ha="left")
        if highlight:
            _figure_highlight_legend(fig, p)
    return Drawn(ax=axes[0], data=data, axes=tuple(axes),
                 parts={"panels": panels, "series": [d for panel in panels for d in panel.parts["series"]]})


def plot_product_comparison(
    energies,
    pathways: Sequence,
    surface: str,
    potential=0.0,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    *,
    ax=None,
    style: str = "notebook",
    annotate: bool = True,
    highlight: bool = True,
):
    """Several pathways of one surface side by side (e.g. CO vs HCOOH vs CH4), shared energy axis.

    Each panel is titled with the pathway and its U_L; panels are as wide as their number of
    states. ``ax`` may be a sequence of Axes (one per pathway). Returns a
    :class:`~ecatlab.plotting.handles.Drawn`: ``axes`` (one panel per pathway), ``data`` (list of
    :class:`DiagramData`, one per pathway), ``parts["panels"]`` and ``parts["series"]``.
    """
    import matplotlib.pyplot as plt

    datas = [diagram_data(energies, pw, [surface], potential, pH, scale, temperature) for pw in pathways]
    p = preset(style)
    with style_context(p):
        if ax is not None:
            axes = list(np.ravel(ax))
            if len(axes) < len(datas):
                from ecatlab.errors import OptionError

                raise OptionError(f"ax: {len(datas)} pathways need {len(datas)} Axes (one panel each), got {len(axes)}; "
                                  "pass one Axes per pathway or leave ax out")
            axes = axes[: len(datas)]
            fig = axes[0].figure
        else:
            widths = [len(d.state_labels) for d in datas]
            fig, grid = plt.subplots(1, len(datas), figsize=p.figsize, sharey=True, squeeze=False, layout="constrained",
                                     gridspec_kw={"width_ratios": widths})
            axes = list(grid.ravel())
        panels = []
        for j, (a, d) in enumerate(zip(axes, datas)):
            s = d.series[0]
            panels.append(_draw_data(d, ax=a, style=p, annotate=annotate, highlight=highlight,
                                     title=f"{d.pathway.name}\n$U_\\mathrm{{L}}$ = {_fmt(s.limiting_potential)} V", conditions=None,
                                     legend=False, highlight_legend=False))
            for line in a.lines:
                if line.get_gid() in ("ecatlab-level", "ecatlab-connector"):
                    line.set_color(PALETTE[j % len(PALETTE)])
            for t in a.texts:
                if t.get_gid() == "ecatlab-level-value":
                    t.set_color(PALETTE[j % len(PALETTE)])
            if j:
                a.set_ylabel("")
        lo = min(a.get_ylim()[0] for a in axes)
        hi = max(a.get_ylim()[1] for a in axes)
        for a in axes:
            a.set_ylim(lo, hi)
        fig.suptitle(_wrap_phrases([surface] + conditions_parts(datas[0]), fig.get_size_inches()[0] * 72, p.font_pt + 1),
                     fontsize=p.font_pt + 1, x=0.01, ha="left")
        if highlight:
            _figure_highlight_legend(fig, p)
    return Drawn(ax=axes[0], data=datas, axes=tuple(axes),
                 parts={"panels": panels, "series": [d for panel in panels for d in panel.parts["series"]]})
