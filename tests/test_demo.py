"""Tests of the bundled illustrative demo data and ecatlab.demo."""

import warnings

import numpy as np
import pytest

import ecatlab
from ecatlab.demo import DEMO_LABEL, demo_energies, demo_path
from ecatlab.references import ReferenceScheme


def test_two_copies_of_the_demo_table_agree():
    repo_copy = demo_path().parents[2] / "demo_data" / "illustrative_screening.csv"
    if not repo_copy.exists():
        pytest.skip("not running from a source checkout")
    assert repo_copy.read_text() == demo_path().read_text()


def test_demo_is_labelled_illustrative():
    head = demo_path().read_text().splitlines()[0]
    assert "ILLUSTRATIVE" in head and "invented" in head
    assert "ILLUSTRATIVE" in DEMO_LABEL
    table = demo_energies()
    assert set(table.frame["source"]) == {"illustrative (invented)"}


def test_demo_loads_cleanly_with_e_to_g_conversion():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        table = demo_energies()
    assert len(table.surfaces) == 12 and len(table.species) == 24
    assert any("G computed from E for 288 rows" in n for n in table.notes)
    assert np.isfinite(table.matrix.to_numpy()).all()


def test_reference_corrections_close_to_common_values():
    # commonly used reference corrections at 298.15 K (ZPE, TS in eV; common practice, from memory):
    # H2 0.27 / 0.40, H2O(l at 0.035 bar) 0.56 / 0.67, CO2 0.31 / 0.66, N2 0.15 / 0.59
    common = {"H2(g)": (0.27, 0.40), "H2O(l)": (0.56, 0.67), "CO2(g)": (0.31, 0.66), "N2(g)": (0.15, 0.59)}
    corr = ReferenceScheme().correction_table
    for key, (zpe, ts) in common.items():
        assert corr.loc[key, "ZPE"] == pytest.approx(zpe, abs=0.015), key
        assert corr.loc[key, "TS"] == pytest.approx(ts, abs=0.015), key


def test_every_builtin_pathway_evaluates_on_the_demo():
    r = ecatlab.limiting_potentials(demo_energies(), list(ecatlab.list_pathways().key))
    assert r.limiting_potential.notna().all() and (r.missing_species == "").all()
