"""An Agg canvas that renders each text glyph once and reuses the bitmap (same pixels, less time).

Most of a full draw of the explorer's figure is text: title, legend, tick labels, footnote. Agg
lays out every string and asks FreeType to render every glyph on every draw, although nearly all
of them are the same from one draw to the next. :class:`GlyphCachingCanvas` keeps

* the **layout** of each string (glyph indices and advances for a font, size, dpi and hinting), and
* the **bitmap** of each glyph for its sub-pixel offset (position modulo one pixel, in FreeType's
  1/64 pixel units), its angle, size and anti-aliasing,

and composites the cached bitmap at the glyph's whole-pixel position with the same Agg call that
matplotlib uses. A glyph outline moved by whole pixels rasterises to the same coverage bitmap
moved by whole pixels, so the picture is the same, pixel for pixel (checked in
``tests/test_widgets.py`` against the plain Agg canvas). Mathtext strings use the same glyph cache
(their layout is already cached by matplotlib's parser).

A string drawn again at the same place (the static texts, on every full draw) is kept as a
**placed run**: its glyph bitmaps joined into one coverage bitmap (a few when glyphs ink the
same pixels, see :func:`_join`), composited in one call instead of one per glyph.
:func:`warm` prepares texts before their first draw (the explorer's rebuild calls it for the new
title, legend and tick labels): their own draw runs with compositing off, so the first full draw
finds layouts, glyph bitmaps and runs cached.

The cache relies on Agg internals of matplotlib >= 3.10 (``FT2Font._layout``, ``_render_glyph``,
``_set_transform``); :func:`supported` says whether they are present, and without them the plain
Agg canvas is used. Should one of them fail at draw time (a matplotlib release that changed them),
the canvas warns once, switches every caching canvas of the process to the plain Agg renderer
and draws again, so the explorer keeps working with the stock (slower) text path.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg, RendererAgg, get_hinting_flag
from matplotlib.font_manager import fontManager

__all__ = ["GlyphCachingCanvas", "supported", "warm", "clear", "MAX_GLYPHS"]

#: Cached glyph bitmaps at most (shared by every explorer in the process); cleared when full.
MAX_GLYPHS = 20000
_GLYPHS: dict = {}
_LAYOUTS: dict = {}
#: At most this many placed strings are kept (see :data:`_RUNS`); cleared when full.
MAX_RUNS = 4000
#: Placed strings: (layout key, x, y, angle, anti-aliasing, hinting, canvas height) -> what to
#: composite there: one joined coverage bitmap (see :func:`_join`) or the glyph bitmaps, each with
#: its pixel position. A string drawn at the same place again (every static text on every full
#: draw) costs one lookup and, mostly, one compositing call.
_RUNS: dict = {}
#: Placed strings drawn once so far (kept in :data:`_RUNS` from their second draw, or when warmed).
_SEEN: set = set()
#: Bumped whenever cached glyphs or strings are dropped: what :func:`warm` noted before is void.
_GENERATION = 0
#: Set when a glyph-level call failed at draw time: from then on the plain Agg renderer is used.
_DISABLED = False


def supported() -> bool:
    """True when this matplotlib's Agg backend has the glyph-level calls the cache needs."""
    try:
        from matplotlib.ft2font import FT2Font, RenderMode  # noqa: F401
    except ImportError:  # pragma: no cover - older matplotlib
        return False
    if _DISABLED:
        return False
    return all(hasattr(FT2Font, name) for name in ("_layout", "_render_glyph", "_set_transform")) and hasattr(
        RendererAgg, "_draw_text_glyphs_and_boxes")


