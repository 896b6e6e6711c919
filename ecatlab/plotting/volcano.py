"""Plot volcanoes, activity maps, determining-step maps and selectivity maps.

Draws only what :mod:`ecatlab.volcano` computed. Every function takes ``ax=`` and returns a
:class:`ecatlab.plotting.handles.Drawn` (the Axes, the object drawn as ``data`` and the named
artists as ``parts``); titles carry pathway and conditions, a caption under the axes carries the
reference scheme and the theoretical-estimate caution (save with ``bbox_inches="tight"`` to keep it).

Surface labels are placed greedily (:func:`_label_points`): for each label the candidate offset
around its point with the lowest score in display coordinates, where overlapping an earlier label,
a marker or a box to avoid costs most, crossing a drawn line (step lines, envelope, U_eq) next,
leaving the axes next, and distance from the point least.
"""

from __future__ import annotations

from ecatlab.errors import OptionError

import numpy as np

from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import DASHES, MARKERS, PALETTE, figure, pathway_title, preset, style_context
from ecatlab.volcano import ActivityMap, SelectivityMap, VolcanoCurve, volcano

__all__ = ["plot_volcano", "plot_activity_map", "plot_determining_steps", "plot_selectivity_map", "volcano_figure"]

_CAUTION = "Theoretical estimate (CHE, thermodynamics only)."


def _conditions_text(cond: dict) -> str:
    return f"pH {cond['pH']:g}, {cond['temperature']:g} K, potentials vs {cond['scale']}"


def _caption(ax, p, text: str):
    return ax.annotate(text, xy=(0.5, 0), xycoords=ax.xaxis.label, xytext=(0, -3), textcoords="offset points", fontsize=p.font_pt - 2,
                color="#555555", va="top", ha="center", annotation_clip=False)


def _short_refs(cond: dict) -> str:
    refs = cond["references"].split(";")
    return ";".join(refs[:2]).strip()


#: Candidate label offsets (points from the marker centre): a ring of 16 directions at three distances.
_ANGLES = np.deg2rad(np.arange(0, 360, 22.5) + 45.0)
_OFFSETS = [(float(r * np.cos(a)), float(r * np.sin(a))) for r in (6.0, 12.0, 20.0) for a in _ANGLES]


def _boxes_hit_segments(boxes: np.ndarray, segments: np.ndarray) -> np.ndarray:
    """For boxes (B, 4: x0, y0, x1, y1) and segments (M, 2, 2), all in display coordinates: True
    where a box is crossed by any segment (Liang-Barsky clipping, vectorised over both)."""
    if len(segments) and len(boxes):  # only segments whose extent meets the region of all boxes can cross one
        lo, hi = boxes[:, :2].min(axis=0), boxes[:, 2:].max(axis=0)
        smin, smax = segments.min(axis=1), segments.max(axis=1)
        segments = segments[np.all((smax >= lo) & (smin <= hi), axis=1)]
    if not len(segments):
        return np.zeros(len(boxes), dtype=bool)
    x0, y0 = segments[:, 0, 0][None], segments[:, 0, 1][None]
    dx, dy = segments[:, 1, 0][None] - x0, segments[:, 1, 1][None] - y0
    bx0, by0, bx1, by1 = (boxes[:, k][:, None] for k in range(4))
    p = np.stack(np.broadcast_arrays(-dx, dx, -dy, dy))
    q = np.stack(np.broadcast_arrays(x0 - bx0, bx1 - x0, y0 - by0, by1 - y0))
    with np.errstate(divide="ignore", invalid="ignore"):
        r = q / p
    enter = np.max(np.where(p < 0, r, 0.0), axis=0)
    leave = np.min(np.where(p > 0, r, 1.0), axis=0)
    outside_parallel = np.any((p == 0) & (q < 0), axis=0)
    return np.any((enter <= leave) & ~outside_parallel, axis=1)


