"""Figure of a reaction network: states in columns by proton-electron pairs added, steps coloured
by their free energy at a potential, the best route and alternatives drawn on top, the state where
the surface gets stuck ringed. Readable at hundreds of states: background steps are one line
collection per kind, unlabelled states are dots, and the default view is filtered to the routes.

The plotter only draws; all numbers come from :class:`ecatlab.network.NetworkAnalysis`.
"""

from __future__ import annotations


import numpy as np

from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import HIGHLIGHT, PALETTE, preset, style_context

__all__ = ["plot_network", "state_mathtext", "network_view"]


def state_mathtext(label: str) -> str:
    """Mathtext of a state label such as ``"O* + CH4(g)"``, one species per line
    (see :func:`ecatlab.chemtext.mathtext`)."""
    from ecatlab import chemtext

    return "\n+ ".join(chemtext.mathtext(term) for term in chemtext.split_terms(label)) or chemtext.mathtext(label)


def _layout(network, route_states: list[int], shown: list[int], extra_routes: list[list[int]] = ()) -> dict[int, tuple[float, float]]:
    """x = proton-electron pairs added; within a column the best-route state sits at y = 0, states of
    the alternative routes next to it, the others alternate above and below in label order (the
    spacing shrinks for crowded columns so hundreds of states fit)."""
    columns: dict[int, list[int]] = {}
    for i in shown:
        columns.setdefault(network.states[i].electrons, []).append(i)
    on_route = set(route_states)
    alt = {i: k + 1 for k, r in enumerate(extra_routes) for i in r}
    pos = {}
    tallest = max((len(m) for m in columns.values()), default=1)
    gap = 1.0 if tallest <= 12 else 12.0 / tallest
    for k, members in columns.items():
        members = sorted(members, key=lambda i: (i not in on_route, alt.get(i, 99), network.states[i].label))
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
            if i not in on_route and k % 2 and gap == 1.0:
                y += 0.3 if y > 0 else -0.3  # stagger neighbouring columns so labels do not collide
            pos[i] = (float(k), y * gap)
    return pos


