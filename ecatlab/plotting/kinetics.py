"""Plot microkinetic results: polarization curves (linear and Tafel axes), coverages and
faradaic efficiency vs potential.

Draws only what :mod:`ecatlab.kinetics.analysis` computed (the frames of
:func:`~ecatlab.kinetics.analysis.polarization_curve`, :func:`~ecatlab.kinetics.analysis.coverage_table`
and :func:`~ecatlab.kinetics.analysis.faradaic_efficiencies`, or a
:class:`~ecatlab.kinetics.solver.SteadyState` from which they are made). Every function takes
``ax=`` and returns a :class:`ecatlab.plotting.handles.Drawn` (``data``: the frame drawn,
``parts``: ``lines`` per surface/species/product name, ``legend``, ``caption``); titles carry the
conditions, a caption under the axes says when barriers were estimated and that the curves are
theoretical estimates. :func:`plot_polarization_tafel` draws the two polarization panels side by
side with one caption under both (two per-panel captions would overlap).
"""

from __future__ import annotations

import numpy as np

from ecatlab.plotting.handles import Drawn
from ecatlab.plotting.style import DASHES, PALETTE, figure, preset, style_context

__all__ = ["plot_polarization", "plot_tafel", "plot_polarization_tafel", "plot_coverages", "plot_faradaic_efficiency"]


def _frame(data, kind: str):
    from ecatlab.kinetics import analysis as A
    from ecatlab.kinetics.solver import SteadyState

    if isinstance(data, SteadyState):
        return {"polarization": A.polarization_curve, "coverage": A.coverage_table, "fe": A.faradaic_efficiencies}[kind](data)
    return data


def _conditions(frame) -> str:
    a = frame.attrs
    return f"pH {a.get('pH', 0):g}, {a.get('temperature', 298.15):g} K"


def _caption_text(frame) -> str:
    a = frame.attrs
    text = "Theoretical estimate (mean-field kinetics, no mass transport)"
    if a.get("estimated_barriers"):
        text += "; ESTIMATED barriers"
    return text + f"; {a.get('site_density_per_cm2', 1e15):.0e} sites/cm$^2$."


def _caption(ax, p, frame):
    """The caption under the x-axis label of ``ax``; returns the Annotation."""
    return ax.annotate(_caption_text(frame), xy=(0.5, 0), xycoords=ax.xaxis.label, xytext=(0, -3),
                       textcoords="offset points", fontsize=p.font_pt - 2, color="#555555", va="top", ha="center", annotation_clip=False)


def _surfaces(frame, surfaces):
    names = list(dict.fromkeys(frame["surface"]))
    if surfaces is None:
        return names[:8]
    wanted = [surfaces] if isinstance(surfaces, str) else list(surfaces)
    unknown = [s for s in wanted if s not in names]
    if unknown:
        from ecatlab.errors import KineticsInputError

        raise KineticsInputError(f"unknown surface(s) {unknown}; the result has {names}")
    return wanted


def plot_polarization(data, ax=None, surfaces=None, style: str = "notebook", title: str | None = None, caption: bool = True,
                      current_limit: float | None = None):
    """Current density (mA/cm^2, IUPAC sign) vs potential, one line per surface (at most 8 by default).

    Non-converged points are gaps; points with several steady states are marked with a ring.
    ``current_limit`` (mA/cm^2) sets the y range to +/- that value (kinetic currents without mass
    transport grow without bound; default: autoscale). Returns a :class:`Drawn` (``parts``:
    ``lines`` {surface: Line2D}, ``multiple`` {surface: ring markers}, ``zero``, ``legend``, ``caption``).
    """
    frame = _frame(data, "polarization")
    p = preset(style)
    sc = frame.attrs.get("scale", "RHE")
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        lines, rings = {}, {}
        for k, s in enumerate(_surfaces(frame, surfaces)):
            f = frame[frame["surface"] == s].sort_values("potential")
            y = np.where(f["converged"], f["current_density"], np.nan)
            (lines[s],) = ax.plot(f["potential"], y, color=PALETTE[k % len(PALETTE)], ls=DASHES[k % len(DASHES)], lw=1.6, label=s)
            multi = f["steady_states"] > 1
            if multi.any():
                (rings[s],) = ax.plot(f["potential"][multi], y[multi.to_numpy()], ls="none", marker="o", mfc="none", mec="#222222", ms=5)
        zero = ax.axhline(0.0, color="#999999", lw=0.8)
        if current_limit is not None:
            ax.set_ylim(-abs(current_limit), abs(current_limit))
        ax.set_xlabel(f"potential U (V vs {sc})")
        ax.set_ylabel("current density j (mA cm$^{-2}$)")
        ax.set_title(title or f"Polarization curves ({_conditions(frame)})")
        leg = ax.legend(fontsize=p.font_pt - 2, frameon=False)
        cap = _caption(ax, p, frame) if caption else None
    return Drawn(ax=ax, data=frame, parts={"lines": lines, "multiple": rings, "zero": zero, "legend": leg, "caption": cap})