def _line_segments(ax, lines) -> np.ndarray:
    """Display-coordinate segments (M, 2, 2) of data-coordinate polylines (each (N, 2)), NaN pieces dropped."""
    segs = []
    for xy in lines:
        d = ax.transData.transform(np.asarray(xy, dtype=float))
        seg = np.stack([d[:-1], d[1:]], axis=1)
        segs.append(seg[np.all(np.isfinite(seg), axis=(1, 2))])
    return np.concatenate(segs) if segs else np.empty((0, 2, 2))


def _as_array(boxes) -> np.ndarray:
    return np.array([[b.x0, b.y0, b.x1, b.y1] for b in boxes], dtype=float).reshape(-1, 4)


def _label_points(ax, names, xs, ys, fontsize, avoid=(), boxed=False, lines=(), markers=None) -> list:
    """Write names next to points; returns the Text artists.

    Greedy placement in display coordinates: labels are placed left to right; for each, every
    candidate offset of :data:`_OFFSETS` is scored against the label boxes placed before, the
    boxes in ``avoid``, every marker centre (the points themselves plus ``markers``, (K, 2) data
    coordinates, each with a 3-point margin), the polylines in ``lines`` (data coordinates) and the
    axes frame; the lowest score wins (ties: the nearest offset). The text box is measured once
    per label; the candidates are scored together with numpy.
    """
    fig = ax.figure
    renderer = fig.canvas.get_renderer()
    xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
    centres = np.column_stack([xs, ys])
    if markers is not None and len(markers):
        centres = np.vstack([centres, np.asarray(markers, dtype=float).reshape(-1, 2)])
    pts = ax.transData.transform(centres)
    anchors = ax.transData.transform(np.column_stack([xs, ys]))
    segs = _line_segments(ax, lines)
    frame = ax.get_window_extent(renderer)
    scale = fig.dpi / 72.0
    pad = 3 * scale
    off = np.array(_OFFSETS) * scale
    halign = np.where(off[:, 0] > 0.5, "left", np.where(off[:, 0] < -0.5, "right", "center"))
    shift = np.where(halign == "left", 0.0, np.where(halign == "right", -1.0, -0.5))
    rank = np.arange(len(off)) * 0.01
    placed = _as_array(avoid)
    texts = []
    for k in np.argsort(xs, kind="stable"):
        t = ax.annotate(names[k], (xs[k], ys[k]), xytext=(0, 0), textcoords="offset points", fontsize=fontsize, color="#222222",
                        ha="left", va="center", zorder=6, annotation_clip=False,
                        bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.7) if boxed else None)
        bb = t.get_window_extent(renderer)
        w, h = bb.width * 1.04, bb.height * 1.04
        cx0 = anchors[k, 0] + off[:, 0] + shift * w
        cy0 = anchors[k, 1] + off[:, 1] - 0.5 * h
        cand = np.column_stack([cx0, cy0, cx0 + w, cy0 + h])
        hit_labels = ((cand[:, None, 0] < placed[None, :, 2]) & (cand[:, None, 2] > placed[None, :, 0])
                      & (cand[:, None, 1] < placed[None, :, 3]) & (cand[:, None, 3] > placed[None, :, 1])).sum(axis=1)
        hit_markers = ((pts[None, :, 0] > cand[:, None, 0] - pad) & (pts[None, :, 0] < cand[:, None, 2] + pad)
                       & (pts[None, :, 1] > cand[:, None, 1] - pad) & (pts[None, :, 1] < cand[:, None, 3] + pad)).sum(axis=1)
        hit_lines = _boxes_hit_segments(cand, segs)
        outside = ~((cand[:, 0] >= frame.x0) & (cand[:, 2] <= frame.x1) & (cand[:, 1] >= frame.y0) & (cand[:, 3] <= frame.y1))
        score = 1000.0 * (hit_labels + hit_markers) + 100.0 * hit_lines + 50.0 * outside + rank
        best = int(np.argmin(score))
        t.set_position(tuple(_OFFSETS[best]))
        t.set_horizontalalignment(str(halign[best]))
        placed = np.vstack([placed, cand[best]])
        texts.append(t)
    return texts


