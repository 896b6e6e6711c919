"""Ingestion of DFT results: total-energy tables, VASP folders (files written by the tests with
invented numbers by ``tests/fake_vasp.py``), an ASE database, and the bad-input errors.

External sources: pymatgen (Vasprun, Poscar, Structure), scipy.constants (conversion of the
dynamical-matrix eigenvalues), ase (fcc111 slab builder, database).
"""

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import scipy.constants as sc

from ecatlab.errors import IngestError
from ecatlab.ingest import (
    adsorption_energies,
    dynmat_eigenvalues_to_cm,
    energy_table_from_vasp,
    outcar_frequencies_cm,
    read_vasp_modes,
    read_vasp_run,
)
from fake_vasp import (
    add_adsorbate,
    cm_to_eigenvalue,
    dynmat_block,
    fcc111_slab,
    molecule_in_box,
    write_outcar_modes,
    write_run,
    write_vasprun,
    write_vib_run,
)


def pt111_slab():
    """Pt(111) 2x2x3 slab from ase.build.fcc111 (a = 3.92 A, Pt lattice constant from memory)."""
    return fcc111_slab("Pt", a=3.92, size=(2, 2, 3), vacuum=7.0)


def test_synthetic_eigenvalues_against_scipy():
    # the writer's inverse conversion, checked against scipy.constants written out here
    freqs = np.array([3650.0, 410.0, -45.0])
    omega = 2 * math.pi * sc.c * 100 * freqs  # rad/s
    expected = -np.sign(freqs) * omega**2 * sc.angstrom**2 * sc.atomic_mass / sc.e
    assert np.allclose(cm_to_eigenvalue(freqs), expected, rtol=1e-12)


@pytest.fixture(scope="module")
def real_slab(tmp_path_factory):
    from pymatgen.io.vasp import Poscar

    path = tmp_path_factory.mktemp("poscar") / "POSCAR"
    Poscar(pt111_slab()).write_file(path)
    structure = Poscar.from_file(path).structure
    assert structure.composition.reduced_formula == "Pt" and len(structure) == 12
    return structure


# invented energies (eV) for the tests; not DFT results
E = {"slab": -72.000, "OH": -82.500, "O": -77.400, "OOH": -87.300, "H2": -6.770, "H2O": -14.220}
VIB = {"OH": [3650.0, 760.0, 720.0, 410.0, 320.0, 90.0], "O": [480.0, 350.0, 340.0],
       "OOH": [3500.0, 1350.0, 900.0, 620.0, 420.0, 300.0, 210.0, 130.0, 70.0]}


def make_tree(root, slab, vib=True, outcar=False):
    root = Path(root)
    write_run(root / "gas" / "H2", molecule_in_box(["H", "H"], 0.74), E["H2"])
    write_run(root / "gas" / "H2O", molecule_in_box(["O", "H", "H"], 0.97), E["H2O"])
    write_run(root / "Pt111" / "slab", slab, E["slab"])
    for name, atoms in (("OH", ["O", "H"]), ("O", ["O"]), ("OOH", ["O", "O", "H"])):
        s = add_adsorbate(slab, atoms)
        write_run(root / "Pt111" / name, s, E[name])
        if vib and outcar:
            write_outcar_modes(root / "Pt111" / name / "vib" / "OUTCAR", VIB[name])
        elif vib:
            write_vib_run(root / "Pt111" / name / "vib", s, E[name], VIB[name], len(atoms))
    return root


# -- energies ---------------------------------------------------------------------------------------
def test_read_vasp_run_energy_and_provenance(tmp_path, real_slab):
    write_run(tmp_path / "run", real_slab, -72.0, gga="RP", date="2023 11 02")
    run = read_vasp_run(tmp_path / "run")
    assert run.energy_ev == pytest.approx(-72.0, abs=1e-9)  # e_0_energy of the last ionic step
    assert "e_0_energy" in run.energy_key
    assert run.functional == "RPBE" and run.date == "2023-11-02"
    assert run.n_atoms == 12 and run.elements == {"Pt": 12.0}


