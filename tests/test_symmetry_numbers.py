"""Rotational symmetry numbers from geometry, on exact and on noisy standard geometries.

Geometries: the G2 set shipped with ASE (``ase.build.molecule``, MP2 geometries). Reference
symmetry numbers: sigma = order of the proper-rotation subgroup of each molecule's point group
(point groups as listed in NIST CCCBDB; the sigma rule as in McQuarrie, Statistical Mechanics,
ch. 8; from memory).
"""

import numpy as np
import pytest

from ecatlab.thermochemistry import detect_rotational_symmetry

ase_build = pytest.importorskip("ase.build")

REFERENCE_SIGMA = {
    "H2O": 2, "NH3": 3, "CH4": 12, "C6H6": 12, "C2H4": 4, "C2H6": 6, "CH3OH": 1,
    "C4H4O": 2,  # furan C2v
    "C5H5N": 2,  # pyridine C2v
    "C4H4NH": 2,  # pyrrole C2v
    "CH3COCH3": 2,  # acetone C2v
    "C4H4S": 2,  # thiophene C2v
    "H2CO": 2, "SO2": 2, "H2O2": 2, "BF3": 6, "CCl4": 12, "SiH4": 12, "SiF4": 12, "PH3": 3,
    "CH3Cl": 3, "C3H6_D3h": 6, "CO2": 2, "CO": 1, "H2": 2, "N2": 2, "HCN": 1, "C2H2": 2,
}


@pytest.mark.parametrize("name", sorted(REFERENCE_SIGMA))
def test_sigma_on_exact_geometries(name):
    m = ase_build.molecule(name)
    r = detect_rotational_symmetry(m.get_chemical_symbols(), m.positions)
    assert r.symmetry_number == REFERENCE_SIGMA[name], (name, r)


@pytest.mark.parametrize("name", ["H2O", "NH3", "CH4", "C6H6", "C2H6", "C4H4O", "C5H5N", "CH3COCH3", "BF3", "CCl4"])
def test_sigma_on_noisy_geometries(name):
    # 0.02 angstrom Gaussian noise per coordinate (PITFALLS: NH3 used to drop to Cs, CH4 to C2v)
    rng = np.random.default_rng(abs(hash(name)) % 2**32)
    m = ase_build.molecule(name)
    for _ in range(3):
        noisy = m.positions + rng.normal(0.0, 0.02, m.positions.shape)
        assert detect_rotational_symmetry(m.get_chemical_symbols(), noisy).symmetry_number == REFERENCE_SIGMA[name]


def test_a_genuinely_asymmetric_molecule_stays_sigma_one():
    # methanol (Cs) has no proper rotation; a loose tolerance must not invent one
    m = ase_build.molecule("CH3OH")
    assert detect_rotational_symmetry(m.get_chemical_symbols(), m.positions).symmetry_number == 1
    rng = np.random.default_rng(3)
    noisy = m.positions + rng.normal(0.0, 0.02, m.positions.shape)
    assert detect_rotational_symmetry(m.get_chemical_symbols(), noisy).symmetry_number == 1


def test_kT_ln2_follows_from_sigma():
    # the rotational entropy term: G(sigma=2) - G(sigma=1) = +kT ln 2 (standard result; McQuarrie)
    from ecatlab.constants import BOLTZMANN_EV
    from ecatlab.thermochemistry import IdealGasMolecule

    m = ase_build.molecule("C4H4O")
    args = (m.get_chemical_symbols(), m.positions, [1000.0] * 21, "cm^-1")
    g2 = IdealGasMolecule.from_geometry("C4H4O", *args, spin_multiplicity=1, symmetry_number=2).free_energy_correction(298.15, 1.0)
    g1 = IdealGasMolecule.from_geometry("C4H4O", *args, spin_multiplicity=1, symmetry_number=1).free_energy_correction(298.15, 1.0)
    assert g2 - g1 == pytest.approx(BOLTZMANN_EV * 298.15 * np.log(2), rel=1e-9)
