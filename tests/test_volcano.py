"""Tests of ecatlab.volcano: 1D volcanoes, activity maps and selectivity maps.

Published checks (from the volcano code path, not from the CHE engine tests):
* ORR/OER with dG(OOH*) = dG(OH*) + 3.2 eV: minimum theoretical overpotential 0.37 V, at
  dG(OH*) = 0.86 eV for ORR and at dG(O*) - dG(OH*) = 1.6 eV for OER (Man et al., ChemCatChem 3,
  1159 (2011); Koper, J. Electroanal. Chem. 660, 254 (2011)).
* Bond-counting slope 1/2 for OH* vs O* (Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007)).
Relations with other intercepts used below are invented test inputs.
"""

import warnings

import numpy as np
import pandas as pd
import pytest

from ecatlab import che
from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.errors import ScalingError
from ecatlab.scaling import ScalingRelation as R
from ecatlab.volcano import VolcanoAnalysis, activity_map, selectivity_map, volcano, volcano_summary

# k_B T ln(10) / e at 298.15 K from CODATA constants (scipy.constants), V per pH unit
from scipy import constants as _sc

KT_LN10 = _sc.k / _sc.e * 298.15 * np.log(10.0)

OOH_FROM_OH = R.given("OOH*", "OH*", 1.0, 3.2, source="Man et al., ChemCatChem 3, 1159 (2011)")


@pytest.fixture(scope="module")
def demo():
    return demo_energies()


@pytest.mark.parametrize("o_intercept", [0.2, 0.6])
def test_orr_apex_037(o_intercept):
    # O* relation (invented intercepts) must not move the apex: steps 1 and 4 meet at the top
    rels = [OOH_FROM_OH, R.given("O*", "OH*", 2.0, o_intercept)]
    c = volcano(None, "orr-4e", "OH*", rels)
    assert c.apex.overpotential == pytest.approx(0.37, abs=0.005)  # Man et al. 2011; Koper 2011
    assert c.apex.descriptor[0] == pytest.approx(0.86, abs=0.01)
    assert c.apex.limiting_potential == pytest.approx(c.equilibrium_potential - c.apex.overpotential)
    assert not c.apex.at_boundary
    assert set(c.apex.determining_steps) == {"1: O2(g) → OOH*", "4: OH* → H2O(l)"}
    # exact apex is at least as good as every grid point, and the grid gets close
    assert c.limiting_potential.max() <= c.apex.limiting_potential + 1e-12
    assert c.limiting_potential.max() == pytest.approx(c.apex.limiting_potential, abs=0.01)


@pytest.mark.parametrize("oh_intercept", [-0.2, -0.5])
def test_oer_apex_037_with_difference_descriptor(oh_intercept):
    # OH* = 1/2 O* + b (bond counting, Abild-Pedersen 2007), OOH* = OH* + 3.2 eV (Man et al. 2011)
    rels = [OOH_FROM_OH, R.given("OH*", "O*", 0.5, oh_intercept)]
    c = volcano(None, "oer-4e", "O* - OH*", rels)
    assert c.direction == "oxidation"
    assert c.apex.overpotential == pytest.approx(0.37, abs=0.005)
    assert c.apex.descriptor[0] == pytest.approx(1.6, abs=0.01)
    assert set(c.apex.determining_steps) == {"2: OH* → O*", "3: O* + H2O(l) → OOH*"}
    assert c.limiting_potential.min() >= c.apex.limiting_potential - 1e-12


def test_oer_map_over_oh_and_o_gives_037():
    m = activity_map(None, "oer-4e", ("OH*", "O*"), [OOH_FROM_OH], x=(0.0, 2.0), y=(0.0, 4.0), points=(201, 401))
    assert m.optimum.overpotential == pytest.approx(0.37, abs=0.005)
    x, y = m.optimum.descriptor
    assert y - x == pytest.approx(1.6, abs=0.01)
    # grid minimum matches (the grid contains points with O* - OH* = 1.6 eV)
    assert m.overpotential.min() == pytest.approx(m.optimum.overpotential, abs=1e-6)


