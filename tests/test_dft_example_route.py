"""The three-command route on the ILLUSTRATIVE example tree demo_data/dft_example:

    ecatlab ingest demo_data/dft_example -o energies.csv --corrections demo_data/dft_example/corrections.csv
    ecatlab table energies.csv --pathway orr-4e oer-4e her-volmer-heyrovsky
    ecatlab report energies.csv --pathway orr-4e oer-4e her-volmer-heyrovsky -o report.html

Every number of the route is checked: E against a hand computation from the invented totals, the
corrections against ecatlab.thermochemistry and against an independent harmonic-oscillator
computation (scipy.constants; ase.thermochemistry.HarmonicThermo), G against the documented
bookkeeping, and the limiting potentials against ecatlab.che and a hand computation. The
committed tree is checked byte for byte against a fresh regeneration, so it cannot drift.
"""

import matplotlib

matplotlib.use("Agg")

import importlib.util
import io
import math
import re
import pathlib

import numpy as np
import pandas as pd
import pytest
import scipy.constants as sc

from ecatlab.che import limiting_potentials
from ecatlab.cli import main
from ecatlab.energies import read_energies
from ecatlab.thermochemistry import HarmonicAdsorbate

ROOT = pathlib.Path(__file__).resolve().parents[1]
TREE = ROOT / "demo_data" / "dft_example"
PATHWAYS = ["orr-4e", "oer-4e", "her-volmer-heyrovsky"]