def test_unconverged_runs_are_errors_naming_the_file(tmp_path, real_slab):
    write_run(tmp_path / "elec", real_slab, -72.0, nelm=8, scf_steps=8)
    with pytest.raises(IngestError, match=r"elec/vasprun.xml: the last electronic step did not converge"):
        read_vasp_run(tmp_path / "elec")
    write_vasprun(tmp_path / "ion" / "vasprun.xml", ["Pt"] * 12, real_slab.lattice.matrix, real_slab.frac_coords,
                  [-70.0, -71.0, -72.0], nsw=3)
    with pytest.raises(IngestError, match=r"ion/vasprun.xml: the ionic relaxation did not converge"):
        read_vasp_run(tmp_path / "ion")
    assert read_vasp_run(tmp_path / "ion", require_converged=False).energy_ev == pytest.approx(-72.0)


def test_missing_and_broken_files(tmp_path):
    with pytest.raises(IngestError, match="no vasprun.xml"):
        read_vasp_run(tmp_path)
    (tmp_path / "bad").mkdir()
    (tmp_path / "bad" / "vasprun.xml").write_text("<modeling><generator>")
    with pytest.raises(IngestError, match="bad/vasprun.xml: pymatgen cannot read"):
        read_vasp_run(tmp_path / "bad")


# -- vibrations -------------------------------------------------------------------------------------
def test_dynmat_conversion_against_scipy():
    # 1 eV/(A^2 amu) eigenvalue -> 521.47 cm^-1 (scipy.constants)
    expected = math.sqrt(sc.e / (sc.angstrom**2 * sc.atomic_mass)) / (2 * math.pi * sc.c * 100)
    assert dynmat_eigenvalues_to_cm([-1.0])[0] == pytest.approx(expected, rel=1e-12)
    assert expected == pytest.approx(521.47, abs=0.01)
    assert dynmat_eigenvalues_to_cm([0.25])[0] == pytest.approx(-0.5 * expected)  # positive eigenvalue: imaginary


def test_vasprun_and_outcar_routes_agree(tmp_path, real_slab):
    freqs = [3650.0, 760.0, 720.0, 410.0, 320.0, -45.0]
    s = add_adsorbate(real_slab, ["O", "H"])
    write_vib_run(tmp_path / "vib", s, -80.0, freqs, 2)
    write_outcar_modes(tmp_path / "vib" / "OUTCAR", freqs)
    from_xml = read_vasp_modes(tmp_path / "vib")
    from_outcar = outcar_frequencies_cm(tmp_path / "vib" / "OUTCAR")
    assert from_xml.route == "vasprun.xml dynmat" and from_xml.displaced_atoms == 2
    assert np.allclose(from_xml.frequencies_cm, freqs, atol=1e-4)
    assert np.allclose(from_outcar, freqs, atol=1e-5)  # second (mass-divided) block ignored
    assert from_xml.imaginary == pytest.approx((-45.0,), abs=1e-4)


def test_ibrion6_mode_count_mismatch(tmp_path, real_slab):
    s = add_adsorbate(real_slab, ["O", "H"])
    free = [[False] * 3] * 12 + [[True] * 3] * 2
    write_run(tmp_path / "vib", s, -80.0, ibrion=6, nsw=1, selective=free, dynmat=dynmat_block([-0.1] * 9, 3))
    with pytest.raises(IngestError, match="9 modes but 2 atoms are free.*IBRION=6"):
        read_vasp_modes(tmp_path / "vib")


def test_outcar_without_modes(tmp_path):
    (tmp_path / "OUTCAR").write_text(" free  energy   TOTEN  =  -1.0 eV\n")
    with pytest.raises(IngestError, match="OUTCAR: no 'Eigenvectors and eigenvalues"):
        outcar_frequencies_cm(tmp_path / "OUTCAR")


# -- tree -> energy table ------------------------------------------------------------------------------
def _expected_e(name, n_h2, n_h2o):
    return E[name] - E["slab"] - n_h2 * E["H2"] - n_h2o * E["H2O"]


