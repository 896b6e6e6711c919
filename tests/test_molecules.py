"""Built-in gas library, symmetry detection, reference-molecule corrections.

External sources: pymatgen PointGroupAnalyzer (symmetry numbers), scipy.constants, chemicals
(IAPWS water vapour pressure).
"""

import math
import warnings

import numpy as np
import pytest
import scipy.constants as sc

from ecatlab.errors import CorrectionWarning, ThermochemistryError
from ecatlab.molecules import (
    GAS_LIBRARY,
    available_gases,
    gas_molecule,
    gas_record,
    reference_corrections,
    water_vapour_pressure_bar,
)
from ecatlab.thermochemistry import detect_rotational_symmetry, symmetry_number_from_point_group

KB_EV = sc.k / sc.e

# symmetry numbers from the point groups (standard textbook values; common knowledge)
EXPECTED_SIGMA = {"H2O": 2, "NH3": 3, "CH4": 12, "CO": 1, "H2": 2, "O2": 2, "N2": 2, "CO2": 2,
                  "C2H4": 4, "H2O2": 2, "HCOOH": 1, "CH3OH": 1, "C2H5OH": 1}
LINEAR = {"H2", "O2", "N2", "CO", "CO2"}


def test_library_has_the_pathway_molecules():
    needed = {"H2", "O2", "N2", "H2O", "H2O2", "CO", "CO2", "HCOOH", "CH4", "CH3OH", "NH3", "C2H4", "C2H5OH"}
    assert needed <= set(available_gases())
    for rec in GAS_LIBRARY.values():
        assert rec.source and ("from memory" in rec.source)
        n = len(rec.symbols)
        assert len(rec.frequencies_cm) == (3 * n - 5 if rec.formula in LINEAR else 3 * n - 6)


@pytest.mark.parametrize("name,sigma", sorted(EXPECTED_SIGMA.items()))
def test_symmetry_numbers_detected(name, sigma):
    m = gas_molecule(name)
    assert m.symmetry.symmetry_number == sigma
    assert m.symmetry.linear == (name in LINEAR)
    assert m.symmetry.source.startswith("detected")


@pytest.mark.parametrize("name", sorted(EXPECTED_SIGMA))
def test_agrees_with_pymatgen_own_symmetry_number(name):
    # pymatgen's get_rotational_symmetry_number on the exact library geometry (its D*h value was
    # wrong before 2024, materialsproject/pymatgen#4093; this pins the installed version)
    from pymatgen.core import Molecule
    from pymatgen.symmetry.analyzer import PointGroupAnalyzer

    rec = gas_record(name)
    pga = PointGroupAnalyzer(Molecule(rec.symbols, rec.positions_angstrom))
    assert pga.get_rotational_symmetry_number() == EXPECTED_SIGMA[name]


@pytest.mark.parametrize("noise", [0.01, 0.02])
@pytest.mark.parametrize("name", ["H2O", "NH3", "CH4", "CO", "H2", "O2", "N2", "CO2"])
def test_symmetry_survives_small_noise(name, noise):
    rec = gas_record(name)
    for seed in range(4):
        rng = np.random.default_rng(seed)
        coords = np.array(rec.positions_angstrom) + rng.normal(0, noise, (len(rec.symbols), 3))
        sym = detect_rotational_symmetry(rec.symbols, coords)
        assert sym.symmetry_number == EXPECTED_SIGMA[name], (seed, sym)


def test_loose_eigen_tolerance_does_not_make_h2o2_linear():
    # pymatgen with eigen_tolerance 0.1 alone calls H2O2 'C*v'; the geometric check prevents it
    rec = gas_record("H2O2")
    sym = detect_rotational_symmetry(rec.symbols, rec.positions_angstrom, eigen_tolerance=0.1)
    assert sym.point_group == "C2" and not sym.linear


