"""One-file HTML report: parses, references nothing outside itself, holds the engine's numbers."""

import matplotlib

matplotlib.use("Agg")

import html.parser
import re
import xml.etree.ElementTree as ET

import pandas as pd
import pytest

import ecatlab
from ecatlab.che import limiting_potentials
from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.report import SAFETY_CAUTION, ReportSection, analyse, build_report, render_html, write_report

KEYS = ["orr-4e", "her-volmer-heyrovsky"]
SURFACES = ["ALY-01", "ALY-02", "SAS-01", "SAS-05"]


@pytest.fixture(scope="module")
def report_text():
    extra = ReportSection("Volcano (placeholder from another module)", '<p id="extra-marker">extra section body</p>')
    return build_report(demo_energies(), KEYS, surfaces=SURFACES, pH=2, sections=[extra], top=3)


def _external_refs(text):
    refs = re.findall(r'(?:src|href|action|data)\s*=\s*"([^"]*)"', text, flags=re.I)
    refs += re.findall(r"url\(\s*['\"]?([^)'\"]*)", text, flags=re.I)
    refs += re.findall(r"@import\s+['\"]?([^'\";]+)", text, flags=re.I)
    return [r for r in refs if not r.startswith("#")]


def test_parses_as_xml_and_html(report_text):
    root = ET.fromstring(report_text.split("\n", 1)[1])  # drop the <!DOCTYPE html> line
    assert root.tag == "html"

    class Collector(html.parser.HTMLParser):
        def __init__(self):
            super().__init__()
            self.tags = []

        def handle_starttag(self, tag, attrs):
            self.tags.append(tag)

    c = Collector()
    c.feed(report_text)
    assert c.tags.count("svg") == 2 * len(KEYS)
    assert "script" not in c.tags and "link" not in c.tags and "img" not in c.tags


def test_no_external_references(report_text):
    assert _external_refs(report_text) == []
    assert "http://" not in report_text and "https://" not in report_text
    assert "<script" not in report_text


def test_contains_table_values_and_ranking(report_text):
    lp = limiting_potentials(demo_energies(), KEYS, surfaces=SURFACES, pH=2)
    for _, row in lp.iterrows():
        assert f"<td class=\"num\">{row['limiting_potential']:.2f}</td>" in report_text
        assert f"<td class=\"num\">{row['overpotential']:.2f}</td>" in report_text
    best = lp.loc[lp[lp["pathway"] == "orr-4e"]["overpotential"].idxmin(), "surface"]
    ranking = report_text.split('id="ranking"')[1].split("</section>")[0]
    assert best in ranking
    assert "pH 2" in report_text


def test_contains_inputs_provenance_warnings_and_caution(report_text):
    table = demo_energies()
    assert table.scheme.describe().split(";")[0] in report_text
    assert "G computed from E for 288 rows" in report_text  # EnergyTable.notes
    assert f"ecatlab version <b>{ecatlab.__version__}</b>" in report_text
    assert "ecatlab.report.build_report(" in report_text and "pathways=[&#x27;orr-4e&#x27;" in report_text
    assert SAFETY_CAUTION.split(".")[0] in report_text
    for word in ("CO is toxic", "H2 is flammable", "corrosive"):
        assert word in report_text
    assert 'id="extra-marker"' in report_text and "Volcano (placeholder" in report_text


def test_figures_have_text_labels(report_text):
    svgs = re.findall(r"<svg .*?</svg>", report_text, flags=re.S)
    assert len(svgs) == 2 * len(KEYS)
    for svg in svgs:
        root = ET.fromstring(svg)
        texts = "".join(root.itertext())
        assert "ΔG (eV)" in texts
    assert "OOH*" in "".join(ET.fromstring(svgs[0]).itertext())
    assert "H*" in "".join(ET.fromstring(svgs[2]).itertext())


def test_warnings_are_recorded():
    matrix = pd.DataFrame({"H*": [0.1, float("nan")], "OH*": [1.0, 1.1]}, index=["A", "B"])
    a = analyse(EnergyTable.from_matrix(matrix), ["her-volmer-heyrovsky"], temperature=320.0)
    try:
        cats = {cat for cat, _ in a.warnings}
        assert "MissingDataWarning" in cats and "ConditionsWarning" in cats
        text = render_html(a, command="my exact command --x 1")
    finally:
        a.close()
    warn = text.split('id="warnings"')[1].split("</section>")[0]
    assert "MissingDataWarning" in warn and "B: H*" in warn and "320" in warn
    assert "my exact command --x 1" in text
    # the surface lacking H* is in the table with n/a but has no diagram
    assert len(re.findall(r"<svg ", text)) == 2


def test_write_report(tmp_path):
    path = write_report(tmp_path / "sub" / "r.html", demo_energies(), "co2rr-co", surfaces=["ALY-01"], banner="ILLUSTRATIVE")
    text = path.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>") and 'class="banner"' in text
    assert "co2rr-co" in text and "max chemical dG [eV]" in text