def plot_volcano(curve: VolcanoCurve, ax=None, style: str = "notebook", show_steps: bool = True, label_surfaces: bool = True, caption: bool = True, legend: str | None = None):
    """Draw a 1D volcano.

    One thin line per step on the curve (electrochemical: its onset potential; with chemical steps
    on the curve, every step's potential equivalent U_eq -/+ dG_i(U_eq)/e, computed by the kernel),
    the envelope as a thick line, the equilibrium potential as a horizontal line, the apex as a
    star with its numbers, and the computed surfaces at their exact values on the same measure.
    ``legend``: ``"right"`` (outside, default for notebook/double), ``"below"`` (default for the
    single-column preset) or ``"inside"``.

    Returns
    -------
    Drawn
        ``data`` the curve; ``parts``: ``steps`` (list of Line2D), ``envelope``, ``equilibrium``
        (line and ``equilibrium_label``), ``apex``, ``surfaces`` (PathCollection or None),
        ``labels`` (list of Text), ``legend``, ``caption`` (or None).
    """
    p = preset(style)
    sc = curve.conditions["scale"]
    steps: list = []
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        x = curve.x
        env = curve.limiting_potential
        chem = bool(getattr(curve, "includes_chemical", False))
        y_col = "effective_limiting_potential" if chem and "effective_limiting_potential" in curve.surfaces else "limiting_potential"
        if show_steps:
            k = 0
            for j, name in enumerate(curve.step_names):
                if not np.isfinite(curve.line_slopes[j]):
                    continue
                kind = "" if curve.electrochemical[j] else " (chemical)"
                (line,) = ax.plot(x, curve.step_onsets[:, j], color=PALETTE[(k + 1) % len(PALETTE)], ls=DASHES[(k + 1) % len(DASHES)], lw=1.0,
                                  label=f"step {name}{kind}", zorder=2)
                steps.append(line)
                k += 1
        env_label = ("effective $U_L$ = $U_{eq}$ ∓ $G_{max}$/e (envelope, chemical steps included)" if chem
                     else "limiting potential $U_L$ (envelope)")
        (envelope,) = ax.plot(x, env, color="#222222", lw=2.4, label=env_label, zorder=3, solid_capstyle="round")
        equilibrium = ax.axhline(curve.equilibrium_potential, color=PALETTE[6], lw=1.0, ls=(0, (4, 2)), zorder=1)
        eq_label = ax.annotate(f"$U_{{eq}}$ = {curve.equilibrium_potential:.2f} V", xy=(1.0, curve.equilibrium_potential), xycoords=("axes fraction", "data"),
                    xytext=(-2, 3), textcoords="offset points", ha="right", va="bottom", fontsize=p.font_pt - 1, color=PALETTE[6])
        a = curve.apex
        (apex,) = ax.plot([a.descriptor[0]], [a.limiting_potential], marker="*", ms=12, color=PALETTE[4], mec="#222222", mew=0.6, zorder=5, ls="none",
                label=f"apex: {a.descriptor[0]:.2f} eV, $U_L$ = {a.limiting_potential:.2f} V, η$_{{min}}$ = {a.overpotential:.2f} V"
                + (" (at range edge)" if a.at_boundary else ""))
        s = curve.surfaces
        points = None
        if len(s):
            points = ax.scatter(s["descriptor"], s[y_col], s=30, marker=MARKERS[1], color=PALETTE[0], edgecolor="white", linewidth=0.5, zorder=4,
                       label="computed surfaces (exact, same measure)" if chem else "computed surfaces (exact $U_L$)")
        # y range: the envelope, U_eq and the surfaces, with margins (step lines may leave the frame)
        ys = [env.min(), env.max(), curve.equilibrium_potential, a.limiting_potential]
        if len(s):
            ys += [s[y_col].min(), s[y_col].max()]
        lo, hi = min(ys), max(ys)
        span = hi - lo or 1.0
        ax.set_ylim(lo - 0.12 * span, hi + 0.25 * span)
        ax.set_xlim(x[0], x[-1])
        ax.set_xlabel(f"{curve.descriptor.label()} / eV")
        ax.set_ylabel(f"limiting potential $U_L$ / V vs {sc}")
        better = "higher is better" if curve.direction == "reduction" else "lower is better"
        ax.set_title(f"Volcano: {pathway_title(curve.pathway, key=True, width=80)} ({better})\n{_conditions_text(curve.conditions)}")
        where = legend or ("below" if p.name == "single" else "right")
        if where == "right":
            leg = ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=p.font_pt - 2, borderaxespad=0.0)
        elif where == "below":
            leg = ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.22), frameon=False, fontsize=p.font_pt - 2, ncol=2)
        else:
            leg = ax.legend(loc="upper left", frameon=False, fontsize=p.font_pt - 2)
        labels: list = []
        if label_surfaces and len(s):
            renderer = ax.figure.canvas.get_renderer()
            avoid = [eq_label.get_window_extent(renderer)] + ([leg.get_window_extent(renderer)] if where == "inside" else [])
            drawn_lines = [np.column_stack([x, ln.get_ydata()]) for ln in steps] + [np.column_stack([x, env])]
            drawn_lines.append([[x[0], curve.equilibrium_potential], [x[-1], curve.equilibrium_potential]])
            labels = _label_points(ax, list(s["surface"]), s["descriptor"].to_numpy(float), s[y_col].to_numpy(float), p.font_pt - 2, avoid,
                                   lines=drawn_lines, markers=[[a.descriptor[0], a.limiting_potential]])
        cap = None
        if caption:
            rel = "; ".join(r.equation for r in curve.relations[:3]) + (" ..." if len(curve.relations) > 3 else "")
            text = f"Scaling: {rel}.\n{_short_refs(curve.conditions)}. {_CAUTION}"
            if where == "below":
                cap = ax.annotate(text, xy=(0.5, 0), xycoords=leg, xytext=(0, -2), textcoords="offset points", fontsize=p.font_pt - 2,
                                  color="#555555", va="top", ha="center", annotation_clip=False)
            else:
                cap = _caption(ax, p, text)
    return Drawn(ax=ax, data=curve, parts={"steps": steps, "envelope": envelope, "equilibrium": equilibrium, "equilibrium_label": eq_label,
                                           "apex": apex, "surfaces": points, "labels": labels, "legend": leg, "caption": cap})


