r"""Chemical text in five renderings: plain, Unicode, matplotlib mathtext, LaTeX and HTML.

The one place where ecatlab turns species, state labels and step equations written in its
notation (``"2 H2O(l)"``, ``"OOH*"``, ``"*"``, ``"H+ + e-"``, ``"CO2(g)"``,
``"OOH* + H+ + e- -> O* + H2O(l)"``) into display text. Pure string work: no matplotlib, no
pandas, no files; every plotter, table writer and report calls it.

How text is read
----------------
The text is split into words at white space (and at arrows ``->``, ``=>``, ``→``). A word that is
a species of the notation is formatted; every other word is kept as it is and escaped for the
target format, so captions and surface names pass through safely. Species words:

* ``*`` the empty site; ``X*`` an adsorbate (``X`` a formula: element symbols with counts,
  parentheses allowed);
* ``X(g)``, ``X(l)``, ``X(aq)`` a molecule with its phase;
* ``H+``, ``e-``, ``OH-`` (also with ``(aq)``): proton, electron, hydroxide;
* a number directly before a species word is its coefficient (``2 H2O(l)``), set with a thin
  space.

Trailing ``,`` ``;`` ``:`` ``.`` and a closing ``)`` or ``]`` that does not belong to the
formula are peeled off a word before it is read, and opening ``(`` ``[`` likewise.

What each format gives
----------------------
=========== =====================================================================================
``plain``   ASCII as written in the notation: ``2 H2O(l)``, ``OOH*``, ``H+ + e-``, ``->``
``unicode`` subscript digits, superscript charges, ``∗`` for the site mark, ``→``:
            ``2 H₂O(l)``, ``OOH∗``, ``H⁺ + e⁻``
``mathtext`` matplotlib mathtext, one ``$...$`` group per species, phases and other words as
            text: ``$2\,\mathrm{H}_{2}\mathrm{O}$(l)``, ``$\mathrm{OOH}{\ast}$``
``latex``   LaTeX text mode, math only for sub/superscripts (no chemistry package needed):
            ``2\,H$_{2}$O(l)``, ``OOH$\ast$``, ``H$^{+}$``; every special character of the
            other words escaped (``\ & % $ # _ { } ~ ^``)
``html``    ``<sub>``/``<sup>``, everything else HTML-escaped: ``2 H<sub>2</sub>O(l)``
=========== =====================================================================================

The site mark
-------------
The adsorption-site asterisk is drawn as the centred asterisk operator ``∗`` (U+2217; ``\ast`` in
mathtext and LaTeX) *on the baseline*, never as a superscript, so neither the bare site ``*`` nor
``OH*`` reads as a footnote mark. With ``site="words"`` the bare site is spelled out as
``∗ (empty site)`` (for legends and table cells where it stands alone); the plain format keeps the
ASCII ``*`` of the notation.

Examples
--------
>>> render("2 H2O(l)", "unicode")
'2\u2009H₂O(l)'
>>> render("OOH* + H+ + e- -> O* + H2O(l)", "html")
'OOH∗ + H<sup>+</sup> + e<sup>−</sup> → O∗ + H<sub>2</sub>O(l)'
>>> render("*", "unicode", site="words")
'∗ (empty site)'
"""

from __future__ import annotations

import html as _html
import re
from functools import lru_cache
from typing import Literal

__all__ = [
    "FORMATS",
    "render",
    "plain",
    "unicode",
    "mathtext",
    "latex",
    "html",
    "latex_escape",
    "mathtext_escape",
    "split_terms",
    "is_species",
]

Format = Literal["plain", "unicode", "mathtext", "latex", "html"]
#: The renderings :func:`render` knows.
FORMATS: tuple[str, ...] = ("plain", "unicode", "mathtext", "latex", "html")

SITE_MARK = "\N{ASTERISK OPERATOR}"
_THIN = "\N{THIN SPACE}"
_MINUS = "\N{MINUS SIGN}"
_ARROW = "\N{RIGHTWARDS ARROW}"
_SUB = str.maketrans("0123456789.", "₀₁₂₃₄₅₆₇₈₉.")
_SITE_WORDS = " (empty site)"

_FORMULA = r"(?:[A-Z][a-z]?\d*(?:\.\d+)?|\((?:[A-Z][a-z]?\d*)+\)\d*)+"
_SPECIES_RE = re.compile(
    rf"^(?P<site>\*)$|^(?P<ion>H\+|e-|OH-)(?:\(aq\))?$|^(?P<ads>{_FORMULA})\*$|^(?P<mol>{_FORMULA})\((?P<phase>g|l|aq)\)$"
)
_NUMBER_RE = re.compile(r"^\d+(?:\.\d+)?$")
_ARROW_RE = re.compile(r"\s*(?:->|=>|→)\s*")
_COUNT_RE = re.compile(r"(?<=[A-Za-z)])(\d+(?:\.\d+)?)")
_LEAD = "(["
_TRAIL = ",;:.)]"

