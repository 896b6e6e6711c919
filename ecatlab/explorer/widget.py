"""The Jupyter explorer: ipywidgets controls over :class:`ExplorerState` and :class:`DiagramView`.

Every callback is a thin wrapper: it hands the new control value to the state (which asks the
engine), then refreshes the outputs. Callbacks never raise into ipywidgets (where the exception
would be invisible in JupyterLab or only logged): errors are shown in the explorer's error line,
kept in :attr:`Explorer.errors`, and the controls go back to the values actually shown.
"""

from __future__ import annotations

import csv
import functools
import html
import math
import os
import pathlib
import re
import warnings
from dataclasses import dataclass
from typing import Callable, Iterable

import numpy as np

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.che import kernel
from ecatlab.che.conditions import PH_RANGE
from ecatlab.explorer.model import UPHILL_TOLERANCE, ExplorerState, pathway_options, product_label
from ecatlab.explorer.view import FIGURE_HEIGHT_PX, DiagramView, render_mode
from ecatlab.pathways import REACTION_FAMILIES

__all__ = ["Explorer", "explore", "export_snapshot", "ExplorerSnapshot", "POTENTIAL_RANGE", "step_table_html", "readout_html"]

#: Initial range of the potential slider, V (extended when a snap target lies outside).
POTENTIAL_RANGE = (-3.0, 3.0)
#: Positions of the tabs (an opt-in "surface states" tab is appended after these).
DIAGRAM_TAB, VOLCANO_TAB, NETWORK_TAB, KINETICS_TAB = 0, 1, 2, 3
CAUTION = ("Theoretical estimates (CHE thermodynamics; kinetics only from estimated barriers); experiments follow local safety codes and "
           "licensed practice (CO is toxic, H2 flammable, electrolytes corrosive).")
_UNAVAILABLE = (
    "The ecatlab explorer needs ipywidgets in a running Jupyter kernel with widgets enabled "
    "(JupyterLab >= 3 and Notebook >= 7 have it built in; otherwise `pip install ipywidgets`, then restart "
    "the kernel). Shown instead: a static snapshot at the start conditions."
)


# ------------------------------------------------------------------------------------------------
# HTML of the tables (pure functions of the state; tested directly)
# ------------------------------------------------------------------------------------------------
_UP_STYLE = "background:#FBE3D6;color:#8A1C00;font-weight:bold"
_CHEM_STYLE = "background:#EEEEEE;color:#444444;font-style:italic"
_CELL = "padding:1px 6px;text-align:right;font-variant-numeric:tabular-nums"


def _num(value: float, digits: int = 3, signed: bool = True) -> str:
    if not math.isfinite(value):
        return "n/a"
    text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"
    return text.replace("-", "\N{MINUS SIGN}")


def _step_table_parts(state: ExplorerState) -> tuple[str, list[str], str]:
    """The parts of the step table that do not move with U (header, row openings, step legend),
    built once per pathway and surface set and kept on the state."""
    key = (id(state.pathway), tuple(state.surfaces))
    cached = getattr(state, "_step_table_cache", None)
    if cached is not None and cached[0] == key:
        return cached[1]
    steps = state.pathway.steps
    equations = [s.equation for s in steps]
    head = "".join(
        f'<th style="padding:1px 6px" title="{html.escape(eq)}">{i + 1}{"" if state.electrochemical[i] else " (chem.)"}</th>'
        for i, eq in enumerate(equations)
    )
    opening = (f'<table style="border-collapse:collapse;font-size:12px">'
               f'<thead><tr><th style="padding:1px 6px;text-align:left">surface</th>{head}</tr></thead><tbody>')
    rows = [f'<tr><th style="padding:1px 6px;text-align:left">{html.escape(surface)}</th>' for surface in state.surfaces]
    legend = "".join(f"<li>{i + 1}: {html.escape(eq)}</li>" for i, eq in enumerate(equations))
    closing = f'</tbody></table><ol style="font-size:11px;margin:2px 0 0 0;padding-left:0;list-style:none">{legend}</ol></div>'
    parts = (opening, rows, closing)
    state._step_table_cache = (key, parts)
    return parts


_CELL_PLAIN = f'<td style="{_CELL}">'
_CELL_UP = f'<td style="{_CELL};{_UP_STYLE}" class="uphill">\N{BLACK UP-POINTING TRIANGLE} '
_CELL_CHEM = f'<td style="{_CELL};{_CHEM_STYLE}" class="uphill-chemical">\N{BLACK DIAMOND} '