def test_envelope_equals_engine_on_synthetic_surfaces(demo):
    c = volcano(demo, "orr-4e", "OH*", fixed_slopes={"OOH*": 1.0}, points=201)
    pick = np.arange(0, len(c.x), 10)
    wide = c.space.frame(c.x[pick][:, None], index=[f"g{i}" for i in pick])
    table = EnergyTable.from_matrix(wide)
    lp = che.limiting_potentials(table, "orr-4e")
    np.testing.assert_allclose(lp["limiting_potential"].to_numpy(), c.limiting_potential[pick], atol=1e-12)
    np.testing.assert_array_equal(lp["determining_step_index"].to_numpy(), c.determining_step_index[pick])
    # step lines are exact
    ec = c.electrochemical
    np.testing.assert_allclose(c.step_onsets[:, ec], c.line_intercepts[ec] + c.line_slopes[ec] * c.x[:, None], atol=1e-12)


def test_envelope_equals_engine_difference_descriptor_and_ph():
    rels = [OOH_FROM_OH, R.given("OH*", "O*", 0.5, -0.3)]
    c = volcano(None, "oer-4e", "O* - OH*", rels, pH=7, scale="SHE", points=51)
    table = EnergyTable.from_matrix(c.space.frame(c.x[:, None], index=[f"g{i}" for i in range(51)]))
    lp = che.limiting_potentials(table, "oer-4e", pH=7, scale="SHE")
    np.testing.assert_allclose(lp["limiting_potential"].to_numpy(), c.limiting_potential, atol=1e-12)
    # the synthetic surfaces sit at their descriptor values
    d = table.matrix["O*"] - table.matrix["OH*"]
    np.testing.assert_allclose(d.to_numpy(), c.x, atol=1e-12)
    # coupled steps: SHE curve = RHE curve - k_B T ln(10) pH / e
    rhe = volcano(None, "oer-4e", "O* - OH*", rels, pH=7, scale="RHE", points=51)
    np.testing.assert_allclose(c.limiting_potential, rhe.limiting_potential - 7 * KT_LN10, atol=1e-12)


def test_map_equals_engine_and_region_map(demo):
    m = activity_map(demo, "co2rr-ch4", ("CO*", "OH*"), points=(31, 21))
    assert m.limiting_potential.shape == (21, 31)
    X, Y = np.meshgrid(m.x, m.y)
    D = np.column_stack([X.ravel(), Y.ravel()])[::37]
    wide = m.space.frame(D, index=[f"p{i}" for i in range(len(D))])
    lp = che.limiting_potentials(EnergyTable.from_matrix(wide), "co2rr-ch4")
    np.testing.assert_allclose(lp["limiting_potential"].to_numpy(), m.limiting_potential.ravel()[::37], atol=1e-12)
    np.testing.assert_array_equal(lp["determining_step_index"].to_numpy(), m.determining_step_index.ravel()[::37])
    assert m.optimum.limiting_potential >= m.limiting_potential.max() - 1e-9
    frame = m.to_frame()
    assert len(frame) == 31 * 21 and frame.attrs["scale"] == "RHE"


def test_surface_points_are_exact_engine_values(demo):
    c = volcano(demo, "orr-4e", "OH*")
    lp = che.limiting_potentials(demo, "orr-4e").set_index("surface")
    s = c.surfaces.set_index("surface")
    np.testing.assert_allclose(s["limiting_potential"], lp.loc[s.index, "limiting_potential"], atol=1e-12)
    np.testing.assert_allclose(s["descriptor"], demo.matrix.loc[s.index, "OH*"], atol=1e-12)
    assert len(s) == 12


def test_uncovered_adsorbate_error_names_it():
    with pytest.raises(ScalingError, match=r"O\* \(needed for O\*\).*ScalingRelation.given\('O\*', 'OH\*'"):
        volcano(None, "orr-4e", "OH*", [OOH_FROM_OH])