@pytest.mark.parametrize("outcar", [False, True])
def test_tree_to_energy_table(tmp_path, real_slab, outcar):
    from ecatlab.thermochemistry import HarmonicAdsorbate

    root = make_tree(tmp_path / "dft", real_slab, outcar=outcar)
    table = energy_table_from_vasp(root)
    table = table.set_index("species")
    # balance by hand: OH = H2O - 1/2 H2; O = H2O - H2; OOH = 2 H2O - 3/2 H2
    assert table.loc["OH*", "E"] == pytest.approx(_expected_e("OH", -0.5, 1), abs=1e-9)
    assert table.loc["O*", "E"] == pytest.approx(_expected_e("O", -1, 1), abs=1e-9)
    assert table.loc["OOH*", "E"] == pytest.approx(_expected_e("OOH", -1.5, 2), abs=1e-9)
    ref = HarmonicAdsorbate.from_frequencies(VIB["OOH"], "cm^-1").correction(298.15)
    assert table.loc["OOH*", "ZPE"] == pytest.approx(ref.zpe, abs=1e-6)
    assert table.loc["OOH*", "TS"] == pytest.approx(ref.ts, abs=1e-6)
    assert table.loc["OH*", "functional"] == "PBE" and table.loc["OH*", "date"] == "2024-03-05"
    assert table.loc["OH*", "source"].endswith("Pt111/OH/vasprun.xml")
    assert "H2O(l)" in table.loc["OH*", "corrections_note"]


def test_tree_to_limiting_potential(tmp_path, real_slab):
    from ecatlab.che import limiting_potentials
    from ecatlab.energies import read_energies

    table = energy_table_from_vasp(make_tree(tmp_path / "dft", real_slab))
    path = tmp_path / "energies.csv"
    table.to_csv(path, index=False)
    energies = read_energies(path)
    g = energies.frame.set_index("species")["G"]
    # G = E + (ZPE + CpdT - TS)_ads - sum n_i (ZPE + CpdT - TS)_ref
    ref = energies.scheme.reference_correction()
    row = table.set_index("species").loc["OH*"]
    expected = row["E"] + row["ZPE"] + row["CpdT"] - row["TS"] - (ref["H2O(l)"] - 0.5 * ref["H2(g)"])
    assert g["OH*"] == pytest.approx(expected, abs=1e-6)
    lim = limiting_potentials(energies, "orr-4e")
    assert len(lim) == 1 and np.isfinite(lim.iloc[0]["limiting_potential"])
    # ORR-4e limiting potential = min over the four steps of -dG_i(U=0), computed by hand
    steps = [g["OOH*"] - 4.92, g["O*"] - g["OOH*"], g["OH*"] - g["O*"], 0.0 - g["OH*"]]
    o2 = energies.scheme.molecule_free_energy("O2(g)")
    steps[0] = g["OOH*"] - o2
    assert lim.iloc[0]["limiting_potential"] == pytest.approx(min(-d for d in steps), abs=1e-6)


def test_imaginary_adsorbate_mode_in_tree(tmp_path, real_slab):
    root = make_tree(tmp_path / "dft", real_slab, outcar=True)
    write_outcar_modes(root / "Pt111" / "OH" / "vib" / "OUTCAR", [3650.0, 760.0, 720.0, 410.0, 320.0, -35.0])
    with pytest.raises(IngestError, match=r"OUTCAR: OH\* on Pt111: mode 5 is imaginary \(35.0i"):
        energy_table_from_vasp(root)
    table = energy_table_from_vasp(root, imaginary="flip").set_index("species")
    assert "35.0i cm^-1 -> 35.0 cm^-1 (made real)" in table.loc["OH*", "corrections_note"]


def test_atom_mismatch_names_both_paths(tmp_path, real_slab):
    root = make_tree(tmp_path / "dft", real_slab, vib=False)
    smaller = real_slab.copy()
    smaller.remove_sites([0])
    write_run(root / "Pt111" / "OH", add_adsorbate(smaller, ["O", "H"]), -80.0)
    with pytest.raises(IngestError, match=r"OH/vasprun.xml: atoms do not match.*Pt111/slab/vasprun.xml.*leaves H1 O1 Pt-1"):
        energy_table_from_vasp(root, zero_corrections=True)


def test_unbuildable_composition_names_path(tmp_path, real_slab):
    root = make_tree(tmp_path / "dft", real_slab, vib=False)
    write_run(root / "Pt111" / "Cl", add_adsorbate(real_slab, ["Cl"]), -75.0)
    with pytest.raises(IngestError, match=r"Cl/vasprun.xml: adsorbate composition .*Cl.* cannot be built"):
        energy_table_from_vasp(root, zero_corrections=True)