def step_table_html(state: ExplorerState) -> str:
    """HTML table of step free energies (eV) at the state's conditions, uphill steps marked.

    Electrochemical steps with dG > 0 get a triangle and a warm background; uphill chemical steps
    (which no potential can move) a diamond and grey italics. Only the numbers, the marks and the
    caption are formatted per call; header, surface names and step legend are built once per
    pathway and surface set.
    """
    dG = state.step_energies()
    kind = np.where(state.uphill(), 1, np.where(state.uphill_chemical(), 2, 0))  # 0 plain, 1 uphill, 2 chemical uphill
    opening, rows, closing = _step_table_parts(state)
    starts = (_CELL_PLAIN, _CELL_UP, _CELL_CHEM)
    body = "".join(
        row + "".join(f"{starts[k]}{_num(v)}</td>" for v, k in zip(values, kinds)) + "</tr>"
        for row, values, kinds in zip(rows, dG.tolist(), kind.tolist())
    )
    caption = (
        f"Step free energies \N{GREEK CAPITAL LETTER DELTA}G (eV), {html.escape(state.pathway.name)}, "
        f"{html.escape(state.conditions.describe())}. \N{BLACK UP-POINTING TRIANGLE} electrochemical step uphill at this U; "
        f"\N{BLACK DIAMOND} chemical step uphill (potential-independent)."
    )
    return (f'<div class="ecatlab-step-table" style="line-height:1.35"><div style="font-size:12px;margin-bottom:2px">{caption}</div>'
            + opening + body + closing)


def _shown(potential: float) -> float:
    """The potential as displayed in the exact-value box (rounded to 0.1 mV; the state keeps full precision)."""
    return round(float(potential), 4)


def route_html(state: ExplorerState) -> str:
    """HTML lines on the best-route choice: route of the focus surface with its U_L, the runner-up's
    U_L, ties, and the surfaces that lack an adsorbate of the route (empty for other pathways)."""
    route = state.route
    if route is None:
        return ""
    best = route.ranked[0]
    lines = [
        f"<b>{html.escape(route.describe())}</b> (network search {html.escape(route.reactant)} → "
        f"{html.escape(route.product)}), drawn for every selected surface: U<sub>L</sub> = {_num(best.limiting_potential)} V vs "
        f"{html.escape(route.scale)} on {html.escape(route.focus)}, determining step {html.escape(best.determining_step)}"
        + (f"; {route.tied} other route(s) reach the same U<sub>L</sub>" if route.tied else "")
        + ".<br>route: " + html.escape("; ".join(s.equation for s in best.pathway.steps))
    ]
    if len(route.ranked) > 1:
        second = route.ranked[1]
        lines.append(f"runner-up on {html.escape(route.focus)}: U<sub>L</sub> = {_num(second.limiting_potential)} V vs "
                     f"{html.escape(route.scale)} ({html.escape(second.pathway.name)})")
    missing = state.readout()["missing_species"]
    lacking = [f"{s} (missing {m})" for s, m in missing.items() if m]
    if lacking:
        lines.append("no value on this route for: " + html.escape(", ".join(lacking))
                     + "; choose one of them as focus to see its own best route")
    return '<div class="ecatlab-route" style="font-size:12px;margin-top:2px">' + "<br>".join(lines) + "</div>"


def _readout_key(state: ExplorerState, focus) -> tuple | None:
    """Everything :func:`readout_html` shows, except the text itself: it is rebuilt only when this changes
    (None: unknown, rebuild)."""
    limiting = getattr(state, "_limiting", None)
    if limiting is None:
        return None
    return (id(limiting), id(state.pathway), id(state.route), tuple(state.surfaces), focus, state.scale, state.pH,
            state.temperature, state.uphill().tobytes())


def _readout_rows(state: ExplorerState, focus: str | None) -> tuple[np.ndarray, list[str], list[str]]:
    """The parts of the read-out that do not move with U: ranking order, and per surface (in that
    order) the HTML of the row up to the "uphill now" cell. Built once per engine result (the
    state's limiting-potential table) and focus, kept on the state."""
    limiting = getattr(state, "_limiting", None)
    key = (id(limiting), id(state.pathway), id(state.route), tuple(state.surfaces), focus, state.scale, state.pH, state.temperature)
    cached = getattr(state, "_readout_rows_cache", None)
    if cached is not None and cached[0] == key:
        return cached[1]
    r = state.readout()
    order = kernel.ranking_order(r["G_max"].to_numpy(), r["blocked"].to_numpy())  # best-ranked first
    surfaces = r.index.to_numpy(dtype=object)[order]
    cols = {c: r[c].to_numpy()[order] for c in ("limiting_potential", "overpotential", "G_max", "blocked", "determining_step",
                                                 "determining_step_index", "uphill_chemical_steps", "missing_species")}
    heads = []
    for j, surface in enumerate(surfaces):  # once per rebuild, not per move
        mark = " style=\"background:#EAF2FA\"" if surface == focus else ""
        missing, chem_steps = cols["missing_species"][j], cols["uphill_chemical_steps"][j]
        note = f" (missing: {html.escape(missing)})" if missing else ""
        chem = f"<br><i>chemical uphill: {html.escape(chem_steps)}</i>" if chem_steps else ""
        blocked = ' <b title="an uphill chemical step blocks this pathway at every potential">blocked</b>' if cols["blocked"][j] else ""
        heads.append(
            f"<tr{mark}><th style=\"text-align:left;padding:1px 6px\">{html.escape(str(surface))}</th>"
            f'<td style="{_CELL}">{_num(float(cols["limiting_potential"][j]), 3)}</td>'
            f'<td style="{_CELL}">{_num(float(cols["overpotential"][j]), 3, signed=False)}</td>'
            f'<td style="{_CELL}">{_num(float(cols["G_max"][j]), 3, signed=False)}{blocked}</td>'
            f'<td style="padding:1px 6px">{int(cols["determining_step_index"][j]) or "-"}: '
            f'{html.escape(str(cols["determining_step"][j]))}{note}{chem}</td>'
        )
    u_eq = state.equilibrium_potential()
    frame = [
        '<div class="ecatlab-readout" style="line-height:1.35"><table style="border-collapse:collapse;font-size:12px">'
        f'<caption style="caption-side:top;text-align:left">{html.escape(state.pathway.name)} ({html.escape(state.pathway.direction)}); '
        f"U<sub>eq</sub> = {_num(u_eq)} V vs {state.scale} at pH {state.pH:g}, {state.temperature:g} K</caption>"
        f"<thead><tr><th>surface</th><th>U<sub>L</sub> (V vs {state.scale})</th><th>\N{GREEK SMALL LETTER ETA} (V)</th>"
        "<th>G<sub>max</sub> (eV)</th>"
        "<th>potential-determining step</th><th>uphill now</th></tr></thead><tbody>",
        f"</tbody></table>{route_html(state)}</div>",
    ]
    parts = (np.asarray(order), heads, frame)
    state._readout_rows_cache = (key, parts)
    return parts


