"""ecatlab.chemtext: one chemistry formatter, five renderings.

Outside references used here:
* matplotlib's own mathtext parser (``matplotlib.mathtext.MathTextParser``) must accept every
  mathtext string, and the rendered glyphs must put the site mark on the baseline;
* the Unicode Character Database (``unicodedata`` of the standard library) names the subscript and
  superscript code points (SUBSCRIPT TWO, SUPERSCRIPT PLUS SIGN, ASTERISK OPERATOR ...);
* the standard library's XML parser (``xml.etree``) and ``html.parser`` read the HTML;
* LaTeX cannot be compiled here (no TeX installed): the checks are the rules of the TeX book for
  text mode, from memory: specials ``\\ & % $ # _ { } ~ ^`` escaped, braces balanced, math
  shifts ``$`` paired and never doubled into ``$$`` (display math).
"""

from __future__ import annotations

import html.parser
import re
import unicodedata
import xml.etree.ElementTree as ET

import pytest

from ecatlab import chemtext as C

LABELS = [
    "2 H2O(l)", "OOH*", "*", "H+ + e-", "CO2(g)", "O2(g) + * + H+ + e- -> OOH*", "OH* + H+ + e- -> * + H2O(l)",
    "2 *", "0.5 O2(g)", "NH2NH2*", "(OH)2*", "OH- + *", "CO2(g)->CO(g) via COOH*", "HCOOH(aq)", "O* + CH4(g)",
    "references H2(g), H2O(l), CO2(g), N2(g) at 298.15 K; ALY-01 (bundled demo).",
]
HOSTILE = ["<script>alert(1)</script>", 'A"B\'C & D', "50% $x$ a_b #1 {y} ~z ^w \\cmd", "=cmd|' /C calc'!A0", "OH*<b>"]


# ------------------------------------------------------------------------------------------------
# each format on a set of labels (expected strings written out by hand from the module's rules)
# ------------------------------------------------------------------------------------------------
EXPECTED = {
    "2 H2O(l)": {
        "plain": "2 H2O(l)", "unicode": "2\u2009H\u2082O(l)", "mathtext": r"$2\,\mathrm{H}_{2}\mathrm{O}$(l)",
        "latex": r"2\,H$_{2}$O(l)", "html": "2\u2009H<sub>2</sub>O(l)",
    },
    "OOH*": {
        "plain": "OOH*", "unicode": "OOH\u2217", "mathtext": r"$\mathrm{OOH}{\ast}$", "latex": r"OOH$\ast$", "html": "OOH\u2217",
    },
    "*": {"plain": "*", "unicode": "\u2217", "mathtext": r"${\ast}$", "latex": r"$\ast$", "html": "\u2217"},
    "H+ + e-": {
        "plain": "H+ + e-", "unicode": "H\u207a + e\u207b", "mathtext": r"$\mathrm{H}^{+}$ + $\mathrm{e}^{-}$",
        "latex": r"H$^{+}$ + e$^{-}$", "html": "H<sup>+</sup> + e<sup>\u2212</sup>",
    },
    "CO2(g)": {
        "plain": "CO2(g)", "unicode": "CO\u2082(g)", "mathtext": r"$\mathrm{CO}_{2}$(g)", "latex": r"CO$_{2}$(g)",
        "html": "CO<sub>2</sub>(g)",
    },
    "OH* + H+ + e- -> * + H2O(l)": {
        "plain": "OH* + H+ + e- -> * + H2O(l)",
        "unicode": "OH\u2217 + H\u207a + e\u207b \u2192 \u2217 + H\u2082O(l)",
        "mathtext": r"$\mathrm{OH}{\ast}$ + $\mathrm{H}^{+}$ + $\mathrm{e}^{-}$ → ${\ast}$ + $\mathrm{H}_{2}\mathrm{O}$(l)",
        "latex": r"OH$\ast$ + H$^{+}$ + e$^{-}$ $\rightarrow$ $\ast$ + H$_{2}$O(l)",
        "html": "OH\u2217 + H<sup>+</sup> + e<sup>\u2212</sup> \u2192 \u2217 + H<sub>2</sub>O(l)",
    },
}


@pytest.mark.parametrize("label", list(EXPECTED))
@pytest.mark.parametrize("fmt", C.FORMATS)
def test_each_format_on_known_labels(label, fmt):
    want = EXPECTED[label][fmt]
    assert C.render(label, fmt) == want
    assert getattr(C, fmt)(label) == want  # the named shortcut gives the same


def test_unicode_code_points_are_the_named_ones():
    # Unicode Character Database names (unicodedata), not look-alikes
    text = C.unicode("2 H2O(l) + H+ + e- + OH- + *")
    names = {unicodedata.name(ch) for ch in text if ord(ch) > 127}
    assert {"SUBSCRIPT TWO", "SUPERSCRIPT PLUS SIGN", "SUPERSCRIPT MINUS", "ASTERISK OPERATOR", "THIN SPACE"} <= names
    assert C.unicode("C10H22(g)") == "C\u2081\u2080H\u2082\u2082(g)"
    assert [unicodedata.name(ch) for ch in C.unicode("C10H22(g)")[1:3]] == ["SUBSCRIPT ONE", "SUBSCRIPT ZERO"]