def test_missing_corrections_and_referencemolecule_in_box(tmp_path, real_slab):
    root = make_tree(tmp_path / "dft", real_slab, vib=False)
    with pytest.raises(IngestError, match="no vibrational corrections for Pt111/O\\*"):
        energy_table_from_vasp(root)
    zero = energy_table_from_vasp(root, zero_corrections=True)
    assert (zero["ZPE"] == 0).all() and zero["corrections_note"].str.contains("zero_corrections").all()
    corr = pd.DataFrame({"species": ["OH*", "O*", "OOH*"], "ZPE": [0.35, 0.07, 0.41], "CpdT": [0.05, 0.03, 0.08], "TS": [0.08, 0.04, 0.15]})
    given = energy_table_from_vasp(root, corrections=corr).set_index("species")
    assert given.loc["OOH*", "ZPE"] == 0.41
    import shutil

    shutil.rmtree(root / "gas" / "H2")
    with pytest.raises(IngestError, match="H2\\(g\\)"):
        energy_table_from_vasp(root, zero_corrections=True)
    shutil.rmtree(root / "Pt111" / "slab")
    with pytest.raises(IngestError, match="Pt111: no 'slab/' folder"):
        energy_table_from_vasp(root, zero_corrections=True)


# -- totals table --------------------------------------------------------------------------------------
def test_totals_table_route_matches_tree(tmp_path, real_slab):
    frame = pd.DataFrame({
        "surface": ["", "", "Pt111", "Pt111", "Pt111", "Pt111"],
        "species": ["H2(g)", "H2O(g)", "*", "OH*", "O*", "OOH*"],
        "total_energy": [E["H2"], E["H2O"], E["slab"], E["OH"], E["O"], E["OOH"]],
        "source": ["invented"] * 6,
    })
    out = adsorption_energies(frame).set_index("species")
    tree = energy_table_from_vasp(make_tree(tmp_path / "dft", real_slab)).set_index("species")
    for sp in ("OH*", "O*", "OOH*"):
        assert out.loc[sp, "E"] == pytest.approx(tree.loc[sp, "E"], abs=1e-9)
    assert out.loc["OH*", "source"] == "invented"


def test_totals_errors(tmp_path):
    path = tmp_path / "totals.csv"
    path.write_text("surface,species,total_energy\n,H2(g),-6.77\nA,*,-10\nA,OH*,abc\n")
    with pytest.raises(IngestError, match=r"totals.csv: data row 3, column total_energy: 'abc'"):
        adsorption_energies(path)
    path.write_text("surface,species,total_energy\n,H2(g),-6.77\nA,OH*,-20\n")
    with pytest.raises(IngestError, match="no clean-slab row .* 'A'"):
        adsorption_energies(path)
    path.write_text("surface,species\nA,OH*\n")
    with pytest.raises(IngestError, match="missing column"):
        adsorption_energies(path)
    with pytest.raises(IngestError, match="file not found"):
        adsorption_energies(tmp_path / "nope.csv")


# -- ASE database ---------------------------------------------------------------------------------------
def test_ase_database_route(tmp_path):
    ase_db = pytest.importorskip("ase.db")
    from ase import Atoms
    from ase.calculators.singlepoint import SinglePointCalculator

    from ecatlab.ingest.ase_files import energy_table_from_ase

    db_path = tmp_path / "runs.db"
    entries = [("", "H2(g)", "H2", E["H2"]), ("", "H2O(g)", "H2O", E["H2O"]), ("Pt111", "*", "Pt4", E["slab"]),
               ("Pt111", "OH*", "Pt4OH", E["OH"])]
    with ase_db.connect(str(db_path)) as db:
        for surface, species, formula, energy in entries:
            atoms = Atoms(formula, positions=np.arange(3 * len(Atoms(formula))).reshape(-1, 3) * 1.0)
            atoms.calc = SinglePointCalculator(atoms, energy=energy)
            db.write(atoms, surface=surface, species=species)
    table = energy_table_from_ase(db_path, zero_corrections=True).set_index("species")
    assert table.loc["OH*", "E"] == pytest.approx(_expected_e("OH", -0.5, 1), abs=1e-9)
    with pytest.raises(IngestError, match="electronic energies only"):
        energy_table_from_ase(db_path)
