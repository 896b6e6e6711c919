"""Harmonic adsorbate and ideal-gas models: equations, policies, units, cross-checks with ASE.

External sources: ase.thermochemistry (HarmonicThermo, IdealGasThermo, ase 3.29), scipy.constants.
"""

import math

import numpy as np
import pytest
import scipy.constants as sc
from hypothesis import given, settings, strategies as st

from ecatlab.errors import ThermochemistryError
from ecatlab.molecules import gas_molecule
from ecatlab.thermochemistry import (
    HarmonicAdsorbate,
    IdealGasMolecule,
    LowFrequencyTreatment,
    to_electronvolt,
)

ase_thermo = pytest.importorskip("ase.thermochemistry")
KB_EV = sc.k / sc.e  # scipy.constants


# -- units ------------------------------------------------------------------------------------
def test_wavenumber_conversion_matches_scipy():
    # 1000 cm^-1 = h c * 1000 cm^-1 = 0.123984 eV (scipy.constants h, c)
    assert to_electronvolt([1000.0], "cm^-1")[0] == pytest.approx(sc.h * sc.c * 1e5 / sc.e, rel=1e-12)
    assert to_electronvolt([1000.0], "cm^-1")[0] == pytest.approx(0.123984, abs=1e-6)
    assert to_electronvolt([10.0], "meV")[0] == pytest.approx(0.010)
    assert to_electronvolt([1.0], "THz")[0] == pytest.approx(sc.h * 1e12 / sc.e, rel=1e-12)


@pytest.mark.parametrize("unit", [None, "", "Hz", "cm", 5])
def test_frequency_unit_must_be_declared(unit):
    with pytest.raises(ThermochemistryError, match="unit"):
        to_electronvolt([100.0], unit)


def test_same_modes_in_three_units_give_same_result():
    cm = np.array([3600.0, 900.0, 400.0])
    ev = to_electronvolt(cm, "cm^-1")
    a = HarmonicAdsorbate.from_frequencies(cm, "cm^-1").free_energy_correction(298.15)
    b = HarmonicAdsorbate.from_frequencies(ev * 1000, "meV").free_energy_correction(298.15)
    c = HarmonicAdsorbate.from_frequencies(ev / (sc.h * 1e12 / sc.e), "THz").free_energy_correction(298.15)
    assert a == pytest.approx(b, abs=1e-12) and a == pytest.approx(c, abs=1e-12)


# -- harmonic vs ase --------------------------------------------------------------------------
@pytest.mark.parametrize("temperature", [100.0, 298.15, 600.0])
def test_harmonic_matches_ase(temperature):
    cm = [3650.0, 1100.0, 720.0, 410.0, 260.0, 95.0]  # invented test modes (OH*-like)
    ours = HarmonicAdsorbate.from_frequencies(cm, "cm^-1", species="OH*").correction(temperature)
    ref = ase_thermo.HarmonicThermo(list(to_electronvolt(cm, "cm^-1")), potentialenergy=0.0)
    assert ours.zpe + ours.heat_integral == pytest.approx(ref.get_internal_energy(temperature, verbose=False), abs=1e-6)
    assert ours.entropy == pytest.approx(ref.get_entropy(temperature, verbose=False), abs=1e-9)
    assert ours.free_energy_correction == pytest.approx(ref.get_helmholtz_energy(temperature, verbose=False), abs=1e-6)


def test_temperature_array_equals_loop():
    model = HarmonicAdsorbate.from_frequencies([3000, 500, 80], "cm^-1", low_frequency="quasi-rrho")
    ts = np.linspace(50, 900, 7)
    vec = model.free_energy_correction(ts)
    assert vec.shape == (7,)
    assert np.allclose(vec, [model.free_energy_correction(float(t)) for t in ts], atol=1e-14)


@pytest.mark.parametrize("bad_t", [0.0, -5.0, float("nan")])
def test_bad_temperature(bad_t):
    with pytest.raises(ThermochemistryError, match="temperature"):
        HarmonicAdsorbate.from_frequencies([1000], "cm^-1").entropy(bad_t)


def test_soft_mode_magnitudes_match_ase():
    # PITFALLS (checked with ase): at 298 K one 12 cm^-1 mode adds about -0.10 eV to -TS, a 50 cm^-1
    # mode about -0.06 eV. Compared here with ase.thermochemistry.HarmonicThermo.
    for nu, rough in ((12.0, -0.10), (50.0, -0.06)):
        ours = -298.15 * HarmonicAdsorbate.from_frequencies([nu], "cm^-1").entropy(298.15)
        ref = -298.15 * ase_thermo.HarmonicThermo(list(to_electronvolt([nu], "cm^-1"))).get_entropy(298.15, verbose=False)
        assert ours == pytest.approx(ref, abs=1e-6)
        assert ours == pytest.approx(rough, abs=0.012)