def test_site_is_never_a_superscript_and_words_option():
    for fmt in C.FORMATS:
        out = C.render("*", fmt)
        assert "^" not in out and "<sup>" not in out and "\u00b9" not in out
    assert C.render("*", "unicode", site="words") == "\u2217 (empty site)"
    assert C.render("*", "html", site="words") == "\u2217 (empty site)"
    assert C.render("*", "latex", site="words") == r"$\ast$ (empty site)"
    # words only for a bare site, not inside an equation or a coefficient term
    assert "(empty site)" not in C.render("O2(g) + * -> OO*", "unicode", site="words")
    assert "(empty site)" not in C.render("2 *", "unicode", site="words")
    with pytest.raises(ValueError, match="symbol"):
        C.render("*", "unicode", site="footnote")
    with pytest.raises(ValueError, match="plain, unicode, mathtext, latex, html"):
        C.render("*", "rtf")


def test_non_chemistry_words_pass_through():
    for word in ("ALY-01", "Pt(111)", "via", "pH", "298.15", "U_L", "CO", "H2", "e", "orr-4e"):
        assert C.plain(word) == word
        assert C.unicode(word) == word
    assert not C.is_species("H2") and not C.is_species("Pt(111)") and C.is_species("H2(g)") and C.is_species("*")
    assert C.split_terms("O* + H+ + e-") == ["O*", "H+", "e-"]


# ------------------------------------------------------------------------------------------------
# mathtext: matplotlib parses it (outside reference), and the site mark sits on the baseline
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("label", LABELS + HOSTILE)
def test_mathtext_parses_with_matplotlib(label):
    from matplotlib.mathtext import MathTextParser

    text = C.mathtext(label)
    MathTextParser("path").parse(text, dpi=72)  # raises ValueError on bad mathtext
    assert (text.count("$") - text.count(r"\$")) % 2 == 0


def test_mathtext_site_mark_on_the_baseline_not_raised():
    """Glyph positions from matplotlib's own parser: the mark of 'OH*' is set at full size on the
    letters' baseline; a superscript (the old rendering, for contrast) is smaller and raised."""
    from matplotlib.mathtext import MathTextParser

    def glyphs(text):
        parsed = MathTextParser("path").parse(text, dpi=100)
        # each glyph: (font, size in pt, character code, glyph index, x, y of the baseline offset)
        return {chr(g[2]): (g[1], g[5]) for g in parsed.glyphs}

    ours = glyphs(C.mathtext("OH*"))
    assert ours["\u2217"] == ours["H"]  # same size, same baseline as the letters
    raised = glyphs(r"$\mathrm{OH}^{*}$")
    assert raised["*"][0] < raised["H"][0] and raised["*"][1] > raised["H"][1] + 1.0


def test_hostile_text_in_mathtext_is_literal():
    assert C.mathtext("cost $5") == r"cost \$5"


# ------------------------------------------------------------------------------------------------
# HTML: everything user-given escaped; well-formed
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("label", LABELS + HOSTILE)
def test_html_is_escaped_and_well_formed(label):
    out = C.html(label)
    root = ET.fromstring(f"<p>{out}</p>")  # XML-parseable: every tag closed, every & an entity
    assert {el.tag for el in root.iter()} <= {"p", "sub", "sup"}

    class Tags(html.parser.HTMLParser):
        seen: list = []

        def handle_starttag(self, tag, attrs):
            self.seen.append(tag)

    p = Tags()
    p.seen = []
    p.feed(out)
    assert set(p.seen) <= {"sub", "sup"}, p.seen
    assert "<script" not in out and "<b>" not in out


def test_html_escapes_quotes_and_ampersands():
    out = C.html('A"B\'C & <D>')
    assert out == "A&quot;B&#x27;C &amp; &lt;D&gt;"
    assert C.html("OH*<b>") == "OH*&lt;b&gt;"  # not a species: escaped as a whole


# ------------------------------------------------------------------------------------------------
# LaTeX: no TeX here, so structural rules (see the module docstring of this test file)
# ------------------------------------------------------------------------------------------------
def _unescaped(text: str, ch: str) -> int:
    return len(re.findall(r"(?<!\\)" + re.escape(ch), text))


@pytest.mark.parametrize("label", LABELS + HOSTILE)
def test_latex_structure(label):
    out = C.latex(label)
    assert _unescaped(out, "{") == _unescaped(out, "}")
    assert _unescaped(out, "$") % 2 == 0 and "$$" not in out
    for special in ("%", "#", "&"):
        assert _unescaped(out, special) == 0, special
    # outside math, no bare _ or ^ (they are math-only in TeX)
    outside = re.sub(r"(?<!\\)\$.*?(?<!\\)\$", "", out)
    assert _unescaped(outside, "_") == 0 and _unescaped(outside, "^") == 0


def test_latex_escapes_every_special():
    assert C.latex("50% $x$ a_b #1 & {y} ~ ^ \\") == (
        r"50\% \$x\$ a\_b \#1 \& \{y\} \textasciitilde{} \textasciicircum{} \textbackslash{}"
    )
    assert C.latex("NH2NH2*") == r"NH$_{2}$NH$_{2}\ast$"  # one math group, not $..$$..$


def test_callers_use_the_module():
    """The label functions of notation and the plotters are thin calls into chemtext."""
    from ecatlab.notation import Species
    from ecatlab.plotting import diagram, network

    assert Species.parse("NNH2*").latex() == C.mathtext("NNH2*")
    assert diagram.state_label_text("2 H2O(l) + *") == C.unicode("2 H2O(l) + *")
    assert diagram.state_label_mathtext("O* + OH*") == C.mathtext("O* + OH*")
    assert network.state_mathtext("O* + CH4(g)") == C.mathtext("O*") + "\n+ " + C.mathtext("CH4(g)")
