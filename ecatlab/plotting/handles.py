"""The small object every ecatlab plotter returns.

A plotter draws what the engine computed onto a matplotlib Axes (its own, or the ``ax=`` the caller
passed) and returns a :class:`Drawn`: the Axes and Figure it drew on, the computed object it drew
(``data``: a DataFrame, a curve, a map ... never recomputed here) and the named artists it made
(``parts``), so that callers such as the explorer can update artists in place without reading extra
attributes off matplotlib objects.

>>> import matplotlib; matplotlib.use("Agg")
>>> from matplotlib.figure import Figure
>>> ax = Figure().add_subplot()
>>> (line,) = ax.plot([0, 1], [0, 1])
>>> drawn = Drawn(ax=ax, data=None, parts={"line": line})
>>> drawn.figure is ax.figure, drawn.parts["line"] is line
(True, True)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

__all__ = ["Drawn"]


@dataclass(frozen=True, eq=False)
class Drawn:
    """What a plotter drew.

    Attributes
    ----------
    ax : matplotlib.axes.Axes
        The Axes drawn on (for multi-panel figures: the first panel; all panels in ``axes``).
    data : object
        The computed result that was drawn (units as documented by the object that made it).
    parts : Mapping[str, Any]
        Named artists (or lists of them, or per-series drawing records); read-only.
    axes : tuple
        Every Axes drawn on, ``ax`` first.
    """

    ax: Any
    data: Any = None
    parts: Mapping[str, Any] = field(default_factory=dict)
    axes: tuple = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "parts", MappingProxyType(dict(self.parts)))
        axes = tuple(self.axes) or (self.ax,)
        if axes[0] is not self.ax:
            axes = (self.ax,) + tuple(a for a in axes if a is not self.ax)
        object.__setattr__(self, "axes", axes)

    @property
    def figure(self):
        """The matplotlib Figure the Axes belong to."""
        return self.ax.figure

    def savefig(self, *args, **kwargs):
        """Shortcut for ``drawn.figure.savefig(...)`` (prefer :func:`ecatlab.plotting.export.save_figure`)."""
        return self.figure.savefig(*args, **kwargs)