def plot_tafel(data, ax=None, surfaces=None, style: str = "notebook", title: str | None = None, caption: bool = True):
    """Tafel axes: potential vs log10 |j| (mA/cm^2), one line per surface.

    Returns a :class:`Drawn` (``parts``: ``lines`` {surface: Line2D}, ``legend``, ``caption``).
    """
    frame = _frame(data, "polarization")
    p = preset(style)
    sc = frame.attrs.get("scale", "RHE")
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        lines = {}
        for k, s in enumerate(_surfaces(frame, surfaces)):
            f = frame[frame["surface"] == s].sort_values("potential")
            j = np.where(f["converged"] & (f["abs_current_density"] > 0), f["abs_current_density"], np.nan)
            (lines[s],) = ax.plot(np.log10(j), f["potential"], color=PALETTE[k % len(PALETTE)], ls=DASHES[k % len(DASHES)], lw=1.6, label=s)
        lo, hi = ax.get_xlim()
        ax.set_xlim(max(lo, -8.0), hi)  # currents below 1e-8 mA/cm^2 (near U_eq) are not informative
        ax.set_xlabel("log$_{10}$ |j| (j in mA cm$^{-2}$)")
        ax.set_ylabel(f"potential U (V vs {sc})")
        ax.set_title(title or f"Tafel plot ({_conditions(frame)})")
        leg = ax.legend(fontsize=p.font_pt - 2, frameon=False)
        cap = _caption(ax, p, frame) if caption else None
    return Drawn(ax=ax, data=frame, parts={"lines": lines, "legend": leg, "caption": cap})


def plot_polarization_tafel(data, surfaces=None, style: str = "notebook", current_limit: float | None = None, caption: bool = True,
                            axes=None, figsize: tuple[float, float] = (11.0, 4.5)):
    """Polarization curve (left) and Tafel plot (right) side by side, one caption centred under both.

    Parameters
    ----------
    data : DataFrame or SteadyState
        As :func:`plot_polarization`.
    surfaces, current_limit
        As :func:`plot_polarization` (``current_limit`` in mA/cm^2, left panel only).
    axes : (Axes, Axes), optional
        Two Axes to draw on (default: a new 1 x 2 figure of ``figsize`` inches).

    Returns
    -------
    Drawn
        ``ax`` the polarization panel, ``axes`` both panels, ``parts``: ``polarization`` and
        ``tafel`` (the panels' own :class:`Drawn`), ``caption`` (one Annotation, or None).
    """
    frame = _frame(data, "polarization")
    p = preset(style)
    with style_context(p):
        if axes is None:
            fig, axes = figure(p, 1, 2, figsize=figsize)
            fig.subplots_adjust(wspace=0.3)
        left, right = axes
        pol = plot_polarization(frame, ax=left, surfaces=surfaces, style=p, caption=False, current_limit=current_limit)
        taf = plot_tafel(frame, ax=right, surfaces=surfaces, style=p, caption=False)
        cap = None
        if caption:
            # one line under both x-axis labels, centred on the span of both panels. It belongs to the
            # figure (drawn after both Axes), so the labels' positions are current when it is placed,
            # also in the second layout pass of bbox_inches="tight".
            from matplotlib.text import Annotation
            from matplotlib.transforms import Bbox

            def under_labels(renderer):  # x: both panels, y: both x-axis labels (display coordinates)
                panels = Bbox.union([left.get_window_extent(renderer), right.get_window_extent(renderer)])
                labels = Bbox.union([left.xaxis.label.get_window_extent(renderer), right.xaxis.label.get_window_extent(renderer)])
                return Bbox([[panels.x0, labels.y0], [panels.x1, labels.y1]])

            cap = Annotation(_caption_text(frame), xy=(0.5, 0), xycoords=under_labels, xytext=(0, -3),
                             textcoords="offset points", fontsize=p.font_pt - 2, color="#555555", va="top", ha="center",
                             annotation_clip=False)
            left.figure.add_artist(cap)
    return Drawn(ax=left, data=frame, axes=(left, right), parts={"polarization": pol, "tafel": taf, "caption": cap})