_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
                  "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}"}


def latex_escape(text: str) -> str:
    r"""``text`` with LaTeX's special characters escaped for text mode (``\ & % $ # _ { } ~ ^``)."""
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in str(text))


def mathtext_escape(text: str) -> str:
    r"""``text`` safe as literal matplotlib text: ``$`` -> ``\$`` (no math mode is opened)."""
    return str(text).replace("$", r"\$")


# ------------------------------------------------------------------------------------------------
# reading
# ------------------------------------------------------------------------------------------------
def is_species(word: str) -> bool:
    """True when ``word`` is one species of the notation (``"*"``, ``"OH*"``, ``"H2O(l)"``, ``"e-"``)."""
    return _SPECIES_RE.match(word) is not None


def _peel(word: str) -> tuple[str, str, str]:
    """(leading punctuation, core, trailing punctuation) of a word; a species keeps its own ')' ."""
    if is_species(word):
        return "", word, ""
    lead = ""
    while word and word[0] in _LEAD and not is_species(word):
        lead, word = lead + word[0], word[1:]
    trail = ""
    while word and word[-1] in _TRAIL and not is_species(word):
        trail, word = word[-1] + trail, word[:-1]
    return lead, word, trail


def split_terms(label: str) -> list[str]:
    """The ``+``-separated terms of a state label: ``"O* + H+ + e-"`` -> ``["O*", "H+", "e-"]``."""
    return [t for t in re.split(r"\s+\+\s+", str(label).strip()) if t]


@lru_cache(maxsize=8192)
def _tokens(text: str) -> tuple[tuple[str, ...], ...]:
    """Tokens ``(kind, ...)``: ("space", s), ("arrow",), ("text", s), ("species", coef, match-kind, formula, phase)."""
    out: list[tuple[str, ...]] = []
    pieces = _ARROW_RE.split(text)
    for k, piece in enumerate(pieces):
        if k:
            out.append(("arrow",))
        words = re.split(r"(\s+)", piece)
        coef = None  # a number waiting for its species
        for w in words:
            if not w:
                continue
            if w.isspace():
                if coef is None:
                    out.append(("space", w))
                continue
            lead, core, trail = _peel(w)
            if coef is not None:
                if not lead and is_species(core):
                    out.append(_species_token(core, coef))
                    if trail:
                        out.append(("text", trail))
                    coef = None
                    continue
                out.append(("text", coef))
                out.append(("space", " "))
                coef = None
            if not lead and not trail and _NUMBER_RE.match(core):
                coef = core
                continue
            if lead:
                out.append(("text", lead))
            if is_species(core):
                out.append(_species_token(core, ""))
            elif core:
                out.append(("text", core))
            if trail:
                out.append(("text", trail))
        if coef is not None:
            out.append(("text", coef))
    return tuple(out)


def _species_token(word: str, coef: str) -> tuple[str, ...]:
    m = _SPECIES_RE.match(word)
    if m.group("site"):
        return ("species", coef, "site", "", "")
    if m.group("ion"):
        return ("species", coef, m.group("ion"), "", "")
    if m.group("ads"):
        return ("species", coef, "ads", m.group("ads"), "")
    return ("species", coef, "mol", m.group("mol"), m.group("phase"))


# ------------------------------------------------------------------------------------------------
# writing
# ------------------------------------------------------------------------------------------------
_ION_TEXT = {
    "plain": {"H+": "H+", "e-": "e-", "OH-": "OH-"},
    "unicode": {"H+": "H⁺", "e-": "e⁻", "OH-": "OH⁻"},
    "mathtext": {"H+": r"$\mathrm{H}^{+}$", "e-": r"$\mathrm{e}^{-}$", "OH-": r"$\mathrm{OH}^{-}$"},
    "latex": {"H+": r"H$^{+}$", "e-": r"e$^{-}$", "OH-": r"OH$^{-}$"},
    "html": {"H+": "H<sup>+</sup>", "e-": "e<sup>−</sup>", "OH-": "OH<sup>−</sup>"},
}
_ARROW_TEXT = {"plain": " -> ", "unicode": f" {_ARROW} ", "mathtext": f" {_ARROW} ", "latex": r" $\rightarrow$ ",
               "html": " → "}


def _formula(formula: str, fmt: str) -> str:
    if fmt == "plain":
        return formula
    if fmt == "unicode":
        return _COUNT_RE.sub(lambda m: m.group(1).translate(_SUB), formula)
    if fmt == "html":
        return _COUNT_RE.sub(r"<sub>\1</sub>", formula)
    if fmt == "latex":
        return _COUNT_RE.sub(r"$_{\1}$", formula)
    # mathtext: roman letters, subscripted counts, e.g. \mathrm{H}_{2}\mathrm{O}
    body = _COUNT_RE.sub(lambda m: "}_{" + m.group(1) + r"}\mathrm{", formula)
    return (r"\mathrm{" + body + "}").replace(r"\mathrm{}", "")