def _region_labels(ax, X, Y, regions: np.ndarray, labels, fontsize, points=None, min_share: float = 0.015):
    """Label each connected region near its centroid, preferring cells away from surface points and the frame.

    Every connected patch holding at least ``min_share`` of the cells gets a label (a product
    winning in two separate places is labelled twice). Returns the label boxes (display
    coordinates: ``[t.get_window_extent() for t in ...]``) so point labels can avoid them; returns the Text artists."""
    from scipy import ndimage

    sx = (X - X.min()) / (np.ptp(X) or 1.0)
    sy = (Y - Y.min()) / (np.ptp(Y) or 1.0)
    ok = (sx > 0.15) & (sx < 0.85) & (sy > 0.07) & (sy < 0.93)
    if points is not None and len(points):
        px = (np.asarray(points[0], float) - X.min()) / (np.ptp(X) or 1.0)
        py = (np.asarray(points[1], float) - Y.min()) / (np.ptp(Y) or 1.0)
        near = np.min((sx[..., None] - px) ** 2 + ((sy[..., None] - py) * 2.5) ** 2, axis=-1)
        ok &= near > 0.12**2
    boxes = []
    renderer = ax.figure.canvas.get_renderer()
    for k in np.unique(regions):
        parts, count = ndimage.label(regions == k)
        sizes = np.bincount(parts.ravel(), minlength=count + 1)[1:]
        keep = [j + 1 for j in np.argsort(-sizes) if sizes[j] >= min_share * regions.size] or [int(np.argmax(sizes)) + 1]
        for part in keep:
            mask = parts == part
            cx, cy = sx[mask].mean(), sy[mask].mean()
            d = (sx - cx) ** 2 + (sy - cy) ** 2
            pref = mask & ok
            d = np.where(pref if pref.any() else mask, d, np.inf)
            i = np.unravel_index(np.argmin(d), d.shape)
            t = ax.text(X[i], Y[i], labels[k], ha="center", va="center", fontsize=fontsize, color="#111111",
                        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.75), zorder=4)
            boxes.append(t)
    return boxes


