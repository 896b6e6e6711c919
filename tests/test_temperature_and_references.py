"""One temperature, any independent reference set, immutable values, data as data.

Outside references (named at each check):
* cantera's gri30 NASA polynomials (standard Gibbs energies of H2, O2, H2O(g) at T);
* NBS tables (Wagman et al. 1982, via the CRC Handbook; from memory): standard potentials and
  entropies; dE°/dT of the O2/H2O couple = dS/(nF) = -0.846 mV/K with S°(H2O, l) 69.91,
  S°(H2) 130.684, S°(O2) 205.138 J/(mol K);
* Henry's-law solubilities (Sander, Atmos. Chem. Phys. 15, 4399 (2015); from memory) for the
  aqueous entries: dG(g -> aq) = -RT ln(H^cp p°/c°).
"""

import dataclasses
import math
import warnings

import numpy as np
import pandas as pd
import pytest

import ecatlab
from ecatlab import che
from ecatlab.constants import GAS_CONSTANT, STANDARD_TEMPERATURE
from ecatlab.energies import as_energy_table, read_energies
from ecatlab.errors import ConditionsWarning, ReferenceSchemeError
from ecatlab.references import ReferenceScheme, formation_data

FARADAY = 96485.33212  # C/mol (CODATA 2018/2022)


# -- reference sets ---------------------------------------------------------------------------------------
SETS = [
    ("H2(g)", "H2O(l)", "CO2(g)", "N2(g)"),  # the default
    ("H2O(l)", "O2(g)", "CO2(g)", "N2(g)"),  # no H2(g): H+ + e- must cost 1/2 G(H2) = 1.229 eV here
    ("H2(g)", "O2(g)", "CO(g)", "NH3(g)"),
]


@pytest.mark.parametrize("refs", SETS)
@pytest.mark.parametrize(
    "reaction,expected,tol",
    [
        ("orr-4e", 1.229, 0.001),  # O2/H2O, CRC standard potentials (NBS)
        ("orr-2e", 0.695, 0.002),  # O2/H2O2(aq), CRC
        ("co2rr-co", -0.104, 0.005),  # CO2/CO(g) (Nitopi et al., Chem. Rev. 119, 7610 (2019): -0.10 V)
        ("co2rr-ch4", 0.169, 0.005),  # CO2/CH4 (Nitopi 2019: 0.17 V)
        ("O2(g) + 4 H+ + 4 e- -> 2 H2O(g)", 1.185, 0.001),  # gas-phase water, from NBS dfG(H2O, g)
    ],
)
def test_handbook_potentials_under_three_reference_sets(refs, reaction, expected, tol):
    scheme = ReferenceScheme(references=refs)
    assert che.equilibrium_potential(reaction, references=scheme) == pytest.approx(expected, abs=tol)


def test_proton_electron_pair_in_a_scheme_without_h2():
    scheme = ReferenceScheme(references=("H2O(l)", "O2(g)", "CO2(g)", "N2(g)"))
    # 1/2 G(H2) relative to H2O(l) - 1/2 O2(g): 1/2 * 237.129 kJ/mol (NBS) in eV
    assert scheme.proton_electron_free_energy() == pytest.approx(0.5 * 237.129 / 96.4853, abs=1e-4)


def test_limiting_potentials_do_not_depend_on_the_reference_set():
    # the same adsorbates expressed against two reference sets give the same pathway energetics
    from ecatlab.notation import Species

    default = ReferenceScheme()
    other = ReferenceScheme(references=("H2O(l)", "O2(g)", "CO2(g)", "N2(g)"))
    g_default = {"OH*": 0.8, "O*": 1.6, "OOH*": 4.0}
    rows = []
    for key, g in g_default.items():
        # G vs (H2O, O2) = G vs (H2, H2O) + sum_i n_i G_rel,default(ref_i of the other set) ... via molecules
        el = Species.parse(key).elements
        shift = sum(c * default.molecule_free_energy(r) for r, c in other.balance(el).items())
        rows.append({"surface": "X", "species": key, "G": g - shift})
    t_default = read_energies(pd.DataFrame([{"surface": "X", "species": k, "G": v} for k, v in g_default.items()]))
    t_other = read_energies(pd.DataFrame(rows), references=other)
    a = che.limiting_potentials(t_default, "orr-4e").iloc[0]
    b = che.limiting_potentials(t_other, "orr-4e").iloc[0]
    assert b["limiting_potential"] == pytest.approx(a["limiting_potential"], abs=1e-9)
    assert b["equilibrium_potential"] == pytest.approx(1.229, abs=1e-3)


