"""Saving figures: SVG and PDF with real, embedded text; PNG at a chosen resolution.

* SVG: text stays ``<text>`` elements (``svg.fonttype = "none"``), so labels remain editable and
  searchable; no metadata block, no creation date (identical input gives identical files).
* PDF: fonts embedded as TrueType (``pdf.fonttype = 42``), not Type 3 outlines.
* PNG: ``dpi`` pixels per inch (default 300, a common minimum for journal raster figures —
  common practice, no source).

:func:`svg_fragment` turns a figure into an inline ``<svg>`` element for an HTML page: no XML
declaration, no DOCTYPE, no namespace URLs and ``href`` instead of ``xlink:href``, so the page
references nothing outside itself.
"""

from __future__ import annotations

import io
import os
import pathlib
import re
from typing import Iterable

__all__ = ["save_figure", "svg_fragment", "VECTOR_RC", "FORMATS"]

#: Formats :func:`save_figure` writes.
FORMATS = ("svg", "pdf", "png")

#: rcParams in force while saving: real text in SVG, TrueType fonts embedded in PDF/PS.
VECTOR_RC = {"svg.fonttype": "none", "pdf.fonttype": 42, "ps.fonttype": 42, "svg.hashsalt": "ecatlab"}

_NO_METADATA = {
    "svg": {"Date": None, "Creator": None, "Format": None, "Type": None},
    "pdf": {"CreationDate": None, "ModDate": None, "Creator": "ecatlab", "Producer": None},
    "png": {"Software": "ecatlab"},
}


def _as_figure(obj):
    """The Figure of a :class:`ecatlab.plotting.handles.Drawn` or an Axes; anything else with ``savefig`` (a Figure) as is."""
    from ecatlab.plotting.handles import Drawn

    if isinstance(obj, Drawn):
        return obj.figure
    return obj if hasattr(obj, "savefig") else obj.figure


def _savefig(fig, target, fmt: str, dpi: float, transparent: bool) -> None:
    import matplotlib as mpl

    with mpl.rc_context(VECTOR_RC):
        if fmt == "svg" and not transparent:
            buf = io.StringIO()
            fig.savefig(buf, format="svg", dpi=dpi, bbox_inches="tight", pad_inches=0.03, metadata=_NO_METADATA["svg"])
            text = buf.getvalue()
            if isinstance(target, (str, os.PathLike)):
                pathlib.Path(target).write_text(text, encoding="utf-8")
            else:
                target.write(text)
            return
        fig.savefig(target, format=fmt, dpi=dpi, bbox_inches="tight", pad_inches=0.03,
                    metadata=_NO_METADATA.get(fmt), transparent=transparent)


def save_figure(
    fig,
    path: str | os.PathLike,
    formats: str | Iterable[str] | None = None,
    dpi: float = 300,
    transparent: bool = False,
    force: bool = False,
    inputs: Iterable[str | os.PathLike] = (),
) -> list[pathlib.Path]:
    """Save a Figure (or the Figure of an Axes) as SVG, PDF and/or PNG.

    Parameters
    ----------
    fig : Figure, Axes or Drawn
    path : str or PathLike
        Target file. With ``formats`` omitted its suffix picks the format; with ``formats`` given,
        the suffix is replaced by each format's (``"out/orr"`` + ``("svg", "png")`` ->
        ``out/orr.svg``, ``out/orr.png``).
    formats : str or iterable of str, optional
        Any of ``"svg"``, ``"pdf"``, ``"png"``.
    dpi : float
        Raster resolution of PNG output in pixels per inch (also the resolution of any raster
        element embedded in vector output).
    transparent : bool
        Transparent background.
    force : bool
        Replace existing files (default: refuse with :class:`~ecatlab.errors.OutputExistsError`).
    inputs : iterable of path
        Files the caller read; a target that is one of them is refused.

    Returns
    -------
    list of Path
        The files written, in the order of ``formats``.

    Raises
    ------
    OutputPathError
        Unknown format or a suffix that is not one of :data:`FORMATS`, a folder, one of the
        inputs; raised before anything is drawn. (Also a ``ValueError``.)
    OutputExistsError
        A target exists and ``force`` is false.

    Notes
    -----
    Each file is written to a temporary file in its folder and moved into place with
    ``os.replace``; a failure leaves any earlier file intact (see :mod:`ecatlab.safe_io`).
    """
    from ecatlab import safe_io
    from ecatlab.errors import OutputPathError, clip

    fig = _as_figure(fig)
    target = pathlib.Path(path)
    if formats is None:
        suffix = target.suffix.lower().lstrip(".")
        if suffix not in FORMATS:
            raise OutputPathError(
                f"cannot tell the format of {clip(str(target))!r}: use a .svg, .pdf or .png suffix or pass formats="
            )
        wanted = [suffix]
        paths = [target]
    else:
        wanted = [formats] if isinstance(formats, str) else list(formats)
        bad = [f for f in wanted if str(f).lower() not in FORMATS]
        if bad:
            raise OutputPathError(f"unknown figure format(s) {[clip(b) for b in bad]}; use any of {list(FORMATS)}")
        wanted = [str(f).lower() for f in wanted]
        stem = target.with_suffix("") if target.suffix.lower().lstrip(".") in FORMATS else target
        paths = [stem.with_name(stem.name + "." + f) for f in wanted]
    try:
        ok = dpi is not None and float(dpi) > 0 and float(dpi) < 1e5
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise OutputPathError(f"dpi must be a positive number below 100000, got {clip(repr(dpi))}")
    inputs = list(inputs)
    for out in paths:
        safe_io.check_output(out, force=force, inputs=inputs, suffixes=FORMATS, what="figure")
    for fmt, out in zip(wanted, paths):
        with safe_io.atomic_path(out, force=force, inputs=inputs, suffixes=FORMATS, what="figure") as tmp:
            _savefig(fig, tmp, fmt, float(dpi), transparent)
    return paths


def svg_fragment(fig, element_id: str | None = None) -> str:
    """The figure as an inline ``<svg>`` element for HTML (text as text, no external references).

    Parameters
    ----------
    fig : Figure, Axes, Drawn or str
        The figure, or the text of an SVG file already written by :func:`save_figure` (saves
        rendering the figure twice).
    element_id : str, optional
        ``id`` attribute of the ``<svg>`` element; ids inside are prefixed with it so several
        figures on one page do not clash.
    """
    if isinstance(fig, str):
        text = fig
    else:
        fig = _as_figure(fig)
        buf = io.StringIO()
        _savefig(fig, buf, "svg", 100, False)
        text = buf.getvalue()
    text = re.sub(r"<\?xml[^>]*\?>\s*", "", text)
    text = re.sub(r"<!DOCTYPE[^>]*>\s*", "", text, flags=re.S)
    text = re.sub(r"<metadata>.*?</metadata>\s*", "", text, flags=re.S)
    text = re.sub(r'\s+xmlns(:\w+)?="[^"]*"', "", text)
    text = text.replace("xlink:href=", "href=")
    if element_id:
        prefix = re.sub(r"[^A-Za-z0-9_-]", "-", element_id)
        text = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}-{m.group(1)}"', text)
        text = re.sub(r'href="#([^"]+)"', lambda m: f'href="#{prefix}-{m.group(1)}"', text)
        text = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{prefix}-{m.group(1)})", text)
        text = text.replace("<svg ", f'<svg id="{prefix}" ', 1)
    return text.strip()