def _surfaces_on_map(ax, surf, p, label=True, values=None, cmap=None, norm=None, avoid=(), markers=None):
    """Surfaces as squares (filled with their exact value on the map's colour scale if given); returns (collection, labels)."""
    if surf is None or not len(surf):
        return None, []
    if values is not None:
        points = ax.scatter(surf["x"], surf["y"], s=30, marker=MARKERS[1], c=values, cmap=cmap, norm=norm, edgecolor="#111111", linewidth=0.8, zorder=5)
    else:
        points = ax.scatter(surf["x"], surf["y"], s=26, marker=MARKERS[1], color="white", edgecolor="#111111", linewidth=0.8, zorder=5)
    labels = []
    if label:
        labels = _label_points(ax, list(surf["surface"]), surf["x"].to_numpy(float), surf["y"].to_numpy(float), p.font_pt - 2, avoid=avoid,
                               boxed=True, markers=markers)
    return points, labels


def plot_activity_map(amap: ActivityMap, ax=None, style: str = "notebook", quantity: str = "limiting_potential", label_surfaces: bool = True, caption: bool = True, levels: int = 14):
    """Filled contours of the limiting potential (or overpotential) over two descriptors.

    ``quantity``: ``"limiting_potential"`` (V vs scale) or ``"overpotential"`` (V). Surfaces are
    drawn at their descriptor values; the exact optimum is a star. Returns a :class:`Drawn`
    (``data`` the map; ``parts``: ``contours``, ``contour_lines``, ``colorbar``, ``optimum``,
    ``surfaces``, ``labels``, ``legend``, ``caption``; ``axes``: the map and the colour bar).
    """
    import matplotlib.pyplot as plt

    if quantity not in ("limiting_potential", "overpotential"):
        raise OptionError(f"quantity must be 'limiting_potential' or 'overpotential', got {quantity!r}")
    p = preset(style)
    sc = amap.conditions["scale"]
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        Z = amap.limiting_potential if quantity == "limiting_potential" else amap.overpotential
        # colours: "better" is always the light end
        reverse = (quantity == "overpotential") or (amap.pathway.direction == "oxidation")
        cmap = plt.get_cmap("viridis_r" if reverse else "viridis")
        cs = ax.contourf(amap.x, amap.y, Z, levels=levels, cmap=cmap, zorder=1)
        edges = ax.contour(amap.x, amap.y, Z, levels=cs.levels, colors="white", linewidths=0.3, alpha=0.5, zorder=2)
        cb = ax.figure.colorbar(cs, ax=ax, pad=0.02)
        cb.set_label(f"limiting potential $U_L$ / V vs {sc}" if quantity == "limiting_potential" else "theoretical overpotential η / V")
        o = amap.optimum
        (star,) = ax.plot([o.descriptor[0]], [o.descriptor[1]], marker="*", ms=12, color=PALETTE[4], mec="#222222", mew=0.6, ls="none", zorder=6,
                label=f"optimum: $U_L$ = {o.limiting_potential:.2f} V, η = {o.overpotential:.2f} V" + (" (at range edge)" if o.at_boundary else ""))
        sv = None
        if len(amap.surfaces):
            sv = amap.surfaces[quantity].to_numpy(float)
        leg = ax.legend(loc="upper right", frameon=True, framealpha=0.85, fontsize=p.font_pt - 2)
        renderer = ax.figure.canvas.get_renderer()
        points, labels = _surfaces_on_map(ax, amap.surfaces, p, label_surfaces, sv, cs.cmap, cs.norm, avoid=[leg.get_window_extent(renderer)],
                                          markers=[list(o.descriptor[:2])])
        ax.set_xlabel(f"{amap.descriptors[0].label()} / eV")
        ax.set_ylabel(f"{amap.descriptors[1].label()} / eV")
        ax.set_title(f"Activity map: {pathway_title(amap.pathway, key=True, width=70)}\n{_conditions_text(amap.conditions)}")
        cap = None
        if caption:
            cap = _caption(ax, p, f"Squares: computed surfaces filled with their exact value (not the scaling estimate).\n{_short_refs(amap.conditions)}. {_CAUTION}")
    return Drawn(ax=ax, data=amap, axes=(ax, cb.ax), parts={"contours": cs, "contour_lines": edges, "colorbar": cb, "optimum": star,
                                                            "surfaces": points, "labels": labels, "legend": leg, "caption": cap})


