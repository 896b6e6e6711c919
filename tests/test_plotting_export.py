"""Figure export: SVG keeps text as text, PDF embeds TrueType fonts, PNG honours dpi."""

import matplotlib

matplotlib.use("Agg")

import re
import xml.etree.ElementTree as ET

import matplotlib.image as mpimg
import matplotlib.pyplot as plt
import pytest

from ecatlab.demo import demo_energies
from ecatlab.plotting.diagram import plot_free_energy_diagram
from ecatlab.plotting.export import save_figure, svg_fragment

SVG_NS = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def fig():
    drawn = plot_free_energy_diagram(demo_energies(), "orr-4e", "ALY-01", potential=0.0)
    yield drawn.figure
    plt.close(drawn.figure)


def test_svg_pdf_png_written_and_open(tmp_path, fig):
    paths = save_figure(fig, tmp_path / "orr", formats=("svg", "pdf", "png"), dpi=150)
    assert [p.name for p in paths] == ["orr.svg", "orr.pdf", "orr.png"]
    for p in paths:
        assert p.stat().st_size > 1000
    # SVG: well-formed XML whose <text> elements carry the labels as real text
    root = ET.parse(paths[0]).getroot()
    assert root.tag == SVG_NS + "svg"
    texts = ["".join(t.itertext()) for t in root.iter(SVG_NS + "text")]
    for label in ("OOH\u2217", "O\u2217", "OH\u2217", "H₂O(l)", "O₂(g)"):  # site mark on the baseline (ecatlab.chemtext)
        assert any(label in t for t in texts), label
    assert any("ΔG" in t for t in texts)
    # PDF: a PDF file with embedded TrueType fonts (FontFile2), not Type 3 glyph procedures
    data = paths[1].read_bytes()
    assert data.startswith(b"%PDF-")
    assert b"/FontFile2" in data and b"/Subtype /Type3" not in data
    # PNG: opens; RGBA image
    img = mpimg.imread(paths[2])
    assert img.ndim == 3 and img.shape[0] > 100 and img.shape[1] > 100


def test_png_dpi_scales_pixels(tmp_path, fig):
    (low,) = save_figure(fig, tmp_path / "low.png", dpi=100)
    (high,) = save_figure(fig, tmp_path / "high.png", dpi=200)
    a, b = mpimg.imread(low), mpimg.imread(high)
    assert b.shape[1] / a.shape[1] == pytest.approx(2.0, rel=0.03)
    assert b.shape[0] / a.shape[0] == pytest.approx(2.0, rel=0.03)


def test_suffix_picks_format_and_bad_input_is_refused(tmp_path, fig):
    (p,) = save_figure(fig, tmp_path / "sub" / "x.pdf")
    assert p.read_bytes().startswith(b"%PDF-")
    with pytest.raises(ValueError, match="suffix"):
        save_figure(fig, tmp_path / "x.jpeg")
    with pytest.raises(ValueError, match="unknown figure format"):
        save_figure(fig, tmp_path / "x", formats=("svg", "tiff"))
    with pytest.raises(ValueError, match="dpi"):
        save_figure(fig, tmp_path / "x.png", dpi=0)


def test_svg_output_is_reproducible(tmp_path, fig):
    (a,) = save_figure(fig, tmp_path / "a.svg")
    (b,) = save_figure(fig, tmp_path / "b.svg")
    assert a.read_text() == b.read_text()
    assert "<dc:date>" not in a.read_text()


def test_svg_fragment_is_inline_and_self_contained(fig):
    frag = svg_fragment(fig, element_id="fig1")
    assert frag.startswith('<svg id="fig1"')
    assert "<!DOCTYPE" not in frag and "<?xml" not in frag
    assert "http" not in frag and "xlink:" not in frag
    root = ET.fromstring(frag)  # parses on its own (no namespace needed)
    ids = [el.get("id") for el in root.iter() if el.get("id")]
    assert ids and all(i.startswith("fig1") for i in ids)
    refs = re.findall(r'href="#([^"]+)"', frag) + re.findall(r"url\(#([^)]+)\)", frag)
    assert set(refs) <= set(ids)
    assert "OOH*" in "".join(root.itertext())