@pytest.mark.parametrize("symbol,sigma", [("C1", 1), ("Cs", 1), ("C2v", 2), ("C3v", 3), ("D2h", 4), ("D3d", 6),
                                          ("D6h", 12), ("S4", 2), ("Td", 12), ("Oh", 24), ("D*h", 2), ("C*v", 1)])
def test_sigma_from_point_group(symbol, sigma):
    assert symmetry_number_from_point_group(symbol) == sigma


def test_geometries_reproduce_cited_internal_coordinates():
    h2o = np.array(gas_record("H2O").positions_angstrom)
    v1, v2 = h2o[1] - h2o[0], h2o[2] - h2o[0]
    assert np.linalg.norm(v1) == pytest.approx(0.9578, abs=1e-9)
    assert math.degrees(math.acos(v1 @ v2 / np.linalg.norm(v1) / np.linalg.norm(v2))) == pytest.approx(104.48, abs=1e-9)
    nh3 = np.array(gas_record("NH3").positions_angstrom)
    a, b = nh3[1] - nh3[0], nh3[2] - nh3[0]
    assert math.degrees(math.acos(a @ b / np.linalg.norm(a) / np.linalg.norm(b))) == pytest.approx(106.7, abs=1e-9)
    c2h5oh = np.array(gas_record("C2H5OH").positions_angstrom)
    assert np.linalg.norm(c2h5oh[2] - c2h5oh[1]) == pytest.approx(1.431, abs=1e-9)  # C-O


def test_o2_is_a_triplet():
    assert gas_record("O2").spin_multiplicity == 3
    assert gas_molecule("O2").spin_multiplicity == 3


def test_unknown_gas():
    with pytest.raises(ThermochemistryError, match="no gas molecule 'C6H6'"):
        gas_molecule("C6H6")


# -- reference corrections ----------------------------------------------------------------------
def test_water_liquid_through_vapour_pressure():
    t = reference_corrections(["H2O(g)", "H2O(l)"], 298.15)
    assert t.loc["H2O(l)", "pressure_bar"] == 0.035
    # TS(l) - TS(g, 1 bar) = -k T ln(0.035): exactly the pressure term
    assert t.loc["H2O(l)", "TS"] - t.loc["H2O(g)", "TS"] == pytest.approx(-KB_EV * 298.15 * math.log(0.035), abs=1e-12)
    assert t.loc["H2O(l)", "ZPE"] == t.loc["H2O(g)", "ZPE"]
    # G(H2O(l)) - G(H2O(g), 1 bar) = kT ln(0.035) = -0.086 eV
    dg = t.loc["H2O(l)", "G_correction"] - t.loc["H2O(g)", "G_correction"]
    assert dg == pytest.approx(-0.0862, abs=5e-4)
    other = reference_corrections(["H2O(l)"], 298.15, water_vapour_pressure_bar=0.0317)
    assert other.loc["H2O(l)", "pressure_bar"] == 0.0317 and "0.0317" in other.loc["H2O(l)", "treatment"]


def test_water_pressure_warning_away_from_298():
    # a fixed 0.035 bar (a 298.15 K value) used at 350 K warns; the default convention follows p_sat(T)
    with pytest.warns(CorrectionWarning, match="298.15 K value"):
        reference_corrections(["H2O(l)"], 350.0, water_vapour_pressure_bar=0.035)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        conv = reference_corrections(["H2O(l)"], 350.0)
    ratio = water_vapour_pressure_bar(350.0) / water_vapour_pressure_bar(298.15)
    assert conv.loc["H2O(l)", "pressure_bar"] == pytest.approx(0.035 * ratio)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        t = reference_corrections(["H2O(l)"], 350.0, water_vapour_pressure_bar=None)
    assert t.loc["H2O(l)", "pressure_bar"] == pytest.approx(water_vapour_pressure_bar(350.0))


