"""The explorer's legend: line samples and single-line labels stacked at fixed offsets.

matplotlib's ``Legend`` packs its entries in nested offset boxes and lays every label out several
times per draw; for the explorer's up to 17 entries that was most of a full draw (about 80-100 ms
of CPU on the development machine, measured with and without it). :class:`ListLegend` places
each entry once, at a fixed offset in points from the upper right corner of the Axes: the line
samples are one ``LineCollection`` and each label one ``Text``, so a full draw costs one layout
per label. It is an ordinary matplotlib Artist (added with ``ax.add_artist``): it draws, hides and
saves like any other, and SVG/PDF exports keep its labels as text.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np
from matplotlib.artist import Artist
from matplotlib.collections import LineCollection
from matplotlib.colors import to_rgba
from matplotlib.text import Text
from matplotlib.transforms import Bbox, ScaledTranslation

__all__ = ["ListLegend", "ROW_PITCH", "SAMPLE_LENGTH"]

#: Row height in units of the font size.
ROW_PITCH = 1.55
#: Length of a line sample in units of the font size.
SAMPLE_LENGTH = 2.4


class ListLegend(Artist):
    """Legend entries right of an Axes, top-aligned with it.

    Parameters
    ----------
    ax : Axes
        The entries start 1 % of its width right of its upper right corner.
    entries : sequence of (colour, linestyle, linewidth, alpha, label)
        One per row, top to bottom; ``colour`` None gives a row with text only. ``linestyle`` is
        any matplotlib line style (a name or an (offset, dashes) tuple), ``linewidth`` in points.
    fontsize : float
        Label size in points.

    Attributes
    ----------
    samples : LineCollection
        The line samples (rows with a colour), in row order.
    texts : list of Text
        The labels, in row order.
    """

    def __init__(self, ax, entries: Sequence[tuple], fontsize: float):
        super().__init__()
        fig = ax.figure
        self.set_figure(fig)
        self.set_gid("ecatlab-legend")
        # coordinates in inches from the anchor, so the layout holds at any dpi (exports)
        frame = fig.dpi_scale_trans + ScaledTranslation(1.01, 1.0, ax.transAxes)
        pitch = ROW_PITCH * fontsize / 72.0
        self._frame, self._pitch = frame, pitch
        sample = SAMPLE_LENGTH * fontsize / 72.0
        ys = -(np.arange(len(entries)) + 0.5) * pitch
        shown = [i for i, entry in enumerate(entries) if entry[0] is not None]
        self.samples = LineCollection(
            [[(0.0, ys[i]), (sample, ys[i])] for i in shown],
            colors=[to_rgba(entries[i][0], entries[i][3]) for i in shown] or "none",
            linestyles=[entries[i][1] for i in shown] or "-",
            linewidths=[entries[i][2] for i in shown] or 1.0,
            transform=frame, clip_on=False)
        self.samples.set_figure(fig)
        self.texts: list = []
        for y, entry in zip(ys, entries):
            text = Text(sample + 0.6 * fontsize / 72.0, y, entry[4], transform=frame, ha="left", va="center",
                        fontsize=fontsize, clip_on=False)
            text.set_figure(fig)
            self.texts.append(text)

    def rows_box(self):
        """Display box of the rows (cheap: no text layout): from the line samples' left end to the
        figure's right edge, from the anchor down to the bottom of the last row, grown by 2 px.
        Every sample and label lies inside it (labels are centred in rows taller than the text)."""
        top = self._frame.transform((0.0, 0.0))
        bottom = self._frame.transform((0.0, -len(self.texts) * self._pitch))
        return Bbox.from_extents(top[0] - 2, bottom[1] - 2, self.figure.bbox.x1, top[1] + 2)

    def get_children(self):
        return [self.samples, *self.texts]

    def draw(self, renderer) -> None:
        if not self.get_visible():
            return
        self.samples.draw(renderer)
        for text in self.texts:
            text.draw(renderer)
        self.stale = False

    def get_window_extent(self, renderer=None):
        """Display box of the samples (their end points, grown by half the widest line and its
        caps) and the labels."""
        boxes = [text.get_window_extent(renderer) for text in self.texts]
        segments = self.samples.get_segments()
        if segments:
            points = self.samples.get_transform().transform(np.concatenate(segments))
            grow = float(np.max(self.samples.get_linewidths())) * self.figure.dpi / 72.0
            boxes.append(Bbox.from_extents(points[:, 0].min() - grow, points[:, 1].min() - grow,
                                           points[:, 0].max() + grow, points[:, 1].max() + grow))
        return Bbox.union([b for b in boxes if np.all(np.isfinite(b.extents)) and b.width > 0])

    def get_tightbbox(self, renderer=None):
        return self.get_window_extent(renderer)