# -- one temperature -----------------------------------------------------------------------------------------
def _cantera_u_eq_gas_water(T: float) -> float:
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("gri30.yaml")
    gas.TP = T, ct.one_atm
    g = dict(zip(gas.species_names, gas.standard_gibbs_RT * ct.gas_constant * T / 1000.0))  # J/mol at 1 atm std
    dG = 2 * g["H2O"] - 2 * g["H2"] - g["O2"]  # standard state of the polynomials (1 atm); cancels in this reaction
    return -dG / (4 * FARADAY)


@pytest.mark.parametrize("T", [298.15, 330.0, 360.0])
def test_u_eq_of_gas_phase_water_formation_against_cantera(T):
    ours = che.equilibrium_potential("O2(g) + 4 H+ + 4 e- -> 2 H2O(g)", temperature=T)
    assert ours == pytest.approx(_cantera_u_eq_gas_water(T), abs=3e-4)


@pytest.mark.parametrize("T", [500.0, 800.0])
def test_u_eq_at_high_temperature_with_a_gas_water_reference_against_cantera(T):
    scheme = ReferenceScheme(references=("H2(g)", "H2O(g)", "CO2(g)", "N2(g)"), temperature=T)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConditionsWarning)  # no liquid water at 500 K: said, then computed
        ours = che.equilibrium_potential("O2(g) + 4 H+ + 4 e- -> 2 H2O(g)", temperature=T, references=scheme)
    assert ours == pytest.approx(_cantera_u_eq_gas_water(T), abs=1e-3)


def test_orr_equilibrium_potential_temperature_coefficient():
    # dE/dT = dS/(4F) = (2*69.91 - 2*130.684 - 205.138) / (4F) = -0.846 mV/K (NBS entropies)
    expected = (2 * 69.91 - 2 * 130.684 - 205.138) / (4 * FARADAY)
    u1 = che.equilibrium_potential("orr-4e", temperature=298.15)
    u2 = che.equilibrium_potential("orr-4e", temperature=338.15)
    assert (u2 - u1) / 40.0 == pytest.approx(expected, abs=2e-5)  # within 0.02 mV/K


def test_temperature_reaches_the_corrections_when_the_engine_reads_the_table(tmp_path):
    demo = ecatlab.demo_path()
    frame = pd.read_csv(demo, comment="#")
    at_350 = read_energies(demo, temperature=350.0)
    expected = che.step_free_energies(at_350, "orr-4e", potential=0.8, temperature=350.0)
    for source in (demo, frame):
        got = che.step_free_energies(source, "orr-4e", potential=0.8, temperature=350.0)
        pd.testing.assert_frame_equal(got, expected, check_exact=False, atol=1e-12, rtol=0)
    at_298 = che.step_free_energies(demo, "orr-4e", potential=0.8)
    assert np.abs(got.to_numpy() - at_298.to_numpy()).max() > 0.01  # the corrections did change


def test_table_read_at_one_temperature_and_evaluated_at_another_is_recomputed():
    t298 = ecatlab.demo_energies()
    with pytest.warns(ConditionsWarning, match="re-evaluated at 340 K"):
        lp = che.limiting_potentials(t298, "orr-4e", temperature=340.0)
    direct = che.limiting_potentials(ecatlab.demo_energies(temperature=340.0), "orr-4e", temperature=340.0)
    assert np.allclose(lp["limiting_potential"], direct["limiting_potential"], atol=1e-12)
    assert "at 340 K" in lp.attrs["references"]


