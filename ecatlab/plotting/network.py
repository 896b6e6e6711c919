"""Figure of a reaction network: states in columns by proton-electron pairs added, steps coloured
by their free energy at a potential, the best route drawn on top.

The plotter only draws; all numbers come from :class:`ecatlab.network.NetworkAnalysis`.
"""

from __future__ import annotations

import re

import numpy as np

from ecatlab.plotting.style import HIGHLIGHT, PALETTE, preset, style_context

__all__ = ["plot_network", "state_mathtext"]


def state_mathtext(label: str) -> str:
    """Mathtext of a state label such as ``"O* + CH4(g)"``, one species per line."""
    from ecatlab.notation import Species

    parts = []
    for part in label.split(" + "):
        m = re.fullmatch(r"(\d+) (.+)", part)
        coef, text = (m.group(1) + r"\,", m.group(2)) if m else ("", part)
        try:
            tex = Species.parse(text).latex()
        except Exception:
            tex = text
        parts.append(f"{coef}{tex}" if not coef else f"${coef}$" + tex)
    return "\n+ ".join(parts)


def _layout(network, route_states: list[int], shown: list[int]) -> dict[int, tuple[float, float]]:
    """x = proton-electron pairs added; within a column the route state sits at y = 0, others
    alternate above and below in label order."""
    columns: dict[int, list[int]] = {}
    for i in shown:
        columns.setdefault(network.states[i].electrons, []).append(i)
    on_route = set(route_states)
    pos = {}
    for k, members in columns.items():
        members = sorted(members, key=lambda i: (i not in on_route, network.states[i].label))
        offsets = [0.0]
        step = 1
        while len(offsets) < len(members):
            offsets.append(float(step))
            if len(offsets) < len(members):
                offsets.append(float(-step))
            step += 1
        if not any(i in on_route for i in members):
            offsets = [o + 0.5 if len(members) % 2 == 0 else o for o in offsets]
        for i, y in zip(members, offsets):
            if i not in on_route and k % 2:
                y += 0.3 if y > 0 else -0.3  # stagger neighbouring columns so labels do not collide
            pos[i] = (float(k), y)
    return pos