def test_dependent_descriptor_and_cycle_errors():
    rels = [OOH_FROM_OH, R.given("O*", "OH*", 1.0, 1.5)]
    with pytest.raises(ScalingError, match="do not vary independently"):
        volcano(None, "oer-4e", "O* - OH*", rels)
    cyc = [R.given("O*", "OH*", 2.0, 0.0), R.given("OH*", "O*", 0.5, 0.0), OOH_FROM_OH]
    with pytest.raises(ScalingError, match="cycle"):
        volcano(None, "orr-4e", "OH*", cyc)
    with pytest.raises(ScalingError, match="two descriptors"):
        activity_map(None, "orr-4e", "OH*", [OOH_FROM_OH])
    with pytest.raises(ScalingError, match="two scaling relations predict"):
        volcano(None, "orr-4e", "OH*", [OOH_FROM_OH, OOH_FROM_OH, R.given("O*", "OH*", 2.0, 0.0)])


def test_fitted_relations_are_reported(demo):
    summary = volcano_summary(demo, "orr-4e", "OH*")
    rel_rows = summary[summary["quantity"] == "scaling relation"]
    assert len(rel_rows) == 2  # O* and OOH* fitted against OH*
    assert rel_rows["note"].str.contains("R²").all()
    assert summary.attrs["references"].startswith("CHE")


def test_apex_at_range_edge_is_flagged():
    rels = [OOH_FROM_OH, R.given("O*", "OH*", 2.0, 0.2)]
    c = volcano(None, "orr-4e", "OH*", rels, span=(1.2, 2.0))
    assert c.apex.at_boundary and c.apex.descriptor[0] == pytest.approx(1.2)


def test_selectivity_map_matches_engine(demo):
    s = selectivity_map(demo, ("CO*", "OH*"), points=(41, 31), basis="pathways")
    assert s.onset.shape == (5, 31, 41)
    assert s.product_labels == ("CO", "HCOOH", "CH4", "CH3OH", "H2")
    assert s.area_fractions().sum() == pytest.approx(1.0)
    assert np.all(s.margin >= 0)
    # each product's onset equals the engine on the same synthetic surfaces
    analysis = VolcanoAnalysis(demo)
    X, Y = np.meshgrid(s.x, s.y)
    D = np.column_stack([X.ravel(), Y.ravel()])[::29]
    from ecatlab.volcano import build_space

    needed = sorted({a.key for p in s.products for a in __import__("ecatlab").pathway(p).adsorbates})
    space = build_space(s.relations, s.descriptors, needed)
    table = EnergyTable.from_matrix(space.frame(D, index=[f"p{i}" for i in range(len(D))]))
    lp = che.limiting_potentials(table, list(s.products))
    wide = lp.pivot(index="surface", columns="pathway", values="limiting_potential").loc[[f"p{i}" for i in range(len(D))], list(s.products)]
    np.testing.assert_allclose(wide.to_numpy().T, s.onset.reshape(5, -1)[:, ::29], atol=1e-12)
    # winner by the ranking rule, written out as a plain loop: unblocked (no uphill chemical step) first,
    # then the highest onset, ties to the product listed first
    chem = lp.pivot(index="surface", columns="pathway", values="max_chemical_dG").loc[[f"p{i}" for i in range(len(D))], list(s.products)]
    expect = []
    for u_row, c_row in zip(wide.to_numpy(), chem.to_numpy()):
        keys = [(bool(c > 0), -u, k) for k, (u, c) in enumerate(zip(u_row, c_row))]
        expect.append(min(keys)[2])
    np.testing.assert_array_equal(expect, s.winner.ravel()[::29])
    assert not np.array_equal(expect, np.argmax(wide.to_numpy(), axis=1))  # the onset alone picks differently here
    assert analysis.scale == "RHE"
    assert list(s.surfaces.columns[:3]) == ["surface", "x", "y"] and len(s.surfaces) == 12