def test_antoine_water_vapour_pressure_against_iapws():
    iapws = pytest.importorskip("chemicals.iapws")
    for t in (280.0, 298.15, 320.0, 360.0):
        # chemicals.iapws.iapws95_Psat (IAPWS-95) in Pa; the Antoine fit is within 3 % here (measured
        # -3.0 % at 280 K, +0.3 % at 298.15 K, +1.4 % at 320 K)
        assert water_vapour_pressure_bar(t) == pytest.approx(iapws.iapws95_Psat(t) / 1e5, rel=0.035)


def test_reference_corrections_errors():
    with pytest.raises(ThermochemistryError, match="only liquid water"):
        reference_corrections(["CH3OH(l)"])
    with pytest.raises(ThermochemistryError, match="dissolved"):
        reference_corrections(["HCOOH(aq)"])
    with pytest.raises(ThermochemistryError, match="temperature"):
        reference_corrections(["H2(g)"], -1)


def test_reference_corrections_follow_temperature():
    cold, hot = reference_corrections(["H2(g)"], 298.15), reference_corrections(["H2(g)"], 500.0)
    assert cold.loc["H2(g)", "ZPE"] == hot.loc["H2(g)", "ZPE"]
    assert hot.loc["H2(g)", "CpdT"] > cold.loc["H2(g)", "CpdT"] and hot.loc["H2(g)", "TS"] > cold.loc["H2(g)", "TS"]


def test_engine_hook_uses_computed_corrections():
    from ecatlab.references import ReferenceScheme, default_reference_corrections

    table, source = default_reference_corrections(298.15)
    assert list(table.columns) == ["ZPE", "CpdT", "TS"]
    ours = reference_corrections(["H2(g)", "H2O(l)", "CO2(g)", "N2(g)"], 298.15)
    for key in ours.index:
        for col in ("ZPE", "CpdT", "TS"):
            assert table.loc[key, col] == pytest.approx(ours.loc[key, col], abs=1e-15)
    assert "computed at 298.15 K" in source and "0.035 bar" in source
    scheme = ReferenceScheme(temperature=298.15)
    assert scheme.correction_table.loc["H2(g)", "TS"] == pytest.approx(ours.loc["H2(g)", "TS"])
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the default water pressure follows T: nothing to warn about
        hot = ReferenceScheme(temperature=320.0)
    assert hot.correction_table.loc["H2(g)", "TS"] > scheme.correction_table.loc["H2(g)", "TS"]


def test_shipped_gas_library_equals_its_generator():
    # the JSON data file is what scripts/make_gas_library.py builds from bond lengths and angles
    import importlib.util
    import json
    import pathlib

    root = pathlib.Path(__file__).resolve().parents[1]
    spec = importlib.util.spec_from_file_location("make_gas_library", root / "scripts" / "make_gas_library.py")
    gen = importlib.util.module_from_spec(spec)
    import sys

    sys.modules[spec.name] = gen  # dataclasses look their module up while the script runs
    spec.loader.exec_module(gen)
    shipped = json.loads((root / "ecatlab" / "data" / "gas_library.json").read_text(encoding="utf-8"))
    built = json.loads(json.dumps(gen.build()))

    def same(a, b) -> bool:
        # numbers to 1e-12 (the generator's trigonometry may differ in the last bit between numpy
        # builds: 4.4e-16 A seen with numpy 2.4), everything else exactly
        if isinstance(a, float) or isinstance(b, float):
            return isinstance(a, (int, float)) and isinstance(b, (int, float)) and abs(a - b) <= 1e-12
        if isinstance(a, dict):
            return isinstance(b, dict) and a.keys() == b.keys() and all(same(a[k], b[k]) for k in a)
        if isinstance(a, list):
            return isinstance(b, list) and len(a) == len(b) and all(same(x, y) for x, y in zip(a, b))
        return a == b

    assert same(shipped, built)
    assert not same({"x": [1.0]}, {"x": [1.0 + 1e-9]})  # the comparison can fail
    assert all("from memory" in m["source"] or "CCCBDB" in m["source"] for m in shipped["molecules"])
