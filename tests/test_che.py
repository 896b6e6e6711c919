"""Tests of the CHE engine (ecatlab.che)."""

import warnings

import numpy as np
import pandas as pd
import pytest

import ecatlab
from ecatlab.che import limiting_potentials, state_free_energies, step_free_energies
from ecatlab.constants import thermal_voltage_per_pH
from ecatlab.energies import EnergyTable
from ecatlab.errors import ConditionError, ConditionsWarning, MissingDataWarning, MissingSpeciesError
from ecatlab.notation import Pathway

O2 = 2 * 237.129 / 96.48533212  # eV, from the NBS value used by the reference scheme


@pytest.fixture
def oxygen():
    wide = pd.DataFrame({"OH*": [0.8, 1.1], "O*": [1.9, 2.6], "OOH*": [4.0, 4.3]}, index=["A", "B"])
    return EnergyTable.from_matrix(wide)


def test_orr_step_energies_by_hand(oxygen):
    steps = step_free_energies(oxygen, "orr-4e", potential=0.0)
    a = steps.loc["A"].to_numpy()
    np.testing.assert_allclose(a, [4.0 - O2, 1.9 - 4.0, 0.8 - 1.9, -0.8], atol=1e-3)
    assert steps.attrs["scale"] == "RHE" and steps.attrs["pathway"] == "orr-4e"
    # each reduction step shifts by +eU
    shifted = step_free_energies(oxygen, "orr-4e", potential=0.7)
    np.testing.assert_allclose(shifted.to_numpy() - steps.to_numpy(), 0.7)


def test_oer_is_mirror_of_orr(oxygen):
    orr = step_free_energies(oxygen, "orr-4e").to_numpy()
    oer = step_free_energies(oxygen, "oer-4e").to_numpy()
    np.testing.assert_allclose(oer, -orr[:, ::-1], atol=1e-12)
    r = limiting_potentials(oxygen, ["orr-4e", "oer-4e"]).set_index(["pathway", "surface"])
    # A: ORR steps 4.0-4.915=-0.915, -2.1, -1.1, -0.8 -> U_L = 0.8 (step 4); OER U_L = max(-steps) = 2.1
    assert r.loc[("orr-4e", "A"), "limiting_potential"] == pytest.approx(0.8)
    assert r.loc[("orr-4e", "A"), "determining_step_index"] == 4
    assert r.loc[("orr-4e", "A"), "determining_step"] == "OH* + H+ + e- -> * + H2O(l)"
    assert r.loc[("oer-4e", "A"), "limiting_potential"] == pytest.approx(2.1)
    assert r.loc[("oer-4e", "A"), "overpotential"] == pytest.approx(2.1 - O2 / 4, abs=1e-9)
    assert r.loc[("orr-4e", "A"), "overpotential"] == pytest.approx(O2 / 4 - 0.8, abs=1e-9)


def test_limiting_potential_matches_potential_scan(oxygen):
    # brute force: highest U on a fine grid where every electrochemical step is downhill
    r = limiting_potentials(oxygen, "orr-4e").set_index("surface")
    grid = np.linspace(-1, 2, 30001)
    for surface in oxygen.surfaces:
        ok = [u for u in grid[::50] if (step_free_energies(oxygen, "orr-4e", potential=u, surfaces=[surface]).to_numpy() <= 1e-12).all()]
        assert max(ok) == pytest.approx(r.loc[surface, "limiting_potential"], abs=0.005)


def test_she_scale_shift(oxygen):
    pH = 7.0
    shift = thermal_voltage_per_pH(298.15) * pH
    rhe = limiting_potentials(oxygen, "orr-4e", pH=pH, scale="RHE")
    she = limiting_potentials(oxygen, "orr-4e", pH=pH, scale="SHE")
    np.testing.assert_allclose(she.limiting_potential, rhe.limiting_potential - shift)
    np.testing.assert_allclose(she.equilibrium_potential, rhe.equilibrium_potential - shift)
    np.testing.assert_allclose(she.overpotential, rhe.overpotential)
    # step energies at the same physical potential are identical
    a = step_free_energies(oxygen, "orr-4e", potential=0.9, pH=pH, scale="RHE")
    b = step_free_energies(oxygen, "orr-4e", potential=0.9 - shift, pH=pH, scale="SHE")
    np.testing.assert_allclose(a.to_numpy(), b.to_numpy(), atol=1e-12)