def test_selectivity_analytic_her_vs_co():
    # HER onset is -|dG(H*)|; with H* fixed at 0.3 eV (invented) HER starts at -0.3 V_RHE.
    # CO path onset: min(-dG1, -dG2); with COOH* = CO* + 0.5 eV (invented) both lines are simple.
    rels = [R.given("H*", (), (), 0.3), R.given("COOH*", "CO*", 1.0, 0.5)]
    s = selectivity_map(None, ("CO*", "OH*"), ["co2rr-co", "her-volmer-heyrovsky"], rels, x=(-1.5, 0.5), y=(0.0, 1.0), points=(81, 5))
    assert np.allclose(s.onset[1], -0.3)
    assert np.all(s.onset[0] == s.onset[0][0])  # OH* plays no role in these pathways
    # CO beats HER electrochemically where CO* < -0.2 eV, but there CO* -> * + CO(g) is uphill
    # (dG = G(CO(g)) - G(CO*) = 0.208 - CO* > 0): CO is blocked and HER wins the whole range
    co_better_onset = s.onset[0] > -0.3
    assert co_better_onset.any() and np.all(s.max_chemical_dG[0][co_better_onset] > 0)
    assert np.all(s.winner == 1) and not s.winner_blocked.any()
    with pytest.raises(ScalingError, match="oxidations"):
        selectivity_map(None, ("OH*", "O*"), ["orr-4e", "oer-4e"], [OOH_FROM_OH])


#: G(CO(g)) relative to CO2(g), H2(g), H2O(l): dfG(CO,g) + dfG(H2O,l) - dfG(CO2,g)
#: = -137.168 - 237.129 + 394.359 = 20.062 kJ/mol = 0.2079 eV (NBS tables, Wagman et al., J. Phys. Chem.
#: Ref. Data 11, suppl. 2 (1982); 96.485 kJ/mol per eV).
G_CO_GAS = 20.062 / 96.485
#: Invented relations: H* fixed at 0.5 eV, COOH* = CO* + 0.1 eV.
BLOCK_RELS = [R.given("H*", (), (), 0.5), R.given("COOH*", "CO*", 1.0, 0.1)]
BLOCK_X = np.array([-0.3, 0.0, 0.3])
DESORB_ONLY_NET = {"forbid": ["COOH* + H+ + e- -> * + CO(g) + H2O(l)", "CO2(g) + * + H+ + e- -> OH* + CO(g)"]}


def test_blocked_product_does_not_win_the_selectivity_map():
    # Hand arithmetic at pH 0, RHE (CHE: H+ + e- = 1/2 H2 - eU; G(CO2) = G(H2) = 0 as references):
    #   HER (Volmer-Heyrovsky), H* = 0.5: onsets -0.5 and +0.5 V -> U_L = -0.5 V, no chemical step.
    #   CO2 -> CO: dG1 = G(COOH*) + eU, dG2 = G(CO*) - G(COOH*) + eU = -0.1 + eU, dG3 = G(CO(g)) - G(CO*).
    #   CO* = -0.3: COOH* = -0.2, onsets +0.2, +0.1 -> U_L = +0.1 V; dG3 = 0.208 + 0.3 = 0.508 eV uphill (blocked)
    #   CO* =  0.0: COOH* = +0.1, onsets -0.1, +0.1 -> U_L = -0.1 V; dG3 = 0.208 eV uphill (blocked)
    #   CO* = +0.3: COOH* = +0.4, onsets -0.4, +0.1 -> U_L = -0.4 V; dG3 = -0.092 eV (released)
    # By onset alone CO would win all three columns; by the ranking rule H2 wins the two blocked ones.
    from ecatlab.references import ReferenceScheme

    assert ReferenceScheme().molecule_free_energy("CO(g)") == pytest.approx(G_CO_GAS, abs=2e-4)
    s = selectivity_map(None, ("CO*", "OH*"), ["co2rr-co", "her-volmer-heyrovsky"], BLOCK_RELS, x=BLOCK_X, y=[0.0, 0.5, 1.0])
    assert s.basis == "pathways"
    np.testing.assert_allclose(s.onset[0], np.broadcast_to([0.1, -0.1, -0.4], (3, 3)), atol=1e-9)
    np.testing.assert_allclose(s.onset[1], -0.5, atol=1e-9)
    np.testing.assert_allclose(s.max_chemical_dG[0], np.broadcast_to([G_CO_GAS + 0.3, G_CO_GAS, G_CO_GAS - 0.3], (3, 3)), atol=2e-4)
    assert np.all(s.winner == [1, 1, 0])
    np.testing.assert_allclose(s.margin[:, 2], 0.1, atol=1e-9)  # CO -0.4 V vs H2 -0.5 V
    assert np.all(np.isinf(s.margin[:, :2]))  # H2 is the only unblocked product there
    assert not s.winner_blocked.any()
    assert "blocked" in s.conditions["rule"]
    frame = s.to_frame()
    assert list(frame["winner"][:3]) == ["H2", "H2", "CO"] and not frame["winner_blocked"].any()


