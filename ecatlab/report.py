"""One-file HTML report of a CHE analysis: inputs, tables, diagrams, ranking, warnings, provenance.

The report is a single self-contained HTML file: figures are inline SVG with real text, styles are
inline, and nothing is fetched from the network to view it (no scripts, fonts, images or links to
other sites). The markup is well-formed XML as well as HTML, so it can be checked by any parser.

Two steps, so that callers can reuse the figures (``ecatlab demo`` also saves them as files):

* :func:`analyse` runs the engine for every pathway (recording every warning raised on the way
  with ``warnings.catch_warnings(record=True)``) and draws the diagrams -> :class:`ReportAnalysis`;
* :func:`render_html` turns an analysis (plus optional extra :class:`ReportSection` objects from
  other modules) into the HTML text.

:func:`volcano_section` (1D volcano figure + :func:`ecatlab.volcano.volcano_summary` table) and
:func:`routes_section` (best route per surface from :class:`ecatlab.network.NetworkAnalysis` + the
network figure) build ready-made sections; :func:`build_report` and :func:`write_report` do
everything in one call and take ``volcanoes=[("orr-4e", "OH*")]`` and ``routes=[("CO2", "CH4")]``.

Results are theoretical estimates; every report carries :data:`SAFETY_CAUTION`.
"""

from __future__ import annotations

import datetime as _dt
import html
import os
import pathlib
import warnings
from dataclasses import dataclass, field
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab.constants import STANDARD_TEMPERATURE

__all__ = [
    "SAFETY_CAUTION",
    "ReportSection",
    "ReportFigure",
    "ReportAnalysis",
    "analyse",
    "render_html",
    "volcano_section",
    "routes_section",
    "build_report",
    "write_report",
]

#: The caution every report carries.
SAFETY_CAUTION = (
    "These numbers are theoretical estimates from the computational hydrogen electrode model "
    "(thermodynamics, plus microkinetics from stated and often estimated barriers where a section says so; no mass transport) and are only as good as the "
    "input energies. They do not establish that an experiment is safe or will work. Any experiment they "
    "inform must follow local safety codes and licensed laboratory practice: CO is toxic, H2 is "
    "flammable and forms explosive mixtures with air, and acidic or alkaline electrolytes are corrosive."
)


@dataclass(frozen=True)
class ReportSection:
    """An extra section of the report.

    Attributes
    ----------
    title : str
        Heading (plain text; escaped).
    html : str
        Body as an HTML fragment (inserted as given; keep it well-formed and free of external URLs;
        use :func:`ecatlab.plotting.export.svg_fragment` for figures).
    anchor : str, optional
        ``id`` of the section (derived from the title if omitted).
    """

    title: str
    html: str
    anchor: str | None = None


@dataclass
class ReportFigure:
    """One figure of the report (a matplotlib Figure plus what it shows).

    ``svg`` may hold the text of an SVG file already saved from ``figure`` (then the report
    embeds it instead of rendering the figure again).
    """

    pathway: str
    kind: str  # "surfaces" (overlay of the best surfaces) or "potentials" (best surface at several U)
    caption: str
    figure: object = field(repr=False, compare=False)
    svg: str | None = field(default=None, repr=False, compare=False)


@dataclass
class ReportAnalysis:
    """Everything a report shows, computed once.

    Attributes
    ----------
    table : EnergyTable
    pathways : list of Pathway
    pH, temperature : float
        pH and temperature in K.
    scale : str
    surfaces : list of str
    limiting : DataFrame
        :func:`ecatlab.che.limiting_potentials` output for all pathways.
    warnings : list of (category name, message)
        Every warning raised while reading and analysing (duplicates removed).
    figures : list of ReportFigure
    parameters : dict
        The parameters of the analysis, for the provenance section.
    """

    table: object
    pathways: list
    pH: float
    scale: str
    temperature: float
    surfaces: list
    limiting: pd.DataFrame
    warnings: list
    figures: list
    parameters: dict

    def close(self) -> None:
        """Close the matplotlib figures (frees memory in long sessions and CLI runs)."""
        import matplotlib.pyplot as plt

        for f in self.figures:
            plt.close(f.figure)


def _complete_surfaces(lp: pd.DataFrame, key: str) -> list[str]:
    """Surfaces with complete data for ``key``, best first by the kernel's ranking rule."""
    from ecatlab.tables import sort_by_ranking

    rows = lp[(lp["pathway"] == key) & (lp["missing_species"].astype(str) == "")]
    rows.attrs = dict(lp.attrs)
    return list(sort_by_ranking(rows)["surface"]) if len(rows) else []