def _generator():
    spec = importlib.util.spec_from_file_location("make_dft_example", ROOT / "demo_data" / "make_dft_example.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


GEN = _generator()
T = GEN.TOTALS  # the INVENTED totals (eV) the tree was written from

# composition balance by hand against H2(g) and H2O(l): (n_H2, n_H2O)
BALANCE = {"OH*": (-0.5, 1), "O*": (-1, 1), "OOH*": (-1.5, 2), "H*": (0.5, 0)}


def hand_E(surface, species):
    n_h2, n_h2o = BALANCE[species]
    return T[(surface, species[:-1])] - T[(surface, "slab")] - n_h2 * T[("gas", "H2")] - n_h2o * T[("gas", "H2O")]


def test_committed_tree_is_what_the_generator_writes(tmp_path):
    pytest.importorskip("ase")
    fresh = GEN.write_tree(tmp_path / "dft_example")
    committed = sorted(p.relative_to(TREE).as_posix() for p in TREE.rglob("*") if p.is_file())
    regenerated = sorted(p.relative_to(fresh).as_posix() for p in fresh.rglob("*") if p.is_file())
    assert committed == regenerated
    for rel in committed:
        assert (TREE / rel).read_bytes() == (fresh / rel).read_bytes(), f"{rel} differs: run python demo_data/make_dft_example.py"
    size = sum((TREE / rel).stat().st_size for rel in committed)
    assert size < 300_000, f"example tree is {size} bytes; keep it small"


def test_tree_is_labelled_illustrative():
    text = (TREE / "README.txt").read_text()
    assert "INVENTED NUMBERS, NOT CALCULATIONS" in text and "Do not cite" in text
    assert "INVENTED" in (TREE / "corrections.csv").read_text()
    assert "dft_example" in (ROOT / "demo_data" / "README.md").read_text()


@pytest.fixture(scope="module")
def route(tmp_path_factory):
    """Run the three commands once; return (energies.csv path, table stdout, report text)."""
    work = tmp_path_factory.mktemp("route")
    csv = work / "energies.csv"
    outputs = []
    import contextlib

    for argv in (
        ["ingest", TREE, "-o", csv, "--corrections", TREE / "corrections.csv"],
        ["table", csv, "--pathway", *PATHWAYS],
        ["report", csv, "--pathway", *PATHWAYS, "-o", work / "report.html"],
    ):
        buf, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(buf), contextlib.redirect_stderr(err):
            code = main([str(a) for a in argv])
        assert code == 0, err.getvalue()
        outputs.append(buf.getvalue())
    return csv, outputs[1], (work / "report.html").read_text(encoding="utf-8")


def test_ingest_E_matches_hand_computation(route):
    csv, _, _ = route
    table = pd.read_csv(csv, comment="#")
    assert len(table) == 8 and set(table["surface"]) == {"DEMO-A", "DEMO-B"}
    for _, row in table.iterrows():
        assert row["E"] == pytest.approx(hand_E(row["surface"], row["species"]), abs=1e-6), (row["surface"], row["species"])
    # spot value written out: E(OOH*, DEMO-A) = -86.665 + 72 - 2(-14.22) + 1.5(-6.77) = 3.62 eV
    ooh = table[(table.surface == "DEMO-A") & (table.species == "OOH*")].iloc[0]
    assert ooh["E"] == pytest.approx(3.62, abs=1e-6)
    assert ooh["functional"] == "PBE" and ooh["date"] == "2025-01-15"


def _harmonic_independent(freqs_cm, temperature=298.15):
    """ZPE, CpdT, TS (eV) of independent harmonic oscillators written out with scipy.constants
    (textbook statistical mechanics, e.g. McQuarrie, Statistical Mechanics, ch. 6)."""
    eps = sc.h * sc.c * 100 * np.asarray(freqs_cm) / sc.e  # eV
    x = eps / (sc.k / sc.e * temperature)
    zpe = 0.5 * eps.sum()
    cpdt = (eps / np.expm1(x)).sum()
    ts = (sc.k / sc.e * temperature) * (x / np.expm1(x) - np.log1p(-np.exp(-x))).sum()
    return zpe, cpdt, ts


def test_vibrational_corrections(route):
    csv, _, _ = route
    table = pd.read_csv(csv, comment="#").set_index(["surface", "species"])
    for (surface, name), (kind, freqs) in GEN.VIBRATIONS.items():
        row = table.loc[(surface, name + "*")]
        ref = HarmonicAdsorbate.from_frequencies(freqs, "cm^-1").correction(298.15)
        assert row["ZPE"] == pytest.approx(ref.zpe, abs=1e-6)
        assert row["CpdT"] == pytest.approx(ref.heat_integral, abs=1e-6)
        assert row["TS"] == pytest.approx(ref.ts, abs=1e-6)
        zpe, cpdt, ts = _harmonic_independent(freqs)
        assert (row["ZPE"], row["CpdT"], row["TS"]) == pytest.approx((zpe, cpdt, ts), abs=2e-6)
        expected_file = "OUTCAR" if kind == "outcar" else "vasprun.xml"
        assert row["vibrations_source"].endswith(f"{surface}/{name}/vib/{expected_file}")
    # and against ase.thermochemistry (reference library) for one adsorbate
    thermo = pytest.importorskip("ase.thermochemistry")
    freqs = GEN.VIBRATIONS[("DEMO-A", "OOH")][1]
    h = thermo.HarmonicThermo(vib_energies=[sc.h * sc.c * 100 * f / sc.e for f in freqs], potentialenergy=0.0)
    row = table.loc[("DEMO-A", "OOH*")]
    assert h.get_helmholtz_energy(298.15, verbose=False) == pytest.approx(row["ZPE"] + row["CpdT"] - row["TS"], abs=2e-6)


def test_corrections_table_rows(route):
    csv, _, _ = route
    table = pd.read_csv(csv, comment="#").set_index(["surface", "species"])
    given = {sp: (zpe, cpdt, ts) for sp, zpe, cpdt, ts in GEN.CORRECTIONS}
    from_table = [("DEMO-B", "O*"), ("DEMO-A", "H*"), ("DEMO-B", "H*")]
    for key in from_table:
        assert tuple(table.loc[key, ["ZPE", "CpdT", "TS"]]) == pytest.approx(given[key[1]], abs=1e-9)
        assert "corrections table" in table.loc[key, "corrections_note"]
    with_vib = {(s, n + "*") for s, n in GEN.VIBRATIONS}
    assert set(table.index) - set(from_table) == with_vib
    assert all("harmonic adsorbate at 298.15 K" in table.loc[k, "corrections_note"] for k in with_vib)


def test_G_and_limiting_potentials(route):
    csv, printed, report = route
    energies = read_energies(csv)
    raw = pd.read_csv(csv, comment="#").set_index(["surface", "species"])
    ref = energies.scheme.reference_correction()
    g = energies.frame.set_index(["surface", "species"])["G"]
    for (surface, species), row in raw.iterrows():
        n_h2, n_h2o = BALANCE[species]
        expected = row["E"] + row["ZPE"] + row["CpdT"] - row["TS"] - (n_h2 * ref["H2(g)"] + n_h2o * ref["H2O(l)"])
        assert g[(surface, species)] == pytest.approx(expected, abs=1e-9)
    lp = limiting_potentials(energies, PATHWAYS)
    o2 = energies.scheme.molecule_free_energy("O2(g)")
    # 4 x 1.229 V: standard potential of O2 + 4 H+ + 4 e- -> 2 H2O (CRC Handbook, electrochemical series)
    assert o2 == pytest.approx(4 * 1.229, abs=0.005)
    for surface in ("DEMO-A", "DEMO-B"):
        G = {sp: g[(surface, sp)] for sp in BALANCE}
        orr = [G["OOH*"] - o2, G["O*"] - G["OOH*"], G["OH*"] - G["O*"], -G["OH*"]]
        oer = [G["OH*"], G["O*"] - G["OH*"], G["OOH*"] - G["O*"], o2 - G["OOH*"]]
        her = [G["H*"], -G["H*"]]
        hand = {"orr-4e": min(-d for d in orr), "oer-4e": max(oer), "her-volmer-heyrovsky": min(-d for d in her)}
        for key, value in hand.items():
            row = lp[(lp.surface == surface) & (lp.pathway == key)].iloc[0]
            assert row["limiting_potential"] == pytest.approx(value, abs=1e-9), (surface, key)
            # the `ecatlab table` output (CSV, 6 decimals) and the report (3 decimals) carry the same numbers
            line = next(l for l in printed.splitlines() if l.startswith(f"{surface},{key},"))
            assert float(line.split(",")[2]) == pytest.approx(round(value, 6), abs=1e-9)
            assert f'<td class="num">{value:.3f}</td>' in report
    # the illustrative outcome the docs describe
    best = lp[lp.pathway == "orr-4e"].set_index("surface")["limiting_potential"]
    assert best["DEMO-A"] == pytest.approx(0.80, abs=0.01) and best["DEMO-B"] == pytest.approx(0.67, abs=0.01)


def test_one_notebook_cell_route_equals_cli(route):
    from ecatlab.ingest import energy_table_from_vasp

    csv, _, _ = route
    frame = energy_table_from_vasp(TREE, corrections=TREE / "corrections.csv")
    direct = limiting_potentials(read_energies(frame), PATHWAYS)
    via_csv = limiting_potentials(read_energies(csv), PATHWAYS)
    # the CSV rounds to 1e-6 eV
    assert np.allclose(direct["limiting_potential"], via_csv["limiting_potential"], atol=1e-5)
    assert list(direct["determining_step"]) == list(via_csv["determining_step"])
    assert math.isfinite(direct["limiting_potential"].sum())


def test_illustrative_label_travels_through_every_output(route, tmp_path):
    """ingest -> table (CSV and Markdown) -> report: the tree's ILLUSTRATIVE label is in each output."""
    import contextlib

    csv, printed, report = route
    text = csv.read_text(encoding="utf-8")
    assert text.startswith("# ILLUSTRATIVE EXAMPLE -- INVENTED NUMBERS, NOT CALCULATIONS")
    rows = pd.read_csv(csv, comment="#")
    assert set(rows["provenance"]) == {"ILLUSTRATIVE EXAMPLE -- INVENTED NUMBERS, NOT CALCULATIONS"}  # on every row
    assert printed.startswith("# ILLUSTRATIVE data")  # the table's CSV caption comment
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        assert main(["table", str(csv), "--pathway", *PATHWAYS, "--format", "markdown"]) == 0
    assert buf.getvalue().startswith("**Table.** ILLUSTRATIVE data")
    banner = report.split('<div class="banner">')[1].split("</div>")[0]
    assert banner.startswith("ILLUSTRATIVE data")
    captions = re.findall(r"<caption[^>]*>(.*?)</caption>", report, flags=re.S)
    assert captions and all("ILLUSTRATIVE" in c for c in captions)
    # the route writes only where it is told: nothing left in the tree or the working folder
    assert not (TREE / "energies.csv").exists() and not (ROOT / "energies.csv").exists() and not (ROOT / "report.html").exists()


def test_real_tree_without_the_label_stays_unlabelled(tmp_path):
    """A tree without an ILLUSTRATIVE README gets no label (the label is not stamped on everything)."""
    import shutil

    from ecatlab.ingest import energy_table_from_vasp, illustrative_label

    copy = tmp_path / "tree"
    shutil.copytree(TREE, copy)
    (copy / "README.txt").write_text("Pt(111) runs of 2025, PBE\n", encoding="utf-8")
    assert illustrative_label(copy) == ""
    frame = energy_table_from_vasp(copy, corrections=copy / "corrections.csv")
    assert "provenance" not in frame.columns and not frame.attrs.get("illustrative")
    assert illustrative_label(TREE) == "ILLUSTRATIVE EXAMPLE -- INVENTED NUMBERS, NOT CALCULATIONS"
