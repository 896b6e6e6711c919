"""Limiting-potential tables: values from the engine, units in headers, four export formats."""

import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pytest
from scipy.stats import rankdata

from ecatlab.che import limiting_potentials
from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab import tables as T


@pytest.fixture(scope="module")
def lp():
    return limiting_potentials(demo_energies(), ["orr-4e", "her-volmer-heyrovsky", "co2rr-co"], pH=1, scale="RHE")


def test_display_table_values_headers_and_docs(lp):
    t = T.limiting_potential_table(lp)
    assert list(t.columns[:6]) == ["surface", "pathway", "U_L [V vs RHE]", "U_eq [V vs RHE]", "eta [V]", "potential-determining step"]
    np.testing.assert_array_equal(t["U_L [V vs RHE]"].to_numpy(), lp["limiting_potential"].to_numpy())
    np.testing.assert_array_equal(t["eta [V]"].to_numpy(), lp["overpotential"].to_numpy())
    # co2rr-co has a chemical desorption step, so that column is added
    assert "max chemical dG [eV]" in t.columns
    for col in t.columns:
        assert col in t.attrs["columns"]
    assert "[V vs RHE]" in t.attrs["columns"]["U_L [V vs RHE]"]
    # U_eq on the RHE scale: ORR 1.229 V, HER 0 V (Bard, Parsons & Jordan, Standard Potentials in
    # Aqueous Solution, 1985); independent of pH on the RHE scale
    ueq = dict(zip(lp["pathway"], lp["equilibrium_potential"]))
    assert ueq["orr-4e"] == pytest.approx(1.229, abs=0.002)
    assert ueq["her-volmer-heyrovsky"] == pytest.approx(0.0, abs=1e-9)
    she = T.limiting_potential_table(limiting_potentials(demo_energies(), "orr-4e", scale="SHE"))
    assert "U_L [V vs SHE]" in she.columns


def test_caption_names_conditions(lp):
    cap = T.table_caption(lp)
    assert "pH 1" in cap and "298.15 K" in cap and "V vs RHE" in cap
    assert "references H2(g), H2O(l)" in cap
    assert "illustrative_screening.csv" in cap


def test_ranking_matches_scipy_rankdata(lp):
    # the ranking rule: unblocked before blocked, then lower G_max; scipy.stats.rankdata on the
    # composite key (blocked * 1000 eV + G_max) is the independent implementation
    ranked = T.rank_surfaces(lp)
    for key, group in lp.groupby("pathway", sort=False, observed=True):
        mine = ranked[ranked["pathway"] == key]
        composite = group["blocked"].to_numpy(dtype=float) * 1000.0 + group["G_max"].to_numpy()
        expected = rankdata(composite, method="min")
        by_surface = dict(zip(group["surface"], expected))
        assert [int(r) for r in mine["rank"]] == [int(by_surface[s]) for s in mine["surface"]]
        b = mine["blocked"].to_numpy(dtype=bool)
        assert not np.any(b[:-1] & ~b[1:]), "a blocked surface ranks ahead of an unblocked one"
        for flag in (False, True):
            assert np.all(np.diff(mine["G_max"].to_numpy()[b == flag]) >= 0)
    assert list(pd.unique(ranked["pathway"])) == ["orr-4e", "her-volmer-heyrovsky", "co2rr-co"]


def test_missing_surfaces_rank_last_and_show_na():
    matrix = pd.DataFrame({"H*": [0.1, np.nan, -0.3], "OH*": [1.0, 1.0, 1.0]}, index=["A", "B", "C"])
    with pytest.warns(Warning):
        lp = limiting_potentials(EnergyTable.from_matrix(matrix), "her-volmer-heyrovsky")
    ranked = T.rank_surfaces(lp)
    assert list(ranked["surface"]) == ["A", "C", "B"]
    assert ranked["rank"].isna().tolist() == [False, False, True]
    t = T.limiting_potential_table(lp)
    assert "missing species" in t.columns
    md = T.to_markdown(t)
    assert "| B " in md and "H*" in md
    # a missing number is an em dash, explained in the caption above the table (never "nan")
    assert "— |" in md and "nan" not in md.lower() and "n/a" not in md
    assert md.index(T.MISSING_NOTE) < md.index("| surface")