def plot_network(
    analysis,
    surface: str,
    product: str | None = None,
    potential: float = 0.0,
    ax=None,
    style: str = "notebook",
    cmap: str = "RdBu_r",
    dG_range: float | None = None,
    caption: bool = True,
    full: bool = False,
):
    """Draw the network of ``analysis`` on one surface.

    Parameters
    ----------
    analysis : NetworkAnalysis
    surface : str
    product : str, optional
        Product whose best route is drawn (thick, highlighted). None: no route drawn.
    potential : float
        U in V on the analysis scale at which the step colours (dG, eV) are evaluated.
    ax : matplotlib Axes, optional
    style : str
        Preset of :mod:`ecatlab.plotting.style`.
    cmap : str
        Diverging colour map for dG (centred on 0 eV: downhill blue, uphill red).
    dG_range : float, optional
        Colour range +/- eV (default: the largest |dG| on the surface, at least 0.5 eV).
    caption : bool
        Write the conditions (scale, pH, U, references) under the axes.
    full : bool
        Draw the whole network. Default: when ``product`` is given, only the states and steps
        lying on some route to it.

    Returns
    -------
    matplotlib Axes
    """
    import matplotlib.pyplot as plt
    from matplotlib.colors import TwoSlopeNorm
    from matplotlib.lines import Line2D
    from matplotlib.transforms import offset_copy

    net = analysis.network
    i_s = analysis._surface_index(surface)
    p = preset(style)
    route_edges: list[int] = []
    title = f"{net.reactant} network on {surface}"
    if product is not None:
        key = net.resolve_product(product)
        ranked = analysis.ranked_routes(surface, key, top=1)[0]
        steps = [s.equation for s in ranked.pathway.steps]
        # map the route steps back to edge indices along the states
        state = net.start
        for eq in steps:
            j = next(j for j, e in enumerate(net.edges) if e.source == state and e.step.equation == eq)
            route_edges.append(j)
            state = net.edges[j].target
        title += f": best route to {key}, $U_L$ = {ranked.limiting_potential:+.2f} V vs {analysis.scale}"
    route_states = [net.start] + [net.edges[j].target for j in route_edges]
    shown_edges = list(range(len(net.edges)))
    if product is not None and not full:
        shown_edges = sorted({j for r in net.routes(key) for j in r})
    shown_states = sorted({net.start} | {net.edges[j].source for j in shown_edges} | {net.edges[j].target for j in shown_edges})
    pos = _layout(net, route_states, shown_states)
    dG = analysis.a[i_s] + analysis.n * float(potential)
    finite = dG[shown_edges][np.isfinite(dG[shown_edges])]
    span = dG_range or max(0.5, float(np.max(np.abs(finite))) if finite.size else 0.5)
    norm = TwoSlopeNorm(vcenter=0.0, vmin=-span, vmax=span)
    colormap = plt.get_cmap(cmap)
    with style_context(p):
        if ax is None:
            fig, ax = plt.subplots(figsize=p.figsize)
        fig = ax.figure
        for j in shown_edges:
            e = net.edges[j]
            (x0, y0), (x1, y1) = pos[e.source], pos[e.target]
            colour = colormap(norm(dG[j])) if np.isfinite(dG[j]) else "#BBBBBB"
            on_route = j in route_edges
            bend = "arc3,rad=0.0" if x1 != x0 else "arc3,rad=0.35"
            if on_route:
                ax.annotate("", xy=(x1, y1), xytext=(x0, y0), zorder=1,
                            arrowprops=dict(arrowstyle="-", lw=p.level_width_pt * 2.4, color=HIGHLIGHT, shrinkA=9, shrinkB=9,
                                            connectionstyle=bend))
            ax.annotate(
                "", xy=(x1, y1), xytext=(x0, y0), zorder=2,
                arrowprops=dict(
                    arrowstyle="-|>", mutation_scale=8 + 2 * on_route, lw=p.connector_width_pt * (2.4 if on_route else 1.3),
                    color=colour, shrinkA=11, shrinkB=11, linestyle="-" if e.is_electrochemical else (0, (3, 2)),
                    connectionstyle=bend,
                ),
            )
        for i in shown_states:
            s = net.states[i]
            x, y = pos[i]
            on_route = i in route_states
            ax.text(
                x, y, state_mathtext(s.label), ha="center", va="center", fontsize=p.font_pt - 2, zorder=3, linespacing=1.0,
                bbox=dict(boxstyle="round,pad=0.25", fc="white", ec=PALETTE[0] if on_route else "#999999", lw=1.1 if on_route else 0.6),
            )
        xs = [xy[0] for xy in pos.values()]
        ys = [xy[1] for xy in pos.values()]
        ax.set_xlim(min(xs) - 0.6, max(xs) + 0.6)
        ax.set_ylim(min(ys) - 0.7, max(ys) + 0.7)
        ax.set_xticks(sorted(set(xs)))
        ax.set_xlabel("proton-electron pairs transferred")
        ax.set_yticks([])
        ax.spines["left"].set_visible(False)
        ax.set_title(title, loc="left")
        sm = plt.cm.ScalarMappable(norm=norm, cmap=colormap)
        cbar = fig.colorbar(sm, ax=ax, fraction=0.035, pad=0.01)
        cbar.set_label(f"step ΔG at U = {potential:+.2f} V vs {analysis.scale} (eV)")
        handles = [Line2D([], [], color="#555555", lw=1.2, label="electrochemical step"),
                   Line2D([], [], color="#555555", lw=1.2, ls=(0, (3, 2)), label="chemical step (potential independent)")]
        if route_edges:
            handles.append(Line2D([], [], color=HIGHLIGHT, lw=5, label="best route"))
        below = offset_copy(ax.transAxes, fig=fig, y=-3.6 * p.font_pt, units="points")  # under the x label
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(0.0, 0.0), bbox_transform=below, ncol=3, frameon=False,
                  borderaxespad=0.0)
        if caption:
            ax.annotate(
                f"CHE, pH {analysis.pH:g}, {analysis.temperature:g} K; energies: {analysis.table.source}. "
                "Theoretical estimate (thermodynamics only).",
                xy=(0, 0), xycoords="axes fraction", xytext=(0, -5.6 * p.font_pt), textcoords="offset points",
                fontsize=p.font_pt - 2, color="#444444", va="top",
            )
    return ax