def test_user_reference_corrections_are_kept_or_refused_never_dropped():
    base = ReferenceScheme()
    corr = base.correction_table
    corr.loc["H2(g)", "ZPE"] += 0.5  # an invented user table, so that dropping it would show
    user = ReferenceScheme(corrections=corr)
    rows = pd.DataFrame({"surface": ["A"], "species": ["OH*"], "E": [0.6], "ZPE": [0.35], "CpdT": [0.05], "TS": [0.08]})
    kept = read_energies(rows, references=user, temperature=298.15)
    assert kept.scheme.correction_table.loc["H2(g)", "ZPE"] == pytest.approx(corr.loc["H2(g)", "ZPE"])
    assert kept.frame["G"].iloc[0] != pytest.approx(read_energies(rows).frame["G"].iloc[0], abs=1e-3)
    with pytest.raises(ReferenceSchemeError, match="user-given reference-correction table"):
        read_energies(rows, references=user, temperature=350.0)


# -- immutable values -----------------------------------------------------------------------------------------
def test_reference_scheme_is_hashable_and_immutable_and_replace_keeps_everything():
    s = ReferenceScheme(overrides={"CO(g)": 0.3})
    assert hash(s) == hash(ReferenceScheme(overrides={"CO(g)": 0.3}))
    assert s == ReferenceScheme(overrides={"CO(g)": 0.3}) and s != ReferenceScheme()
    with pytest.raises(TypeError):
        s.overrides["CO(g)"] = 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        s.temperature = 350.0
    user = ReferenceScheme(corrections=ReferenceScheme().correction_table, correction_source="my table")
    again = dataclasses.replace(user, overrides={"O2(g)": 4.9})
    assert again.corrections is not None and again.correction_source == "my table"
    hot = dataclasses.replace(ReferenceScheme(), temperature=350.0)
    assert hot.correction_table.loc["H2(g)", "TS"] > ReferenceScheme().correction_table.loc["H2(g)", "TS"]
    assert {s: 1}[ReferenceScheme(overrides={"CO(g)": 0.3})] == 1


def test_to_dict_round_trip():
    s = ReferenceScheme(references=SETS[1], temperature=320.0)
    assert ReferenceScheme.from_dict(s.to_dict()) == s


# -- data as data -------------------------------------------------------------------------------------------------
def test_formation_data_is_internally_consistent():
    # dfG = dfH - T (S - sum S_elements) for every row, element entropies from the same file (NBS)
    from ecatlab.notation import Species

    data = formation_data()
    s_el = {"H": data.loc["H2(g)", "S"] / 2, "O": data.loc["O2(g)", "S"] / 2, "N": data.loc["N2(g)", "S"] / 2, "C": data.loc["C(s)", "S"]}
    for key, row in data.iterrows():
        if key == "C(s)":
            continue
        ds = row["S"] - sum(c * s_el[el] for el, c in Species.parse(key).elements.items())
        assert row["dfG"] == pytest.approx(row["dfH"] - STANDARD_TEMPERATURE * ds / 1000.0, abs=0.5), key
        assert "from memory" in row["source"]


@pytest.mark.parametrize(
    "solute,hcp",  # Henry's-law constants H^cp at 298 K, mol m^-3 Pa^-1 (Sander 2015; from memory)
    [("CH3OH", 2.0), ("NH3", 0.59), ("H2O2", 830.0), ("C2H5OH", 1.9), ("HCOOH", 88.0)],
)
def test_aqueous_entries_against_henry_law(solute, hcp):
    data = formation_data()
    ours = data.loc[f"{solute}(aq)", "dfG"] - data.loc[f"{solute}(g)", "dfG"]  # kJ/mol
    henry = -GAS_CONSTANT * 298.15 * math.log(hcp * 1e5 / 1000.0) / 1000.0  # p° = 1e5 Pa, c° = 1000 mol/m3
    assert ours == pytest.approx(henry, abs=1.5)  # compilations scatter by 10-30 % (about 0.5 kJ/mol)


def test_codata_version_is_the_one_scipy_provides():
    import scipy.constants._codata as codata

    from ecatlab import constants

    assert constants.CODATA_VERSION == codata._current_codata
    assert constants.CODATA_VERSION in constants.__doc__ or "CODATA_VERSION" in constants.__doc__


def test_shipped_298_corrections_equal_the_computation():
    from ecatlab.references import compute_reference_corrections, default_reference_corrections

    shipped = default_reference_corrections(298.15)[0]
    computed = compute_reference_corrections(298.15)
    pd.testing.assert_frame_equal(shipped.sort_index(), computed.loc[shipped.index].sort_index(), check_exact=False, atol=1e-14, rtol=0)
