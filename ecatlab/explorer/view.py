"""The explorer's figure: one Figure for the explorer's lifetime, artists moved on every change.

The diagram itself is drawn by :mod:`ecatlab.plotting.diagram` (static parts, legend, styles);
this module owns the Figure, rebuilds the Axes content when the pathway or the surface set
changes, and replaces the per-surface moving lines by **one artist per kind of line for all
surfaces** (a LineCollection each for the level bars, the connectors and the highlight of the
potential-determining steps, with the diagram's own colours and widths). A potential/pH move
sets the segments of these three artists from one array of levels and blits them over the cached
background: the cost of a move does not grow with the number of artists, only with the segments.

Two ways to show the Figure:

* ``"ipympl"`` (the ``%matplotlib widget`` backend is active): the Figure is made through pyplot
  with interactive mode off (so it is not shown twice) and its canvas is a widget; a change ends
  with ``fig.canvas.draw_idle()``.
* ``"inline"`` (any other backend, also no display at all): the Figure is a bare
  ``matplotlib.figure.Figure`` with an Agg canvas, never registered with pyplot (so the inline
  backend does not print it again at the end of a cell and no figure count grows). A change renders
  one PNG and replaces the content of a fixed-height ``Output`` widget: inside a kernel with
  ``clear_output(wait=True)`` + ``display`` (the old image stays until the new one arrives, so
  nothing flickers); outside a kernel (tests) by replacing ``Output.outputs`` in one assignment.
"""

from __future__ import annotations

import base64
import contextlib
import dataclasses
import io
import math
import struct
import zlib

import numpy as np

from ecatlab.plotting.style import HIGHLIGHT, preset, style_context

__all__ = ["DiagramView", "render_mode", "FIGURE_HEIGHT_PX"]

#: Height of the inline figure area (pixels); fixed so that replacing the image never moves the page.
FIGURE_HEIGHT_PX = 470
_DPI = 90
#: At most this many surfaces get a legend entry (the rest are summed up in one line).
MAX_LEGEND_SURFACES = 16
_PRESET = "notebook"


def render_mode(requested: str = "auto") -> str:
    """``"ipympl"`` when asked for or when the ipympl backend is active, else ``"inline"``."""
    if requested not in ("auto", "ipympl", "inline"):
        from ecatlab.errors import OptionError

        raise OptionError(f"render must be 'auto', 'ipympl' or 'inline', got {requested!r}")
    if requested != "auto":
        return requested
    import matplotlib

    backend = str(matplotlib.get_backend()).lower()
    return "ipympl" if ("ipympl" in backend or backend == "widget") else "inline"


def _references_line(state) -> str:
    """The reference part of the scheme description (same wording as the diagram captions)."""
    described = state.scheme.describe()
    refs = described.split(";")[1].strip() if ";" in described else described
    return "CHE, " + refs


def _png_chunk(tag: bytes, data: bytes) -> bytes:
    return struct.pack(">I", len(data)) + tag + data + struct.pack(">I", zlib.crc32(tag + data) & 0xFFFFFFFF)


def fast_png(rgba: np.ndarray) -> bytes:
    """Lossless PNG (8-bit RGB) of an (height, width, 4) uint8 RGBA buffer, built for speed.

    The live view sends one PNG per slider move. A general encoder tries five row filters per
    row and compresses harder; a rendered diagram (large flat areas) compresses almost as well
    without filtering, so this writer uses filter type 0 on every row and zlib level 1: about
    half the time of Pillow's ``compress_level=1`` at a similar size. The alpha channel is
    dropped (the figure background is opaque). Format: PNG specification, ISO/IEC 15948 (IHDR
    colour type 2, bit depth 8; IDAT zlib stream; CRC-32 per chunk).
    """
    rgb = np.asarray(rgba)[:, :, :3]
    height, width = rgb.shape[:2]
    raw = np.zeros((height, 3 * width + 1), dtype=np.uint8)  # first byte of each row: filter 0
    raw[:, 1:] = rgb.reshape(height, 3 * width)
    header = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    return (b"\x89PNG\r\n\x1a\n" + _png_chunk(b"IHDR", header) + _png_chunk(b"IDAT", zlib.compress(raw.tobytes(), 1))
            + _png_chunk(b"IEND", b""))


