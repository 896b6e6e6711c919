"""The one table writer (ecatlab.tables.render_table / export_table) in its four text formats.

Outside references: mistune (a CommonMark/GFM Markdown parser) reads the Markdown tables and
reports the column alignment; pandas.read_csv and the standard library's csv module read the
CSV; xml.etree reads the HTML. LaTeX cannot be compiled here (no TeX): the checks are structural
(longtable environment and its \\endhead, braces balanced; rules of the TeX book, from memory).
Check value: the equilibrium potential of the 4-electron ORR, 1.229 V vs RHE at 298.15 K
(CRC Handbook, electrochemical series: O2 + 4 H+ + 4 e- -> 2 H2O, E0 = 1.229 V).
"""

from __future__ import annotations

import csv
import io
import re
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pytest

import ecatlab
from ecatlab import tables as T
from ecatlab.che import limiting_potentials
from ecatlab.energies import EnergyTable


@pytest.fixture(scope="module")
def demo_lp():
    from ecatlab.pathways import BUILTIN_PATHWAYS

    return limiting_potentials(ecatlab.demo_energies(), list(BUILTIN_PATHWAYS))


@pytest.fixture(scope="module")
def routes_frame():
    """A best-routes table (float electrons, pH and T columns: the 2.0000 / 298.1500 case)."""
    from ecatlab.network import NetworkAnalysis, build_network

    table = ecatlab.demo_energies()
    net = build_network(table, "CO2")
    an = NetworkAnalysis(net, table, surfaces=["ALY-01", "SAS-03"])
    return an.best_routes("CO(g)")


def _md_html(md: str) -> str:
    mistune = pytest.importorskip("mistune")
    return mistune.create_markdown(plugins=["table"])(md)


def test_markdown_parses_caption_above_units_alignment_and_decimals(demo_lp):
    t = T.limiting_potential_table(demo_lp.head(12), columns=["surface", "pathway", "limiting_potential", "equilibrium_potential",
                                                              "overpotential", "determining_step", "max_chemical_dG"])
    md = T.to_markdown(t)
    page = _md_html(md)
    root = ET.fromstring("<div>" + page.replace("<br>", "<br/>") + "</div>")
    first = list(root)[0]
    assert first.tag == "p" and "ILLUSTRATIVE" in "".join(first.itertext())  # caption first, label first
    table = root.find("table")
    heads = [("".join(th.itertext()), th.get("style")) for th in table.find("thead").iter("th")]
    assert heads[2] == ("U_L [V vs RHE]", "text-align:right")
    assert heads[0][1] is None and heads[5][1] is None  # text left
    rows = [["".join(td.itertext()) for td in tr.iter("td")] for tr in table.find("tbody").iter("tr")]
    assert len(rows) == 12
    for j in (2, 3, 4):  # every potential with exactly 3 decimals
        assert all(re.fullmatch(r"-?\d+\.\d{3}", r[j]) for r in rows), [r[j] for r in rows]
    assert {r[3] for r in rows} == {"1.229"}  # U_eq(ORR) = 1.229 V (CRC Handbook)
    assert all(r[6] == "\u2014" for r in rows) and T.MISSING_NOTE in md  # no chemical step: dash, explained
    assert "nan" not in md.lower()


def test_markdown_routes_integers_and_conditions(routes_frame):
    shown = routes_frame.copy()
    shown.attrs = {"caption": "best routes", "columns": routes_frame.attrs["columns"]}
    md = T.render_table(shown, "markdown")
    table = ET.fromstring(_md_html(md).split("</p>\n", 1)[1])
    heads = ["".join(th.itertext()) for th in table.find("thead").iter("th")]
    rows = [["".join(td.itertext()) for td in tr.iter("td")] for tr in table.find("tbody").iter("tr")]
    col = {h.split(" [")[0]: j for j, h in enumerate(heads)}
    assert {r[col["electrons"]] for r in rows} == {"2"} and {r[col["steps"]] for r in rows} == {"2"}
    assert {r[col["pH"]] for r in rows} == {"0.00"} and {r[col["temperature"]] for r in rows} == {"298.15"}
    assert "limiting_potential [V vs RHE]" in heads and "G_max [eV]" in heads and "temperature [K]" in heads
    assert all(re.fullmatch(r"-?\d+\.\d{3}", r[col["limiting_potential"]]) for r in rows)
    assert "2.0000" not in md and "298.1500" not in md and "nan" not in md.lower()