ALKALINE_ORR = """
O2(g) + * + H2O(l) + e- -> OOH* + OH-
OOH* + e- -> O* + OH-
O* + H2O(l) + e- -> OH* + OH-
OH* + e- -> * + OH-
"""


@pytest.mark.parametrize("pH", [0.0, 7.0, 13.0])
def test_steps_with_electrons_but_no_protons(oxygen, pH):
    # alkaline ORR written with OH- (e- without H+): on RHE identical to the acidic form at any pH,
    # on SHE at U_SHE = 0 the electrode sits at U_RHE = +k_B T ln(10) pH / e, so each reduction
    # step is that much more uphill
    alk = Pathway.parse(ALKALINE_ORR, name="orr-alkaline")
    acid_rhe = step_free_energies(oxygen, "orr-4e", potential=0.5, pH=pH).to_numpy()
    alk_rhe = step_free_energies(oxygen, alk, potential=0.5, pH=pH).to_numpy()
    np.testing.assert_allclose(alk_rhe, acid_rhe, atol=1e-12)
    alk_she_zero = step_free_energies(oxygen, alk, potential=0.0, pH=pH, scale="SHE").to_numpy()
    acid_rhe_zero = step_free_energies(oxygen, "orr-4e", potential=0.0, pH=pH).to_numpy()
    np.testing.assert_allclose(alk_she_zero, acid_rhe_zero + thermal_voltage_per_pH(298.15) * pH, atol=1e-12)


def test_steps_with_protons_but_no_electrons():
    # OH- + H+ -> H2O(l) is pH independent (water autoprotolysis equilibrium) on both scales, and a
    # proton-only step contributes k_B T ln(10) pH per consumed proton on the SHE scale
    table = EnergyTable.from_matrix(pd.DataFrame({"H*": [0.1]}, index=["A"]))
    path = Pathway.parse("OH- + H+ -> H2O(l)\n* + H+ + e- -> H*\nH* + H+ + e- -> * + H2(g)", name="neutralise-then-her")
    for pH in (0.0, 7.0, 14.0):
        for scale in ("RHE", "SHE"):
            s = step_free_energies(table, path, pH=pH, scale=scale).to_numpy()[0]
            assert s[0] == pytest.approx(0.0, abs=1e-12)
    compiled = ecatlab.che.compile_pathway(path, table.scheme)
    assert list(compiled.proton_coefficient) == [0.0, 1.0, 1.0]
    a_she, _ = compiled.affine(table.values(["A"], compiled.adsorbates), pH=7.0, scale="SHE")
    a_rhe, _ = compiled.affine(table.values(["A"], compiled.adsorbates), pH=7.0, scale="RHE")
    np.testing.assert_allclose(a_she[0, 1:] - a_rhe[0, 1:], thermal_voltage_per_pH(298.15) * 7.0)


def test_missing_species_raise_report_drop():
    wide = pd.DataFrame({"OH*": [0.8, 1.0], "O*": [1.9, np.nan], "OOH*": [4.0, 4.3]}, index=["A", "B"])
    table = EnergyTable.from_matrix(wide)
    with pytest.raises(MissingSpeciesError) as err:
        step_free_energies(table, "orr-4e")
    assert "B: O*" in str(err.value)
    with pytest.warns(MissingDataWarning, match="B: O\\*"):
        r = limiting_potentials(table, "orr-4e")
    assert r.set_index("surface").loc["B", "missing_species"] == "O*"
    assert np.isnan(r.set_index("surface").loc["B", "limiting_potential"])
    assert r.set_index("surface").loc["A", "missing_species"] == ""
    with pytest.warns(MissingDataWarning):
        d = limiting_potentials(table, "orr-4e", on_missing="drop")
    assert list(d.surface) == ["A"]
    with pytest.raises(MissingSpeciesError):
        limiting_potentials(table, "orr-4e", on_missing="raise")