def network_view(analysis, surface: str, product: str | None, alternatives: int = 2, neighbours: int = 0, full: bool = False):
    """States and steps to draw: the best route (and ``alternatives`` more) to ``product`` plus the
    states within ``neighbours`` steps of them; everything when ``full`` or no product.

    Returns ``(route_edges, alt_routes, shown_states, shown_edges)`` (edge / state indices).
    """
    net = analysis.network
    route_edges: list[int] = []
    alt_routes: list[list[int]] = []
    if product is not None:
        key = net.resolve_product(product)
        i_s = analysis._surface_index(surface)
        for rank in range(1, 2 + max(0, int(alternatives))):
            r = analysis._route_arrays(key, rank)
            if not r["ok"][i_s]:
                break
            edges = [int(j) for j in r["edges"][i_s] if j >= 0]
            if rank == 1:
                route_edges = edges
            else:
                alt_routes.append(edges)
    if full or product is None:
        return route_edges, alt_routes, list(range(len(net.states))), list(range(len(net.edges)))
    states = {net.start} | {net.edges[j].target for r in [route_edges] + alt_routes for j in r}
    frontier = set(states)
    src = np.array([e.source for e in net.edges])
    tgt = np.array([e.target for e in net.edges])
    for _ in range(max(0, int(neighbours))):
        nxt = set(tgt[np.isin(src, list(frontier))].tolist()) | set(src[np.isin(tgt, list(frontier))].tolist())
        frontier = nxt - states
        states |= nxt
    shown_edges = [j for j in range(len(net.edges)) if src[j] in states and tgt[j] in states]
    if not neighbours:  # only the routes themselves
        shown_edges = sorted({j for r in [route_edges] + alt_routes for j in r})
    return route_edges, alt_routes, sorted(states), shown_edges


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
    alternatives: int = 2,
    neighbours: int = 0,
    max_labels: int = 60,
):
    """Draw the network of ``analysis`` on one surface, layered by proton-electron pairs transferred.

    Parameters
    ----------
    analysis : NetworkAnalysis
    surface : str
    product : str, optional
        Product whose best route is drawn (thick, highlighted) with ``alternatives`` runner-up
        routes (thinner); the state where the surface gets stuck (before the bottleneck step)
        is ringed. None: no route drawn.
    potential : float
        U in V on the analysis scale at which the step colours (dG, eV, from the CHE kernel) are evaluated.
    ax : matplotlib Axes, optional
    style : str
        Preset of :mod:`ecatlab.plotting.style`.
    cmap : str
        Diverging colour map for dG (centred on 0 eV: downhill blue, uphill red).
    dG_range : float, optional
        Colour range +/- eV (default: the largest |dG| shown, at least 0.5 eV).
    caption : bool
        Write the conditions (scale, pH, U, references) under the axes.
    full : bool
        Draw the whole network (states as dots, labels only for route states when there are more
        than ``max_labels``). Default with a product: the routes and their ``neighbours``.
    alternatives, neighbours : int
        Filtered view: number of alternative routes, and how many steps around them to include.
    max_labels : int
        Label every state when at most this many are drawn.

    Returns
    -------
    Drawn
        ``data``: DataFrame of the steps drawn (``edge`` index, ``step`` equation, ``dG`` in eV at
        ``potential``, ``route``: 0 best route, 1.. alternatives, -1 neither); ``parts``: ``states``
        {state index: Text}, ``dots``, ``background`` (LineCollections), ``routes`` (list per route
        of arrow Annotations), ``stuck`` (or None), ``colorbar``, ``legend``, ``caption`` (or None);
        ``axes``: the network and the colour bar.
    """
    import matplotlib.pyplot as plt
    import pandas as pd
    from matplotlib.collections import LineCollection
    from matplotlib.colors import TwoSlopeNorm
    from matplotlib.lines import Line2D
    from matplotlib.transforms import offset_copy

    from ecatlab.che import kernel

    net = analysis.network
    i_s = analysis._surface_index(surface)
    p = preset(style)
    title = f"{net.reactant} network on {surface}"
    route_edges, alt_routes, shown_states, shown_edges = network_view(analysis, surface, product, alternatives, neighbours, full)
    stuck = None
    if product is not None:
        key = net.resolve_product(product)
        ranked = analysis.ranked_routes(surface, key, top=1)[0]
        title += f": best route to {key}, $U_L$ = {ranked.limiting_potential:+.2f} V vs {analysis.scale}"
        if ranked.blocked:
            title += " (blocked by an uphill chemical step)"
        b = int(analysis._route_arrays(key, 1)["bottleneck"][i_s])
        stuck = net.edges[b].source if b >= 0 else None
    route_states = [net.start] + [net.edges[j].target for j in route_edges]
    alt_states = [[net.edges[j].target for j in r] for r in alt_routes]
    pos = _layout(net, route_states, shown_states, alt_states)
    dG = kernel.step_free_energy(analysis.a[i_s], analysis.n, float(potential))
    finite = dG[shown_edges][np.isfinite(dG[shown_edges])] if shown_edges else np.array([])
    span = dG_range or max(0.5, float(np.max(np.abs(finite))) if finite.size else 0.5)
    norm = TwoSlopeNorm(vcenter=0.0, vmin=-span, vmax=span)
    colormap = plt.get_cmap(cmap)
    labelled = set(shown_states) if len(shown_states) <= max_labels else set(route_states) | {i for r in alt_states for i in r}
    on_any = set(route_edges) | {j for r in alt_routes for j in r}
    route_of = {j: rank for rank, edges in reversed(list(enumerate([route_edges] + alt_routes))) for j in edges}
    drawn = pd.DataFrame({"edge": list(shown_edges), "step": [net.edges[j].step.equation for j in shown_edges],
                          "dG": [float(dG[j]) for j in shown_edges], "route": [route_of.get(j, -1) for j in shown_edges]})
    drawn.attrs.update({"surface": surface, "potential": float(potential), "scale": analysis.scale, "units": {"dG": "eV"}})
    background, route_arrows, state_texts, dot_art, ring = [], [], {}, None, None
    with style_context(p):
        if ax is None:
            fig, ax = plt.subplots(figsize=p.figsize)
        fig = ax.figure
        # background steps: one collection per kind (electrochemical solid, chemical dashed)
        for chem in (False, True):
            sel = [j for j in shown_edges if (not net.edges[j].is_electrochemical) == chem and j not in on_any]
            if not sel:
                continue
            segs = [(pos[net.edges[j].source], pos[net.edges[j].target]) for j in sel]
            cols = [colormap(norm(dG[j])) if np.isfinite(dG[j]) else "#BBBBBB" for j in sel]
            background.append(ax.add_collection(LineCollection(segs, colors=cols, linewidths=p.connector_width_pt * (1.3 if len(sel) < 200 else 0.5),
                                                               linestyles="dashed" if chem else "solid", alpha=1.0 if len(sel) < 200 else 0.5, zorder=1)))
        for rank, edges in enumerate([route_edges] + alt_routes):
            arrows = []
            route_arrows.append(arrows)
            for j in edges:
                e = net.edges[j]
                (x0, y0), (x1, y1) = pos[e.source], pos[e.target]
                colour = colormap(norm(dG[j])) if np.isfinite(dG[j]) else "#BBBBBB"
                bend = "arc3,rad=0.0" if x1 != x0 else "arc3,rad=0.35"
                if rank == 0:
                    arrows.append(ax.annotate("", xy=(x1, y1), xytext=(x0, y0), zorder=1,
                                arrowprops=dict(arrowstyle="-", lw=p.level_width_pt * 2.4, color=HIGHLIGHT, shrinkA=9, shrinkB=9,
                                                connectionstyle=bend)))
                arrows.append(ax.annotate(
                    "", xy=(x1, y1), xytext=(x0, y0), zorder=2,
                    arrowprops=dict(arrowstyle="-|>", mutation_scale=9 if rank == 0 else 7, lw=p.connector_width_pt * (2.4 if rank == 0 else 1.4),
                                    color=colour, shrinkA=11, shrinkB=11, linestyle="-" if e.is_electrochemical else (0, (3, 2)),
                                    connectionstyle=bend),
                ))
        dots = [i for i in shown_states if i not in labelled]
        if dots:
            dot_art = ax.scatter([pos[i][0] for i in dots], [pos[i][1] for i in dots], s=6, color="#777777", zorder=2, linewidths=0)
        for i in shown_states:
            if i not in labelled:
                continue
            s = net.states[i]
            x, y = pos[i]
            on_route = i in route_states
            state_texts[i] = ax.text(
                x, y, state_mathtext(s.label), ha="center", va="center", fontsize=p.font_pt - 2, zorder=3, linespacing=1.0,
                bbox=dict(boxstyle="round,pad=0.25", fc="white", ec=PALETTE[0] if on_route else "#999999", lw=1.1 if on_route else 0.6),
            )
        if stuck is not None and stuck in state_texts:
            # the stuck state's own label box is marked (a ring drawn over it would hide its text)
            ring = state_texts[stuck]
            ring.get_bbox_patch().set(edgecolor=PALETTE[3 % len(PALETTE)], linewidth=2.4)
            ring.set_zorder(4)
        elif stuck is not None and stuck in pos:
            ring = ax.scatter([pos[stuck][0]], [pos[stuck][1]], s=120, facecolors="none", edgecolors=PALETTE[3 % len(PALETTE)],
                              linewidths=1.6, zorder=4, label="stuck here (before the bottleneck step)")
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
        if stuck is not None:
            handles.append(Line2D([], [], ls="", marker="s" if stuck in state_texts else "o", mfc="white", mec=PALETTE[3 % len(PALETTE)],
                                  mew=2.0, ms=10, label="stuck here"))
        below = offset_copy(ax.transAxes, fig=fig, y=-3.6 * p.font_pt, units="points")  # under the x label
        leg = ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(0.0, 0.0), bbox_transform=below, ncol=4, frameon=False,
                  borderaxespad=0.0)
        cap = None
        if caption:
            est = int(analysis.estimated_mask.sum())
            cap = ax.annotate(
                f"CHE, pH {analysis.pH:g}, {analysis.temperature:g} K; energies: {analysis.table.source}"
                + (f"; {est} adsorbate energies estimated ({getattr(analysis.estimator, 'method', '')})" if est else "")
                + f"; {len(shown_states)} of {len(net.states)} states shown. Theoretical estimate (thermodynamics only).",
                xy=(0, 0), xycoords="axes fraction", xytext=(0, -5.6 * p.font_pt), textcoords="offset points",
                fontsize=p.font_pt - 2, color="#444444", va="top",
            )
    return Drawn(ax=ax, data=drawn, axes=(ax, cbar.ax), parts={"states": state_texts, "dots": dot_art, "background": background,
                                                             "routes": route_arrows, "stuck": ring, "colorbar": cbar, "legend": leg,
                                                             "caption": cap})