def test_csv_is_machine_readable(routes_frame):
    shown = routes_frame.copy()
    shown.attrs = {"caption": "best routes", "columns": routes_frame.attrs["columns"]}
    text = T.render_table(shown, "csv", csv_comment=True)
    assert text.startswith("# best routes")
    assert "2.0000" not in text and "298.1500" not in text and ",2.0," not in text
    back = pd.read_csv(io.StringIO(text), comment="#")
    assert back["electrons"].dtype.kind == "i" and back["steps"].dtype.kind == "i" and back["rank"].dtype.kind == "i"
    assert back["pH"].tolist() == [0, 0] and back["temperature"].tolist() == [298.15, 298.15]
    np.testing.assert_allclose(back["limiting_potential"], routes_frame["limiting_potential"], rtol=0, atol=5e-7)
    rows = list(csv.reader(io.StringIO(text.split("\n", 1)[1])))
    assert len({len(r) for r in rows if r}) == 1  # every row the same width (stdlib csv reader)


def test_csv_guards_formula_cells_and_leaves_numbers():
    frame = pd.DataFrame({"surface": ["=cmd|' /C calc'!A0", "-0.25", "@SUM(A1)"], "limiting_potential": [-0.25, 0.1, 0.2],
                          "electrons": [2.0, 4.0, 1.0]})
    text = T.render_table(frame, "csv")
    back = pd.read_csv(io.StringIO(text))
    assert back["surface"].tolist() == ["'=cmd|' /C calc'!A0", "-0.25", "'@SUM(A1)"]  # OWASP CSV injection guard
    assert back["limiting_potential"].tolist() == [-0.25, 0.1, 0.2] and back["electrons"].tolist() == [2, 4, 1]


def test_latex_long_table_is_a_longtable(demo_lp):
    t = T.limiting_potential_table(demo_lp, sort=True)
    assert len(t) > T.LONGTABLE_ROWS
    tex = T.to_latex(t)
    assert r"\begin{longtable}" in tex and r"\end{longtable}" in tex and r"\begin{table}" not in tex
    assert tex.index(r"\caption{") < tex.index(r"\endfirsthead") < tex.index(r"\endhead") < tex.index(r"\endlastfoot")
    body = tex.split(r"\endlastfoot")[1].split(r"\end{longtable}")[0].strip().splitlines()
    assert len(body) == len(t)
    assert "ILLUSTRATIVE" in tex.split(r"\caption{")[1].split("}")[0]

    def unescaped(ch):
        return len(re.findall(r"(?<!\\)" + re.escape(ch), tex))

    assert unescaped("{") == unescaped("}") and unescaped("$") % 2 == 0 and "$$" not in tex
    short = T.to_latex(t.head(5))
    assert r"\begin{tabular}" in short and "longtable" not in short
    assert short.index(r"\caption{") < short.index(r"\begin{tabular}")


def test_html_caption_first_and_hostile_names_escaped():
    matrix = pd.DataFrame({"H*": [0.1, -0.2]}, index=["<script>alert(1)</script>", "A&B"])
    lp = limiting_potentials(EnergyTable.from_matrix(matrix), "her-volmer-heyrovsky")
    out = T.to_html(T.limiting_potential_table(lp))
    root = ET.fromstring(out)
    assert list(root)[0].tag == "caption"
    assert "<script" not in out and "&lt;script&gt;" in out and "A&amp;B" in out
    cells = ["".join(td.itertext()) for td in root.find("tbody").find("tr").findall("td")]
    assert cells[0] in ("<script>alert(1)</script>", "A&B")
    # not illustrative: no label
    assert "ILLUSTRATIVE" not in out and not T.is_illustrative(lp)


def test_render_table_is_what_the_cli_prints(capsys):
    from ecatlab.cli import main

    assert main(["table", str(ecatlab.demo_path()), "--pathway", "orr-4e", "--format", "markdown"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("**Table.** ILLUSTRATIVE data")
    header = next(ln for ln in out.splitlines() if ln.startswith("| surface"))
    assert [c.strip() for c in header.strip("|").split("|")][2:5] == [
        "limiting_potential [V vs RHE]", "equilibrium_potential [V vs RHE]", "overpotential [V]"]
    lines = [ln for ln in out.splitlines() if ln.startswith("| ALY-01")]
    assert lines and "1.229" in lines[0]


def test_latex_escapes_hostile_surface_names():
    r"""A surface name is user text: TeX specials escaped, no \input executed, structure intact."""
    matrix = pd.DataFrame({"H*": [0.1, -0.2, 0.3]}, index=[r"\input{/etc/passwd}", "50%_A&B #1", "$x^2$ ~y"])
    lp = limiting_potentials(EnergyTable.from_matrix(matrix), "her-volmer-heyrovsky")
    tex = T.to_latex(T.limiting_potential_table(lp))
    body = tex.split(r"\midrule")[1].split(r"\bottomrule")[0]
    assert r"\textbackslash{}input\{/etc/passwd\}" in body and r"\input{" not in body
    assert r"50\%\_A\&B \#1" in body and r"\$x\textasciicircum{}2\$ \textasciitilde{}y" in body
    rows = [ln for ln in body.strip().splitlines() if ln.strip()]
    assert len(rows) == 3 and all(len(re.findall(r"(?<!\\)&", r)) == len(T.limiting_potential_table(lp).columns) - 1 for r in rows)