class _CachingRenderer(RendererAgg):
    """RendererAgg whose text goes through the process-wide layout and glyph caches.

    While ``_dry`` is set (see :func:`warm`) text calls fill the caches but composite nothing;
    ``_warmed`` notes the texts :func:`warm` prepared on this renderer (cache generation, keys)."""

    _dry = False
    _warmed = (-1, frozenset())

    def draw_text(self, gc, x, y, s, prop, angle, ismath=False, mtext=None):
        if ismath:
            return self.draw_mathtext(gc, x, y, s, prop, angle)
        size = prop.get_size_in_points()
        key, items = self._layout_items(s, prop, mtext)
        self._glyph_run(gc, x, y, angle, ((font, size, index, dx, dy) for font, index, dx, dy in items), run=key)

    def _layout_items(self, s, prop, mtext):
        """Layout-cache key and (font, glyph index, dx, dy) of each glyph of the plain string ``s``."""
        features = mtext.get_fontfeatures() if mtext is not None else None
        language = mtext.get_language() if mtext is not None else None
        flags = get_hinting_flag()
        key = (tuple(fontManager._find_fonts_by_props(prop)), prop.get_size_in_points(), self.dpi, s, flags,
               None if features is None else tuple(features), language)
        items = _LAYOUTS.get(key)
        if items is None:
            font = self._prepare_font(prop)
            items = tuple((it.ft_object, it.glyph_index, it.x, it.y)
                          for it in font._layout(s, flags=flags, features=features, language=language))
            if len(_LAYOUTS) > MAX_GLYPHS:
                clear()
            _LAYOUTS[key] = items
        return key, items

    def draw_mathtext(self, gc, x, y, s, prop, angle):
        parse = self.mathtext_parser.parse(s, self.dpi, prop, antialiased=gc.get_antialiased())
        self._glyph_run(gc, x, y, angle, ((font, size, index, dx, dy) for font, size, _c, index, dx, dy in parse.glyphs))
        if parse.rects and not self._dry:  # fraction bars and the like: matplotlib's own box drawing
            self._draw_text_glyphs_and_boxes(gc, x, y, angle, (), parse.rects)

    def _glyph_run(self, gc, x, y, angle, glyphs, run=None) -> None:
        """Composite glyphs (font, size pt, glyph index, dx, dy px; dy upwards) at (x, y) (y downwards).

        ``run``: the layout key of the string, when the glyphs are one; the string's placed
        bitmaps at this exact (x, y) are then kept as one run (see :data:`_RUNS`)."""
        from matplotlib.ft2font import RenderMode

        antialiased = gc.get_antialiased()
        flags = get_hinting_flag()
        height = self.height
        draw = self._renderer.draw_text_image
        run_key = None if run is None else (run, x, y, angle, antialiased, flags, height)
        placed = _RUNS.get(run_key) if run_key is not None else None
        if placed is not None:
            if not self._dry:
                for buffer, left, bottom in placed:
                    draw(buffer, left, bottom, 0, gc)
            return
        cos = math.cos(math.radians(angle))
        sin = math.sin(math.radians(angle))
        matrix = None
        placed = []
        for font, size, index, dx, dy in glyphs:
            # FreeType position in 26.6 fixed point, as matplotlib computes it
            px = round(0x40 * (x + dx * cos - dy * sin))
            py = round(0x40 * (height - y + dx * sin + dy * cos))
            key = (font, size, self.dpi, index, angle, px & 63, py & 63, antialiased, flags)
            hit = _GLYPHS.get(key)
            if hit is None:
                if matrix is None:
                    matrix = (0x10000 * np.array([[cos, -sin], [sin, cos]])).round().astype(int)
                font.set_size(size, self.dpi)
                font._set_transform(matrix, [px & 63, py & 63])
                bitmap = font._render_glyph(index, flags, RenderMode.NORMAL if antialiased else RenderMode.MONO)
                buffer = np.array(bitmap.buffer, copy=True)
                if not antialiased:
                    buffer *= 0xFF
                hit = (buffer, bitmap.left, bitmap.top, int(np.count_nonzero(buffer)))
                if len(_GLYPHS) > MAX_GLYPHS:
                    clear()
                _GLYPHS[key] = hit
            buffer, left, top, inked = hit
            # the bitmap was rendered at the sub-pixel offset only: move it by the whole pixels
            placed.append((buffer, left + (px >> 6), int(height) - (top + (py >> 6)) + buffer.shape[0], inked))
        if run_key is not None:
            if self._dry or run_key in _SEEN:  # warmed, or drawn before at this place: keep the run
                placed = _join(placed)
                if len(_RUNS) > MAX_RUNS:
                    clear()
                _RUNS[run_key] = placed
                _SEEN.discard(run_key)
            else:  # a string drawn once (a conditions line that moves on) is not worth keeping yet
                if len(_SEEN) > MAX_RUNS:
                    _SEEN.clear()
                _SEEN.add(run_key)
        if not self._dry:
            for buffer, left, bottom, *_ in placed:
                draw(buffer, left, bottom, 0, gc)