def _region_edges(ax, x, y, regions):
    """One thin line around each region (avoids stacked contour levels where indices jump)."""
    for k in np.unique(regions):
        ax.contour(x, y, (regions == k).astype(float), levels=[0.5], colors="#333333", linewidths=0.6, zorder=2)


def _region_colors(n, names=None):
    """Pale region colours; with ``names`` (product labels) each product keeps its colour in every map."""
    from matplotlib.colors import ListedColormap, to_rgba

    if names is None:
        idx = list(range(n))
    else:
        idx, used = [], set(_PRODUCT_COLOUR.values())
        spare = [k for k in range(len(PALETTE)) if k not in used]
        for name in names:
            if name in _PRODUCT_COLOUR:
                idx.append(_PRODUCT_COLOUR[name])
            else:
                idx.append(spare.pop(0) if spare else len(idx))
    return ListedColormap([to_rgba(PALETTE[k % len(PALETTE)], 0.45) for k in idx])


#: Fixed palette slot per product label, so a product has one colour in every selectivity map.
_PRODUCT_COLOUR = {"CO": 0, "HCOOH": 1, "CH4": 2, "CH3OH": 3, "H2": 4, "CH2O": 5}


def plot_determining_steps(amap: ActivityMap, ax=None, style: str = "notebook", label_surfaces: bool = True, caption: bool = True):
    """Regions of the map by potential-determining step, each labelled with its step.

    Returns a :class:`Drawn` (``data`` the map; ``parts``: ``regions``, ``region_labels``,
    ``surfaces``, ``labels``, ``caption``).
    """
    p = preset(style)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        n = len(amap.step_names)
        idx = amap.determining_step_index - 1
        X, Y = np.meshgrid(amap.x, amap.y)
        regions = ax.pcolormesh(amap.x, amap.y, idx, cmap=_region_colors(n), vmin=-0.5, vmax=n - 0.5, shading="nearest", zorder=1, rasterized=True)
        _region_edges(ax, amap.x, amap.y, idx)
        pts = (amap.surfaces["x"], amap.surfaces["y"]) if len(amap.surfaces) else None
        region_labels = _region_labels(ax, X, Y, idx, [f"step {s}" for s in amap.step_names], p.font_pt - 1, pts)
        renderer = ax.figure.canvas.get_renderer()
        points, labels = _surfaces_on_map(ax, amap.surfaces, p, label_surfaces, avoid=[t.get_window_extent(renderer) for t in region_labels])
        ax.set_xlabel(f"{amap.descriptors[0].label()} / eV")
        ax.set_ylabel(f"{amap.descriptors[1].label()} / eV")
        ax.set_title(f"Potential-determining step: {pathway_title(amap.pathway, key=True, width=60)}\n{_conditions_text(amap.conditions)}")
        cap = _caption(ax, p, f"{_short_refs(amap.conditions)}. {_CAUTION}") if caption else None
    return Drawn(ax=ax, data=amap, parts={"regions": regions, "region_labels": region_labels, "surfaces": points, "labels": labels, "caption": cap})


#: gid of the overlay marking an uphill chemical step in the winner's route (tests and post-processing find it by this).
CHEMICAL_OVERLAY_GID = "uphill-chemical-step"


