"""Draw surface Pourbaix diagrams: the most stable surface state over (pH, U), the water stability
lines and the limiting potential of pathways on the surface.

Draws only what :mod:`ecatlab.pourbaix` computed; ``ax=`` in, a :class:`ecatlab.plotting.handles.Drawn` out. The caption under the axes
carries the reference scheme and the theoretical-estimate caution (save with ``bbox_inches="tight"``).
"""

from __future__ import annotations

import numpy as np

from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import DASHES, PALETTE, figure, preset, style_context

__all__ = ["plot_pourbaix", "STATE_COLOURS"]

#: Fill colours of the states stable somewhere on the map, in the order they are listed (the clean
#: surface always gets the first, a light grey). Light tints so lines and text stay readable.
STATE_COLOURS: tuple[str, ...] = ("#F2F2F2", "#A6CEE3", "#FDBF6F", "#B2DF8A", "#CAB2D6", "#FB9A99", "#FFFF99", "#8DD3C7",
                                  "#D9D9D9", "#FDB462", "#BC80BD", "#CCEBC5", "#FCCDE5", "#80B1D3", "#B3DE69", "#BEBADA")


def plot_pourbaix(pmap, ax=None, style: str = "notebook", limiting=None, water: bool = True, label_regions: bool = True,
                  caption: bool = True, title: str | None = None):
    """Draw a surface Pourbaix diagram.

    Parameters
    ----------
    pmap : PourbaixMap
        From :func:`ecatlab.pourbaix.pourbaix_map`.
    ax : matplotlib Axes, optional
    style : preset name (``"single"``, ``"double"``, ``"notebook"``)
    limiting : DataFrame, optional
        Limiting potentials to draw: :func:`ecatlab.pourbaix.limiting_potential_vs_pH` output (a line
        per pathway) or a :func:`ecatlab.limiting_potentials` table (a marker at its pH); only rows of
        this surface on the map's scale are drawn.
    water : bool
        Draw the H2/H2O and O2/H2O equilibrium lines (dashed; water is stable between them).
    label_regions : bool
        Write each state's name (and coverage) in its region.

    Returns
    -------
    Drawn
        ``data`` the map; ``parts``: ``regions`` (QuadMesh), ``outlines`` (or None),
        ``region_labels`` {state: Text}, ``water`` {"H2", "O2": Line2D}, ``limiting`` {pathway:
        Line2D}, ``legend``, ``caption`` (or None).
    """
    from matplotlib.colors import BoundaryNorm, ListedColormap
    from matplotlib.patches import Patch

    from ecatlab.pourbaix import water_stability_lines

    p = preset(style)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        n = len(pmap.states)
        present = pmap.present_states()
        colours, k = [], 1
        for s in pmap.states:  # distinct colours for the states that appear; clean keeps the first
            if s == "clean":
                colours.append(STATE_COLOURS[0])
            elif s in present:
                colours.append(STATE_COLOURS[k % len(STATE_COLOURS)])
                k += 1
            else:
                colours.append("#FFFFFF")
        cmap = ListedColormap(colours)
        norm = BoundaryNorm(np.arange(-0.5, n + 0.5), n)
        region_labels, water_lines, limiting_lines = {}, {}, {}
        regions = ax.pcolormesh(pmap.pH, pmap.potential, pmap.stable.T, cmap=cmap, norm=norm, shading="nearest", rasterized=True, zorder=0)
        # region outlines: where the stable state changes
        outlines = ax.contour(pmap.pH, pmap.potential, pmap.stable.T.astype(float), levels=np.arange(0.5, n - 0.5 + 1e-9), colors="#555555",
                   linewidths=0.6, zorder=1) if n > 1 and len(np.unique(pmap.stable)) > 1 and len(pmap.pH) > 1 else None
        handles = []
        for i, s in enumerate(pmap.states):
            if s not in present:
                continue
            cov = pmap.coverage[i]
            label = s if s == "clean" or not np.isfinite(cov) or "ML" in s else f"{s} ({cov:g} ML)"
            handles.append(Patch(facecolor=colours[i], edgecolor="#555555", lw=0.5, label=label))
            if label_regions:
                mask = pmap.stable == i
                ii, jj = np.nonzero(mask)
                if ii.size > 0.04 * mask.size:  # name large regions in place; the legend names all
                    x = float(np.mean(pmap.pH[ii])) if len(pmap.pH) > 1 else float(pmap.pH[0])
                    y = float(np.median(pmap.potential[jj]))
                    region_labels[s] = ax.text(x, y, s, ha="center", va="center", fontsize=p.font_pt - 1, color="#222222", zorder=4,
                            bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.6))
        if water:
            ph_line = np.array([pmap.pH.min(), pmap.pH.max()])
            w = water_stability_lines(ph_line, pmap.scale, pmap.temperature)
            (water_lines["H2"],) = ax.plot(w["pH"], w["H2_evolution"], color="#1F4E79", ls=(0, (4, 2)), lw=1.0, zorder=3, label="H$^+$/H$_2$ equilibrium")
            (water_lines["O2"],) = ax.plot(w["pH"], w["O2_evolution"], color="#D55E00", ls=(0, (4, 2)), lw=1.0, zorder=3, label="O$_2$/H$_2$O equilibrium")
        if limiting is not None and len(limiting):
            rows = limiting[(limiting["surface"].astype(str) == pmap.surface) & (limiting["scale"].astype(str) == pmap.scale)]
            for k, (key, part) in enumerate(rows.groupby(rows["pathway"].astype(str), sort=False)):
                part = part.sort_values("pH")
                colour = PALETTE[(k + 2) % len(PALETTE)]
                lo, hi = pmap.potential.min(), pmap.potential.max()
                off = not ((part["limiting_potential"] >= lo) & (part["limiting_potential"] <= hi)).any()
                name, key = key, f"{key} (off scale)" if off else key
                if len(part) > 1:
                    (limiting_lines[name],) = ax.plot(part["pH"], part["limiting_potential"], color=colour, lw=1.8, ls=DASHES[k % len(DASHES)], zorder=5, label=f"U$_L$ {key}")
                else:
                    (limiting_lines[name],) = ax.plot(part["pH"], part["limiting_potential"], marker="o", ms=6, color=colour, ls="none", zorder=5,
                            markeredgecolor="white", label=f"U$_L$ {key}")
        ax.set_xlim(pmap.pH.min(), pmap.pH.max()) if len(pmap.pH) > 1 else None
        ax.set_ylim(pmap.potential.min(), pmap.potential.max())
        ax.set_xlabel("pH")
        ax.set_ylabel(f"U / V vs {pmap.scale}")
        ax.set_title(title or f"Surface Pourbaix diagram of {pmap.surface} ({pmap.temperature:g} K)")
        line_handles, _ = ax.get_legend_handles_labels()
        leg = ax.legend(handles=handles + line_handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=p.font_pt - 2)
        cap = None
        if caption:
            refs = ";".join(pmap.references.split(";")[:2]).strip()
            source = pmap.source
            text = f"States from {source}; {refs}. Theoretical estimate (CHE, thermodynamics only)."
            cap = ax.annotate(text, xy=(0.5, 0), xycoords=ax.xaxis.label, xytext=(0, -3), textcoords="offset points", fontsize=p.font_pt - 2,
                              color="#555555", va="top", ha="center", annotation_clip=False)
    return Drawn(ax=ax, data=pmap, parts={"regions": regions, "outlines": outlines, "region_labels": region_labels, "water": water_lines,
                                          "limiting": limiting_lines, "legend": leg, "caption": cap})