def _one_surface(frame, surface):
    """The surface to draw (the given one, or the first) and its rows."""
    s = _surfaces(frame, surface)[0] if surface is not None else frame["surface"].iloc[0]
    return s, frame[frame["surface"] == s]


def _lines_per_key(ax, frame, key: str, value: str, width: float) -> dict:
    """One line vs potential per distinct ``key`` (species or product), palette and dashes in order; {name: Line2D}."""
    lines = {}
    for k, name in enumerate(dict.fromkeys(frame[key])):
        g = frame[frame[key] == name].sort_values("potential")
        (lines[name],) = ax.plot(g["potential"], g[value], color=PALETTE[k % len(PALETTE)], ls=DASHES[k % len(DASHES)], lw=width, label=name)
    return lines


def plot_coverages(data, surface: str | None = None, ax=None, style: str = "notebook", log: bool = True, title: str | None = None, caption: bool = True):
    """Coverages of every species (and the empty site) vs potential on one surface (log axis by default).

    Returns a :class:`Drawn` (``parts``: ``lines`` {species: Line2D}, ``legend``, ``caption``).
    """
    frame = _frame(data, "coverage")
    p = preset(style)
    sc = frame.attrs.get("scale", "RHE")
    s, f = _one_surface(frame, surface)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        lines = _lines_per_key(ax, f, "species", "coverage", 1.6)
        if log:
            ax.set_yscale("log")
            ax.set_ylim(1e-12, 2.0)
        else:
            ax.set_ylim(-0.02, 1.02)
        ax.set_xlabel(f"potential U (V vs {sc})")
        ax.set_ylabel("coverage θ")
        ax.set_title(title or f"Coverages on {s} ({_conditions(frame)})")
        leg = ax.legend(fontsize=p.font_pt - 2, frameon=False)
        cap = _caption(ax, p, frame) if caption else None
    return Drawn(ax=ax, data=frame, parts={"lines": lines, "legend": leg, "caption": cap})


def plot_faradaic_efficiency(data, surface: str | None = None, ax=None, style: str = "notebook", title: str | None = None, caption: bool = True):
    """Faradaic efficiency of every product vs potential on one surface (gaps where |j| is ~0).

    Returns a :class:`Drawn` (``parts``: ``lines`` {product: Line2D}, ``legend``, ``caption``).
    """
    frame = _frame(data, "fe")
    p = preset(style)
    sc = frame.attrs.get("scale", "RHE")
    s, f = _one_surface(frame, surface)
    with style_context(p):
        if ax is None:
            _, ax = figure(p)
        lines = _lines_per_key(ax, f, "product", "faradaic_efficiency", 1.8)
        ax.set_ylim(-0.05, 1.05)
        ax.set_xlabel(f"potential U (V vs {sc})")
        ax.set_ylabel("faradaic efficiency")
        ax.set_title(title or f"Faradaic efficiency on {s} ({_conditions(frame)})")
        leg = ax.legend(fontsize=p.font_pt - 2, frameon=False)
        cap = _caption(ax, p, frame) if caption else None
    return Drawn(ax=ax, data=frame, parts={"lines": lines, "legend": leg, "caption": cap})
