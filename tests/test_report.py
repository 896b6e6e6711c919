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
    # in-page anchors and inline data (e.g. a colour bar embedded as data:image/png) are self-contained
    return [r for r in refs if not r.startswith(("#", "data:"))]


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
        assert f"<td class=\"num\">{row['limiting_potential']:.3f}</td>" in report_text  # potentials: 3 decimals
        assert f"<td class=\"num\">{row['overpotential']:.3f}</td>" in report_text
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
    # the site mark is the centred asterisk operator on the baseline (ecatlab.chemtext), not a superscript
    assert "OOH\u2217" in "".join(ET.fromstring(svgs[0]).itertext())
    assert "H\u2217" in "".join(ET.fromstring(svgs[2]).itertext())


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


# -- volcano and best-route sections -------------------------------------------------------------
@pytest.fixture(scope="module")
def extended_report():
    return build_report(demo_energies(), ["orr-4e"], volcanoes=[("orr-4e", "OH*")], routes=[("CO2", "CH4")], pH=1)


def _section(text, anchor):
    body = text.split(f'<section id="{anchor}">')[1].split("</section>")[0]
    return ET.fromstring(f"<div>{body}</div>")


def _rows(element):
    return [["".join(td.itertext()).strip() for td in tr.findall("td")] for tr in element.iter("tr") if tr.findall("td")]


def test_extra_sections_are_self_contained(extended_report):
    root = ET.fromstring(extended_report.split("\n", 1)[1])
    assert root.tag == "html"
    assert _external_refs(extended_report) == []
    assert "http://" not in extended_report and "https://" not in extended_report and "<script" not in extended_report
    nav = extended_report.split("<nav>")[1].split("</nav>")[0]
    assert "Volcano: orr-4e vs OH*" in nav and "Best routes: CO2(g) to CH4(g)" in nav
    # 2 diagrams + volcano + network; the ids inside the new sections are unique on the page
    assert extended_report.count("<svg ") == 4
    all_ids = re.findall(r'\bid="([^"]+)"', extended_report)
    for anchor in ("volcano-orr-4e-oh", "routes-co2-g-ch4-g"):
        body = extended_report.split(f'<section id="{anchor}">')[1].split("</section>")[0]
        ids = re.findall(r'\bid="([^"]+)"', body)
        assert ids and all(all_ids.count(i) == 1 for i in ids) and anchor in all_ids


def test_volcano_section_numbers_equal_volcano_summary(extended_report):
    from ecatlab.volcano import volcano_summary

    summary = volcano_summary(demo_energies(), "orr-4e", "OH*", pH=1).set_index("quantity")["value"]
    sec = _section(extended_report, "volcano-orr-4e-oh")
    shown = {r[0]: r[1] for r in _rows(sec)}
    for quantity in ("optimal descriptor", "best limiting potential", "minimum overpotential", "equilibrium potential"):
        assert shown[quantity] == f"{summary[quantity]:.3f}", quantity
    # outside source: U_eq of O2 + 4 H+ + 4 e- -> 2 H2O is 1.229 V vs RHE (CRC Handbook, electrochemical series)
    assert shown["equilibrium potential"] == "1.229"
    assert shown["pH"] == "1" and shown["apex at range edge"] == "no"
    fitted = [r for r in _rows(sec) if r[0] == "scaling relation"]
    assert len(fitted) == 2 and all("n = 12" in r[3] for r in fitted)
    texts = "".join(sec.find(".//svg").itertext())
    assert "SAS-05" in texts  # surfaces are labelled in the figure


def test_routes_section_numbers_equal_network_best_routes(extended_report):
    from ecatlab.network import NetworkAnalysis, build_network

    table = demo_energies()
    an = NetworkAnalysis(build_network(table, "CO2"), table, pH=1)
    best = an.best_routes("CH4").set_index("surface")
    her = limiting_potentials(table, "her-volmer-heyrovsky", pH=1).set_index("surface")["limiting_potential"]
    sec = _section(extended_report, "routes-co2-g-ch4-g")
    rows = _rows(sec.find(".//table"))
    assert len(rows) == len(best) == 12
    shown_order = [r[0] for r in rows]
    assert shown_order == list(best["limiting_potential"].sort_values(ascending=False, kind="stable").index)
    for surface, u_l, step, _chem, route, _tied, u_her, her_first in rows:
        assert u_l == f"{best.loc[surface, 'limiting_potential']:.3f}"
        assert route == best.loc[surface, "route"].split(" via ")[1]
        # the HTML typesets the step (sub/superscripts, minus sign, arrow)
        assert step.replace(" ", "").replace("−", "-").replace("→", "->").replace("\u2217", "*") == best.loc[surface, "determining_step"].replace(" ", "")
        assert u_her == f"{her[surface]:.3f}"
        assert her_first == ("yes" if her[surface] > best.loc[surface, "limiting_potential"] else "no")
    # the best route is an ordinary pathway: the CHE engine gives the same U_L
    top = shown_order[0]
    engine = limiting_potentials(table, an.best_route(top, "CH4"), pH=1, surfaces=[top]).iloc[0]["limiting_potential"]
    assert engine == pytest.approx(best.loc[top, "limiting_potential"], abs=1e-12)
    caption = "".join(sec.find(".//figcaption").itertext())
    assert top in caption


def test_extra_section_errors_name_the_section():
    from ecatlab.errors import PathwayError, ScalingError

    with pytest.raises(ScalingError, match=r"volcano section orr-4e vs 'CO3\*'.*no energies of CO3\*"):
        build_report(demo_energies(), "orr-4e", surfaces=["ALY-01"], volcanoes=[("orr-4e", "CO3*")])
    with pytest.raises(PathwayError, match=r"routes section CO2 -> C2H6: no molecule 'C2H6'.*known: .*CH4\(g\)"):
        build_report(demo_energies(), "orr-4e", surfaces=["ALY-01"], routes=[("CO2", "C2H6")])


def test_report_lists_scientific_warnings_and_leaks_no_figures():
    import matplotlib.pyplot as plt
    import numpy as np

    from ecatlab.demo import demo_energies
    from ecatlab.energies import EnergyTable
    from ecatlab.pathways import BUILTIN_PATHWAYS
    from ecatlab.report import analyse, build_report

    wide = demo_energies().matrix.copy()
    wide.loc["ALY-01", "OOH*"] = np.nan  # a surface lacking an adsorbate: a MissingDataWarning the report must show
    table = EnergyTable.from_matrix(wide)
    before = len(plt.get_fignums())
    a = analyse(table, list(BUILTIN_PATHWAYS), top=2)  # 13 pathways x 2 figures: more than matplotlib's 20
    assert len(plt.get_fignums()) == before
    assert any(cat == "MissingDataWarning" and "ALY-01" in msg for cat, msg in a.warnings)
    assert not any("figures" in msg and "opened" in msg for _, msg in a.warnings)
    a.close()
    page = build_report(table, ["orr-4e", "co2rr-co"], volcanoes=[("co2rr-co", "CO*")])
    assert "MissingDataWarning" in page and "More than 20 figures" not in page