def _site(fmt: str, alone: bool, site: str) -> str:
    words = _SITE_WORDS if (alone and site == "words") else ""
    if fmt == "plain":
        return "*" + words
    if fmt == "latex":
        return r"$\ast$" + latex_escape(words)
    if fmt == "mathtext":
        return r"${\ast}$" + words
    return SITE_MARK + words  # unicode, html


def _species(tok: tuple[str, ...], fmt: str, site: str, alone: bool) -> str:
    _, coef, kind, formula, phase = tok
    if kind == "site":
        core = _site(fmt, alone and not coef, site)
    elif kind in ("H+", "e-", "OH-"):
        core = _ION_TEXT[fmt][kind]
    elif kind == "ads":
        if fmt == "mathtext":
            core = "$" + _formula(formula, fmt) + r"{\ast}$"
        elif fmt == "latex":
            core = _formula(formula, fmt) + r"$\ast$"
        else:
            core = _formula(formula, fmt) + ("*" if fmt == "plain" else SITE_MARK)
    else:
        core = ("$" + _formula(formula, fmt) + "$" if fmt == "mathtext" else _formula(formula, fmt)) + f"({phase})"
    if fmt == "latex":
        core = core.replace("$$", "")  # adjacent math groups of one species merge (never a display-math $$)
    if not coef:
        return core
    if fmt == "plain":
        return f"{coef} {core}"
    if fmt == "latex":
        return coef + r"\," + core
    if fmt == "mathtext":
        # the coefficient joins the species' math group: $2\,\mathrm{...}$
        return ("$" + coef + r"\," + core[1:]) if core.startswith("$") else f"{coef}{_THIN}{core}"
    return coef + _THIN + core  # unicode, html


def _text(word: str, fmt: str) -> str:
    if fmt == "html":
        return _html.escape(word, quote=True)
    if fmt == "latex":
        return latex_escape(word)
    if fmt == "mathtext":
        return mathtext_escape(word)
    return word


@lru_cache(maxsize=16384)
def _render(text: str, fmt: str, site: str) -> str:
    toks = _tokens(text)
    n_species = sum(1 for t in toks if t[0] == "species")
    alone = n_species == 1 and all(t[0] in ("species", "space") for t in toks)
    out = []
    for t in toks:
        kind = t[0]
        if kind == "species":
            out.append(_species(t, fmt, site, alone))
        elif kind == "arrow":
            out.append(_ARROW_TEXT[fmt])
        elif kind == "space":
            out.append(t[1])
        else:
            out.append(_text(t[1], fmt))
    return "".join(out)


def render(text, fmt: Format = "unicode", *, site: Literal["symbol", "words"] = "symbol") -> str:
    """Chemical text ``text`` in the rendering ``fmt``.

    Parameters
    ----------
    text : str
        A species, state label or step equation in ecatlab notation, possibly mixed with other
        words (captions, route descriptions). Non-strings are converted with ``str``.
    fmt : {"plain", "unicode", "mathtext", "latex", "html"}
        Target rendering (see the module docstring).
    site : {"symbol", "words"}
        How a label that is only the bare site ``*`` is shown: the centred mark ``∗`` (default)
        or ``∗ (empty site)``.

    Returns
    -------
    str
        The formatted text; words that are not chemistry are escaped for ``fmt`` (HTML entities,
        LaTeX specials, mathtext ``$``).

    Raises
    ------
    ValueError
        Unknown ``fmt`` or ``site`` (the message names the choices).
    """
    if fmt not in FORMATS:
        raise ValueError(f"chemical text format {fmt!r} is unknown; choose one of {', '.join(FORMATS)}")
    if site not in ("symbol", "words"):
        raise ValueError(f"site={site!r} is unknown; choose 'symbol' or 'words'")
    return _render(str(text), fmt, site)


def plain(text, *, site: Literal["symbol", "words"] = "symbol") -> str:
    """ASCII rendering, as written in the notation (``"2 H2O(l)"``, ``"H+ + e-"``)."""
    return render(text, "plain", site=site)


def unicode(text, *, site: Literal["symbol", "words"] = "symbol") -> str:
    """Unicode rendering: subscript digits, superscript charges, ``∗`` site mark, ``→``."""
    return render(text, "unicode", site=site)


def mathtext(text, *, site: Literal["symbol", "words"] = "symbol") -> str:
    r"""Matplotlib mathtext rendering (``$\mathrm{H}_{2}\mathrm{O}$(l)``)."""
    return render(text, "mathtext", site=site)


def latex(text, *, site: Literal["symbol", "words"] = "symbol") -> str:
    r"""LaTeX text-mode rendering (``H$_{2}$O(l)``; specials of other words escaped)."""
    return render(text, "latex", site=site)


def html(text, *, site: Literal["symbol", "words"] = "symbol") -> str:
    """HTML rendering (``H<sub>2</sub>O(l)``; everything else escaped)."""
    return render(text, "html", site=site)
