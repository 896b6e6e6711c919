"""Plotting layer of ecatlab: draws what the engine computed, never computes physics itself.

Every public plotter takes an optional ``ax=`` (a sequence of Axes for multi-panel figures) and
returns a :class:`~ecatlab.plotting.handles.Drawn`: the Axes (``drawn.ax``, every panel in
``drawn.axes``) and Figure (``drawn.figure``) it drew on, the computed object it drew
(``drawn.data``) and its named artists (``drawn.parts``, e.g. ``parts["series"]`` of the
free-energy diagrams: one :class:`~ecatlab.plotting.diagram.LevelDrawing` per series). Nothing is
attached to matplotlib objects. matplotlib is imported only when this package is used.
"""