def readout_html(state: ExplorerState, focus: str | None = None) -> str:
    """HTML read-out per surface, best-ranked first: U_L (V vs scale), overpotential (V), G_max (eV;
    'blocked' when an uphill chemical step blocks the pathway), determining step, uphill now
    (and, for a best-route choice, the route, its runner-up and surfaces lacking data).

    Only the "uphill now" column moves with U; the rest of each row is built once per engine
    result (see :func:`_readout_rows`)."""
    focus = state.focus if focus is None else focus
    order, heads, (opening, closing) = _readout_rows(state, focus)
    uphill = state.uphill()[order]
    names = [str(i + 1) for i in range(uphill.shape[1])]
    now = [", ".join(name for name, up in zip(names, row) if up) or "none" for row in uphill.tolist()]
    body = "".join(f'{head}<td style="padding:1px 6px">{text}</td></tr>' for head, text in zip(heads, now))
    return opening + body + closing


# ------------------------------------------------------------------------------------------------
# export
# ------------------------------------------------------------------------------------------------
def _stem(state: ExplorerState) -> str:
    u = f"{state.potential:+.3f}".replace(".", "p").replace("+", "plus").replace("-", "minus")
    name = state.pathway.name
    if state.route is not None:  # route names hold "->", "*", ">" and spaces: not for file names
        name = f"best-route-{product_label(state.route.product)}-{state.route.focus}"
    name = re.sub(r"[^A-Za-z0-9_-]+", "_", name)[:60]
    return f"explorer_{name}_U{u}V{state.scale}_pH{state.pH:g}".replace(".", "p")


def export_snapshot(state: ExplorerState, figure, folder: str | os.PathLike, force: bool = False) -> list[pathlib.Path]:
    """Save the current diagram (PNG and SVG) and tables (CSV) into ``folder``.

    The CSV files start with ``#`` comment lines naming the pathway, the conditions, the reference
    scheme, the energy source, the units and the caution; :func:`ecatlab.read_energies`-style
    readers and ``pandas.read_csv(comment="#")`` skip them. Text cells are neutralised against
    spreadsheet formula injection; every file is written atomically, and existing files are
    replaced only with ``force=True`` (all four targets are checked before anything is written).

    Returns
    -------
    list of Path
        Figure files, then ``*_steps.csv`` (dG per surface and step, eV) and ``*_limiting.csv``.
    """
    from ecatlab import safe_io
    from ecatlab.plotting.export import save_figure

    folder = pathlib.Path(folder)
    stem = _stem(state)
    steps_path = folder / f"{stem}_steps.csv"
    lim_path = folder / f"{stem}_limiting.csv"
    for target in (folder / f"{stem}.png", folder / f"{stem}.svg", steps_path, lim_path):
        safe_io.check_output(target, force=force, option="export folder", what="export file")
    header = [
        f"# ecatlab explorer export: pathway {state.pathway.name}"
        + (f" ({state.route.describe()}, network search)" if state.route is not None else ""),
        f"# conditions: {state.conditions.describe()}",
        f"# references: {state.scheme.describe()}",
        f"# energy source: {state.table.source}",
        f"# {CAUTION}",
    ]
    steps = state.step_table()
    lim = state.limiting()
    paths = save_figure(figure, folder / stem, formats=("png", "svg"), dpi=200, force=force)
    safe_io.write_csv(steps, steps_path, force=force, option="export folder",
                      header_lines=header + ["# values: step free energy dG_i in eV at the stated conditions; step equations:"]
                      + [f"#   {i + 1}: {s.equation}" for i, s in enumerate(state.pathway.steps)])
    safe_io.write_csv(lim, lim_path, force=force, option="export folder", index=False, quoting=csv.QUOTE_MINIMAL,
                      header_lines=header + [f"# columns: {k} = {v}" for k, v in lim.attrs.get("columns", {}).items()])
    return list(paths) + [steps_path, lim_path]