def test_condition_errors(oxygen):
    with pytest.raises(ConditionError, match="unknown potential scale"):
        step_free_energies(oxygen, "orr-4e", scale="NHE")
    with pytest.raises(ConditionError, match="outside the aqueous range"):
        limiting_potentials(oxygen, "orr-4e", pH=20)
    with pytest.raises(ConditionError, match="kelvin"):
        limiting_potentials(oxygen, "orr-4e", temperature=-5)
    with pytest.raises(ConditionError, match="outside 200-1000 K"):
        limiting_potentials(oxygen, "orr-4e", temperature=5000)
    with pytest.warns(ConditionsWarning, match="liquid range of water"):
        limiting_potentials(oxygen, "orr-4e", temperature=270)


def test_lowercase_scale_and_no_warning_at_room_temperature(oxygen):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        r = limiting_potentials(oxygen, "orr-4e", scale="rhe")
    assert (r.scale == "RHE").all()


def test_per_surface_potential_arrays(oxygen):
    u = np.array([0.3, 0.9])
    both = step_free_energies(oxygen, "orr-4e", potential=u)
    for i, s in enumerate(oxygen.surfaces):
        one = step_free_energies(oxygen, "orr-4e", potential=u[i], surfaces=[s])
        np.testing.assert_allclose(both.loc[[s]].to_numpy(), one.to_numpy())
    with pytest.raises(ConditionError, match="one value per surface"):
        step_free_energies(oxygen, "orr-4e", potential=[0.1, 0.2, 0.3])


def test_state_free_energies_cumulative(oxygen):
    levels = state_free_energies(oxygen, "orr-4e", potential=0.0)
    assert list(levels.columns) == ["0: O2(g)", "1: OOH*", "2: O*", "3: OH*", "4: 2 H2O(l)"]
    np.testing.assert_allclose(levels.iloc[:, 0], 0.0)
    np.testing.assert_allclose(levels.iloc[:, -1], -O2, atol=1e-9)
    at_eq = state_free_energies(oxygen, "orr-4e", potential=ecatlab.equilibrium_potential("orr-4e"))
    np.testing.assert_allclose(at_eq.iloc[:, -1], 0.0, atol=1e-9)


def test_chemical_steps_reported(oxygen):
    table = EnergyTable.from_matrix(pd.DataFrame({"COOH*": [0.3], "CO*": [-0.5]}, index=["A"]))
    r = limiting_potentials(table, "co2rr-co").iloc[0]
    co_gas = ecatlab.ReferenceScheme().molecule_free_energy("CO(g)")
    assert r.max_chemical_dG == pytest.approx(co_gas + 0.5)
    assert "CO* -> * + CO(g)" in r.uphill_chemical_steps
    # the potential only sees the electrochemical steps: COOH formation (0.3) vs COOH->CO (-0.8)
    assert r.limiting_potential == pytest.approx(-0.3)
    assert np.isnan(limiting_potentials(oxygen, "orr-4e").max_chemical_dG).all()


def test_unknown_surface_subset(oxygen):
    from ecatlab.errors import EnergyTableError

    with pytest.raises(EnergyTableError, match="unknown surface"):
        limiting_potentials(oxygen, "orr-4e", surfaces=["Z"])


def test_demo_table_all_pathways_complete():
    table = ecatlab.demo_energies()
    keys = list(ecatlab.list_pathways().key)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        r = limiting_potentials(table, keys)
    assert len(r) == len(keys) * len(table.surfaces)
    assert r.limiting_potential.notna().all()
    assert r.attrs["units"]["limiting_potential"] == "V vs RHE"
    assert "H2O(l)" in r.attrs["references"]


def test_limiting_potential_equals_engine_for_user_pathway_text(oxygen):
    text = "\n".join(s.equation for s in ecatlab.pathway("orr-4e").steps)
    a = limiting_potentials(oxygen, text).limiting_potential.to_numpy()
    b = limiting_potentials(oxygen, "orr-4e").limiting_potential.to_numpy()
    np.testing.assert_allclose(a, b)


# -- the columnar result and the large-screen path -------------------------------------------------------
def _random_table(n, seed=0, holes=False):
    from ecatlab.pathways import BUILTIN_PATHWAYS, pathway

    species = sorted({a.key for k in BUILTIN_PATHWAYS for a in pathway(k).adsorbates})
    rng = np.random.default_rng(seed)
    wide = pd.DataFrame(rng.uniform(-1.5, 4.5, (n, len(species))), columns=species, index=[f"s{i}" for i in range(n)])
    if holes:
        wide.iloc[::97, 2] = np.nan
    return EnergyTable.from_matrix(wide), list(BUILTIN_PATHWAYS)