def _join(placed: list) -> tuple:
    """A string's placed glyph bitmaps (buffer, left, bottom, inked pixels) as few coverage bitmaps,
    each holding glyphs that ink disjoint pixels; to be composited in order (buffer, left, bottom).

    Agg's text compositing (``draw_text_image``) blends the text colour into each pixel with the
    bitmap's coverage as weight, and leaves a pixel with coverage 0 untouched. Glyphs whose inked
    pixels are disjoint can therefore share one bitmap (each glyph's coverage in its own pixels, 0
    elsewhere): every pixel gets the very same blend, in one call instead of one per glyph. Where
    two glyphs ink the same pixel (close pairs such as "ff"), the later one must blend on top of
    the earlier one: it goes into a later bitmap than every earlier glyph it touches, so each
    pixel sees its blends in the original order."""
    shown = [(b, left, bottom) for b, left, bottom, inked in placed if inked]
    if len(shown) < 2:
        return tuple(shown)
    x0 = min(left for _b, left, _y in shown)
    x1 = max(left + b.shape[1] for b, left, _y in shown)
    y0 = min(bottom - b.shape[0] for b, _x, bottom in shown)
    y1 = max(bottom for _b, _x, bottom in shown)
    layers: list = []
    for b, left, bottom in shown:
        rows = slice(bottom - b.shape[0] - y0, bottom - y0)
        cols = slice(left - x0, left - x0 + b.shape[1])
        inked = b != 0
        # above the last layer holding an earlier glyph that inks one of these pixels
        level = 0
        for i in range(len(layers) - 1, -1, -1):
            if np.any(layers[i][rows, cols][inked]):
                level = i + 1
                break
        if level == len(layers):
            layers.append(np.zeros((y1 - y0, x1 - x0), dtype=np.uint8))
        region = layers[level][rows, cols]
        np.maximum(region, b, out=region)
    return tuple((layer, x0, y1) for layer in layers)


class GlyphCachingCanvas(FigureCanvasAgg):
    """FigureCanvasAgg whose renderer reuses text layouts and glyph bitmaps (see module docstring)."""

    def get_renderer(self):
        if _DISABLED:
            if isinstance(getattr(self, "renderer", None), _CachingRenderer):
                self._lastKey = None  # the plain renderer from here on
            return super().get_renderer()
        w, h = self.get_width_height(physical=True)
        key = w, h, self.figure.dpi
        if self._lastKey != key or not isinstance(getattr(self, "renderer", None), _CachingRenderer):
            self.renderer = _CachingRenderer(w, h, self.figure.dpi)
            self._lastKey = key
        return self.renderer

    def draw(self):
        global _DISABLED
        if not _DISABLED:
            try:
                return super().draw()
            except (AttributeError, TypeError, ValueError, IndexError, KeyError) as exc:
                _DISABLED = True
                clear()
                warnings.warn(f"ecatlab explorer: the cached text renderer failed ({type(exc).__name__}: {exc}); "
                              "drawing with matplotlib's plain Agg renderer from now on", RuntimeWarning, stacklevel=2)
        return super().draw()


def warm(renderer, texts) -> None:
    """Prepare the text of ``texts`` (matplotlib ``Text`` artists) for their next draw on ``renderer``,
    without drawing anything: matplotlib's text metrics (its own cache), the parse of mathtext
    lines (its parser's cache) and, with a caching renderer, each line's glyph layout and the
    glyph bitmaps at the positions the texts will be drawn at (this module's caches).

    With a caching renderer each text goes through its own ``Text.draw`` with compositing turned
    off (a "dry" draw: the same code path, so the same positions and cache keys as the real draw;
    the canvas buffer is not touched). For new content (the explorer's rebuild): the first full
    draw then finds every cache filled. Texts with a box patch, path effects or TeX are skipped
    (their draw paints more than glyphs). Should a private call fail here, warming stops quietly;
    the draw meets the same failure and falls back to the plain renderer with its warning.
    """
    caching = isinstance(renderer, _CachingRenderer) and not _DISABLED
    try:
        if caching:
            renderer._dry = True
        for text in texts:
            if (not text.get_visible() or not text.get_text() or text.get_usetex() or text.get_path_effects()
                    or text.get_bbox_patch() is not None):
                continue
            if not caching:
                text._get_layout(renderer)
                continue
            # a text warmed before on this renderer (matplotlib keeps its text metrics per renderer)
            # with the same string, font, alignment and anchor point is prepared already; a wrong
            # match costs only a cold draw, never a wrong pixel (the draw looks everything up by
            # its own keys)
            key = (text.get_text(), hash(text.get_fontproperties()), text.get_rotation(),
                   text.get_horizontalalignment(), text.get_verticalalignment(), text.get_rotation_mode(),
                   text.get_linespacing(), text.get_antialiased(),
                   tuple(text.get_transform().transform(text.get_unitless_position())))
            generation, warmed = renderer._warmed
            if generation != _GENERATION or len(warmed) > MAX_RUNS:
                warmed = set()
                renderer._warmed = (_GENERATION, warmed)
            if key in warmed:
                continue
            text.draw(renderer)
            warmed.add(key)
    except (AttributeError, TypeError, ValueError, IndexError, KeyError):
        return
    finally:
        if caching:
            renderer._dry = False


def clear() -> None:
    """Forget every cached layout, glyph bitmap and placed string."""
    global _GENERATION
    _GLYPHS.clear()
    _LAYOUTS.clear()
    _RUNS.clear()
    _SEEN.clear()
    _GENERATION += 1