def plot_selectivity_map(smap: SelectivityMap, ax=None, style: str = "notebook", label_surfaces: bool = True, caption: bool = True, margin_lines: bool = True,
                         chemical_threshold: float | None = 0.5):
    """Regions by winning product, labelled; surfaces on top.

    The winner is :attr:`SelectivityMap.winner`: products whose route has no uphill chemical step
    first, then the least negative onset potential (the kernel's ranking rule); the caption says so.

    Hatching (``margin_lines``) marks where the winner leads the runner-up by less than 0.1 V
    (weak preference).

    Dots inside a dotted outline mark where the winner's route has a chemical step uphill by more
    than ``chemical_threshold`` (eV, :attr:`~ecatlab.volcano.SelectivityMap.winner_max_chemical_dG`;
    default 0.5 eV: common practice, no source; ``None`` = no overlay). Such a winner occurs only
    where every product is blocked; there the product is not released at any potential (e.g. CO stays bound and
    poisons the surface). The overlay artists carry ``gid`` :data:`CHEMICAL_OVERLAY_GID`; a
    legend entry outside the axes and a caption line explain it.

    Returns a :class:`Drawn` (``data`` the map; ``parts``: ``regions``, ``hatching`` (or None),
    ``overlay`` (list of the overlay artists, empty if none), ``region_labels``, ``surfaces``,
    ``labels``, ``caption``).
    """
    from ecatlab.notation import Species

    p = preset(style)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        n = len(smap.products)
        X, Y = np.meshgrid(smap.x, smap.y)
        regions = ax.pcolormesh(smap.x, smap.y, smap.winner, cmap=_region_colors(n, smap.product_labels), vmin=-0.5, vmax=n - 0.5, shading="nearest", zorder=1, rasterized=True)
        _region_edges(ax, smap.x, smap.y, smap.winner)
        hatching = None
        if margin_lines and np.nanmax(smap.margin) > 0.1:
            import matplotlib as mpl

            with mpl.rc_context({"hatch.color": "#8A8A8A", "hatch.linewidth": 0.4}):
                hatching = ax.contourf(smap.x, smap.y, smap.margin, levels=[-1e-12, 0.1], colors="none", hatches=["//"], zorder=2)
        overlay = _chemical_overlay(ax, p, smap, chemical_threshold)
        uphill = bool(overlay)
        labels = []
        for lab in smap.product_labels:
            try:
                labels.append(Species.parse(f"{lab}(g)").latex().replace("(g)", ""))
            except Exception:  # noqa: BLE001 - label only
                labels.append(lab)
        pts = (smap.surfaces["x"], smap.surfaces["y"]) if len(smap.surfaces) else None
        region_labels = _region_labels(ax, X, Y, smap.winner, labels, p.font_pt, pts)
        renderer = ax.figure.canvas.get_renderer()
        points, point_labels = _surfaces_on_map(ax, smap.surfaces, p, label_surfaces, avoid=[t.get_window_extent(renderer) for t in region_labels])
        ax.set_xlabel(f"{smap.descriptors[0].label()} / eV")
        ax.set_ylabel(f"{smap.descriptors[1].label()} / eV")
        basis = "best network routes" if smap.basis == "network" else "built-in pathways"
        ax.set_title(f"Selectivity: unblocked routes first, then least negative onset ({basis})\n{_conditions_text(smap.conditions)}")
        cap = None
        if caption:
            width = int(ax.figure.get_figwidth() * 72 / (0.52 * (p.font_pt - 2)))
            cap = _caption(ax, p, _selectivity_caption(smap, width, chemical_threshold if uphill else None))
    return Drawn(ax=ax, data=smap, parts={"regions": regions, "hatching": hatching, "overlay": overlay, "region_labels": region_labels,
                                          "surfaces": points, "labels": point_labels, "caption": cap})