def analyse(
    energies,
    pathways: str | Sequence,
    *,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    top: int = 4,
    style: str = "double",
    diagrams: bool = True,
) -> ReportAnalysis:
    """Run the CHE engine for every pathway and draw the report's diagrams.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
    pathways : str, Pathway or list of them
    pH, scale, temperature
        Conditions (temperature in K; potentials in V on ``scale``).
    surfaces : list of str, optional
        Surfaces to include (default all).
    top : int
        Number of best-ranked surfaces (unblocked first, then lowest G_max) overlaid in each pathway's diagram.
    style : str
        Figure preset (``"double"`` suits a report page).
    diagrams : bool
        Draw the diagrams (``False``: tables only).

    Returns
    -------
    ReportAnalysis
        Per pathway, two figures: the ``top`` best surfaces at U = 0 V on the scale, and the best
        surface at U = 0, U_eq and its U_L.
    """
    from ecatlab.che import limiting_potentials
    from ecatlab.energies import as_energy_table
    from ecatlab.pathways import resolve

    params = {
        "energies": getattr(energies, "source", str(energies) if isinstance(energies, (str, os.PathLike)) else "<DataFrame>"),
        "pathways": [getattr(p, "name", p) for p in ([pathways] if isinstance(pathways, str) or not isinstance(pathways, Sequence) else pathways)],
        "pH": pH,
        "scale": scale,
        "temperature": temperature,
        "surfaces": None if surfaces is None else list(surfaces),
        "top": top,
    }
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        table = as_energy_table(energies, temperature)
        paths = [resolve(p) for p in ([pathways] if isinstance(pathways, str) or not isinstance(pathways, Sequence) else pathways)]
        if not paths:
            from ecatlab.errors import PathwayError

            raise PathwayError("the report needs at least one pathway (e.g. --pathway orr-4e)")
        names = list(table.surfaces) if surfaces is None else list(surfaces)
        lp = limiting_potentials(table, paths, pH=pH, scale=scale, temperature=temperature, surfaces=names, on_missing="report")
        from ecatlab.tables import is_illustrative

        lp.attrs["illustrative"] = is_illustrative(table) or is_illustrative(lp)  # carried into every table caption
        figures: list[ReportFigure] = []
        if diagrams:
            figures = _draw_figures(table, paths, lp, pH, scale, temperature, top, style)
    return ReportAnalysis(table, paths, float(pH), str(lp["scale"].iloc[0]), float(temperature), names, lp,
                          _scientific_warnings(caught), figures, params)


def _scientific_warnings(caught, into: list | None = None) -> list[tuple[str, str]]:
    """ecatlab's own warnings (missing data, conditions, corrections...), each once, in order.

    Library chatter (matplotlib, pandas deprecations) is not a finding about the user's data and is
    left out of the report."""
    from ecatlab.errors import EcatlabWarning

    seen = [] if into is None else into
    for w in caught:
        if not issubclass(w.category, EcatlabWarning):
            continue
        item = (w.category.__name__, str(w.message))
        if item not in seen:
            seen.append(item)
    return seen


def _draw_figures(table, paths, lp, pH, scale, temperature, top, style) -> list[ReportFigure]:
    from ecatlab.plotting.diagram import plot_diagram_at_potentials, plot_free_energy_diagram

    figures = []
    for path in paths:
        ranked = _complete_surfaces(lp, path.name)
        if not ranked:
            continue
        chosen = ranked[: max(1, int(top))]
        drawn = plot_free_energy_diagram(table, path, chosen, potential=0.0, pH=pH, scale=scale, temperature=temperature,
                                         style=style, annotate=len(chosen) == 1)
        figures.append(ReportFigure(
            path.name, "surfaces",
            f"{path.name}: free-energy diagram of the {len(chosen)} best-ranked surface(s) (unblocked first, then lowest G_max) "
            f"({', '.join(chosen)}) at U = 0 V vs {scale}; the potential-determining step of each is underlaid in yellow.",
            _detached(drawn.figure),
        ))
        best = chosen[0]
        drawn = plot_diagram_at_potentials(table, path, best, (0.0, "equilibrium", "limiting"), pH=pH, scale=scale,
                                           temperature=temperature, style=style)
        figures.append(ReportFigure(
            path.name, "potentials",
            f"{path.name} on {best} (best-ranked: unblocked, lowest G_max) at U = 0 V, at the equilibrium potential U_eq and at its "
            f"limiting potential U_L (V vs {scale}); at U_L the potential-determining step is flat.",
            _detached(drawn.figure),
        ))
    return figures


