"""Draw the descriptor analysis: scree plot (explained variance, reconstruction error) and biplot
(surface scores and adsorbate loadings on two principal components).

Draws only what :mod:`ecatlab.descriptors` computed; ``ax=`` in, a :class:`ecatlab.plotting.handles.Drawn` out.
"""

from __future__ import annotations

import numpy as np

from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import MARKERS, PALETTE, figure, preset, style_context

__all__ = ["plot_scree", "plot_biplot"]

_CAUTION = "Theoretical estimate."


def _caption(ax, p, text: str):
    return ax.annotate(text, xy=(0.5, 0), xycoords=ax.xaxis.label, xytext=(0, -3), textcoords="offset points", fontsize=p.font_pt - 2,
                color="#555555", va="top", ha="center", annotation_clip=False)


def plot_scree(analysis, ax=None, style: str = "notebook", target_rmse: float | None = 0.1, max_components: int = 12, caption: bool = True):
    """Scree plot: explained-variance ratio per component (bars, left axis) and the RMSE of the
    rank-k reconstruction against the computed entries (line, right axis, eV), with the target error.

    Returns
    -------
    Drawn
        ``ax`` the left (variance) axis, ``axes`` (left, right); ``data`` the explained-variance
        table drawn; ``parts``: ``right_axis`` (the RMSE axis, eV), ``bars``, ``cumulative``,
        ``rmse``, ``cv_rmse`` (or None), ``target`` (or None), ``legend``, ``caption`` (or None).
    """
    p = preset(style)
    ev = analysis.explained_variance().head(max_components)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        k = ev["component"].to_numpy()
        bars = ax.bar(k, ev["explained_variance_ratio"], color=PALETTE[0], alpha=0.85, width=0.65, label="explained variance ratio")
        (cumulative,) = ax.plot(k, ev["cumulative_ratio"], color=PALETTE[0], marker="o", ms=3.5, lw=1.0, label="cumulative")
        ax.set_ylim(0, 1.05)
        ax.set_xlabel("principal component")
        ax.set_ylabel("fraction of variance")
        ax.set_xticks(k)
        right = ax.twinx()
        right.spines["right"].set_visible(True)
        cv = target = None
        (rmse,) = right.plot(k, ev["reconstruction_rmse"], color=PALETTE[1], marker="s", ms=3.5, lw=1.4, label="reconstruction RMSE (eV)")
        if ev["cv_rmse"].notna().any():
            (cv,) = right.plot(k, ev["cv_rmse"], color=PALETTE[1], marker="^", ms=3.5, lw=1.0, ls=(0, (3, 2)), label="held-out RMSE (eV)")
        if target_rmse is not None:
            target = right.axhline(target_rmse, color=PALETTE[1], lw=0.8, ls=":", label=f"target {target_rmse:g} eV")
            kk = analysis.components_for_error(target_rmse)
            ax.set_title(f"Scree plot: {kk} component(s) reach {target_rmse:g} eV ({len(analysis.surfaces)} surfaces x {len(analysis.species)} adsorbates)")
        else:
            ax.set_title(f"Scree plot ({len(analysis.surfaces)} surfaces x {len(analysis.species)} adsorbates)")
        right.set_ylabel("RMSE / eV")
        right.set_ylim(bottom=0)
        h1, l1 = ax.get_legend_handles_labels()
        h2, l2 = right.get_legend_handles_labels()
        leg = ax.legend(h1 + h2, l1 + l2, loc="center right", frameon=False, fontsize=p.font_pt - 2)
        cap = None
        if caption:
            imputed = int(analysis.missing.sum())
            cap = _caption(ax, p, f"PCA of {analysis.source} (centred, eV); {imputed} imputed entries. {_CAUTION}")
    return Drawn(ax=ax, data=ev, axes=(ax, right), parts={"right_axis": right, "bars": bars, "cumulative": cumulative, "rmse": rmse,
                                                         "cv_rmse": cv, "target": target, "legend": leg, "caption": cap})


