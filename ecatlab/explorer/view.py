"""The explorer's figure: one Figure for the explorer's lifetime, artists moved on every change.

The diagram itself is drawn by :mod:`ecatlab.plotting.diagram` (its :class:`LevelDrawing` handles
move existing artists); this module only owns the Figure, rebuilds the Axes content when the
pathway or the surface set changes, and on a potential/pH move calls ``LevelDrawing.update`` per
surface and redraws.

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
    drawings : list of LevelDrawing
        One per shown surface, in the state's surface order.
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
            handles.append(Line2D([0, 1], [0, 0], color=HIGHLIGHT, linewidth=p.level_width_pt * 2.5, alpha=0.75))
            labels.append("potential-determining step")
            self.ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False,
                           fontsize=p.font_pt - 2, handlelength=2.4, borderaxespad=0.0)
            self._conditions = self.ax.text(0.0, 1.015, "", transform=self.ax.transAxes, ha="left", va="bottom",
                                            fontsize=p.font_pt - 1, color="#333333")
        self.drawings = list(self.ax.ecatlab_drawings)
        self._heading = heading
        self._dynamic = [self._conditions]
        for d in self.drawings:
            self._dynamic += [d.highlight_line, d.connector_line, d.level_line]
        for artist in self._dynamic:
            artist.set_animated(True)
        self._background = None
        self._ylim = None

    # -- fast path --------------------------------------------------------------------------------
    def update(self, state) -> None:
        """Move the artists to the state's current levels and rewrite the conditions line."""
        from ecatlab.plotting.diagram import conditions_text

        levels = state.levels()
        det = state.determining_steps() - 1
        for j, drawing in enumerate(self.drawings):
            drawing.update(levels[j], highlight_index=int(det[j]) if det[j] >= 0 else None, rescale=False)
        self._fit_ylim(levels)
        # plain text (no mathtext) so that the per-move text draw stays cheap; the reference
        # scheme, which does not move, is in the static title line
        self._conditions.set_text(state.conditions.describe())

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
        for artist in self._dynamic:
            artist.set_animated(False)
        try:
            yield self.figure
        finally:
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