# -- imaginary-mode policy ---------------------------------------------------------------------
def test_imaginary_raises_naming_species_and_mode():
    with pytest.raises(ThermochemistryError, match=r"OOH\*: mode 2 is imaginary \(400\.0i cm\^-1\)"):
        HarmonicAdsorbate.from_frequencies([3500, 800, -400, 300], "cm^-1", species="OOH*")


def test_complex_input_is_imaginary():
    with pytest.raises(ThermochemistryError, match="mode 1 is imaginary"):
        HarmonicAdsorbate.from_frequencies(np.array([3500, 15j]), "cm^-1")


def test_drop_and_flip_are_recorded():
    dropped = HarmonicAdsorbate.from_frequencies([3500, -30, 400], "cm^-1", imaginary="drop", species="H*")
    assert len(dropped.mode_energies_ev) == 2
    assert [(c.index, c.new_cm, c.action) for c in dropped.mode_changes] == [(1, None, "dropped imaginary")]
    flipped = HarmonicAdsorbate.from_frequencies([3500, -30, 400], "cm^-1", imaginary="flip")
    change = flipped.mode_changes[0]
    assert change.original_cm == pytest.approx(-30) and change.new_cm == pytest.approx(30)
    corr = flipped.correction(298.15)
    assert corr.mode_changes == flipped.mode_changes and corr.imaginary_policy == "flip"
    assert "30.0i cm^-1 -> 30.0 cm^-1" in corr.as_dict()["modes_changed"]
    # flip equals the model built from the real mode
    same = HarmonicAdsorbate.from_frequencies([3500, 30, 400], "cm^-1")
    assert corr.free_energy_correction == pytest.approx(same.free_energy_correction(298.15), abs=1e-14)


def test_unknown_policy_and_zero_mode():
    with pytest.raises(ThermochemistryError, match="imaginary-mode policy"):
        HarmonicAdsorbate.from_frequencies([100], "cm^-1", imaginary="ignore")
    with pytest.raises(ThermochemistryError, match="zero frequency"):
        HarmonicAdsorbate.from_frequencies([100, 0.0], "cm^-1")


# -- low-frequency treatments -------------------------------------------------------------------
def test_cutoff_raises_soft_modes_and_records_them():
    treat = LowFrequencyTreatment(method="cutoff", cutoff_cm=50.0)
    model = HarmonicAdsorbate.from_frequencies([3000, 20, 45, 60], "cm^-1", low_frequency=treat)
    manual = HarmonicAdsorbate.from_frequencies([3000, 50, 50, 60], "cm^-1")
    assert model.free_energy_correction(298.15) == pytest.approx(manual.free_energy_correction(298.15), abs=1e-14)
    assert [c.index for c in model.mode_changes] == [1, 2]
    assert "cutoff" in model.correction(298.15).low_frequency


def _grimme_entropy_reference(nu_cm, t):
    """Independent re-implementation of Grimme (Chem. Eur. J. 2012) with scipy.constants, J/K."""
    nu = nu_cm * sc.c * 100
    x = sc.h * nu / (sc.k * t)
    s_v = sc.k * (x / math.expm1(x) - math.log(-math.expm1(-x)))
    mu = sc.h / (8 * math.pi**2 * nu)
    mu_p = mu * 1e-44 / (mu + 1e-44)
    s_r = sc.k * (0.5 + math.log(math.sqrt(8 * math.pi**3 * mu_p * sc.k * t / sc.h**2)))
    w = 1 / (1 + (100.0 / nu_cm) ** 4)
    return w * s_v + (1 - w) * s_r


@pytest.mark.parametrize("nu", [5.0, 30.0, 100.0, 400.0, 2000.0])
def test_quasi_rrho_matches_independent_formula(nu):
    model = HarmonicAdsorbate.from_frequencies([nu], "cm^-1", low_frequency="quasi-rrho")
    assert model.entropy(298.15) * sc.e == pytest.approx(_grimme_entropy_reference(nu, 298.15), rel=1e-9)


def test_quasi_rrho_limits():
    hi = 3000.0
    q = HarmonicAdsorbate.from_frequencies([hi], "cm^-1", low_frequency="quasi-rrho").entropy(298.15)
    h = HarmonicAdsorbate.from_frequencies([hi], "cm^-1").entropy(298.15)
    assert q == pytest.approx(h, abs=1e-9)  # stiff modes stay harmonic (weight 1 - 1e-6)
    soft_q = HarmonicAdsorbate.from_frequencies([2.0], "cm^-1", low_frequency="quasi-rrho").entropy(298.15)
    soft_h = HarmonicAdsorbate.from_frequencies([2.0], "cm^-1").entropy(298.15)
    assert soft_q < soft_h  # the free rotor tames the divergent harmonic entropy
    zpe_q = HarmonicAdsorbate.from_frequencies([50, 900], "cm^-1", low_frequency="quasi-rrho").zero_point_energy()
    assert zpe_q == pytest.approx(HarmonicAdsorbate.from_frequencies([50, 900], "cm^-1").zero_point_energy())