def plot_biplot(analysis, ax=None, style: str = "notebook", components: tuple[int, int] = (1, 2), label_surfaces: bool = True,
                max_arrows: int = 12, caption: bool = True):
    """Biplot: surfaces at their scores (eV) on two components, and the adsorbates' loadings as
    arrows (scaled to the score range; the ``max_arrows`` longest are drawn and named).

    Returns
    -------
    Drawn
        ``data``: DataFrame of the scores drawn (surface, x, y; eV) with ``attrs["loading_scale"]``
        (eV per unit loading); ``parts``: ``points``, ``labels`` (list of Text), ``arrows``
        {adsorbate: Annotation}, ``arrow_labels`` {adsorbate: Text}, ``caption`` (or None).
    """
    import pandas as pd

    p = preset(style)
    i, j = components[0] - 1, components[1] - 1
    if max(i, j) >= analysis.n_components or min(i, j) < 0:
        from ecatlab.errors import DescriptorError

        raise DescriptorError(f"components {components} not available; the analysis has {analysis.n_components}")
    ev = analysis.explained_variance()["explained_variance_ratio"].to_numpy()
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        x, y = analysis.scores_matrix[:, i], analysis.scores_matrix[:, j]
        points = ax.scatter(x, y, s=30, marker=MARKERS[0], color=PALETTE[1], edgecolor="white", linewidth=0.5, zorder=3, label="surfaces (scores)")
        labels, arrows, arrow_labels = [], {}, {}
        if label_surfaces:
            for name, xx, yy in zip(analysis.surfaces, x, y):
                labels.append(ax.annotate(name, (xx, yy), xytext=(4, 3), textcoords="offset points", fontsize=p.font_pt - 3, color="#404040"))
        L = analysis.loadings_matrix[[i, j]].T
        span = max(np.abs(x).max(), np.abs(y).max(), 1e-9)
        scale = 0.9 * span / max(np.abs(L).max(), 1e-12)
        length = np.hypot(L[:, 0], L[:, 1])
        for k in np.argsort(-length)[:max_arrows]:
            arrows[analysis.species[k]] = ax.annotate("", xy=(L[k, 0] * scale, L[k, 1] * scale), xytext=(0, 0),
                                                      arrowprops=dict(arrowstyle="->", color=PALETTE[0], lw=0.9), zorder=2)
            arrow_labels[analysis.species[k]] = ax.text(L[k, 0] * scale * 1.07, L[k, 1] * scale * 1.07, analysis.species[k], fontsize=p.font_pt - 2, color=PALETTE[0],
                    ha="center", va="center", zorder=4)
        tips = L[np.argsort(-length)[:max_arrows]] * scale * 1.12
        xs_all = np.concatenate([x, tips[:, 0], [0.0]])
        ys_all = np.concatenate([y, tips[:, 1], [0.0]])
        pad_x = 0.06 * (xs_all.max() - xs_all.min() or 1.0)
        pad_y = 0.06 * (ys_all.max() - ys_all.min() or 1.0)
        ax.set_xlim(xs_all.min() - pad_x, xs_all.max() + pad_x)
        ax.set_ylim(ys_all.min() - pad_y, ys_all.max() + pad_y)
        ax.axhline(0, color="#BBBBBB", lw=0.6, zorder=0)
        ax.axvline(0, color="#BBBBBB", lw=0.6, zorder=0)
        ax.set_xlabel(f"PC{i + 1} score / eV ({ev[i]:.0%} of variance)")
        ax.set_ylabel(f"PC{j + 1} score / eV ({ev[j]:.0%} of variance)")
        ax.set_title(f"Biplot of PC{i + 1} and PC{j + 1}: surfaces (points) and adsorbate loadings (arrows)")
        cap = _caption(ax, p, f"PCA of {analysis.source}; arrows scaled by {scale:.2f} eV per unit loading. {_CAUTION}") if caption else None
    data = pd.DataFrame({"surface": list(analysis.surfaces), "x": x, "y": y})
    data.attrs.update({"components": tuple(components), "loading_scale": float(scale), "units": "eV"})
    return Drawn(ax=ax, data=data, parts={"points": points, "labels": labels, "arrows": arrows, "arrow_labels": arrow_labels, "caption": cap})