def test_markdown(lp):
    t = T.limiting_potential_table(lp.head(3))
    md = T.to_markdown(t)
    caption, table_text = md.split("\n\n", 1)
    assert caption.startswith("**Table.** ILLUSTRATIVE data")  # the demo numbers are invented
    lines = table_text.strip().splitlines()
    assert lines[0].startswith("| surface | pathway | U_L [V vs RHE]")
    assert set(lines[1].replace("|", "").split()) <= {"-" * n for n in range(3, 40)} | {"-" * n + ":" for n in range(2, 40)}
    rows = [ln for ln in lines[2:] if ln.startswith("|")]
    assert len(rows) == 3
    first = [c.strip() for c in rows[0].strip("|").split("|")]
    assert first[2] == f"{lp['limiting_potential'].iloc[0]:.3f}"  # potentials: 3 decimals
    assert "pH 1" in caption
    assert T.to_markdown(t, decimals=4).count(f"{lp['limiting_potential'].iloc[0]:.4f}") == 1


def test_latex_booktabs(lp):
    t = T.limiting_potential_table(lp.head(4))
    tex = T.to_latex(t, label="tab:x")
    for token in (r"\toprule", r"\midrule", r"\bottomrule", r"\caption{", r"\label{tab:x}", r"\begin{tabular}{llrrrl"):
        assert token in tex
    body = tex.split(r"\midrule")[1].split(r"\bottomrule")[0].strip().splitlines()
    assert len(body) == 4 and all(line.rstrip().endswith(r"\\") for line in body)
    assert body[0].count("&") == len(t.columns) - 1
    assert r"$U_\mathrm{L}$ / V vs RHE" in tex
    assert r"$\rightarrow$" in tex and r"H$^{+}$" in tex
    assert f"{lp['overpotential'].iloc[0]:.3f}" in body[0]
    assert tex.index(r"\caption{") < tex.index(r"\begin{tabular}")  # caption above
    # braces balance (a common LaTeX breakage)
    assert tex.count("{") - tex.count(r"\{") == tex.count("}") - tex.count(r"\}")


def test_html_parses_and_holds_values(lp):
    t = T.limiting_potential_table(lp)
    root = ET.fromstring(T.to_html(t))
    assert root.tag == "table"
    assert "pH 1" in "".join(root.find("caption").itertext())
    rows = root.find("tbody").findall("tr")
    assert len(rows) == len(lp)
    cells = ["".join(td.itertext()) for td in rows[0].findall("td")]
    assert cells[2] == f"{lp['limiting_potential'].iloc[0]:.3f}"
    headers = root.find("thead").findall(".//th")
    assert headers[2].get("title").endswith("[V vs RHE]")
    assert "<sub>2</sub>" in T.to_html(t)  # O2, H2O in the step equations
    assert "co<sub>" not in T.to_html(t)  # pathway keys are not chemistry


def test_export_files_and_csv_round_trip(tmp_path, lp):
    t = T.limiting_potential_table(lp)
    for suffix in ("csv", "md", "tex", "html"):
        p = T.export_table(t, tmp_path / f"lp.{suffix}")
        assert p.stat().st_size > 200
    text = (tmp_path / "lp.csv").read_text()
    assert text.startswith("# ILLUSTRATIVE data")  # the label travels into the CSV as a comment line
    back = pd.read_csv(tmp_path / "lp.csv", comment="#")
    # CSV_DECIMALS = 6: within half a micro-volt of the engine
    np.testing.assert_allclose(back["U_L [V vs RHE]"].to_numpy(), lp["limiting_potential"].to_numpy(), rtol=0, atol=5e-7)
    assert set(back["scale"]) == {"RHE"} and set(back["pH"]) == {1} and set(back["T [K]"]) == {298.15}
    assert ",1,298.15" in text and "298.1500" not in text and "1.0000" not in text
    with pytest.raises(ValueError, match="unknown table format"):
        T.export_table(t, tmp_path / "lp.xlsx")


def test_overpotential_matrix(lp):
    m = T.overpotential_matrix(lp)
    assert list(m.columns) == ["orr-4e", "her-volmer-heyrovsky", "co2rr-co"]
    row = lp[(lp["surface"] == "SAS-02") & (lp["pathway"] == "orr-4e")]
    assert m.loc["SAS-02", "orr-4e"] == row["overpotential"].iloc[0]
    md = T.to_markdown(m)
    assert md.split("\n\n", 1)[1].splitlines()[2].startswith("| ALY-01")


def test_wrong_input_is_a_clear_error():
    from ecatlab.errors import EcatlabError

    with pytest.raises(T.TableInputError, match="limiting_potentials"):
        T.limiting_potential_table(pd.DataFrame({"a": [1]}))
    assert issubclass(T.TableInputError, EcatlabError) and issubclass(T.TableInputError, ValueError)
    with pytest.raises(ValueError, match="unknown column"):
        T.limiting_potential_table(limiting_potentials(demo_energies(), "orr-4e"), columns=["surface", "bogus"])
