"""The explorer's figure: one Figure for the explorer's lifetime, artists moved on every change.

The diagram itself is drawn by :mod:`ecatlab.plotting.diagram` (static parts, styles; its
``Drawn`` handle gives the per-series drawings); this module owns the Figure, rebuilds the Axes
content when the pathway or the surface set changes, and replaces the per-surface moving lines by
**one artist per kind of line for all surfaces** (a LineCollection each for the level bars, the
connectors and the highlight of the potential-determining steps, with the diagram's own colours,
dash patterns and widths; one path per surface, the paths being views of three vertex arrays). A
potential/pH move writes the new heights into those arrays and blits the three collections and
the conditions line over the cached background: the cost of a move does not grow with the number
of artists, only with the segments.

Full draws are kept cheap too: text glyphs are rendered once and reused
(:mod:`ecatlab.explorer.textcache`, same pixels), the legend is a light list
(:mod:`ecatlab.explorer.legend`) whose pixels later full draws paste back, the axis labels sit at
fixed positions, and the PNG writer deflates the rows outside the moving band once per background.

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
#: Position of the Axes in figure fractions (left, bottom, width, height) before room is made for
#: rotated state labels.
_AXES_RECT = (0.07, 0.19, 0.67, 0.66)
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


def _volts(value: float) -> str:
    """``-0.912`` -> ``"−0.91 V"`` (Unicode minus), ``"n/a"`` when not finite."""
    if not math.isfinite(value):
        return "n/a"
    return f"{value:.2f} V".replace("-", "\N{MINUS SIGN}")


def _split_conditions(text: str) -> tuple[str, str]:
    """``"U = +0.800 V vs RHE, pH 0, ..."`` -> ``("U = +0.800", " V vs RHE, pH 0, ...")``."""
    head, sep, rest = text.partition(" V vs ")
    return (head, sep + rest) if sep else (text, "")


def _png_chunk(tag: bytes, data: bytes) -> bytes:
    return struct.pack(">I", len(data)) + tag + data + struct.pack(">I", zlib.crc32(tag + data) & 0xFFFFFFFF)


def _sub_filtered(pixels: np.ndarray) -> np.ndarray:
    """PNG scanlines of an (rows, width, 4) uint8 block: filter byte 1 ("Sub") + each byte minus the
    same byte of the pixel to its left, modulo 256 (uint8 arithmetic wraps, as PNG requires)."""
    height, width = pixels.shape[:2]
    flat = pixels.reshape(height, 4 * width)
    raw = np.empty((height, 4 * width + 1), dtype=np.uint8)
    raw[:, 0] = 1
    raw[:, 1:5] = flat[:, :4]  # the first pixel has no left neighbour (taken as 0)
    np.subtract(flat[:, 4:], flat[:, :-4], out=raw[:, 5:])
    return raw


def _png_file(width: int, height: int, zlib_stream: bytes) -> bytes:
    header = struct.pack(">IIBBBBB", width, height, 8, 6, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + _png_chunk(b"IHDR", header) + _png_chunk(b"IDAT", zlib_stream) + _png_chunk(b"IEND", b"")


def fast_png(rgba: np.ndarray) -> bytes:
    """Lossless PNG (8-bit RGBA) of an (height, width, 4) uint8 RGBA buffer, built for speed.

    The live view sends one PNG per slider move. A general encoder tries five row filters per
    row and compresses harder; a rendered diagram (large flat areas) compresses well with one
    fixed filter, so this writer uses filter type 1 ("Sub": each byte minus the same byte of the
    pixel to its left, modulo 256) on every row, computed with one numpy subtraction straight on
    the renderer's RGBA buffer (no copy to RGB first), and zlib level 1. Flat areas, and the
    opaque alpha channel, become runs of zeros, which zlib passes fastest. Format: PNG
    specification, ISO/IEC 15948 (IHDR colour type 6, bit depth 8; filter method 0, type 1; IDAT
    zlib stream, RFC 1950/1951; CRC-32 per chunk).
    """
    pixels = np.ascontiguousarray(rgba, dtype=np.uint8)
    return _png_file(pixels.shape[1], pixels.shape[0], zlib.compress(_sub_filtered(pixels), 1))


class _BandedPng:
    """PNG writer for pictures whose rows outside one band do not change between calls.

    The rows above and below the band are filtered and deflated once (each as its own run of
    deflate blocks, ended by a full flush so that no back-reference crosses into the next run; the
    last run ends the stream); a call filters and deflates only the band and joins the runs into
    one zlib stream (RFC 1950: header, deflate data, Adler-32 of all scanlines). The result is
    the same picture as :func:`fast_png` (decoders see one ordinary stream).
    """

    def __init__(self, pixels: np.ndarray, band: tuple[int, int]):
        top, bottom = band
        self.band = band
        self.shape = pixels.shape
        above = _sub_filtered(pixels[:top])
        below = _sub_filtered(pixels[bottom:])
        self._above = self._deflate(above, last=False)
        self._above_adler = zlib.adler32(above)
        self._below_raw = below
        self._below = self._deflate(below, last=True)

    @staticmethod
    def _deflate(raw: np.ndarray, last: bool) -> bytes:
        packer = zlib.compressobj(1, zlib.DEFLATED, -15)
        return packer.compress(raw) + packer.flush(zlib.Z_FINISH if last else zlib.Z_FULL_FLUSH)

    def encode(self, pixels: np.ndarray) -> bytes:
        top, bottom = self.band
        middle = _sub_filtered(pixels[top:bottom])
        adler = zlib.adler32(self._below_raw, zlib.adler32(middle, self._above_adler))
        stream = b"\x78\x01" + self._above + self._deflate(middle, last=False) + self._below + struct.pack(">I", adler)
        return _png_file(self.shape[1], self.shape[0], stream)


class _DrawnSeries:
    """What is drawn for one surface, read back from the shared collections (tests, exports).

    Attributes
    ----------
    levels : ndarray
        Drawn level of each state (eV), read from the vertices of this surface's path in the
        level collection (the path the renderer draws).
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
        vertices = self._view._levels.get_paths()[self._index].vertices
        return np.array(vertices[0::3, 1], dtype=float)

    @property
    def highlight_index(self):
        vertices = self._view._highlights.get_paths()[self._index].vertices
        if not np.all(np.isfinite(vertices)):
            return None
        levels = self.levels
        i = int(round(vertices[0, 0] - 0.5))
        if 0 <= i < self.n_states - 1 and np.isclose(vertices[0, 1], levels[i]) and np.isclose(vertices[1, 1], levels[i + 1]):
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

                from ecatlab.explorer import textcache

                self.figure = Figure(figsize=p.figsize, dpi=_DPI)
                # glyph bitmaps rendered once and reused (same pixels): most of a full draw is text
                (textcache.GlyphCachingCanvas if textcache.supported() else FigureCanvasAgg)(self.figure)
                self.widget = None
                if with_widget:
                    import ipywidgets as w

                    self.widget = w.Output(layout=w.Layout(height=f"{FIGURE_HEIGHT_PX}px", overflow="hidden"))
            self.ax = self.figure.add_axes(_AXES_RECT)
            self._footnote = self.figure.text(0.005, 0.005, footnote, fontsize=p.font_pt - 1, color="#555555", ha="left", wrap=True,
                                              va="bottom", linespacing=1.3)
        self.drawings: list = []
        self._originals: list = []
        self._dynamic: list = []
        self._background = None
        self._legend = None
        self._legend_pixels = None
        self._background_version = 0
        self._png_key = None
        self._ylim = None
        self._exporting = False
        self.figure.canvas.mpl_connect("draw_event", self._on_draw)
        self.data = None
        self.renders = 0
        self.last_png: bytes | None = None

    # -- structure ------------------------------------------------------------------------------
    def rebuild(self, state, heading: str) -> None:
        """Redraw the Axes content for a new pathway or surface set (the Figure is kept)."""
        from ecatlab.explorer.legend import ListLegend
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
        # remove the old content but keep the Axes' tick objects (ax.clear() would make the next draw
        # build every Tick again, a noticeable part of the first full draw after a rebuild)
        for artist in [*self.ax.lines, *self.ax.collections, *self.ax.texts, *self.ax.artists, *self.ax.patches, *self.ax.images]:
            artist.remove()
        self.ax.set_title("", loc="left")
        for label in self.ax.xaxis.get_ticklabels(which="both"):  # the diagram rotates crowded state labels; start upright
            label.set_rotation(0)
            label.set_horizontalalignment("center")
            label.set_rotation_mode("default")
        p = preset(_PRESET)
        with style_context(p):
            drawn = plot_free_energy_diagram(None, None, data=self.data, ax=self.ax, style=p, annotate=False, highlight=True,
                                             title=heading, conditions=None, legend=False)
            # fixed title position: skips matplotlib's per-draw title placement
            self.ax.set_title(f"{heading}\n{_references_line(state)}", loc="left", y=1.0, pad=24)
            drawings = list(drawn.parts["series"])
            # U_L in a header row (one mathtext string, parsed once per process) and plain numbers in
            # the rows: parsing a mathtext label per surface was most of a first draw after a rebuild
            entries = [(d.level_line.get_color(), d.linestyle, d.level_line.get_linewidth(), 1.0,
                        f"{s.surface}   {_volts(s.limiting_potential)}") for d, s in zip(drawings, series)]
            if len(entries) > MAX_LEGEND_SURFACES:  # a long legend is most of a full draw's text; the read-out lists all
                more = len(entries) - (MAX_LEGEND_SURFACES - 1)
                entries = entries[: MAX_LEGEND_SURFACES - 1] + [(None, "-", 0.0, 0.0, f"... {more} more (see read-out)")]
            entries.insert(0, (None, "-", 0.0, 0.0, f"surface   $U_\\mathrm{{L}}$ (V vs {state.scale})"))
            several = len(series) > 1
            entries.append(("#9a9a9a" if several else HIGHLIGHT, "-", p.level_width_pt * 2.5, 0.5 if several else 0.75,
                            "potential-determining step"))
            if several:  # on its own row: one long label would run past the figure's right edge
                entries.append((None, "-", 0.0, 0.0, "(band in each surface's colour)"))
            self._legend = ListLegend(self.ax, entries, fontsize=p.font_pt - 2)
            self.ax.add_artist(self._legend)
            # fixed axis-label positions: matplotlib would otherwise measure every tick label on each
            # full draw to place them (the y label sits left of the widest tick label, "−2.5")
            self.ax.yaxis.set_label_coords(-0.075, 0.5)
            self.ax.xaxis.set_label_coords(0.5, -0.12)
            # the conditions line in two texts: "U = +0.800" (the part a potential move changes, short,
            # so its layout is cheap) and the rest, placed at the right end of the first
            self._conditions = self.ax.text(0.0, 1.015, "", transform=self.ax.transAxes, ha="left", va="bottom",
                                            fontsize=p.font_pt - 1, color="#333333")
            self._conditions_rest = self.ax.annotate("", xy=(1.0, 0.0), xycoords=self._conditions, ha="left", va="bottom",
                                                     fontsize=p.font_pt - 1, color="#333333", annotation_clip=False)
        self._make_room_for_state_labels()
        self._combine(list(drawn.parts["series"]))
        self._heading = heading
        self._dynamic = [self._conditions, self._conditions_rest, self._highlights, self._connectors, self._levels]
        for artist in self._dynamic:
            artist.set_animated(True)
        self._background = None
        self._legend_pixels = None
        self._ylim = None
        # the y-limits the update that follows every rebuild sets for these levels (it then keeps
        # them), set here so that the tick labels they bring can be warmed with the rest
        self._fit_ylim(np.asarray(levels, dtype=float))
        self._warm_text()

    def _warm_text(self) -> None:
        """Prepare the texts the new content brings (title, legend rows, state and tick labels) now,
        so that the first full draw after a rebuild finds their layouts and glyph bitmaps in the
        text caches (:func:`ecatlab.explorer.textcache.warm`; nothing is drawn). This is mostly
        work the first draw would otherwise do (text layout, glyph rendering): it moves into the
        rebuild; a text prepared before at the same place is skipped."""
        if self.mode != "inline":
            return
        from ecatlab.explorer import textcache

        ax = self.ax
        titles = [getattr(ax, name, None) for name in ("title", "_left_title", "_right_title")]  # left: the heading
        texts = [*(t for t in titles if t is not None), ax.xaxis.label, ax.yaxis.label, *self._legend.texts,
                 *ax.xaxis.get_ticklabels(), *ax.yaxis.get_ticklabels()]
        textcache.warm(self.figure.canvas.get_renderer(), texts)

    def _make_room_for_state_labels(self) -> None:
        """Raise the Axes bottom when the state labels under them (rotated when crowded) would reach
        down into the footnote; the top of the Axes stays (legend and title do not move)."""
        left, bottom, width, height = _AXES_RECT
        self.ax.set_position(_AXES_RECT)
        renderer = self.figure.canvas.get_renderer()
        labels = [t for t in self.ax.get_xticklabels() if t.get_text()]
        if not labels or not self._footnote.get_text():
            return
        # the size of a (rotated) label's box does not depend on where it is drawn
        drop = max(t.get_window_extent(renderer).height for t in labels)
        pad = (self.ax.xaxis.get_tick_padding() + 3.0) * self.figure.dpi / 72.0
        lowest = bottom * self.figure.bbox.height - pad - drop
        ceiling = self._footnote.get_window_extent(renderer).y1 + 3.0
        if lowest < ceiling:
            shift = min((ceiling - lowest) / self.figure.bbox.height, 0.5 * height)
            self.ax.set_position((left, bottom + shift, width, height - shift))

    def _combine(self, drawings: list) -> None:
        """One LineCollection per kind of moving line for all surfaces, styled like the per-surface
        lines of the diagram (which are hidden, not drawn); ``drawings`` becomes read-back views.

        Each collection holds one path per surface (its level bars, or its connectors, joined by
        NaN breaks as in the diagram's own lines; the highlight: one segment). The paths are views
        of three vertex arrays made here, so a move writes the new heights into those arrays with
        a few numpy assignments: no Path object is made per move.
        """
        from matplotlib.collections import LineCollection
        from matplotlib.colors import to_rgba

        n = drawings[0].n_states if drawings else 0
        self._n_states = n
        n_s = len(drawings)
        links = max(n - 1, 0)
        self._level_v = np.full((n_s, 3 * n, 2), np.nan)
        self._link_v = np.full((n_s, 3 * links, 2), np.nan)
        self._high_v = np.full((n_s, 2, 2), np.nan)
        for j, d in enumerate(drawings):
            self._level_v[j, :, 0] = np.asarray(d.level_line.get_xdata(), dtype=float)[: 3 * n]
            self._link_v[j, :, 0] = np.asarray(d.connector_line.get_xdata(), dtype=float)[: 3 * links]
        # x of each connector's two ends, (n_surfaces, n_steps, 2): where a highlight goes
        self._link_x = np.stack([self._link_v[:, 0::3, 0], self._link_v[:, 1::3, 0]], axis=-1)
        first = drawings[0] if drawings else None

        # colour and dash pattern of each surface as the diagram drew it (so the legend matches)
        self._levels = LineCollection(
            [], colors=[d.level_line.get_color() for d in drawings], linewidths=[d.level_line.get_linewidth() for d in drawings],
            linestyles=[d.linestyle for d in drawings] or "-",
            capstyle=first.level_line.get_solid_capstyle() if first else "round", zorder=first.level_line.get_zorder() if first else 2)
        self._connectors = LineCollection(
            [], colors=[d.connector_line.get_color() for d in drawings],
            linewidths=[d.connector_line.get_linewidth() for d in drawings],
            linestyles=first.connector_line.get_linestyle() if first else ":", zorder=first.connector_line.get_zorder() if first else 1)
        # the determining-step band in each surface's colour and opacity, as the diagram drew it
        self._highlights = LineCollection(
            [], colors=[to_rgba(d.highlight_line.get_color(), d.highlight_line.get_alpha()) for d in drawings] or [HIGHLIGHT],
            linewidths=[d.highlight_line.get_linewidth() for d in drawings] or [3.0], capstyle="butt",
            zorder=first.highlight_line.get_zorder() if first else 0.5)
        self._shared = ((self._levels, self._level_v), (self._connectors, self._link_v), (self._highlights, self._high_v))
        for collection, vertices in self._shared:
            collection.set_segments(list(vertices))
        # the collections' paths must be views of the arrays (true for matplotlib's LineCollection
        # with float64 input); if a matplotlib version copies, every move sets the segments again
        self._in_place = all(np.shares_memory(c.get_paths()[0].vertices, v) for c, v in self._shared if len(v))
        for d in drawings:
            for artist in (d.level_line, d.connector_line, d.highlight_line):
                artist.set_visible(False)
        self._originals = drawings  # shown again, at the current levels, only while exporting
        for artist in (self._highlights, self._connectors, self._levels):
            self.ax.add_collection(artist, autolim=False)
        self.drawings = [_DrawnSeries(self, j, n) for j in range(n_s)]
        self._current = np.full((n_s, n), np.nan)

    # -- fast path --------------------------------------------------------------------------------
    def update(self, state) -> None:
        """Move the artists to the state's current levels and rewrite the conditions line."""
        levels = np.asarray(state.levels(), dtype=float)
        det = np.asarray(state.determining_steps()) - 1
        self._set_levels(levels, det)
        self._fit_ylim(levels)
        # plain text (no mathtext) so that the per-move text draw stays cheap; the reference
        # scheme, which does not move, is in the static title line
        head, rest = _split_conditions(state.conditions.describe())
        self._conditions.set_text(head)
        self._conditions_rest.set_text(rest)

    def _set_levels(self, levels: np.ndarray, det: np.ndarray) -> None:
        """Heights of the three moving collections from the (n_surfaces, n_states) levels, eV, and
        the 0-based determining step of each surface (outside 0..n_steps-1: no highlight)."""
        n_s, n = levels.shape
        self._current = levels.copy()
        if n_s == 0:
            return
        self._level_v[:, 0::3, 1] = levels
        self._level_v[:, 1::3, 1] = levels
        self._link_v[:, 0::3, 1] = levels[:, :-1]
        self._link_v[:, 1::3, 1] = levels[:, 1:]
        ok = (det >= 0) & (det < n - 1)
        step = np.where(ok, det, 0)
        rows = np.arange(n_s)
        self._high_v[:, :, 0] = self._link_x[rows, step]
        self._high_v[:, 0, 1] = levels[rows, step]
        self._high_v[:, 1, 1] = levels[rows, np.minimum(step + 1, n - 1)]
        self._high_v[~ok] = np.nan
        for collection, vertices in self._shared:
            if self._in_place:
                collection.stale = True
            else:  # pragma: no cover - only for a matplotlib that copies segments
                collection.set_segments(list(vertices))

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
        self._legend_pixels = None

    # -- blitting ------------------------------------------------------------------------------------
    def _on_draw(self, event) -> None:
        """After every full draw (ours, or one the ipympl front end asks for): cache the static
        background and paint the moving artists on top."""
        if self._exporting or event is None or event.canvas is not self.figure.canvas:
            return
        canvas = self.figure.canvas
        if not hasattr(canvas, "copy_from_bbox"):
            return
        legend = getattr(self, "_legend", None)
        if legend is not None and self._legend_pixels is not None and not legend.get_visible():
            canvas.restore_region(self._legend_pixels)  # the legend as drawn by the last full draw
        self._background = canvas.copy_from_bbox(self.figure.bbox)
        self._background_version += 1  # what the PNG writer's cached rows belong to
        if legend is not None and self._legend_pixels is None and legend.get_visible() and self.mode == "inline":
            self._legend_pixels = canvas.copy_from_bbox(self._legend_box(legend))
        self._draw_dynamic()

    def _legend_box(self, legend):
        """The legend's pixel box (its rows, see :meth:`ListLegend.rows_box`), clipped to the figure
        and kept right of the Axes. Nothing else is drawn there: the legend sits right of
        the Axes, below the title (checked in tests/test_widgets.py against a drawn legend)."""
        from matplotlib.transforms import Bbox

        box = legend.rows_box()
        fig = self.figure.bbox
        # never into the Axes (their content changes with the y-limits): start right of their edge
        left = max(box.x0 - 2, math.ceil(self.ax.bbox.x1) + 1, fig.x0)
        return Bbox.from_extents(left, max(box.y0 - 2, fig.y0), min(box.x1 + 2, fig.x1), min(box.y1 + 2, fig.y1))

    def _draw_dynamic(self) -> None:
        for artist in self._dynamic:
            if artist.get_visible():
                self.ax.draw_artist(artist)

    def redraw(self) -> None:
        """Finish the picture in the canvas buffer: a full draw when the background is stale,
        else restore the cached background and draw only the moving artists.

        The legend (up to 17 entries of text, the largest static part) does not change between
        rebuilds: the first full draw after a rebuild draws it and keeps its pixels; later full
        draws (new y-limits) leave it out and paste those pixels back (inline mode only)."""
        canvas = self.figure.canvas
        if self._background is None:
            legend = getattr(self, "_legend", None)
            paste = legend is not None and self._legend_pixels is not None and self.mode == "inline"
            if paste:
                legend.set_visible(False)
            try:
                canvas.draw()  # fires _on_draw: legend pasted, background cached, moving artists drawn
            finally:
                if paste:
                    legend.set_visible(True)
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
        """The canvas buffer as PNG bytes (see :func:`fast_png`).

        After a full draw the rows outside the moving artists' band (title above; tick labels,
        footnote below) are encoded once (:class:`_BandedPng`) and the band is added to them; moves
        on that background encode only the band again."""
        pixels = np.asarray(self.figure.canvas.buffer_rgba())
        key = (self._background_version, pixels.shape)
        if self._background is not None and getattr(self, "_png_key", None) == key:
            self.last_png = self._png_cache.encode(pixels)
            return self.last_png
        band = self._moving_band(pixels.shape[0]) if self._background is not None else None
        if band is None:
            self._png_key = None
            self.last_png = fast_png(pixels)
            return self.last_png
        # the rows outside the band are deflated once, here, and the band: each row once per full draw
        self._png_cache, self._png_key = _BandedPng(pixels, band), key
        self.last_png = self._png_cache.encode(pixels)
        return self.last_png

    def _moving_band(self, height: int) -> tuple[int, int] | None:
        """Rows (top, bottom; 0 at the top) the moving artists can touch: the Axes (the line
        collections are clipped to them) and the conditions line, grown by 3 px; None if unknown."""
        try:
            renderer = self.figure.canvas.get_renderer()
            boxes = [self.ax.bbox] + [t.get_window_extent(renderer) for t in (self._conditions, self._conditions_rest)]
        except Exception:  # pragma: no cover - no renderer yet
            return None
        y0 = min(b.y0 for b in boxes)
        y1 = max(b.y1 for b in boxes)
        top = max(0, int(math.floor(height - y1)) - 3)
        bottom = min(height, int(math.ceil(height - y0)) + 3)
        return (top, bottom) if 0 < top < bottom < height else None

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