# ------------------------------------------------------------------------------------------------
# the widget
# ------------------------------------------------------------------------------------------------
@functools.lru_cache(maxsize=None)
def _reporting_slider_class():
    """FloatSlider that tells its owner when a value was clamped into [min, max] (ipywidgets clamps silently)."""
    import ipywidgets as w
    from traitlets import validate

    class ReportingFloatSlider(w.FloatSlider):
        def __init__(self, *args, on_clamp: Callable[[str, float, float], None] | None = None, **kwargs):
            self._on_clamp = None
            super().__init__(*args, **kwargs)
            self._on_clamp = on_clamp

        @validate("value")
        def _validate_value(self, proposal):
            requested = float(proposal["value"])
            value = min(max(requested, self.min), self.max)
            if value != requested and self._on_clamp is not None:
                self._on_clamp(self.description, requested, value)
            return value

    return ReportingFloatSlider


class Explorer:
    """Interactive free-energy explorer (open it with :func:`explore`).

    The controls are public ipywidgets; set their ``.value`` to drive the explorer (tests do so
    without a browser; every change updates the outputs synchronously).

    Attributes
    ----------
    state : ExplorerState
        What is shown (pathway, surfaces, conditions) and the engine's numbers.
    view : DiagramView
        The one Figure of this explorer (``view.figure``) and its display widget.
    potential, potential_entry, scale, pH, temperature, reaction, pathway, surfaces, focus
        Controls: potential slider (V) and exact-value field, RHE/SHE switch, pH slider (0-14),
        temperature field (K), reaction family, product/pathway, shown surfaces, focus surface
        (target of "snap to limiting potential").
    snap_limiting_button, snap_equilibrium_button, export_button, export_folder
    table, readout, status, error
        HTML outputs: step table, limiting-potential read-out, notices (clamps, warnings), errors.
    errors : list of Exception
        Errors caught in callbacks (also shown in :attr:`error`).
    exported : list of Path
        Files written by the last export.
    widget : ipywidgets.VBox
        The whole explorer.
    """

    def __init__(
        self,
        energies=None,
        reaction: str = "ORR",
        pathway=None,
        surfaces: Iterable[str] | None = None,
        potential: float = 0.0,
        pH: float = 0.0,
        scale: str = "RHE",
        temperature: float = STANDARD_TEMPERATURE,
        render: str = "auto",
        export_folder: str = "ecatlab_export",
    ):
        import ipywidgets as w

        if energies is None:
            from ecatlab.demo import demo_energies

            energies = demo_energies()
        self.state = ExplorerState(energies, reaction, pathway, surfaces, potential, pH, scale, temperature)
        self.errors: list[Exception] = []
        self.exported: list[pathlib.Path] = []
        self._messages: list[str] = []
        self._quiet = 0  # > 0 while controls are being synchronised from the state
        s = self.state
        Slider = _reporting_slider_class()
        lo, hi = POTENTIAL_RANGE
        lo, hi = min(lo, math.floor(s.potential)), max(hi, math.ceil(s.potential))
        wide = {"description_width": "initial"}
        self.potential = Slider(value=s.potential, min=lo, max=hi, step=0.01, description="U (V)", readout=False,
                                continuous_update=True, on_clamp=self._note_clamp, style=wide, layout=w.Layout(width="340px"))
        self.potential_entry = w.FloatText(value=_shown(s.potential), step=0.01, layout=w.Layout(width="110px"), tooltip="exact potential, V")
        self.scale = w.ToggleButtons(options=["RHE", "SHE"], value=s.scale, description="vs", style={"button_width": "52px", **wide})
        self.pH = Slider(value=s.pH, min=PH_RANGE[0], max=PH_RANGE[1], step=0.1, description="pH", readout=True, readout_format=".1f",
                         continuous_update=True, on_clamp=self._note_clamp, style=wide, layout=w.Layout(width="300px"))
        self.temperature = w.FloatText(value=s.temperature, description="T (K)", step=1.0, style=wide, layout=w.Layout(width="150px"))
        self.reaction = w.ToggleButtons(options=list(REACTION_FAMILIES), value=s.reaction, description="reaction",
                                        style={"button_width": "76px", **wide})
        self.pathway = w.Dropdown(options=self._pathway_choices(s.reaction), value=s.selection, description="product / pathway",
                                  style=wide, layout=w.Layout(width="420px"))
        self.surfaces = w.SelectMultiple(options=s.table.surfaces, value=tuple(s.surfaces), description="surfaces",
                                         rows=min(8, len(s.table.surfaces)), style=wide, layout=w.Layout(width="230px"))
        self.focus = w.Dropdown(options=s.surfaces, value=s.focus, description="focus", style=wide, layout=w.Layout(width="200px"))
        self.snap_limiting_button = w.Button(description="snap to limiting potential", icon="crosshairs", layout=w.Layout(width="220px"),
                                             tooltip="set U to the focus surface's limiting potential")
        self.snap_equilibrium_button = w.Button(description="snap to equilibrium potential", icon="balance-scale",
                                                layout=w.Layout(width="230px"), tooltip="set U to U_eq of the overall reaction")
        self.export_folder = w.Text(value=str(export_folder), description="folder", style=wide, layout=w.Layout(width="260px"))
        self.export_button = w.Button(description="export figure + tables", icon="save", layout=w.Layout(width="200px"))
        self.table = w.HTML()
        self.readout = w.HTML()
        self.status = w.HTML()
        self.error = w.HTML()

        self.view = DiagramView(render_mode(render), footnote=self._footnote())
        from ecatlab.explorer.volcano_tab import VolcanoPanel

        self.volcano = VolcanoPanel(error_line=self.error)
        self.volcano.sync_options(s.reaction, s.pathway)
        self.pourbaix = None  # the "surface states" tab, added by add_surface_states_tab()
        from ecatlab.explorer.uncertainty_tab import UncertaintyPanel

        self.uncertainty = UncertaintyPanel(error_line=self.error, state_getter=lambda: self.state, visible_getter=lambda: self.tabs.selected_index == 0)
        from ecatlab.explorer.network_tab import NetworkPanel

        self.network_panel = NetworkPanel(s.table, error_line=self.error)
        self.network_panel.conditions = lambda: (self.state.pH, self.state.scale, self.state.temperature)
        self.network_panel.is_visible = lambda: self.tabs.selected_index == NETWORK_TAB
        self._wire()
        self._shown_heading = self._heading()
        self.view.rebuild(s, self._shown_heading)
        self.main = w.VBox(
            [
                w.HBox([self.reaction, self.pathway]),
                w.HBox([self.potential, self.potential_entry, self.scale]),
                w.HBox([self.pH, self.temperature, self.snap_limiting_button, self.snap_equilibrium_button]),
                self.error,
                w.HBox([self.view.widget, w.VBox([self.surfaces, self.focus])], layout=w.Layout(flex_flow="row wrap")),
                self.readout,
                self.table,
                w.HBox([self.export_folder, self.export_button]),
                self.status,
                self.uncertainty.widget,  # "show uncertainty" option (ecatlab.explorer.uncertainty_tab)
            ]
        )
        # the diagram tab comes first and is the one shown; the volcano tab is drawn when opened
        from ecatlab.explorer.kinetics_tab import KineticsPanel

        self.kinetics = KineticsPanel(error_line=self.error)
        self.tabs = w.Tab(children=[self.main, self.volcano.widget, self.network_panel.widget, self.kinetics.widget],
                          titles=("diagram", "volcano", "network", "kinetics"), selected_index=0)
        self.tabs.observe(self._guard(self._on_tab), names="selected_index")
        for control in (self.kinetics.intrinsic_barrier, self.kinetics.symmetry_factor, self.kinetics.onset_current):
            control.observe(self._guard(lambda change: self._refresh_kinetics()), names="value")
        self.widget = self.tabs
        self._refresh()

    # -- presentation -----------------------------------------------------------------------------
    def _repr_mimebundle_(self, **kwargs):
        bundle = self.widget._repr_mimebundle_(**kwargs) or {}
        bundle = dict(bundle)
        bundle["text/plain"] = f"ecatlab explorer ({self.state.describe()}). {_UNAVAILABLE}"
        bundle["text/html"] = _snapshot_html(self.state, self.view, _UNAVAILABLE)
        return bundle

    def _heading(self) -> str:
        s = self.state
        if s.route is not None:
            return f"{s.reaction}: {s.route.describe()}, drawn for every selected surface"
        label = dict((k, lab) for lab, k in pathway_options(s.reaction)).get(s.pathway.name, s.pathway.name) if s.reaction in REACTION_FAMILIES else s.pathway.name
        return f"{s.reaction}: {label}  [{s.pathway.name}]"

    def _footnote(self) -> str:
        refs = self.state.scheme.describe().split(";")[1].strip()
        return f"energies: {self.state.table.source}; {refs}.\n{CAUTION}"

    def _pathway_choices(self, family: str) -> list[tuple[str, str]]:
        return self.state.pathway_choices(family)

    # -- wiring -------------------------------------------------------------------------------------
    def _guard(self, func: Callable) -> Callable:
        @functools.wraps(func)
        def wrapper(*args, **kwargs):
            if self._quiet:
                return None
            self.error.value = ""  # cleared first: a callback may report a problem of its own (volcano)
            try:
                return func(*args, **kwargs)
            except Exception as exc:  # shown to the user, never swallowed silently
                self._show_error(exc, func.__name__)
                return None

        return wrapper

    def _wire(self) -> None:
        self.potential.observe(self._guard(self._on_potential), names="value")
        self.potential_entry.observe(self._guard(self._on_potential_entry), names="value")
        self.pH.observe(self._guard(self._on_pH), names="value")
        self.scale.observe(self._guard(self._on_scale), names="value")
        self.temperature.observe(self._guard(self._on_temperature), names="value")
        self.reaction.observe(self._guard(self._on_reaction), names="value")
        self.pathway.observe(self._guard(self._on_pathway), names="value")
        self.surfaces.observe(self._guard(self._on_surfaces), names="value")
        self.focus.observe(self._guard(self._on_focus), names="value")
        self.volcano.descriptor.observe(self._guard(self._on_descriptor), names="value")
        self.snap_limiting_button.on_click(self._guard(lambda _b: self.snap_to_limiting()))
        self.snap_equilibrium_button.on_click(self._guard(lambda _b: self.snap_to_equilibrium()))
        self.export_button.on_click(self._guard(lambda _b: self.export()))

    def _show_error(self, exc: Exception, where: str) -> None:
        self.errors.append(exc)
        self._sync_controls()
        self.error.value = (
            '<div style="color:#9B1C1C;background:#FDECEC;padding:3px 6px;border-left:4px solid #9B1C1C">'
            f"<b>{html.escape(type(exc).__name__)}</b>: {html.escape(str(exc))}<br>"
            f"<small>Not applied; the outputs still show {html.escape(self.state.describe())}.</small></div>"
        )

    def _show_volcano_error(self, exc: Exception) -> None:
        """A volcano that cannot be drawn (e.g. an adsorbate without a scaling relation): the
        diagram tab's inputs were applied; only the volcano tab is empty."""
        self.errors.append(exc)
        self.error.value = (
            '<div style="color:#9B1C1C;background:#FDECEC;padding:3px 6px;border-left:4px solid #9B1C1C">'
            f"<b>{html.escape(type(exc).__name__)}</b> (volcano tab): {html.escape(str(exc))}<br>"
            "<small>The volcano tab shows no volcano for these inputs; choose another descriptor or pathway. "
            f"The diagram tab is unaffected and shows {html.escape(self.state.describe())}.</small></div>"
        )

    def _note_clamp(self, name: str, requested: float, value: float) -> None:
        self._messages.append(f"{name} {requested:g} is outside the control's range; clamped to {value:g}")

    @property
    def messages(self) -> list[str]:
        """Notices shown in the status line (clamps, range extensions, engine warnings)."""
        return list(self._messages)

    def _sync_controls(self) -> None:
        """Put every control back to the value actually shown (after a rejected change)."""
        s = self.state
        self._quiet += 1
        try:
            self._ensure_range(s.potential)
            self.potential.value = s.potential
            self.potential_entry.value = _shown(s.potential)
            self.pH.value = s.pH
            self.scale.value = s.scale
            self.temperature.value = s.temperature
            if self.reaction.value != s.reaction:
                self.reaction.value = s.reaction
            choices = self._pathway_choices(s.reaction)
            if list(self.pathway.options) != choices:
                self.pathway.options = choices
            if s.selection in [k for _, k in choices]:
                self.pathway.value = s.selection
            self.surfaces.value = tuple(s.surfaces)
            if list(self.focus.options) != s.surfaces:
                self.focus.options = s.surfaces
            self.focus.value = s.focus
            self.volcano.sync_options(s.reaction, s.pathway)
        finally:
            self._quiet -= 1

    def _ensure_range(self, value: float) -> None:
        if value < self.potential.min or value > self.potential.max:
            lo, hi = min(self.potential.min, math.floor(value * 2) / 2), max(self.potential.max, math.ceil(value * 2) / 2)
            self._messages.append(f"potential range extended to {lo:g} .. {hi:g} V to show {value:+.3f} V")
            self._quiet += 1
            try:
                if hi > self.potential.max:
                    self.potential.max = hi
                if lo < self.potential.min:
                    self.potential.min = lo
            finally:
                self._quiet -= 1

    def _refresh(self, structure: bool = False) -> None:
        """Bring every output to the state: figure (artists moved), step table, read-out, status."""
        s = self.state
        heading = self._heading()
        # a best-route search may have changed the route (focus, pH, scale, T): rebuild then too
        if structure or heading != self._shown_heading or self.view.data is None or self.view.data.pathway != s.pathway:
            self._shown_heading = heading
            self.view.rebuild(s, heading)
        self.view.update(s)
        self.view.present()
        self.table.value = step_table_html(s)
        key = _readout_key(s, self.focus.value)  # the read-out moves with U only through "uphill now"
        if key is None or key != getattr(self, "_readout_shown", None):
            self.readout.value = readout_html(s, self.focus.value)
            self._readout_shown = key
        notes = list(s.notices) + self._messages[-3:]
        self.status.value = "".join(f'<div style="color:#7A5A00">\N{WARNING SIGN} {html.escape(n)}</div>' for n in notes)
        self._refresh_volcano()
        self._refresh_kinetics()

    def _refresh_volcano(self) -> None:
        """Redraw the volcano if its tab is visible and its inputs changed (never for a potential move)."""
        try:
            self.volcano.refresh(self.state, self.volcano.descriptor.value, visible=self.tabs.selected_index == VOLCANO_TAB)
        except Exception as exc:  # the volcano tab shows a placeholder; the reason goes to the error line
            self._show_volcano_error(exc)
        if self.pourbaix is not None:
            try:
                self.pourbaix.refresh(self.state, visible=self.tabs.selected_index == len(self.tabs.children) - 1)
            except Exception as exc:  # the surface-states tab shows a placeholder; the reason goes to the error line
                self.errors.append(exc)
                self.error.value = f'<div style="color:#9B1C1C"><b>{html.escape(type(exc).__name__)}</b> (surface states tab): {html.escape(str(exc))}</div>'
        try:  # the "show uncertainty" option: sampled only when ticked, on the diagram tab
            self.uncertainty.refresh(self.state, visible=self.tabs.selected_index == 0)
        except Exception as exc:
            self._show_error(exc, "uncertainty")

    def add_surface_states_tab(self, states=None):
        """Add a "surface states" tab: the surface Pourbaix diagram of the focus surface with the applied
        U and pH and the pathway's U_L (see :mod:`ecatlab.explorer.pourbaix_tab`). ``states``: a surface-state
        table (default: clean, H*, OH*, O* from the energy table). Returns the panel."""
        from ecatlab.explorer.pourbaix_tab import PourbaixPanel

        if self.pourbaix is None:
            self.pourbaix = PourbaixPanel(error_line=self.error)
            titles = tuple(self.tabs.titles)
            self.tabs.children = tuple(self.tabs.children) + (self.pourbaix.widget,)
            self.tabs.titles = titles + ("surface states",)
        if states is not None:
            self.pourbaix.set_states(states)
        self._refresh_volcano()
        return self.pourbaix

    # -- callbacks (thin) ------------------------------------------------------------------------------
    def _on_potential(self, change) -> None:
        snapped = getattr(self, "_snapped", None)
        if snapped is not None and abs(float(change["new"]) - snapped) <= 0.5 * float(self.potential.step) + 1e-12:
            return  # the slider's own rounding of an exact (snapped) value: keep the exact value
        self._snapped = None
        self.state.set_potential(change["new"])
        self._quiet += 1
        try:
            self.potential_entry.value = _shown(self.state.potential)
        finally:
            self._quiet -= 1
        self._refresh()

    def _on_potential_entry(self, change) -> None:
        from ecatlab.errors import ExplorerValueError

        try:
            value = float(change["new"])
        except (TypeError, ValueError):
            value = math.nan
        if not math.isfinite(value):
            raise ExplorerValueError(f"potential {change['new']!r} is not a finite number of volts; type a value such as 0.8")
        self.potential.value = value  # clamps (and says so); then _on_potential refreshes
        if self.potential.value != value:
            self._quiet += 1
            try:
                self.potential_entry.value = self.potential.value
            finally:
                self._quiet -= 1
            self._refresh()

    def _on_pH(self, change) -> None:
        self.state.set_pH(change["new"])
        self._refresh()

    def _on_scale(self, change) -> None:
        self.state.set_scale(change["new"])
        self._sync_controls()
        self._refresh(structure=False)

    def _on_temperature(self, change) -> None:
        self.state.set_temperature(change["new"])
        self._refresh()

    def _on_reaction(self, change) -> None:
        self.state.set_reaction(change["new"])
        self._sync_controls()
        self._refresh(structure=True)
        # a potential carried over from another reaction means nothing here (1.85 V from OER in HER):
        # start the new reaction at its own equilibrium potential
        u_eq = self.state.equilibrium_potential()
        self._messages.append(f"potential set to the equilibrium potential of {self.state.pathway.name}, {u_eq:+.3f} V vs {self.state.scale}")
        self._set_potential_control(u_eq)

    def _on_pathway(self, change) -> None:
        if change["new"] is None:
            return
        self.state.set_pathway(change["new"])
        self._sync_controls()
        self._refresh(structure=True)

    def _on_surfaces(self, change) -> None:
        self.state.set_surfaces(change["new"])
        self._sync_controls()
        self._refresh(structure=True)

    def _on_focus(self, change) -> None:
        if change["new"] is None:
            return
        self.state.set_focus(change["new"])
        if self.state.route is not None:  # the best route of the new focus surface is drawn for all
            self._sync_controls()
            self._refresh()
        else:
            self.readout.value = readout_html(self.state, self.state.focus)
            self._refresh_volcano()  # the focus-surface panels (surface states, uncertainty bands); no-op when unchanged

    def _on_tab(self, change) -> None:
        self._refresh_volcano()
        self.network_panel.refresh(self.state.pH, self.state.scale, self.state.temperature, visible=self.tabs.selected_index == NETWORK_TAB)
        self._refresh_kinetics()

    def _refresh_kinetics(self) -> None:
        """Redraw the kinetics tab if it is visible and its inputs changed (never for a potential move)."""
        try:
            self.kinetics.refresh(self.state, visible=self.tabs.selected_index == KINETICS_TAB)
        except Exception as exc:  # the kinetics tab shows a placeholder; the reason goes to the error line
            self.error.value = f"<b>{html.escape(type(exc).__name__)}</b> (kinetics tab): {html.escape(str(exc))}"

    def _on_descriptor(self, change) -> None:
        self._refresh_volcano()

    # -- actions behind the buttons -------------------------------------------------------------------
    def snap_to_limiting(self, surface: str | None = None) -> float:
        """Set U to the engine's limiting potential of ``surface`` (default: the focus surface); returns it (V)."""
        target = self.state.limiting_potential_of(surface or self.state.focus)
        self._set_potential_control(target)
        return target

    def snap_to_equilibrium(self) -> float:
        """Set U to the engine's equilibrium potential of the overall reaction; returns it (V)."""
        target = self.state.equilibrium_potential()
        self._set_potential_control(target)
        return target

    def _set_potential_control(self, value: float) -> None:
        """Set U exactly (a snap target or a reset), not rounded to the slider's step; the slider
        shows the nearest position and its rounding echo is ignored."""
        self._ensure_range(value)
        self.state.set_potential(value)
        self._snapped = float(value)
        self._quiet += 1
        try:
            self.potential.value = value
            self.potential_entry.value = _shown(value)
        finally:
            self._quiet -= 1
        self._refresh()

    def export(self, folder: str | os.PathLike | None = None, force: bool = False) -> list[pathlib.Path]:
        """Save the current figure and tables (see :func:`export_snapshot`); the paths are listed in the status line.

        Existing files are replaced only with ``force=True`` (the button never replaces them).
        """
        with self.view.exporting() as figure:
            self.exported = export_snapshot(self.state, figure, folder or self.export_folder.value, force=force)
        self._messages.append("exported: " + ", ".join(str(p) for p in self.exported))
        self._refresh()
        return self.exported