class _DrawnSeries:
    """What is drawn for one surface, read back from the shared collections (tests, exports).

    Attributes
    ----------
    levels : ndarray
        Drawn level of each state (eV), from the level collection's segments.
    n_states : int
    highlight_index : int or None
        0-based index of the highlighted (potential-determining) step, None when not drawn.
    """

    def __init__(self, view: "DiagramView", index: int, n_states: int):
        self._view = view
        self._index = index
        self.n_states = n_states

    @property
    def levels(self) -> np.ndarray:
        segments = self._view._levels.get_segments()[self._index * self.n_states : (self._index + 1) * self.n_states]
        return np.array([seg[0, 1] for seg in segments], dtype=float)

    @property
    def highlight_index(self):
        levels = self._view._current[self._index]
        for seg in self._view._highlights.get_segments():
            i = int(round(seg[0, 0] - 0.5)) if len(seg) else -1
            if 0 <= i < self.n_states - 1 and np.isclose(seg[0, 1], levels[i]) and np.isclose(seg[1, 1], levels[i + 1]):
                return i
        return None


def _in_kernel() -> bool:
    try:
        from IPython import get_ipython
    except ImportError:  # pragma: no cover - IPython comes with ipywidgets
        return False
    ip = get_ipython()
    return ip is not None and getattr(ip, "kernel", None) is not None


