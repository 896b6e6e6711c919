"""Plot scaling relations: computed points, the fitted line and a ±RMSE residual band.

Draws only; the numbers come from :mod:`ecatlab.scaling`. Plotters return a
:class:`ecatlab.plotting.handles.Drawn`.
"""

from __future__ import annotations

import numpy as np

from ecatlab.notation import Species
from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import MARKERS, PALETTE, preset, style_context
from ecatlab.scaling import ScalingRelation, fit_scaling

__all__ = ["plot_scaling", "scaling_figure"]


def _dg(key: str) -> str:
    return f"ΔG({Species.parse(key).latex()})"


def plot_scaling(relation: ScalingRelation, energies=None, ax=None, style: str = "notebook", label_points: bool = True, caption: bool = True):
    """Draw a scaling relation.

    One descriptor: computed dG(target) vs dG(descriptor) (eV), the relation as a line and a
    ±RMSE band. Two descriptors: parity plot (relation prediction vs computed value, eV) with the
    y = x line and the ±RMSE band. The equation, slope ± standard error, R², RMSE and n are written
    in the axes.

    Parameters
    ----------
    relation : ScalingRelation
    energies : EnergyTable, DataFrame or path, optional
        Table with the computed points (the one the relation was fitted to).
    ax : matplotlib Axes, optional
    style : preset name for a new figure (``"single"``, ``"double"``, ``"notebook"``)
    label_points : bool
        Write surface names next to the points.
    caption : bool
        Add the relation's source under the axes.

    Returns
    -------
    Drawn
        ``data`` the relation; ``parts``: ``line`` (relation, or y = x for two descriptors),
        ``band`` (±RMSE, or None), ``points`` (or None), ``labels`` (list of Text), ``stats``
        (the statistics box), ``legend``, ``caption`` (or None).
    """
    from ecatlab.scaling import _as_table
    from ecatlab.plotting.style import figure

    p = preset(style)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        table = None if energies is None else _as_table(energies)
        names, x, y = [], np.array([]), np.array([])
        if table is not None:
            cols = (relation.target,) + relation.descriptors
            vals = table.values(table.surfaces, cols)
            ok = np.all(np.isfinite(vals), axis=1)
            names = [s for s, k in zip(table.surfaces, ok) if k]
            y = vals[ok, 0]
            x = vals[ok, 1:]
        band = relation.rmse if relation.rmse is not None else None
        band_art = points = None
        if len(relation.descriptors) == 1:
            xs = x[:, 0] if len(names) else np.array([])
            lo, hi = (xs.min(), xs.max()) if xs.size else (-1.0, 2.0)
            pad = 0.1 * (hi - lo or 1.0)
            line_x = np.linspace(lo - pad, hi + pad, 50)
            line_y = relation.predict(line_x[:, None])
            (line,) = ax.plot(line_x, line_y, color=PALETTE[0], lw=1.6, label="relation", zorder=2)
            if band:
                band_art = ax.fill_between(line_x, line_y - band, line_y + band, color=PALETTE[0], alpha=0.15, lw=0, label=f"±RMSE ({band:.2f} eV)", zorder=1)
            if xs.size:
                points = ax.scatter(xs, y, s=28, marker=MARKERS[0], color=PALETTE[1], edgecolor="white", linewidth=0.5, zorder=3, label="computed surfaces")
                px, py = xs, y
            ax.set_xlabel(f"{_dg(relation.descriptors[0])} / eV")
            ax.set_ylabel(f"{_dg(relation.target)} / eV")
        else:
            pred = relation.predict(x) if len(names) else np.array([])
            lo = min(pred.min(), y.min()) if len(names) else -1.0
            hi = max(pred.max(), y.max()) if len(names) else 2.0
            pad = 0.1 * (hi - lo or 1.0)
            diag = np.array([lo - pad, hi + pad])
            (line,) = ax.plot(diag, diag, color=PALETTE[0], lw=1.6, label="y = x", zorder=2)
            if band:
                band_art = ax.fill_between(diag, diag - band, diag + band, color=PALETTE[0], alpha=0.15, lw=0, label=f"±RMSE ({band:.2f} eV)", zorder=1)
            if len(names):
                points = ax.scatter(pred, y, s=28, marker=MARKERS[0], color=PALETTE[1], edgecolor="white", linewidth=0.5, zorder=3, label="computed surfaces")
            px, py = pred, y
            terms = " + ".join(f"{a:.2f} {_dg(d)}" for a, d in zip(relation.slopes, relation.descriptors))
            ax.set_xlabel(f"predicted {_dg(relation.target)} / eV")
            ax.set_ylabel(f"computed {_dg(relation.target)} / eV")
        labels = []
        if label_points and len(names):
            for k, (nm, xx, yy) in enumerate(zip(names, px, py)):
                labels.append(ax.annotate(nm, (xx, yy), xytext=(4, 4 if k % 2 == 0 else -9), textcoords="offset points", fontsize=p.font_pt - 2, color="#404040"))
        # leave the top ~40 % of the axes for the statistics box
        y0, y1 = ax.get_ylim()
        ax.set_ylim(y0, y1 + 0.6 * (y1 - y0))
        stats = ax.text(0.02, 0.98, _stats_text(relation), transform=ax.transAxes, va="top", ha="left", fontsize=p.font_pt - 1,
                bbox=dict(boxstyle="round,pad=0.3", fc="white", ec="#BBBBBB", lw=0.6))
        leg = ax.legend(loc="lower right" if (relation.slopes and relation.slopes[0] >= 0) or len(relation.descriptors) != 1 else "lower left", frameon=False)
        ax.set_title(f"Scaling relation of {relation.target}")
        cap = None
        if caption:
            source = relation.source if table is None else f"{relation.source}"
            cap = ax.annotate(f"{source}. Theoretical estimate.", xy=(0.5, 0), xycoords=ax.xaxis.label, xytext=(0, -3), textcoords="offset points",
                              fontsize=p.font_pt - 2, color="#555555", va="top", ha="center", annotation_clip=False)
    return Drawn(ax=ax, data=relation, parts={"line": line, "band": band_art, "points": points, "labels": labels, "stats": stats,
                                              "legend": leg, "caption": cap})


def _stats_text(r: ScalingRelation) -> str:
    lines = [r.equation.replace("G(", "ΔG(")]
    if r.slope_stderr is not None:
        for d, a, se, fx in zip(r.descriptors, r.slopes, r.slope_stderr, r.fixed):
            lines.append(f"slope on {d}: {a:.3f} (fixed)" if fx else f"slope on {d}: {a:.3f} ± {se:.3f}")
    if r.intercept_stderr is not None:
        lines.append(f"intercept: {r.intercept:.3f} ± {r.intercept_stderr:.3f} eV")
    if r.is_fitted:
        lines.append(f"R² = {r.r_squared:.3f}, RMSE = {r.rmse:.3f} eV, n = {r.n_surfaces}")
    else:
        lines.append("given relation (not fitted)")
    return "\n".join(lines)


def scaling_figure(energies, target: str, descriptors, slope=None, ax=None, style: str = "notebook"):
    """Fit ``target`` against ``descriptors`` on ``energies`` and draw it (see :func:`plot_scaling`)."""
    return plot_scaling(fit_scaling(energies, target, descriptors, slope), energies, ax=ax, style=style)