# ------------------------------------------------------------------------------------------------
# static fallback and the entry point
# ------------------------------------------------------------------------------------------------
def _snapshot_html(state: ExplorerState, view: DiagramView, message: str) -> str:
    import base64

    png = view.last_png or view.render_png()
    return (
        f'<div class="ecatlab-explorer-static"><p style="color:#7A5A00">{html.escape(message)}</p>'
        f'<img alt="free-energy diagram" src="data:image/png;base64,{base64.b64encode(png).decode("ascii")}">'
        f"{readout_html(state)}{step_table_html(state)}</div>"
    )


@dataclass
class ExplorerSnapshot:
    """What :func:`explore` returns when ipywidgets is missing: the diagram and tables at the start
    conditions, plus a message saying how to get the interactive explorer."""

    state: ExplorerState
    view: DiagramView
    message: str

    def _repr_html_(self) -> str:
        return _snapshot_html(self.state, self.view, self.message)

    def __repr__(self) -> str:
        return f"ExplorerSnapshot({self.state.describe()}): {self.message}"


def explore(energies=None, reaction: str = "ORR", pathway=None, surfaces=None, potential: float = 0.0, pH: float = 0.0,
            scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, render: str = "auto",
            export_folder: str = "ecatlab_export"):
    """Open the interactive free-energy explorer on an energy table.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path, optional
        Adsorption free energies (eV); default the bundled ILLUSTRATIVE demo table.
    reaction : {"ORR", "OER", "HER", "CO2RR", "NRR"}
    pathway : str, optional
        Built-in pathway key (its family wins over ``reaction``).
    surfaces : list of str, optional
        Surfaces shown at start (default: the first ten).
    potential : float
        Start potential U, V vs ``scale``.
    pH : float
        0 to 14.
    scale : {"RHE", "SHE"}
    temperature : float
        K.
    render : {"auto", "ipympl", "inline"}
        Figure transport; ``auto`` uses the ipympl canvas when ``%matplotlib widget`` is active.
    export_folder : str
        Default folder of the export button.

    Returns
    -------
    Explorer
        Display it (last expression of a cell). Without ipywidgets an :class:`ExplorerSnapshot`
        (static diagram and tables) is returned and a warning says how to enable the explorer.

    Examples
    --------
    >>> ex = explore(pathway="orr-4e", potential=0.8)      # doctest: +SKIP
    >>> ex.potential.value = ex.state.limiting_potential_of("ALY-01")  # doctest: +SKIP
    """
    try:
        import ipywidgets  # noqa: F401
    except ImportError:
        from ecatlab.errors import EcatlabWarning

        if energies is None:
            from ecatlab.demo import demo_energies

            energies = demo_energies()
        state = ExplorerState(energies, reaction, pathway, surfaces, potential, pH, scale, temperature)
        view = DiagramView("inline", with_widget=False)
        view.rebuild(state, f"{state.reaction}: {state.pathway.name}")
        view.update(state)
        view.render_png()
        warnings.warn(_UNAVAILABLE, EcatlabWarning, stacklevel=2)
        return ExplorerSnapshot(state, view, _UNAVAILABLE)
    return Explorer(energies, reaction, pathway, surfaces, potential, pH, scale, temperature, render, export_folder)