def test_bad_treatment():
    with pytest.raises(ThermochemistryError, match="low-frequency method"):
        LowFrequencyTreatment(method="free")
    with pytest.raises(ThermochemistryError, match="cutoff_cm"):
        LowFrequencyTreatment(method="cutoff", cutoff_cm=-1)


# -- ideal gas vs ase ----------------------------------------------------------------------------
@pytest.mark.parametrize("name", ["H2", "O2", "N2", "CO", "CO2", "H2O", "NH3", "CH4"])
@pytest.mark.parametrize("temperature,pressure_bar", [(298.15, 1.0), (600.0, 0.035), (450.0, 20.0)])
def test_ideal_gas_matches_ase(name, temperature, pressure_bar):
    from ase import Atoms

    m = gas_molecule(name)
    atoms = Atoms(m.symbols, positions=m.positions_angstrom)
    atoms.set_masses(m.masses_amu)
    ref = ase_thermo.IdealGasThermo(
        list(m.mode_energies_ev), "linear" if m.symmetry.linear else "nonlinear", atoms=atoms,
        symmetrynumber=m.symmetry.symmetry_number, spin=(m.spin_multiplicity - 1) / 2, vib_selection="exact",
    )
    p_pa = pressure_bar * 1e5  # explicit Pa: ase's default pressure is not 1 bar in Pa (PITFALLS)
    assert m.enthalpy_correction(temperature) == pytest.approx(ref.get_enthalpy(temperature, verbose=False), abs=1e-6)
    # ase uses CODATA 2014 units, ecatlab scipy's CODATA 2018: compare T*S in eV at 1e-6 eV
    ts_ase = temperature * ref.get_entropy(temperature, p_pa, verbose=False)
    assert temperature * m.entropy(temperature, pressure_bar) == pytest.approx(ts_ase, abs=1e-6)
    assert m.free_energy_correction(temperature, pressure_bar) == pytest.approx(
        ref.get_gibbs_energy(temperature, p_pa, verbose=False), abs=1e-6
    )


@settings(max_examples=40, deadline=None)
@given(t=st.floats(50, 1500), p=st.floats(1e-6, 1e3))
def test_pressure_shift_is_exactly_kT_ln_p(t, p):
    m = gas_molecule("CO2")
    shift = m.free_energy_correction(t, p) - m.free_energy_correction(t, 1.0)
    assert shift == pytest.approx(KB_EV * t * math.log(p), abs=1e-12)


def test_bad_pressure():
    with pytest.raises(ThermochemistryError, match="pressure_bar"):
        gas_molecule("H2").entropy(298.15, 0.0)


# -- spin -----------------------------------------------------------------------------------------
def test_spin_multiplicity_entropy_and_validation():
    kw = dict(symbols="OO", positions_angstrom=[[0, 0, 0], [0, 0, 1.2075]], frequencies=[1556], unit="cm^-1")
    triplet = IdealGasMolecule.from_geometry("O2", spin_multiplicity=3, **kw)
    singlet = IdealGasMolecule.from_geometry("O2", spin_multiplicity=1, **kw)
    assert triplet.entropy(298.15, 1) - singlet.entropy(298.15, 1) == pytest.approx(KB_EV * math.log(3), abs=1e-15)
    with pytest.raises(ThermochemistryError, match="impossible with 16 electrons"):
        IdealGasMolecule.from_geometry("O2", spin_multiplicity=2, **kw)
    with pytest.raises(ThermochemistryError, match="total spin S"):
        IdealGasMolecule.from_geometry("O2", spin_multiplicity=1.5, **kw)
    with pytest.raises(ThermochemistryError, match=">= 1"):
        IdealGasMolecule.from_geometry("O2", spin_multiplicity=0, **kw)


def test_gas_mode_count_is_checked_not_sorted():
    with pytest.raises(ThermochemistryError, match="expected 3 vibrational frequencies"):
        IdealGasMolecule.from_geometry("H2O", ["O", "H", "H"], [[0, 0, 0], [0.76, 0, 0.59], [-0.76, 0, 0.59]],
                                       [0, 0, 0, 1595, 3657, 3756], "cm^-1", spin_multiplicity=1)


def test_symmetry_override_changes_entropy_by_k_ln_sigma():
    detected = gas_molecule("CH4")
    forced = gas_molecule("CH4", symmetry_number=1)
    assert detected.symmetry.symmetry_number == 12 and "overridden" not in detected.symmetry.source
    assert forced.entropy(298.15, 1) - detected.entropy(298.15, 1) == pytest.approx(KB_EV * math.log(12), abs=1e-15)
