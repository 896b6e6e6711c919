"""External checks of the gas library thermochemistry, each value with its source.

Sources: cantera 3.2 gri30.yaml NASA-7 polynomials (computed at test time); NIST-JANAF
Thermochemical Tables (Chase 1998), values quoted from memory.
"""

import math

import pytest
import scipy.constants as sc

from ecatlab.constants import EV_IN_KJ_PER_MOL
from ecatlab.molecules import gas_molecule, reference_corrections
from ecatlab.thermochemistry import entropy_in_j_per_mol_k

ct = pytest.importorskip("cantera")
GASES = ["H2", "O2", "N2", "H2O", "CO", "CO2", "CH4", "NH3"]


@pytest.fixture(scope="module")
def gri30():
    return ct.Solution("gri30.yaml")


@pytest.mark.parametrize("name", GASES + ["C2H4"])
@pytest.mark.parametrize("temperature", [298.15, 600.0])
def test_entropy_against_cantera_gri30(gri30, name, temperature):
    # cantera gri30 NASA polynomials: s(T) at 1 bar in J/kmol/K
    s_ct = gri30.species(name).thermo.s(temperature) / 1000.0
    s_ours = entropy_in_j_per_mol_k(gas_molecule(name).entropy(temperature, 1.0))
    assert s_ours == pytest.approx(s_ct, abs=1.0)


@pytest.mark.parametrize("name", GASES)
def test_enthalpy_increment_against_cantera_gri30(gri30, name):
    # cantera gri30: h(600) - h(298.15) in J/kmol; ours from the heat integrals, kJ/mol.
    # Tolerance 0.2 kJ/mol (harmonic fundamentals; largest measured deviation NH3, -0.14 kJ/mol).
    th = gri30.species(name).thermo
    dh_ct = (th.h(600.0) - th.h(298.15)) / 1e6
    m = gas_molecule(name)
    dh = (m.enthalpy_correction(600.0) - m.enthalpy_correction(298.15)) * EV_IN_KJ_PER_MOL
    assert dh == pytest.approx(dh_ct, abs=0.2)
    # and zero at 298.15 K by construction of the increment
    assert (m.enthalpy_correction(298.15) - m.enthalpy_correction(298.15)) == 0.0


# NIST-JANAF S(298.15 K, 1 bar) in J/mol/K (from memory; each agrees with cantera gri30 within 0.3)
JANAF_S298 = {"H2": 130.680, "O2": 205.147, "N2": 191.609, "H2O": 188.834, "CO": 197.653,
              "CO2": 213.795, "CH4": 186.251, "NH3": 192.774}
# NIST-JANAF H(600 K) - H(298.15 K) in kJ/mol (from memory)
JANAF_DH600 = {"H2": 8.811, "O2": 9.247, "N2": 8.894, "H2O": 10.498, "CO": 8.941, "CO2": 12.906, "CH4": 13.130}


@pytest.mark.parametrize("name", sorted(JANAF_S298))
def test_entropy_against_janaf(name):
    s = entropy_in_j_per_mol_k(gas_molecule(name).entropy(298.15, 1.0))
    assert s == pytest.approx(JANAF_S298[name], abs=1.0)


@pytest.mark.parametrize("name", sorted(JANAF_DH600))
def test_enthalpy_increment_against_janaf(name):
    m = gas_molecule(name)
    dh = (m.enthalpy_correction(600.0) - m.enthalpy_correction(298.15)) * EV_IN_KJ_PER_MOL
    assert dh == pytest.approx(JANAF_DH600[name], abs=0.2)


def test_h2_entropy_janaf_pitfall_value():
    # PITFALLS / NIST-JANAF: H2 at 298.15 K, 1 bar: S = 130.7 J/mol/K
    assert entropy_in_j_per_mol_k(gas_molecule("H2").entropy(298.15, 1.0)) == pytest.approx(130.7, abs=0.5)


def test_h2_zpe_about_027_ev():
    # common practice, no source: ZPE(H2) ~ 0.27 eV. From the 4161 cm^-1 fundamental we get 0.258 eV
    # (harmonic DFT frequencies, ~4300-4400 cm^-1, give the customary 0.27).
    zpe = gas_molecule("H2").zero_point_energy()
    assert zpe == pytest.approx(0.5 * 4161 * sc.h * sc.c * 100 / sc.e, rel=1e-12)
    assert zpe == pytest.approx(0.27, abs=0.015)


def test_customary_reference_corrections_at_298():
    # common practice, no source (values tabulated in many CHE studies): TS(H2) 0.40, TS(H2O(l)) 0.67 eV
    t = reference_corrections(["H2(g)", "H2O(l)"], 298.15)
    assert t.loc["H2(g)", "TS"] == pytest.approx(0.40, abs=0.01)
    assert t.loc["H2O(l)", "TS"] == pytest.approx(0.67, abs=0.01)


def test_free_energy_of_water_evaporation_against_janaf():
    # NIST-JANAF (from memory): S(H2O, g) 188.834, and with the 0.035 bar vapour S rises by R ln(1/0.035)
    t = reference_corrections(["H2O(l)"], 298.15)
    s = t.loc["H2O(l)", "S_J_per_mol_K"]
    assert s == pytest.approx(188.834 + sc.R * math.log(1 / 0.035), abs=1.0)


# -- bookkeeping: a constant moved between an adsorbate's correction and its reference molecule ----
from hypothesis import given, settings, strategies as st  # noqa: E402


@settings(max_examples=30, deadline=None)
@given(shift=st.floats(-0.5, 0.5), ref=st.sampled_from(["H2(g)", "H2O(l)"]))
def test_moving_a_constant_between_adsorbate_and_reference_keeps_step_energies(shift, ref):
    """Adding c to a reference molecule's ZPE and n_i * c to every adsorbate's ZPE (n_i: that
    reference's coefficient in the adsorbate's composition) leaves every step free energy unchanged."""
    import pandas as pd

    from ecatlab.che import step_free_energies
    from ecatlab.energies import read_energies
    from ecatlab.references import ReferenceScheme

    base = ReferenceScheme()
    rows = pd.DataFrame({  # invented adsorption energies and corrections (eV)
        "surface": ["A"] * 3 + ["B"] * 3,
        "species": ["OH*", "O*", "OOH*"] * 2,
        "E": [0.6, 1.9, 3.9, 1.1, 2.6, 4.3],
        "ZPE": [0.35, 0.07, 0.41] * 2, "CpdT": [0.05, 0.03, 0.08] * 2, "TS": [0.08, 0.04, 0.15] * 2,
    })
    moved_corr = base.correction_table
    moved_corr.loc[ref, "ZPE"] += shift
    moved = ReferenceScheme(corrections=moved_corr)
    rows2 = rows.copy()
    from ecatlab.notation import Species

    rows2["ZPE"] = [z + base.balance(Species.parse(s).elements)[ref] * shift for z, s in zip(rows["ZPE"], rows["species"])]
    a = step_free_energies(read_energies(rows, base), "orr-4e", potential=0.7)
    b = step_free_energies(read_energies(rows2, moved), "orr-4e", potential=0.7)
    pd.testing.assert_frame_equal(a, b, check_exact=False, atol=1e-12, rtol=0)
    if abs(shift) > 1e-6:  # and moving it one-sidedly does change them (the test can fail)
        c = step_free_energies(read_energies(rows, moved), "orr-4e", potential=0.7)
        assert not (abs(c.to_numpy() - a.to_numpy()) < 1e-9).all()