def test_blocked_product_wins_only_where_every_product_is_blocked():
    # Volmer-Tafel HER with H* = -0.3 eV (invented): Volmer onsets +0.3 V, Tafel 2 H* -> H2: dG = +0.6 eV (blocked).
    # CO as above: blocked at CO* = -0.3 and 0.0 (U_L +0.1, -0.1 V), open at +0.3 (U_L -0.4 V).
    rels = [R.given("H*", (), (), -0.3), R.given("COOH*", "CO*", 1.0, 0.1)]
    s = selectivity_map(None, ("CO*", "OH*"), ["co2rr-co", "her-volmer-tafel"], rels, x=BLOCK_X, y=[0.0, 0.5, 1.0])
    np.testing.assert_allclose(s.onset[1], 0.3, atol=1e-9)
    np.testing.assert_allclose(s.max_chemical_dG[1], 0.6, atol=1e-9)
    # both blocked: best onset among them (H2, +0.3 V; margins 0.2 and 0.4 V); CO open at +0.3 eV: CO wins
    assert np.all(s.winner == [1, 1, 0])
    np.testing.assert_allclose(s.margin[:, :2], np.broadcast_to([0.2, 0.4], (3, 2)), atol=1e-9)
    assert np.all(s.winner_blocked == [True, True, False])
    np.testing.assert_allclose(s.winner_max_chemical_dG[:, 0], 0.6, atol=1e-9)


def test_blocked_winner_rule_equals_network_product_ranking():
    # the same energies as computed surfaces: the map's surfaces and the network's product ranking agree
    from ecatlab.network import NetworkAnalysis, build_network

    wide = pd.DataFrame({"CO*": BLOCK_X, "COOH*": BLOCK_X + 0.1, "H*": 0.5, "OH*": 0.5}, index=["bind", "mid", "weak"])
    table = EnergyTable.from_matrix(wide)
    m = selectivity_map(table, ("CO*", "OH*"), ["CO", "H2"], BLOCK_RELS, x=BLOCK_X, y=[0.0, 0.5, 1.0], basis="network",
                        network_options=DESORB_ONLY_NET)
    assert m.basis == "network"
    ranking = NetworkAnalysis(build_network(table, "CO2", **DESORB_ONLY_NET), table).product_ranking(["CO(g)"])
    top = ranking[ranking["rank"] == 1].set_index("surface")["product"]
    assert dict(top) == {"bind": "H2(g)", "mid": "H2(g)", "weak": "CO(g)"}
    labels = {"H2(g)": "H2", "CO(g)": "CO"}
    assert list(m.surfaces["winner"]) == [labels[top[n]] for n in m.surfaces["surface"]]
    assert m.surfaces.set_index("surface").loc["bind", "onset CO"] == pytest.approx(0.1, abs=1e-9)  # better onset, still loses
    # the grid (synthetic surfaces at the same descriptor values) gives the same winners
    assert [m.products[k] for k in m.winner[0]] == ["H2(g)", "H2(g)", "CO(g)"]


def test_frames_carry_conditions(demo):
    c = volcano(demo, "oer-4e", "O* - OH*", pH=1.0)
    f = c.to_frame()
    assert f.attrs["pH"] == 1.0 and f.attrs["scale"] == "RHE" and f.attrs["descriptor"] == "O* - OH*"
    assert np.all(np.diff(f["descriptor"]) > 0)
    assert "onset 1: H2O(l) → OH*" in f.columns


def test_ecatlab_volcano_is_callable_after_the_package_is_imported():
    # importing the subpackage rebinds the attribute ecatlab.volcano to the module (Python's import
    # system); the lazily exported function must keep working through it
    import ecatlab
    import ecatlab.volcano
    from ecatlab.volcano import volcano as fn

    table = ecatlab.demo_energies()
    a = ecatlab.volcano(table, "orr-4e", "OH*")
    b = fn(table, "orr-4e", "OH*")
    assert a.apex.limiting_potential == b.apex.limiting_potential