def _detached(figure):
    """Remove a figure from pyplot's registry (no open-figure leak over many pathways); the Figure
    object still renders and saves."""
    import matplotlib.pyplot as plt

    plt.close(figure)
    return figure


# ------------------------------------------------------------------------------------------------
# HTML
# ------------------------------------------------------------------------------------------------
_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif;color:#1d2329;max-width:1100px;
margin:0 auto;padding:1.2rem 1.6rem 3rem;line-height:1.45;background:#fcfcfa}
h1{font-size:1.6rem;margin:.2rem 0 .2rem;color:#1F4E79}
h2{font-size:1.25rem;margin-top:2.2rem;border-bottom:2px solid #1F4E79;padding-bottom:.2rem;color:#1F4E79}
h3{font-size:1.05rem;margin-top:1.6rem}
.meta{color:#555;font-size:.9rem}
.caution{border-left:6px solid #D55E00;background:#fff4ec;padding:.6rem .9rem;margin:1rem 0}
.banner{border:2px dashed #B8860B;background:#fff9e6;padding:.5rem .9rem;margin:1rem 0;font-weight:600}
table.ecatlab-table{border-collapse:collapse;font-size:.86rem;margin:.6rem 0 1rem;width:100%}
table.ecatlab-table caption{caption-side:top;text-align:left;font-size:.8rem;color:#555;padding-bottom:.4rem}
table.ecatlab-table th{border-bottom:1.5px solid #333;text-align:left;padding:.25rem .5rem;vertical-align:bottom}
table.ecatlab-table td{border-bottom:1px solid #e3e3e0;padding:.2rem .5rem}
table.ecatlab-table td.num{text-align:right;font-variant-numeric:tabular-nums}
figure{margin:1rem 0 1.6rem}
figure svg{max-width:100%;height:auto}
figure.wide svg{width:100%;height:auto}
figure.medium svg{width:72%;height:auto}
figcaption{font-size:.85rem;color:#444;margin-top:.3rem}
dl.columns dt{font-family:monospace;font-weight:600}
dl.columns dd{margin:0 0 .3rem 1.2rem;font-size:.88rem}
ul.warnings li{font-family:monospace;font-size:.85rem;margin-bottom:.3rem}
pre{background:#f1f1ee;padding:.6rem;overflow-x:auto;font-size:.85rem;white-space:pre-wrap}
nav ol{columns:2;font-size:.92rem}
"""


def _esc(text) -> str:
    return html.escape(str(text), quote=True)


def _anchor(title: str) -> str:
    import re

    return re.sub(r"[^a-z0-9]+", "-", title.lower()).strip("-") or "section"


def _inputs_html(a: ReportAnalysis) -> str:
    t = a.table
    frame = t.frame
    origin = frame["G_origin"].value_counts() if "G_origin" in frame else pd.Series(dtype=int)
    prov = sorted({str(v) for v in frame["source"].dropna()}) if "source" in frame else []
    items = [
        f"<li><b>Energy table</b>: {_esc(t.describe())}.</li>",
        f"<li><b>Surfaces</b> ({len(a.surfaces)}): {_esc(', '.join(a.surfaces))}.</li>",
        f"<li><b>Adsorbates</b> ({len(t.species)}): {_esc(', '.join(t.species))}.</li>",
        f"<li><b>Reference scheme</b>: {_esc(t.scheme.describe())}.</li>",
        f"<li><b>Conditions</b>: pH {a.pH:g}, T = {a.temperature:.2f} K, potentials in V vs {_esc(a.scale)}.</li>",
    ]
    if len(origin):
        items.append("<li><b>Origin of G values</b>: " + _esc("; ".join(f"{k}: {v} rows" for k, v in origin.items())) + ".</li>")
    if prov:
        items.append("<li><b>Provenance column of the input</b>: " + _esc("; ".join(prov[:20])) + (" ..." if len(prov) > 20 else "") + "</li>")
    notes = "".join(f"<li>{_esc(n)}</li>" for n in t.notes) or "<li>none (G given directly)</li>"
    rows = "".join(
        f"<tr><td>{_esc(p.name)}</td><td>{_esc(p.direction)}</td><td class=\"num\">{abs(p.total_electrons):g}</td>"
        f"<td>{_esc(p.overall_step().equation)}</td><td>{_esc(p.description)}</td></tr>"
        for p in a.pathways
    )
    steps = "".join(
        f"<li><b>{_esc(p.name)}</b>: " + "; ".join(f"{i + 1}. {_esc(s.equation)}" for i, s in enumerate(p.steps)) + "</li>"
        for p in a.pathways
    )
    return (
        "<ul>" + "".join(items) + "</ul>"
        "<h3>Corrections applied while reading</h3><ul>" + notes + "</ul>"
        "<h3>Pathways</h3>"
        '<table class="ecatlab-table"><thead><tr><th>key</th><th>direction</th><th>electrons</th><th>overall reaction</th>'
        "<th>description</th></tr></thead><tbody>" + rows + "</tbody></table>"
        "<details><summary>Elementary steps</summary><ul>" + steps + "</ul></details>"
    )


def _columns_html(docs: dict) -> str:
    return '<dl class="columns">' + "".join(f"<dt>{_esc(k)}</dt><dd>{_esc(v)}</dd>" for k, v in docs.items()) + "</dl>"


def _ranking_html(a: ReportAnalysis) -> str:
    from ecatlab.tables import overpotential_matrix, rank_surfaces, to_html

    ranked = rank_surfaces(a.limiting)
    best = ranked[ranked["rank"] == 1].copy()
    best.attrs = dict(ranked.attrs)
    best.attrs["caption"] = "Best surface(s) per pathway (rank 1). " + ranked.attrs["caption"]
    matrix = overpotential_matrix(a.limiting)
    blocked = ranked[ranked["blocked"].astype(bool)] if "blocked" in ranked else ranked.iloc[:0]
    blocked_note = ""
    if len(blocked):
        items = "".join(
            f"<li>{_esc(r.pathway)} on {_esc(r.surface)}: {_esc(r.why)}</li>" for r in blocked.itertuples(index=False)
        )
        blocked_note = (
            f"<p>{len(blocked)} (surface, pathway) pair(s) are <b>blocked</b> by an uphill chemical step that no "
            "potential can drive; they rank after every unblocked surface, whatever their electrochemical "
            "overpotential says.</p><details><summary>Blocked pairs and why</summary><ul>" + items + "</ul></details>"
        )
    return (
        "<p>Surfaces are ranked within each pathway by the chemical-step-aware measure: surfaces whose pathway "
        "is blocked by an uphill chemical step (potential-independent: Tafel recombination, desorption, O<sub>2</sub> "
        "splitting) come after every unblocked one; within each group, lower <i>G</i><sub>max</sub> ranks first. "
        "<i>G</i><sub>max</sub> is the largest step free energy at the equilibrium potential over all steps, chemical "
        "ones included (Exner, ACS Catal. 10, 12607 (2020)); for pathways of one-electron steps without an uphill "
        "chemical step it equals e times the theoretical overpotential. Rankings compare thermodynamic descriptors "
        "only; kinetics and stability are not considered.</p>"
        + blocked_note
        + to_html(best)
        + "<h3>Overpotentials of every surface and pathway (V)</h3>"
        + to_html(matrix)
        + "<details><summary>Full ranking</summary>" + to_html(ranked) + "</details>"
    )


def _figures_html(a: ReportAnalysis) -> str:
    from ecatlab.plotting.export import svg_fragment

    if not a.figures:
        return "<p>No diagrams: no surface has every adsorbate of these pathways, or diagrams were switched off.</p>"
    parts = []
    current = None
    for k, f in enumerate(a.figures):
        if f.pathway != current:
            parts.append(f'<h3 id="diagram-{_esc(_anchor(f.pathway))}">{_esc(f.pathway)}</h3>')
            current = f.pathway
        svg = svg_fragment(f.svg if f.svg else f.figure, element_id=f"fig{k + 1}")
        parts.append(f"<figure>{svg}<figcaption>Figure {k + 1}. {_esc(f.caption)}</figcaption></figure>")
    return "".join(parts)


def _warnings_html(a: ReportAnalysis) -> str:
    if not a.warnings:
        return "<p>No scientific warnings (missing data, conditions, corrections) were raised during the analysis.</p>"
    return '<ul class="warnings">' + "".join(f"<li>{_esc(cat)}: {_esc(msg)}</li>" for cat, msg in a.warnings) + "</ul>"


def _provenance_html(a: ReportAnalysis, command: str | None) -> str:
    from ecatlab import __version__

    if command is None:
        args = ", ".join(f"{k}={v!r}" for k, v in a.parameters.items())
        command = f"ecatlab.report.build_report({args})"
    params = "".join(f"<tr><td>{_esc(k)}</td><td>{_esc(v)}</td></tr>" for k, v in a.parameters.items())
    return (
        f"<p>ecatlab version <b>{_esc(__version__)}</b>.</p>"
        f"<p>Command:</p><pre>{_esc(command)}</pre>"
        '<table class="ecatlab-table"><thead><tr><th>parameter</th><th>value</th></tr></thead><tbody>'
        + params + "</tbody></table>"
    )


def render_html(
    analysis: ReportAnalysis,
    *,
    sections: Sequence[ReportSection] = (),
    command: str | None = None,
    title: str | None = None,
    banner: str | None = None,
) -> str:
    """The report as one self-contained HTML document (text).

    Parameters
    ----------
    analysis : ReportAnalysis
    sections : sequence of ReportSection
        Extra sections, placed after the diagrams.
    command : str, optional
        The exact command line (or call) that produced the report; default: the equivalent
        Python call built from the analysis parameters.
    title : str, optional
    banner : str, optional
        A notice shown prominently at the top; default: the ILLUSTRATIVE notice when the energies
        are illustrative (:func:`ecatlab.tables.is_illustrative`), none otherwise.
    """
    from ecatlab import __version__
    from ecatlab.tables import limiting_potential_table, to_html

    a = analysis
    title = title or f"ecatlab report: {', '.join(p.name for p in a.pathways)}"
    table = limiting_potential_table(a.limiting, sort=True)
    body: list[tuple[str, str, str]] = [
        ("inputs", "Inputs", _inputs_html(a)),
        ("limiting-potentials", "Limiting potentials",
         "<p>Limiting potential U<sub>L</sub>, equilibrium potential U<sub>eq</sub> and theoretical overpotential "
         "&#951; per surface and pathway, sorted within each pathway by the ranking rule (unblocked first, then lowest G<sub>max</sub>).</p>" + to_html(table)
         + "<h3>Columns</h3>" + _columns_html(table.attrs["columns"])),
        ("ranking", "Ranking of surfaces", _ranking_html(a)),
        ("diagrams", "Free-energy diagrams", _figures_html(a)),
    ]
    for s in sections:
        body.append((s.anchor or _anchor(s.title), s.title, s.html))
    body += [
        ("warnings", "Warnings raised during the analysis", _warnings_html(a)),
        ("provenance", "Version and parameters", _provenance_html(a, command)),
    ]
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    nav = "".join(f'<li><a href="#{_esc(anchor)}">{_esc(head)}</a></li>' for anchor, head, _ in body)
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8"/>',
        '<meta name="viewport" content="width=device-width, initial-scale=1"/>',
        f"<title>{_esc(title)}</title><style>{_CSS}</style></head><body>",
        f"<h1>{_esc(title)}</h1>",
        f'<p class="meta">Generated by ecatlab {_esc(__version__)} on {stamp} · pH {a.pH:g} · '
        f"{a.temperature:.2f} K · potentials in V vs {_esc(a.scale)} · {len(a.surfaces)} surfaces · "
        f"{len(a.pathways)} pathways</p>",
    ]
    if banner is None and a.limiting.attrs.get("illustrative"):
        from ecatlab.tables import ILLUSTRATIVE_NOTE

        banner = ILLUSTRATIVE_NOTE + " The energies are the invented example numbers shipped with ecatlab."
    if banner:
        parts.append(f'<div class="banner">{_esc(banner)}</div>')
    parts.append(f'<div class="caution" id="caution"><b>Caution.</b> {_esc(SAFETY_CAUTION)}</div>')
    parts.append(f"<nav><ol>{nav}</ol></nav>")
    for anchor, head, content in body:
        parts.append(f'<section id="{_esc(anchor)}"><h2>{_esc(head)}</h2>{content}</section>')
    parts.append(f'<div class="caution"><b>Caution.</b> {_esc(SAFETY_CAUTION)}</div>')
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"


# ------------------------------------------------------------------------------------------------
# Ready-made extra sections: volcano and best routes
# ------------------------------------------------------------------------------------------------
def _fmt_value(value, unit: str = "eV") -> str:
    """Energies (eV) and potentials (V) to 3 decimals, other numbers (pH, K) as given, booleans yes/no."""
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (float, np.floating)):
        return f"{float(value):.3f}" if (unit == "eV" or unit.startswith("V")) else f"{float(value):g}"
    return str(value)


def _svg_figure(ax_or_fig, element_id: str, caption: str, size: str = "wide") -> str:
    import matplotlib.pyplot as plt

    from ecatlab.plotting.export import _as_figure, svg_fragment

    fig = _as_figure(ax_or_fig)  # a Figure, an Axes or a plotter's Drawn
    try:
        svg = svg_fragment(fig, element_id=element_id)
    finally:
        plt.close(fig)
    return f'<figure class="{size}">{svg}<figcaption>{_esc(caption)}</figcaption></figure>'


def volcano_section(
    energies,
    pathway,
    descriptor: str,
    *,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    style: str = "double",
    **volcano_kwargs,
) -> ReportSection:
    """A report section with the 1D volcano of ``pathway`` against ``descriptor``.

    The curve comes from :func:`ecatlab.volcano.volcano` (scaling relations fitted to every surface
    of ``energies`` unless given in ``volcano_kwargs``); the section shows the figure
    (:func:`ecatlab.plotting.volcano.plot_volcano`) and the quantity/value/unit/note table of
    :meth:`VolcanoCurve.summary` (the same as :func:`ecatlab.volcano.volcano_summary`), values
    rounded to 3 decimals (eV for descriptors, V for potentials).

    Raises
    ------
    NotationError, ScalingError, PathwayError
        Unreadable descriptor, an adsorbate missing from the table, an unknown pathway.
    """
    from ecatlab.plotting.volcano import plot_volcano
    from ecatlab.tables import to_html
    from ecatlab.volcano import volcano

    curve = volcano(energies, pathway, descriptor, pH=pH, scale=scale, temperature=temperature, **volcano_kwargs)
    key = curve.pathway.name
    summary = curve.summary()
    shown = pd.DataFrame({
        "quantity": summary["quantity"],
        "value": [_fmt_value(v, u) for v, u in zip(summary["value"], summary["unit"])],
        "unit": summary["unit"],
        "note": summary["note"],
    })
    shown.attrs["caption"] = (
        f"Volcano of {key} against {curve.descriptor.text}: apex, equilibrium potential and the scaling relations "
        f"used (pH {float(pH):g}, {float(temperature):.2f} K, potentials in V vs {curve.conditions['scale']}). "
        "Theoretical estimate: the apex is the best any surface obeying these relations can do."
    )
    anchor = _anchor(f"volcano {key} {curve.descriptor.text}")
    apex = curve.apex
    intro = (
        f"<p>Limiting potential of {_esc(key)} along the descriptor {_esc(curve.descriptor.text)} (eV) when every "
        "other adsorbate follows a linear scaling relation with it; each step's onset line is drawn, the envelope is "
        f"the limiting potential and the computed surfaces sit at their exact values. Apex: descriptor "
        f"<b>{apex.descriptor[0]:.3f} eV</b>, U<sub>L</sub> <b>{apex.limiting_potential:.3f} V</b>, overpotential "
        f"<b>{apex.overpotential:.3f} V</b>.</p>"
    )
    drawn = plot_volcano(curve, style=style)
    figure = _svg_figure(drawn, anchor + "-fig",
                         f"Volcano of {key} vs {curve.descriptor.text} ({_fmt_value(apex.overpotential)} V minimum overpotential "
                         "set by the scaling relations).")
    return ReportSection(f"Volcano: {key} vs {curve.descriptor.text}", intro + figure + to_html(shown), anchor)


def routes_section(
    energies,
    reactant: str,
    product: str,
    *,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    style: str = "double",
    her: str | None = "her-volmer-heyrovsky",
) -> ReportSection:
    """A report section with the best route from ``reactant`` to ``product`` on every surface.

    Built with :func:`ecatlab.network.build_network` and :meth:`NetworkAnalysis.best_routes`: per
    surface the route with the least negative limiting potential (V on ``scale``), its
    potential-determining step, the largest chemical-step dG (eV) and the route; the HER limiting
    potential of the engine's ``her`` pathway is listed beside it as the competitor. The figure
    (:func:`ecatlab.plotting.network.plot_network`) shows the routes on the surface with the best
    limiting potential at U = 0 V.

    Raises
    ------
    PathwayError
        Unknown reactant or product (the message lists the known molecules).
    """
    from ecatlab.energies import EnergyTable, read_energies
    from ecatlab.network import NetworkAnalysis, build_network
    from ecatlab.plotting.network import plot_network
    from ecatlab.tables import to_html

    table = energies if isinstance(energies, EnergyTable) else read_energies(energies)
    network = build_network(table, reactant)
    analysis = NetworkAnalysis(network, table, pH=pH, scale=scale, temperature=temperature, surfaces=surfaces)
    key = network.resolve_product(product)
    best = analysis.best_routes(key)
    sc = analysis.scale
    shown = pd.DataFrame({
        "surface": best["surface"],
        f"U_L [V vs {sc}]": best["limiting_potential"].round(3),
        "potential-determining step": best["determining_step"],
        "max chemical dG [eV]": best["max_chemical_dG"].round(3),
        "route": best["route"].str.split(" via ").str[-1],
        "tied routes": best["tied_routes"],
    })
    if her is not None:
        onsets = analysis.onset_potentials([key], her=her)
        if "H2(g)" in onsets:
            h2 = onsets["H2(g)"].reindex(best["surface"]).to_numpy()
            shown[f"U_L HER [V vs {sc}]"] = np.round(h2, 3)
            shown["HER first"] = np.where(np.isnan(h2) | best["limiting_potential"].isna(), "n/a",
                                          np.where(h2 > best["limiting_potential"].to_numpy(), "yes", "no"))
    shown = shown.sort_values(f"U_L [V vs {sc}]", ascending=False, kind="stable", na_position="last").reset_index(drop=True)
    shown.attrs["caption"] = (
        f"Best route {network.reactant} -> {key} per surface (bottleneck search over {len(network.states)} states, {len(network.edges)} steps), "
        f"pH {analysis.pH:g}, {analysis.temperature:.2f} K, {table.scheme.describe().split(';')[0]}. "
        "'HER first' = hydrogen evolution has the less negative limiting potential (a thermodynamic indicator only)."
    )
    shown.attrs["columns"] = {
        f"U_L [V vs {sc}]": "limiting potential of the best route (least negative over all routes), V",
        "potential-determining step": "the electrochemical step that sets U_L",
        "max chemical dG [eV]": "largest free energy of a chemical (potential-independent) step on the route, eV; n/a = none",
        "route": "intermediates in order (after 'via' in NetworkAnalysis.best_routes)",
        "tied routes": "other steps into the product state reached at the same route cost (within 1e-9 eV)",
    }
    anchor = _anchor(f"routes {network.reactant} {key}")
    intro = (
        f"<p>Routes from {_esc(network.reactant)} to {_esc(key)} through the adsorbates in the table (intermediates as "
        "molecular graphs, one bond changed per step), searched per surface by a bottleneck shortest path: a route with "
        "an uphill chemical step is used only when no open route exists, then the least negative limiting potential. "
        "Surfaces lacking an adsorbate use only the routes their data allow.</p>"
    )
    parts = [intro, to_html(shown)]
    ok = best.dropna(subset=["limiting_potential"])
    if len(ok):
        top = ok.loc[ok["limiting_potential"].idxmax()]
        drawn = plot_network(analysis, str(top["surface"]), key, potential=0.0, style=style)
        parts.insert(1, _svg_figure(
            drawn, anchor + "-fig",
            f"Routes to {key} on {top['surface']} (best U_L = {top['limiting_potential']:.3f} V vs {sc}) at U = 0 V: arrows "
            "coloured by step dG (blue downhill, red uphill), dashed = chemical steps, thick band = the best route.",
            size="medium",
        ))
    return ReportSection(f"Best routes: {network.reactant} to {key}", "".join(parts), anchor)


def _extra_sections(table, volcanoes, routes, pH, scale, temperature, surfaces, style) -> list[ReportSection]:
    """The volcano and route sections; errors name the section asked for (same error class)."""
    from ecatlab.errors import EcatlabError, PathwayError, ScalingError

    out = []
    for pathway, descriptor in volcanoes or ():
        try:
            out.append(volcano_section(table, pathway, descriptor, pH=pH, scale=scale, temperature=temperature, style=style))
        except EcatlabError as exc:
            raise ScalingError(f"volcano section {getattr(pathway, 'name', pathway)} vs {descriptor!r}: {exc}") from exc
    for reactant, product in routes or ():
        try:
            out.append(routes_section(table, reactant, product, pH=pH, scale=scale, temperature=temperature,
                                      surfaces=surfaces, style=style))
        except EcatlabError as exc:
            raise PathwayError(f"routes section {reactant} -> {product}: {exc}") from exc
    return out


def build_report(
    energies,
    pathways,
    *,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    top: int = 4,
    sections: Sequence[ReportSection] = (),
    volcanoes: Sequence[tuple[str, str]] = (),
    routes: Sequence[tuple[str, str]] = (),
    command: str | None = None,
    title: str | None = None,
    banner: str | None = None,
    descriptors: bool = False,
    surface_states=None,
    uncertainty: Sequence[tuple] = (),
    kinetics=None,
) -> str:
    """Analyse and render in one call; returns the HTML text (figures are closed afterwards).

    Parameters are those of :func:`analyse` and :func:`render_html`, plus

    volcanoes : sequence of (pathway, descriptor)
        One :func:`volcano_section` each, e.g. ``[("orr-4e", "OH*")]``.
    routes : sequence of (reactant, product)
        One :func:`routes_section` each, e.g. ``[("CO2", "CH4")]``.
    uncertainty : sequence of (pathway, error model[, n_samples])
        One :func:`ecatlab.uncertainty.report_section.uncertainty_section` each.

    kinetics : pathway key, list of keys, or dict, optional
        A steady-state microkinetics section (:func:`ecatlab.kinetics.report_section.kinetics_section`).

    The extra sections come after ``sections``; they use the same conditions and surfaces.
    ``descriptors=True`` adds :func:`ecatlab.descriptors.descriptor_section`; ``surface_states``
    (a surface-state table) adds :func:`ecatlab.pourbaix.pourbaix_section` with the pathways flagged.
    """
    analysis = analyse(energies, pathways, pH=pH, scale=scale, temperature=temperature, surfaces=surfaces, top=top)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            extra = _extra_sections(analysis.table, volcanoes, routes, pH, scale, temperature, surfaces, "double")
        _scientific_warnings(caught, into=analysis.warnings)
        if uncertainty:  # (pathway, error model[, n_samples]) each: ecatlab.uncertainty.report_section
            from ecatlab.uncertainty.report_section import uncertainty_section

            extra += [uncertainty_section(analysis.table, u[0], u[1], n_samples=(u[2] if len(u) > 2 else 1000), pH=pH, scale=scale,
                                          temperature=temperature, surfaces=surfaces) for u in uncertainty]
        if volcanoes:
            analysis.parameters["volcanoes"] = [tuple(v) for v in volcanoes]
        if routes:
            analysis.parameters["routes"] = [tuple(r) for r in routes]
        if descriptors:
            from ecatlab.descriptors import descriptor_section

            extra.append(descriptor_section(analysis.table))
        if surface_states is not None:
            from ecatlab.pourbaix import pourbaix_section

            extra.append(pourbaix_section(surface_states, analysis.table, analysis.pathways, pH=pH, scale=scale, temperature=temperature, surfaces=surfaces))
        if kinetics is not None:
            from ecatlab.kinetics.report_section import kinetics_section_from_option

            extra.append(kinetics_section_from_option(analysis.table, kinetics, pH=pH, scale=scale, temperature=temperature, surfaces=surfaces))
        return render_html(analysis, sections=list(sections) + extra, command=command, title=title, banner=banner)
    finally:
        analysis.close()


def write_report(path: str | os.PathLike, energies, pathways, force: bool = False, inputs=(), **kwargs) -> pathlib.Path:
    """Build the report (see :func:`build_report`) and write it to ``path`` (UTF-8); returns the path.

    ``path`` (``.html``/``.htm``) is checked before anything is computed: an existing file is
    replaced only with ``force=True``, never when it is the energy file or one of ``inputs``. The
    file is written atomically (see :mod:`ecatlab.safe_io`).
    """
    from ecatlab import safe_io

    sources = list(inputs) + ([energies] if isinstance(energies, (str, os.PathLike)) else [])
    if isinstance(getattr(energies, "source", None), str) and os.path.isfile(energies.source):
        sources.append(energies.source)
    options = dict(force=force, inputs=sources, suffixes=("html", "htm"), what="HTML report")
    target = safe_io.check_output(path, **options)
    text = build_report(energies, pathways, **kwargs)
    safe_io.atomic_write_text(target, text, **options)
    return target
