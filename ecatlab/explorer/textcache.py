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

__all__ = ["GlyphCachingCanvas", "supported", "clear", "MAX_GLYPHS"]

#: Cached glyph bitmaps at most (shared by every explorer in the process); cleared when full.
MAX_GLYPHS = 20000
_GLYPHS: dict = {}
_LAYOUTS: dict = {}
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
    """RendererAgg whose text goes through the process-wide layout and glyph caches."""

    def draw_text(self, gc, x, y, s, prop, angle, ismath=False, mtext=None):
        if ismath:
            return self.draw_mathtext(gc, x, y, s, prop, angle)
        features = mtext.get_fontfeatures() if mtext is not None else None
        language = mtext.get_language() if mtext is not None else None
        size = prop.get_size_in_points()
        flags = get_hinting_flag()
        key = (tuple(fontManager._find_fonts_by_props(prop)), size, self.dpi, s, flags,
               None if features is None else tuple(features), language)
        items = _LAYOUTS.get(key)
        if items is None:
            font = self._prepare_font(prop)
            items = tuple((it.ft_object, it.glyph_index, it.x, it.y)
                          for it in font._layout(s, flags=flags, features=features, language=language))
            if len(_LAYOUTS) > MAX_GLYPHS:
                _LAYOUTS.clear()
            _LAYOUTS[key] = items
        self._glyph_run(gc, x, y, angle, ((font, size, index, dx, dy) for font, index, dx, dy in items))

    def draw_mathtext(self, gc, x, y, s, prop, angle):
        parse = self.mathtext_parser.parse(s, self.dpi, prop, antialiased=gc.get_antialiased())
        self._glyph_run(gc, x, y, angle, ((font, size, index, dx, dy) for font, size, _c, index, dx, dy in parse.glyphs))
        if parse.rects:  # fraction bars and the like: matplotlib's own box drawing
            self._draw_text_glyphs_and_boxes(gc, x, y, angle, (), parse.rects)

    def _glyph_run(self, gc, x, y, angle, glyphs) -> None:
        """Composite glyphs (font, size pt, glyph index, dx, dy px; dy upwards) at (x, y) (y downwards)."""
        from matplotlib.ft2font import RenderMode

        cos = math.cos(math.radians(angle))
        sin = math.sin(math.radians(angle))
        antialiased = gc.get_antialiased()
        flags = get_hinting_flag()
        height = self.height
        draw = self._renderer.draw_text_image
        matrix = None
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
                hit = (buffer, bitmap.left, bitmap.top)
                if len(_GLYPHS) > MAX_GLYPHS:
                    _GLYPHS.clear()
                _GLYPHS[key] = hit
            buffer, left, top = hit
            # the bitmap was rendered at the sub-pixel offset only: move it by the whole pixels
            draw(buffer, left + (px >> 6), int(height) - (top + (py >> 6)) + buffer.shape[0], 0, gc)


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


def clear() -> None:
    """Forget every cached layout and glyph bitmap."""
    _GLYPHS.clear()
    _LAYOUTS.clear()