def _chemical_overlay(ax, p, smap: SelectivityMap, threshold: float | None) -> list:
    """Dotted outline and light stipple where the winner's route has a chemical step above ``threshold`` (eV); returns the artists."""
    if threshold is None:
        return []
    with np.errstate(invalid="ignore"):
        mask = (smap.winner_max_chemical_dG > float(threshold)).astype(float)  # NaN (no chemical step) -> 0
    if not mask.any():
        return []
    import matplotlib as mpl
    from matplotlib.patches import Patch

    ink = "#3A3A3A"
    with mpl.rc_context({"hatch.color": "#4A4A4A", "hatch.linewidth": 0.5}):
        fill = ax.contourf(smap.x, smap.y, mask, levels=[0.5, 1.5], colors="none", hatches=["."], zorder=2.5)
    edge = ax.contour(smap.x, smap.y, mask, levels=[0.5], colors=ink, linewidths=1.3, linestyles=[(0, (1, 2))], zorder=3)
    fill.set_gid(CHEMICAL_OVERLAY_GID)
    edge.set_gid(CHEMICAL_OVERLAY_GID)
    handle = Patch(facecolor="none", edgecolor=ink, hatch=".", linestyle=(0, (1, 2)), linewidth=1.3,
                   label=f"winner's route has a chemical\nstep uphill by > {float(threshold):g} eV")
    artists = [fill, edge]
    if p.name != "single":  # a column-wide figure keeps its width: the caption explains the overlay there
        with mpl.rc_context({"hatch.color": ink, "hatch.linewidth": 0.5}):
            leg = ax.legend(handles=[handle], loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=p.font_pt - 2,
                            borderaxespad=0.3, handlelength=2.2, handleheight=1.4)
        leg.set_gid(CHEMICAL_OVERLAY_GID)
        artists.append(leg)
    return artists


def _selectivity_caption(smap: SelectivityMap, width: int = 110, chemical_threshold: float | None = None) -> str:
    """Caption: basis (and what it left out), reading aid, references, caution; lines wrapped at ``width`` characters."""
    import textwrap

    if smap.basis == "network":
        net = smap.network
        her = smap.conditions.get("her")
        first = (f"Basis: best route to each product in the {net.reactant} reaction network ({len(net.states)} states, {len(net.edges)} steps), "
                 f"searched at every grid point" + (f"; H2: {her}." if her else "."))
        if smap.excluded:
            first += f"\nLeft out (no scaling relation): {', '.join(smap.excluded)}."
        ties = "exact ties go to the alphabetically first product"
    else:
        first = f"Basis: built-in pathways {', '.join(smap.products)}."
        why = smap.conditions.get("network_unavailable", "")
        if why:
            first += f"\nNetwork routes not used: {_shorten(why, 110)}"
        ties = "exact ties go to the product listed first"
    limit = smap.conditions.get("chemical_limit")
    chem = ("Winner: products whose route has an uphill chemical step (e.g. CO desorption; blocked at every potential) rank last, "
            "then the least negative onset wins; a blocked product wins only where all are blocked")
    if limit is not None:
        chem += f"; routes with a chemical step above {limit:g} eV excluded"
    if chemical_threshold is not None:
        chem += (f".\nDotted outline, dots: every product is blocked and the winner's route has a chemical step uphill by more than "
                 f"{chemical_threshold:g} eV (product not released at any potential, e.g. CO poisons the surface)")
    text = (f"{first}\nHatched: winner leads the runner-up by less than 0.1 V ({ties}).\n"
            f"{chem}. {_short_refs(smap.conditions)}.\n{_CAUTION}")
    return "\n".join(w for line in text.split("\n") for w in textwrap.wrap(line, max(40, width)))


def _shorten(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1].rstrip() + "…"


def volcano_figure(energies, pathway, descriptor, ax=None, style: str = "notebook", **kwargs):
    """Compute (:func:`ecatlab.volcano.volcano`) and draw (:func:`plot_volcano`) a 1D volcano.

    ``kwargs`` go to :func:`ecatlab.volcano.volcano` (relations, fixed_slopes, pH, scale, span...).
    Returns the :class:`Drawn` of :func:`plot_volcano` (``data`` the curve).
    """
    curve = volcano(energies, pathway, descriptor, **kwargs)
    return plot_volcano(curve, ax=ax, style=style)
