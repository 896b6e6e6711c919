"""The look of ecatlab figures: palette, line styles, size presets.

Palette: eight colours that stay distinguishable under the common colour-vision deficiencies
(ordered so that neighbours differ in lightness as well as hue), paired with distinct dash
patterns so overlays survive greyscale printing. Levels are drawn as thick flat bars with
round caps; connectors are thin dotted lines in the same colour.

Presets (widths in mm, fonts in pt):

=========== ======= ======== =========
preset      width   height   base font
=========== ======= ======== =========
single      85      65       7
double      175     80       8
notebook    240     130      11
=========== ======= ======== =========
"""

from __future__ import annotations

from ecatlab.errors import OptionError

from contextlib import contextmanager
from dataclasses import dataclass
from typing import Iterator

__all__ = ["pathway_title", "PALETTE", "DASHES", "MARKERS", "Preset", "PRESETS", "preset", "figure", "style_context", "MM_PER_INCH", "HIGHLIGHT"]

MM_PER_INCH = 25.4

#: Colour-vision-deficiency-safe colours, in the order they are assigned to series.
PALETTE: tuple[str, ...] = (
    "#1F4E79",  # deep blue
    "#D55E00",  # vermilion
    "#009E73",  # bluish green
    "#CC79A7",  # reddish purple
    "#E69F00",  # orange
    "#56B4E9",  # sky blue
    "#7F7F7F",  # mid grey
    "#B8860B",  # dark goldenrod
    "#882255",  # wine
    "#44AA99",  # teal
    "#332288",  # indigo
    "#999933",  # olive
)
#: Dash patterns paired with the palette (solid first).
DASHES: tuple = ("-", (0, (5, 2)), (0, (1, 1.5)), (0, (6, 2, 1, 2)), (0, (3, 1, 1, 1, 1, 1)), (0, (8, 3)), (0, (4, 1, 4, 3)),
                 (0, (2, 2)), (0, (6, 1.5)), (0, (1, 3)), (0, (5, 1, 1, 1)), (0, (10, 2, 2, 2)))
#: Marker shapes for scatter series.
MARKERS: tuple[str, ...] = ("o", "s", "D", "^", "v", "P", "X", "h")
#: Colour of the highlight band behind a potential-determining step.
HIGHLIGHT = "#F2C14E"


@dataclass(frozen=True)
class Preset:
    """Figure size and fonts for one target medium."""

    name: str
    width_mm: float
    height_mm: float
    font_pt: float
    level_width_pt: float
    connector_width_pt: float

    @property
    def figsize(self) -> tuple[float, float]:
        """(width, height) in inches."""
        return (self.width_mm / MM_PER_INCH, self.height_mm / MM_PER_INCH)

    def rc(self) -> dict:
        """matplotlib rcParams for this preset (fonts embedded as TrueType in PDF/PS, text kept as text in SVG)."""
        return {
            "font.size": self.font_pt,
            "axes.titlesize": self.font_pt + 1,
            "axes.labelsize": self.font_pt,
            "xtick.labelsize": self.font_pt - 1,
            "ytick.labelsize": self.font_pt - 1,
            "legend.fontsize": self.font_pt - 1,
            "axes.linewidth": 0.8,
            "axes.spines.top": False,
            "axes.spines.right": False,
            "pdf.fonttype": 42,
            "ps.fonttype": 42,
            "svg.fonttype": "none",
            "font.family": "DejaVu Sans",
            "mathtext.default": "regular",
            "figure.dpi": 100,
            "savefig.bbox": "tight",
        }


PRESETS: dict[str, Preset] = {
    "single": Preset("single", 85.0, 65.0, 7.0, 2.2, 0.7),
    "double": Preset("double", 175.0, 80.0, 8.0, 2.6, 0.8),
    "notebook": Preset("notebook", 240.0, 130.0, 11.0, 3.2, 1.0),
}


def preset(name: str | Preset = "notebook") -> Preset:
    """The preset called ``name`` (``"single"``, ``"double"``, ``"notebook"``)."""
    if isinstance(name, Preset):
        return name
    try:
        return PRESETS[name]
    except KeyError:
        raise OptionError(f"unknown style preset {name!r}; use one of {sorted(PRESETS)}") from None


@contextmanager
def style_context(name: str | Preset = "notebook") -> Iterator[Preset]:
    """Context manager applying a preset's rcParams."""
    import matplotlib as mpl

    p = preset(name)
    with mpl.rc_context(p.rc()):
        yield p


def figure(name: str | Preset = "notebook", nrows: int = 1, ncols: int = 1, **kwargs):
    """A new Figure and Axes sized for the preset (``plt.subplots`` under the preset's rcParams)."""
    import matplotlib.pyplot as plt

    p = preset(name)
    with style_context(p):
        fig, ax = plt.subplots(nrows, ncols, figsize=kwargs.pop("figsize", p.figsize), **kwargs)
    return fig, ax


def pathway_title(pathway, key: bool = False, width: int | None = None) -> str:
    """A reader's title for a pathway: its description (built-ins and documented pathways), else its name.

    ``key=True`` appends the pathway's key in brackets (traceable to the tables); ``width`` wraps the
    text into lines of at most that many characters."""
    text = (getattr(pathway, "description", "") or "").strip()
    text = text[0].upper() + text[1:] if text else pathway.name
    if key and text != pathway.name:
        text = f"{text} [{pathway.name}]"
    if width:
        import textwrap

        text = "\n".join(textwrap.wrap(text, width, break_on_hyphens=False))
    return text