def test_large_screen_path_equals_the_matrix_product():
    """dG_zero's per-coefficient sums (n >= 4096 rows) equal numpy's matrix product, NaN rows included."""
    from ecatlab.che import compile_pathway
    from ecatlab.pathways import pathway

    table, keys = _random_table(5000, holes=True)
    for key in keys:
        compiled = compile_pathway(pathway(key), table.scheme)
        values = table.values(None, compiled.adsorbates)
        big = compiled.dG_zero(values)
        ref = values @ compiled.adsorbate_stoichiometry.T + compiled.molecule_dG  # numpy as the reference
        np.testing.assert_allclose(big, ref, rtol=0, atol=1e-12)
        assert np.array_equal(np.isnan(big), np.isnan(ref))


def test_arrays_and_long_frame_agree():
    from ecatlab.che import limiting_potential_arrays

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingDataWarning)
        table, keys = _random_table(5000, seed=2, holes=True)
        arrays = limiting_potential_arrays(table, keys, pH=2.0)
        frame = limiting_potentials(table, keys, pH=2.0)
    assert arrays.shape == (5000, len(keys)) and len(frame) == 5000 * len(keys)
    for j, key in enumerate(keys):
        part = frame[frame["pathway"] == key]
        np.testing.assert_array_equal(part["limiting_potential"].to_numpy(), arrays.limiting_potential[:, j])
        np.testing.assert_array_equal(part["G_max"].to_numpy(), arrays.G_max[:, j])
        assert (part["determining_step_index"].to_numpy() == arrays.determining_step_index[:, j]).all()
        steps = np.array([""] + [s.equation for s in arrays.pathways[j].steps], dtype=object)
        assert (part["determining_step"].astype(object).to_numpy() == steps[arrays.determining_step_index[:, j]]).all()
        order = arrays.ranking(key)
        assert (order == ecatlab.che.kernel.ranking_order(arrays.G_max[:, j], arrays.blocked[:, j])).all()
    # constants live once: pH and temperature columns are read-only broadcasts, yet a copy can be changed
    assert frame["pH"].eq(2.0).all() and frame.attrs["pH"] == 2.0
    changed = frame.copy()
    changed.loc[0, "pH"] = 5.0
    assert frame.loc[0, "pH"] == 2.0 and changed.loc[0, "pH"] == 5.0
    missing = frame.loc[frame["missing_species"] != "", ["missing_species", "limiting_potential", "determining_step", "blocked"]]
    assert len(missing) and missing["limiting_potential"].isna().all() and (missing["determining_step"] == "").all()
    assert not missing["blocked"].any()


def test_uphill_text_is_built_per_distinct_value():
    table, _ = _random_table(6000, seed=4)
    frame = limiting_potentials(table, ["co2rr-co"])
    text = frame["uphill_chemical_steps"]
    assert len(text.cat.categories) < 700  # one text per distinct 0.01 eV value, not one per row
    up = frame["max_chemical_dG"] > 0
    assert (frame.loc[up, "blocked"]).all() and (text[up] != "").all() and (text[~up] == "").all()
    row = frame[up].iloc[0]
    assert row["uphill_chemical_steps"].endswith(f"({row['max_chemical_dG']:+.2f} eV)")


def test_blocks_of_surfaces_give_the_same_result(monkeypatch):
    import ecatlab.che.engine as engine

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingDataWarning)
        table, keys = _random_table(5000, seed=5, holes=True)
        whole = limiting_potentials(table, keys, pH=1.0)
        monkeypatch.setattr(engine, "_BLOCK", 777)
        blocked = limiting_potentials(table, keys, pH=1.0)
    for col in whole.columns:
        left, right = whole[col], blocked[col]
        if left.dtype.kind == "f":
            np.testing.assert_array_equal(left.to_numpy(), right.to_numpy())
        else:
            assert (left.astype(object).to_numpy() == right.astype(object).to_numpy()).all(), col
