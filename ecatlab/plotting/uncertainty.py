"""Figures of uncertainty results: diagrams with bands, volcano points with intervals, ranking
probabilities, determining-step probabilities.

Every function takes ``ax=`` (a new figure when None) and returns a
:class:`ecatlab.plotting.handles.Drawn` (Axes, the table drawn as ``data``, named artists); matplotlib is
imported inside. The numbers come from :mod:`ecatlab.uncertainty`; nothing is computed here
beyond percentiles of the samples handed in. Captions state the error model, the number of
samples, the conditions, and that the results are theoretical estimates; data from the bundled
demo are marked ILLUSTRATIVE.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import DASHES, MARKERS, PALETTE, figure, pathway_title, preset, style_context

__all__ = ["plot_diagram_bands", "plot_volcano_intervals", "plot_ranking_probabilities", "plot_determining_step_probabilities"]


def _illustrative(conditions) -> bool:
    return "illustrative" in str(conditions.get("energy_source", "")).lower() or "demo" in str(conditions.get("energy_source", "")).lower()


def _caption(ax, conditions, p, extra: str = ""):
    c = conditions
    text = (f"{c.get('samples', '?')} samples; {c.get('model', '')}. {c.get('scale')}, pH {c.get('pH')}, {c.get('temperature')} K. "
            f"{extra}Theoretical estimates (CHE).")
    if _illustrative(c):
        text = "ILLUSTRATIVE data. " + text
    import textwrap

    return ax.annotate("\n".join(textwrap.wrap(text, 120)), xy=(0, 0), xycoords="axes fraction", xytext=(0, -34), textcoords="offset points",
                fontsize=p.font_pt - 3, color="#555555", va="top", ha="left", annotation_clip=False)


def plot_diagram_bands(result, pathway, surfaces: str | Sequence[str], potential: float = 0.0, interval: float = 0.9,
                       ax=None, style: str = "notebook", caption: bool = True):
    """Free-energy diagram with a percentile band on every level.

    Levels are the deterministic state free energies (eV, first state 0) at ``potential``
    (V vs the result's scale); the shaded box around each level spans the central ``interval`` of
    the samples, the thin tick marks the median.

    Returns
    -------
    Drawn
        ``data``: DataFrame (surface, state, label, level, low, median, high; eV); ``parts``:
        ``levels`` {surface: [Line2D per state]}, ``bands`` {surface: [PolyCollection per state]},
        ``legend``, ``caption`` (or None).
    """
    import pandas as pd

    p = preset(style)
    names = [surfaces] if isinstance(surfaces, str) else list(surfaces)
    ps = result._path(pathway)
    labels = ps.pathway.labels
    lo_q, hi_q = 50 * (1 - interval), 50 * (1 + interval)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        width = 0.6
        rows, level_art, band_art = [], {}, {}
        for k, surface in enumerate(names):
            states = result.state_samples(pathway, surface, potential)  # (samples, n_states), eV
            det = _deterministic_states(result, pathway, surface, potential)
            lo, med, hi = np.percentile(states, [lo_q, 50, hi_q], axis=0)
            color = PALETTE[k % len(PALETTE)]
            level_art[surface], band_art[surface] = [], []
            for i in range(states.shape[1]):
                rows.append((surface, i, labels[i] if i < len(labels) else "", float(det[i]), float(lo[i]), float(med[i]), float(hi[i])))
                band_art[surface].append(ax.fill_between([i - width / 2, i + width / 2], lo[i], hi[i], color=color, alpha=0.18, lw=0, zorder=1))
                (level,) = ax.plot([i - width / 2, i + width / 2], [det[i], det[i]], color=color, lw=2.6, solid_capstyle="round", zorder=3,
                                   label=surface if i == 0 else None)
                level_art[surface].append(level)
                ax.plot([i - 0.08, i + 0.08], [med[i], med[i]], color=color, lw=0.8, zorder=2)
                if i:
                    ax.plot([i - 1 + width / 2, i - width / 2], [det[i - 1], det[i]], color=color, lw=0.8, ls=DASHES[2], zorder=2)
        ax.set_xticks(range(len(labels)))
        from ecatlab import chemtext

        ax.set_xticklabels([chemtext.unicode(t) for t in labels], rotation=20, ha="right", fontsize=p.font_pt - 2)
        ax.set_ylabel("free energy ΔG / eV")
        ax.set_title(f"{pathway_title(ps.pathway, key=True, width=70)} at U = {potential:+.3f} V vs {result.conditions['scale']}:\nlevels with "
                     f"{100 * interval:g}% bands" + (" (ILLUSTRATIVE)" if _illustrative(result.conditions) else ""))
        leg = ax.legend(frameon=False, fontsize=p.font_pt - 2)
        cap = _caption(ax, result.conditions, p, "Bar: value without errors; band: central interval of the samples; tick: median. ") if caption else None
    data = pd.DataFrame(rows, columns=["surface", "state", "label", "level", "low", "median", "high"])
    data.attrs.update({"potential": float(potential), "interval": float(interval), "units": "eV"})
    return Drawn(ax=ax, data=data, parts={"levels": level_art, "bands": band_art, "legend": leg, "caption": cap})


def _deterministic_states(result, pathway, surface, potential):
    """Deterministic state free energies (eV) of one surface, from the engine."""
    from ecatlab.che.engine import state_free_energies

    c = result.conditions
    frame = state_free_energies(result.inputs["table"], result._path(pathway).pathway, potential, c["pH"], c["scale"], c["temperature"], [surface])
    return frame.to_numpy()[0]


def plot_volcano_intervals(result, pathway, descriptor: str, curve=None, band=None, interval: float = 0.9, ax=None,
                           style: str = "notebook", quantity: str = "U_L", caption: bool = True):
    """Each surface on the volcano with its interval in x (descriptor G, eV) and y (U_L, V).

    Parameters
    ----------
    result : UncertaintyResult
        Propagated with ``keep_species=[descriptor]``.
    curve : VolcanoCurve, optional
        Drawn first with :func:`ecatlab.plotting.volcano.plot_volcano`.
    band : VolcanoBand, optional
        The volcano line's band and apex interval (:func:`ecatlab.uncertainty.volcano.volcano_band`).
    quantity : {"U_L", "U_eff"}
        y: limiting potential, or the effective limiting potential from G_max.

    Returns
    -------
    Drawn
        ``data``: the points table of ``result.volcano_points`` (eV, V); ``parts``: ``volcano``
        (the :class:`Drawn` of the curve, or None), ``band``, ``apex`` (or None), ``points``
        (errorbar container), ``labels`` (list of Text), ``legend``, ``caption`` (or None).
    """
    p = preset(style)
    pts = result.volcano_points(pathway, descriptor, interval)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        drawn_curve = band_art = apex = None
        if curve is not None:
            from ecatlab.plotting.volcano import plot_volcano

            drawn_curve = plot_volcano(curve, ax=ax, style=style, label_surfaces=False, caption=False, legend="inside")
        if band is not None:
            band_art = ax.fill_between(band.x, band.low, band.high, color=PALETTE[5], alpha=0.25, lw=0, zorder=1,
                            label=f"volcano {band.conditions.get('interval', '')} band")
            ax_lo, ax_hi = np.percentile(band.apex_x, [50 * (1 - interval), 50 * (1 + interval)])
            u_lo, u_hi = np.percentile(band.apex_U, [50 * (1 - interval), 50 * (1 + interval)])
            apex = ax.errorbar([np.median(band.apex_x)], [np.median(band.apex_U)], xerr=[[np.median(band.apex_x) - ax_lo], [ax_hi - np.median(band.apex_x)]],
                        yerr=[[np.median(band.apex_U) - u_lo], [u_hi - np.median(band.apex_U)]], fmt="*", ms=10, color=PALETTE[4], mec="#222222",
                        ecolor=PALETTE[4], capsize=3, zorder=6, label="apex (median, interval)")
        x, y = pts["x_mean"].to_numpy(), pts[f"{quantity}_mean"].to_numpy()
        xerr = np.vstack([x - pts["x_low"].to_numpy(), pts["x_high"].to_numpy() - x])
        yerr = np.vstack([y - pts[f"{quantity}_low"].to_numpy(), pts[f"{quantity}_high"].to_numpy() - y])
        points = ax.errorbar(x, y, xerr=np.clip(xerr, 0, None), yerr=np.clip(yerr, 0, None), fmt=MARKERS[1], ms=5, color=PALETTE[0], ecolor=PALETTE[0],
                    elinewidth=0.8, capsize=2, zorder=5, label=f"surfaces (mean, {100 * interval:g}% interval)")
        labels = [ax.annotate(name, (xi, yi), xytext=(3, 3), textcoords="offset points", fontsize=p.font_pt - 3) for name, xi, yi in zip(pts.index, x, y)]
        key = pts.attrs["descriptor"]
        ax.set_xlabel(f"ΔG({key}) / eV")
        ylabel = "limiting potential $U_L$" if quantity == "U_L" else "effective $U_L$ from $G_{max}$"
        ax.set_ylabel(f"{ylabel} / V vs {result.conditions['scale']}")
        if curve is None:
            ax.set_title(f"{pts.attrs['pathway']} volcano positions with intervals" + (" (ILLUSTRATIVE)" if _illustrative(result.conditions) else ""))
        old = ax.get_legend()
        if old is not None:
            old.remove()
        leg = ax.legend(frameon=False, fontsize=p.font_pt - 3, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0)
        cap = _caption(ax, result.conditions, p, "Error bars: central interval of the samples. ") if caption else None
    return Drawn(ax=ax, data=pts, parts={"volcano": drawn_curve, "band": band_art, "apex": apex, "points": points, "labels": labels,
                                         "legend": leg, "caption": cap})


def plot_ranking_probabilities(result, pathway, top: int = 3, ax=None, style: str = "notebook", max_surfaces: int = 15, caption: bool = True):
    """Horizontal bars: probability that each surface is best and in the top ``top``, with
    Monte-Carlo standard errors; the kernel's ranking rule (unblocked first, then lower G_max).

    Returns a :class:`Drawn` (``data``: the ranking table drawn; ``parts``: ``top`` and ``best``
    (bar containers), ``legend``, ``caption``).
    """
    p = preset(style)
    table = result.ranking(pathway, top=top).head(max_surfaces)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        ypos = np.arange(len(table))[::-1]
        top_bars = ax.barh(ypos + 0.2, table[f"p_top{top}"], height=0.38, color=PALETTE[5], xerr=table[f"p_top{top}_se"], capsize=2, label=f"P(in top {top})")
        best_bars = ax.barh(ypos - 0.2, table["p_best"], height=0.38, color=PALETTE[0], xerr=table["p_best_se"], capsize=2, label="P(best)")
        ax.set_yticks(ypos)
        ax.set_yticklabels([f"{s} (rank {r})" for s, r in zip(table.index, table["deterministic_rank"])], fontsize=p.font_pt - 2)
        ax.set_xlim(0, 1.05)
        ax.set_xlabel("probability")
        ax.set_title(f"How sure is the ranking? {pathway_title(result._path(pathway).pathway, key=True, width=60)}" + (" (ILLUSTRATIVE)" if _illustrative(result.conditions) else ""))
        leg = ax.legend(frameon=False, fontsize=p.font_pt - 2, loc="lower right")
        cap = None
        if caption:
            cap = _caption(ax, result.conditions, p, "Rule per sample: unblocked first, then lower G_max; '(rank r)': rank without errors; bars: ±1 standard error. ")
    return Drawn(ax=ax, data=table, parts={"top": top_bars, "best": best_bars, "legend": leg, "caption": cap})


def plot_determining_step_probabilities(result, pathway, ax=None, style: str = "notebook", caption: bool = True):
    """Stacked bars per surface: probability that each step is potential-determining.

    Returns a :class:`Drawn` (``data``: surfaces x step index probabilities; ``parts``: ``bars``
    {step name: bar container}, ``legend``, ``caption``).
    """
    p = preset(style)
    table = result.determining_steps()
    ps = result._path(pathway)
    part = table[table["pathway"] == ps.pathway.name]
    wide = part.pivot_table(index="surface", columns="step_index", values="probability", sort=False)
    wide = wide.reindex(list(result.surfaces))
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        left = np.zeros(len(wide))
        bars = {}
        names = ps.pathway.step_names
        for k, col in enumerate(wide.columns):
            vals = wide[col].to_numpy()
            if not np.any(vals > 0):
                continue
            bars[names[col - 1]] = ax.barh(np.arange(len(wide))[::-1], vals, left=left, color=PALETTE[k % len(PALETTE)], height=0.7, label=names[col - 1])
            left += vals
        ax.set_yticks(np.arange(len(wide))[::-1])
        ax.set_yticklabels(list(wide.index), fontsize=p.font_pt - 2)
        ax.set_xlim(0, 1.0)
        ax.set_xlabel("probability of being the potential-determining step")
        ax.set_title(f"Potential-determining step: {pathway_title(ps.pathway, key=True, width=60)}" + (" (ILLUSTRATIVE)" if _illustrative(result.conditions) else ""))
        leg = ax.legend(frameon=False, fontsize=p.font_pt - 3, loc="upper left", bbox_to_anchor=(1.01, 1.0))
        cap = _caption(ax, result.conditions, p) if caption else None
    return Drawn(ax=ax, data=wide, parts={"bars": bars, "legend": leg, "caption": cap})