class DiagramView:
    """Owns the explorer Figure and keeps it in step with an :class:`ExplorerState`.

    Attributes
    ----------
    figure : Figure
    ax : Axes
    drawings : list
        One read-back view per shown surface, in the state's surface order (``levels``, ``n_states``);
        the moving lines themselves are three collections shared by all surfaces.
    mode : {"ipympl", "inline"}
    widget : ipywidgets widget
        What the explorer puts into its layout (the ipympl canvas, or a fixed-height Output).
    renders : int
        Number of finished redraws (for tests and benchmarks).
    """

    def __init__(self, mode: str = "inline", footnote: str = "", with_widget: bool = True):
        self.mode = mode
        p = preset(_PRESET)
        with style_context(p):
            if mode == "ipympl":
                import matplotlib.pyplot as plt

                with plt.ioff():
                    self.figure = plt.figure(figsize=p.figsize, dpi=_DPI)
                canvas = self.figure.canvas
                for attr, value in (("header_visible", False), ("toolbar_position", "left")):
                    if hasattr(canvas, attr):
                        setattr(canvas, attr, value)
                self.widget = canvas
            else:
                from matplotlib.backends.backend_agg import FigureCanvasAgg
                from matplotlib.figure import Figure

                self.figure = Figure(figsize=p.figsize, dpi=_DPI)
                FigureCanvasAgg(self.figure)
                self.widget = None
                if with_widget:
                    import ipywidgets as w

                    self.widget = w.Output(layout=w.Layout(height=f"{FIGURE_HEIGHT_PX}px", overflow="hidden"))
            self.ax = self.figure.add_axes((0.07, 0.19, 0.67, 0.66))
            self._footnote = self.figure.text(0.005, 0.005, footnote, fontsize=p.font_pt - 1, color="#555555", ha="left", wrap=True,
                                              va="bottom", linespacing=1.3)
        self.drawings: list = []
        self._originals: list = []
        self._dynamic: list = []
        self._background = None
        self._ylim = None
        self._exporting = False
        self.figure.canvas.mpl_connect("draw_event", self._on_draw)
        self.data = None
        self.renders = 0
        self.last_png: bytes | None = None

    # -- structure ------------------------------------------------------------------------------
    def rebuild(self, state, heading: str) -> None:
        """Redraw the Axes content for a new pathway or surface set (the Figure is kept)."""
        from matplotlib.lines import Line2D

        from ecatlab.plotting.diagram import DiagramData, DiagramSeries, plot_free_energy_diagram

        levels = state.levels()
        lim = state.readout()
        series = tuple(
            DiagramSeries(
                surface=s,
                potential=state.potential,
                potential_kind="value",
                levels=levels[j],
                step_dG=np.diff(levels[j]),
                determining_index=int(lim["determining_step_index"].iloc[j]) - 1,
                limiting_potential=float(lim["limiting_potential"].iloc[j]),
                overpotential=float(lim["overpotential"].iloc[j]),
            )
            for j, s in enumerate(state.surfaces)
        )
        self.data = DiagramData(
            pathway=state.pathway,
            state_labels=tuple(state.pathway.labels),
            series=series,
            scale=state.scale,
            pH=state.pH,
            temperature=state.temperature,
            equilibrium_potential=state.equilibrium_potential(),
            references=state.scheme.describe(),
            source=state.table.source,
        )
        self.ax.clear()
        p = preset(_PRESET)
        with style_context(p):
            plot_free_energy_diagram(None, None, data=self.data, ax=self.ax, style=p, annotate=False, highlight=True,
                                     title=heading, conditions=None, legend=False)
            # fixed title position: skips matplotlib's per-draw title placement
            self.ax.set_title(f"{heading}\n{_references_line(state)}", loc="left", y=1.0, pad=24)
            handles, labels = self.ax.get_legend_handles_labels()
            if len(handles) > MAX_LEGEND_SURFACES:  # a long legend is most of a full draw's text; the read-out lists all
                more = len(handles) - (MAX_LEGEND_SURFACES - 1)
                handles = handles[: MAX_LEGEND_SURFACES - 1] + [Line2D([], [], linestyle="none")]
                labels = labels[: MAX_LEGEND_SURFACES - 1] + [f"... and {more} more surfaces (see read-out)"]
            handles.append(Line2D([0, 1], [0, 0], color=HIGHLIGHT, linewidth=p.level_width_pt * 2.5, alpha=0.75))
            labels.append("potential-determining step")
            self.ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False,
                           fontsize=p.font_pt - 2, handlelength=2.4, borderaxespad=0.0)
            self._conditions = self.ax.text(0.0, 1.015, "", transform=self.ax.transAxes, ha="left", va="bottom",
                                            fontsize=p.font_pt - 1, color="#333333")
        self._combine(list(self.ax.ecatlab_drawings))
        self._heading = heading
        self._dynamic = [self._conditions, self._highlights, self._connectors, self._levels]
        for artist in self._dynamic:
            artist.set_animated(True)
        self._background = None
        self._ylim = None

    def _combine(self, drawings: list) -> None:
        """One LineCollection per kind of moving line for all surfaces, styled like the per-surface
        lines of the diagram (which are hidden, not drawn); ``drawings`` becomes read-back views."""
        from matplotlib.collections import LineCollection

        self._n_states = drawings[0].n_states if drawings else 0
        n = self._n_states
        level_x = [np.asarray(d.level_line.get_xdata(), dtype=float).reshape(n, 3)[:, :2] for d in drawings]
        link_x = [np.asarray(d.connector_line.get_xdata(), dtype=float).reshape(max(n - 1, 0), 3)[:, :2] for d in drawings]
        self._level_x = np.concatenate(level_x) if drawings else np.zeros((0, 2))  # (n_surfaces * n_states, 2)
        self._link_x = np.concatenate(link_x) if drawings else np.zeros((0, 2))
        first = drawings[0] if drawings else None

        def per_segment(getter, count):
            return [getter(d) for d in drawings for _ in range(count)]

        self._levels = LineCollection(
            [], colors=per_segment(lambda d: d.level_line.get_color(), n), linewidths=per_segment(lambda d: d.level_line.get_linewidth(), n),
            capstyle=first.level_line.get_solid_capstyle() if first else "round", zorder=first.level_line.get_zorder() if first else 2)
        self._connectors = LineCollection(
            [], colors=per_segment(lambda d: d.connector_line.get_color(), n - 1),
            linewidths=per_segment(lambda d: d.connector_line.get_linewidth(), n - 1),
            linestyles=first.connector_line.get_linestyle() if first else ":", zorder=first.connector_line.get_zorder() if first else 1)
        self._highlights = LineCollection(
            [], colors=[first.highlight_line.get_color()] if first else [HIGHLIGHT],
            linewidths=[first.highlight_line.get_linewidth()] if first else [3.0],
            alpha=first.highlight_line.get_alpha() if first else 0.75, capstyle="butt",
            zorder=first.highlight_line.get_zorder() if first else 0.5)
        for d in drawings:
            for artist in (d.level_line, d.connector_line, d.highlight_line):
                artist.set_visible(False)
        self._originals = drawings  # shown again, at the current levels, only while exporting
        for artist in (self._highlights, self._connectors, self._levels):
            self.ax.add_collection(artist, autolim=False)
        self.drawings = [_DrawnSeries(self, j, n) for j in range(len(drawings))]
        self._current = np.full((len(drawings), n), np.nan)

    # -- fast path --------------------------------------------------------------------------------
    def update(self, state) -> None:
        """Move the artists to the state's current levels and rewrite the conditions line."""
        levels = np.asarray(state.levels(), dtype=float)
        det = np.asarray(state.determining_steps()) - 1
        self._set_levels(levels, det)
        self._fit_ylim(levels)
        # plain text (no mathtext) so that the per-move text draw stays cheap; the reference
        # scheme, which does not move, is in the static title line
        self._conditions.set_text(state.conditions.describe())

    def _set_levels(self, levels: np.ndarray, det: np.ndarray) -> None:
        """Segments of the three moving collections from the (n_surfaces, n_states) levels, eV."""
        n_s, n = levels.shape
        self._current = levels.copy()
        if n_s == 0:
            return
        seg = np.empty((n_s * n, 2, 2))
        seg[:, :, 0] = self._level_x
        seg[:, :, 1] = levels.reshape(-1, 1)
        self._levels.set_segments(seg)
        link = np.empty((n_s * (n - 1), 2, 2))
        link[:, :, 0] = self._link_x
        link[:, 0, 1] = levels[:, :-1].reshape(-1)
        link[:, 1, 1] = levels[:, 1:].reshape(-1)
        self._connectors.set_segments(link)
        rows = np.flatnonzero((det >= 0) & (det < n - 1))
        self._highlights.set_segments(link.reshape(n_s, n - 1, 2, 2)[rows, det[rows]] if len(rows) else [])

    def _fit_ylim(self, levels: np.ndarray) -> None:
        """Sticky y-limits on a 0.5 eV grid: they change only when the levels leave them or fill
        less than 30 % of them, so most moves keep the cached background."""
        finite = levels[np.isfinite(levels)]
        if finite.size == 0:
            return
        lo, hi = float(finite.min()), float(finite.max())
        if self._ylim is not None:
            ylo, yhi = self._ylim
            if lo >= ylo and hi <= yhi and (hi - lo) >= 0.3 * (yhi - ylo):
                return
        span = max(hi - lo, 0.5)
        new = (math.floor((lo - 0.2 * span) / 0.5) * 0.5, math.ceil((hi + 0.2 * span) / 0.5) * 0.5)
        if new != self._ylim:
            self._ylim = new
            self.ax.set_ylim(*new)
            self._background = None

    def set_footnote(self, text: str) -> None:
        self._footnote.set_text(text)
        self._background = None

    # -- blitting ------------------------------------------------------------------------------------
    def _on_draw(self, event) -> None:
        """After every full draw (ours, or one the ipympl front end asks for): cache the static
        background and paint the moving artists on top."""
        if self._exporting or event is None or event.canvas is not self.figure.canvas:
            return
        canvas = self.figure.canvas
        if not hasattr(canvas, "copy_from_bbox"):
            return
        self._background = canvas.copy_from_bbox(self.figure.bbox)
        self._draw_dynamic()

    def _draw_dynamic(self) -> None:
        for artist in self._dynamic:
            if artist.get_visible():
                self.ax.draw_artist(artist)

    def redraw(self) -> None:
        """Finish the picture in the canvas buffer: a full draw when the background is stale,
        else restore the cached background and draw only the moving artists."""
        canvas = self.figure.canvas
        if self._background is None:
            canvas.draw()  # fires _on_draw: background cached, moving artists drawn
        else:
            canvas.restore_region(self._background)
            self._draw_dynamic()

    def present(self) -> None:
        """Finish the redraw and show it: ipympl blits; inline sends one PNG to the fixed-height Output."""
        if self.mode == "ipympl":
            stale = self._background is None
            self.redraw()
            if stale:
                self.figure.canvas.draw_idle()
            else:
                self.figure.canvas.blit(self.figure.bbox)
        else:
            self.redraw()
            self._show_png(self._encode_png())
        self.renders += 1

    def _encode_png(self) -> bytes:
        """The canvas buffer as PNG bytes (see :func:`fast_png`)."""
        canvas = self.figure.canvas
        self.last_png = fast_png(np.asarray(canvas.buffer_rgba()))
        return self.last_png

    def render_png(self) -> bytes:
        """The current picture as PNG bytes (full redraw)."""
        self._background = None
        self.redraw()
        return self._encode_png()

    @contextlib.contextmanager
    def exporting(self):
        """Within this block the moving artists are ordinary artists (so savefig draws them)."""
        self._exporting = True
        shared = (self._highlights, self._connectors, self._levels) if self._originals else ()
        for artist in self._dynamic:
            artist.set_animated(False)
        for artist in shared:  # exports keep one path per surface (as the static diagram draws them)
            artist.set_visible(False)
        for j, d in enumerate(self._originals):
            hi = self.drawings[j].highlight_index
            d.update(self._current[j], highlight_index=hi, rescale=False)
            d.level_line.set_visible(True)
            d.connector_line.set_visible(True)
        try:
            yield self.figure
        finally:
            for d in self._originals:
                for artist in (d.level_line, d.connector_line, d.highlight_line):
                    artist.set_visible(False)
            for artist in shared:
                artist.set_visible(True)
            for artist in self._dynamic:
                artist.set_animated(True)
            self._exporting = False
            self._background = None

    def _show_png(self, png: bytes) -> None:
        if self.widget is None:
            return
        if _in_kernel():
            from IPython.display import Image, clear_output, display

            with self.widget:
                clear_output(wait=True)
                display(Image(data=png, format="png"))
        else:
            self.widget.outputs = (
                {
                    "output_type": "display_data",
                    "data": {"image/png": base64.b64encode(png).decode("ascii"), "text/plain": "<ecatlab explorer diagram>"},
                    "metadata": {},
                },
            )
