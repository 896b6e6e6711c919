"""Tests of ecatlab.network: enumeration, best routes, onset potentials, selectivity read-outs.

Demo energies are ILLUSTRATIVE invented numbers; the checks against outside sources are marked.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest

from ecatlab import che
from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.errors import EcatlabError, PathwayError
from ecatlab.network import (
    NetworkAnalysis,
    best_route,
    best_routes,
    build_network,
    edge_table,
    product_ranking,
    selectivity,
)
from ecatlab.notation import Pathway, Step
from ecatlab.pathways import pathway


@pytest.fixture(scope="module")
def table():
    return demo_energies()


@pytest.fixture(scope="module")
def co2(table):
    return NetworkAnalysis(build_network(table, "CO2"), table)


def _net(step: Step) -> frozenset:
    return frozenset((sp.key, round(c, 9)) for sp, c in step.net().items())


# -- enumeration -----------------------------------------------------------------------------------
def test_co2_network_products_and_balance(co2):
    net = co2.network
    assert set(net.products) == {"CO(g)", "HCOOH(aq)", "CH2O(g)", "CH3OH(aq)", "CH4(g)"}
    assert net.states[net.start].label == "CO2(g)"
    for e in net.edges:
        src, tgt = net.states[e.source], net.states[e.target]
        # every edge re-parses as a balanced step and moves the electron count by its e- number
        assert Step.parse(e.step.equation).net() == e.step.net()
        assert tgt.electrons - src.electrons == pytest.approx(e.step.electrons_transferred)
        assert e.is_electrochemical == e.step.is_electrochemical
    # H* is left out (HER is the competitor) and said so
    assert "H*" not in net.adsorbates
    assert any("H*" in n for n in net.notes)


@pytest.mark.parametrize(
    "reactant,key",
    [("CO2", "co2rr-co"), ("CO2", "co2rr-hcooh"), ("CO2", "co2rr-ch4"), ("CO2", "co2rr-ch4-coh"), ("CO2", "co2rr-ch3oh"),
     ("N2", "nrr-distal"), ("N2", "nrr-alternating"), ("O2", "orr-4e"), ("O2", "orr-2e")],
)
def test_builtin_pathway_is_a_route_and_never_beats_the_network(table, reactant, key):
    net = build_network(table, reactant)
    edges = {_net(e.step) for e in net.edges}
    fixed = pathway(key)
    assert all(_net(s) in edges for s in fixed.steps), f"{key} is not contained in the network"
    product = [sp.key for sp, c in fixed.overall_net().items() if c > 0 and sp.is_molecule and sp.key != "H2O(l)"]
    product = product[0] if product else "H2O(l)"
    an = NetworkAnalysis(net, table)
    best = an.best_routes(product).set_index("surface")
    ref = che.limiting_potentials(table, key).set_index("surface")
    best = best.loc[ref.index]
    # never worse in the kernel's order: an open route beats a blocked one; among open routes the
    # network's U_L is at least the pathway's; among blocked ones its chemical barrier is no larger
    open_ref = ~ref["blocked"].to_numpy()
    assert not (best["blocked"].to_numpy() & open_ref).any()
    both_open = open_ref & ~best["blocked"].to_numpy()
    assert (best["limiting_potential"].to_numpy()[both_open] >= ref["limiting_potential"].to_numpy()[both_open] - 1e-12).all()
    both_blocked = ~open_ref & best["blocked"].to_numpy()
    assert (best["max_chemical_dG"].to_numpy()[both_blocked] <= ref["max_chemical_dG"].to_numpy()[both_blocked] + 1e-12).all()


def test_route_limiting_potential_equals_engine(table, co2):
    for product in co2.network.products:
        routes = co2.best_routes(product, top=3)
        for _, row in routes.iterrows():
            ranked = co2.ranked_routes(row["surface"], product, top=3)[row["rank"] - 1]
            assert isinstance(ranked.pathway, Pathway)
            engine = che.limiting_potentials(table, ranked.pathway, surfaces=[row["surface"]]).iloc[0]
            assert engine["limiting_potential"] == pytest.approx(row["limiting_potential"], abs=1e-12)
            assert engine["determining_step"] == row["determining_step"]
            assert ranked.limiting_potential == pytest.approx(row["limiting_potential"], abs=1e-12)


def test_route_costs_agree_with_independent_bottleneck_relaxation(co2):
    b = co2.bottleneck()
    for product in co2.network.products:
        label = co2.network.states[co2.network.product_state(product)].label
        costs = co2.route_costs(product)
        np.testing.assert_allclose(costs.min(axis=1).to_numpy(), b[label].to_numpy(), atol=1e-12)


def test_reachable_states_follow_onset(co2):
    onset = co2.onset_potentials(her=None)
    U = -0.3
    reach = co2.reachable_states(U)
    for product in co2.network.products:
        label = co2.network.states[co2.network.product_state(product)].label
        assert (reach[label].to_numpy() == (onset[product].to_numpy() >= U - 1e-9)).all()
    assert reach["CO2(g)"].all()


def test_hand_computed_network_and_tie_break():
    # COOH* = 0.3 eV, CO* = -0.2 eV (invented). CO(g) relative to CO2(g), H2(g), H2O(l):
    # dfG(CO) + dfG(H2O,l) - dfG(CO2) = -137.168 - 237.129 + 394.359 kJ/mol = 20.062 kJ/mol
    # (NBS tables via the CRC Handbook) = 0.2079 eV.
    t = EnergyTable.from_matrix(pd.DataFrame({"COOH*": [0.3], "CO*": [-0.2]}, index=["X"]))
    an = NetworkAnalysis(build_network(t, "CO2"), t)
    g_co = 20.062 / 96.485332
    edges = an.edge_table().set_index("step")["dG"]
    assert edges["CO2(g) + * + H+ + e- -> COOH*"] == pytest.approx(0.3)
    assert edges["COOH* + H+ + e- -> CO* + H2O(l)"] == pytest.approx(-0.5)
    assert edges["CO* -> * + CO(g)"] == pytest.approx(g_co + 0.2, abs=2e-4)
    assert edges["COOH* + H+ + e- -> * + CO(g) + H2O(l)"] == pytest.approx(g_co - 0.3, abs=2e-4)
    rows = an.best_routes("CO", top=2)
    # both routes are limited by the first step (0.3 eV), but CO* -> * + CO(g) is uphill: the route
    # through it is blocked at every potential, so the concerted release wins outright
    assert rows.iloc[0]["limiting_potential"] == pytest.approx(-0.3)
    assert rows.iloc[0]["route_steps"].endswith("* + CO(g) + H2O(l)")
    assert not rows.iloc[0]["blocked"] and np.isnan(rows.iloc[0]["max_chemical_dG"])
    assert rows.iloc[0]["stuck_at"] == "CO2(g)"  # stuck before the first (bottleneck) step
    # the alternative avoids the bottleneck step CO2 -> COOH*; OH* (for CO2 -> OH* + CO(g)) has no data
    assert len(rows) == 1
    # with the concerted step forbidden, only the blocked route is left: returned, flagged blocked
    only = NetworkAnalysis(build_network(t, "CO2", forbid=["COOH* + H+ + e- -> * + CO(g) + H2O(l)"]), t).best_routes("CO")
    assert bool(only.iloc[0]["blocked"]) and only.iloc[0]["limiting_potential"] == pytest.approx(-0.3)
    assert only.iloc[0]["max_chemical_dG"] == pytest.approx(g_co + 0.2, abs=2e-4)
    assert "CO* -> * + CO(g)" in only.iloc[0]["uphill_chemical_steps"]
    # a chemical limit below the desorption dG excludes it: no route with data
    blocked = NetworkAnalysis(build_network(t, "CO2", forbid=["COOH* + H+ + e- -> * + CO(g) + H2O(l)"]), t, chemical_limit=0.0).best_routes("CO")
    assert np.isnan(blocked.iloc[0]["limiting_potential"])


def test_equilibrium_potentials_against_published_values(table, co2):
    # Published standard equilibrium potentials, V vs RHE, from Nitopi et al., Chem. Rev. 119, 7610
    # (2019), Table 1 (from memory): CO -0.10, HCOOH -0.12, CH3OH 0.03, CH4 0.17; O2/H2O 1.23 and
    # O2/H2O2 0.695 (Bard, Parsons, Jordan, Standard Potentials in Aqueous Solution, 1985).
    rank = co2.product_ranking(her=None)
    eq = rank.drop_duplicates("product").set_index("product")["equilibrium_potential"]
    for product, value in {"CO(g)": -0.10, "HCOOH(aq)": -0.12, "CH3OH(aq)": 0.03, "CH4(g)": 0.17}.items():
        assert eq[product] == pytest.approx(value, abs=0.015)
    orr = NetworkAnalysis(build_network(table, "O2"), table).product_ranking(her=None)
    eq = orr.drop_duplicates("product").set_index("product")["equilibrium_potential"]
    assert eq["H2O(l)"] == pytest.approx(1.229, abs=0.002)
    assert eq["H2O2(aq)"] == pytest.approx(0.695, abs=0.005)


def test_her_competitor_and_ranking(table, co2):
    rank = co2.product_ranking()
    her = rank[rank["product"] == "H2(g)"].set_index("surface")["onset_potential"]
    # Volmer-Heyrovsky onset is -|dG_H*| (Norskov et al., J. Electrochem. Soc. 152, J23 (2005))
    g_h = table.matrix["H*"]
    np.testing.assert_allclose(her.loc[g_h.index].to_numpy(), -np.abs(g_h.to_numpy()), atol=1e-12)
    for s, grp in rank.groupby("surface"):
        assert grp["rank"].tolist() == list(range(1, len(grp) + 1))
        onset = grp["onset_potential"].to_numpy()
        assert np.all(np.diff(onset[np.isfinite(onset)]) <= 0)
    assert rank.attrs["columns"]["onset_potential"].endswith("[V vs scale]")


def test_selectivity_readouts(table, co2):
    sel0 = co2.selectivity(0.0)
    sel1 = co2.selectivity(-0.4)
    # one H+ + e- per first step: dG shifts by +eU ... on RHE with n = 1, dG(U) = dG(0) + U
    np.testing.assert_allclose(sel1["dG_first"], sel0["dG_first"] - 0.4, atol=1e-12)
    np.testing.assert_allclose(sel1["dG_H"], sel0["dG_H"] - 0.4, atol=1e-12)
    assert (sel1["first_intermediate_favoured"] == (sel1["dG_first"] < sel1["dG_H"])).all()
    assert set(sel0["first_intermediate"]) <= {"COOH*", "OCHO*", "OH* + CO(g)"}
    g = table.matrix
    expected = np.minimum(g["COOH*"], g["OCHO*"])  # CO2(g) is the reference: dG = G(X*) on RHE
    assert (sel0["dG_first"] <= expected + 1e-12).all()
    np.testing.assert_allclose(sel0["dG_H"], g["H*"], atol=1e-12)
    margin = sel0["best_onset_potential"] - sel0["her_onset_potential"]
    np.testing.assert_allclose(sel0["onset_margin_vs_her"], margin)


def test_restrictions_allow_and_forbid(table):
    full = NetworkAnalysis(build_network(table, "CO2"), table)
    s = "ALY-01"
    step = full.best_routes("CH4").set_index("surface").loc[s, "determining_step"]
    net = build_network(table, "CO2", forbid=[step])
    assert all(e.step.equation != step for e in net.edges)
    an = NetworkAnalysis(net, table)
    assert step not in an.best_route(s, "CH4").to_text()
    assert an.best_routes("CH4").set_index("surface").loc[s, "limiting_potential"] <= full.best_routes("CH4").set_index("surface").loc[s, "limiting_potential"]
    small = build_network(table, "CO2", allow=["COOH*", "CO*"])
    assert set(small.products) == {"CO(g)", "HCOOH(aq)"}
    with pytest.raises(PathwayError, match="do not occur"):
        build_network(table, "CO2", forbid=["CH3* + H+ + e- -> CH4*"])
    with pytest.raises(PathwayError, match="no energies"):
        build_network(table, "CO2", allow=["CH3CH2*"])


def test_missing_data_blocks_only_affected_routes(table):
    wide = table.matrix.copy()
    wide.loc["ALY-03", "COH*"] = np.nan
    t = EnergyTable.from_matrix(wide)
    an = NetworkAnalysis(build_network(t, "CO2"), t)
    row = an.best_routes("CH4").set_index("surface").loc["ALY-03"]
    assert "COH*" not in row["route"]
    assert "COH*" in row["missing_species"]
    assert np.isfinite(row["limiting_potential"])
    full = NetworkAnalysis(build_network(table, "CO2"), table).best_routes("CH4").set_index("surface")
    assert row["available_routes"] < full.loc["ALY-03", "available_routes"]


def test_errors_are_clear(table, co2):
    with pytest.raises(PathwayError, match="CH4"):
        co2.best_routes("C2H4")
    with pytest.raises(EcatlabError, match="no molecule"):
        build_network(table, "XeF2")
    with pytest.raises(EcatlabError, match="unknown surface"):
        co2.best_route("NOPE", "CH4")
    with pytest.raises(PathwayError, match="sites=2"):
        build_network(table, "CO2", coupling=True)


def test_helpers_and_exports(table):
    p = best_route(table, "SAS-03", "CO2", "CH4")
    assert Pathway.from_dict(p.to_dict()).steps == p.steps
    levels = che.state_free_energies(table, p, surfaces=["SAS-03"])
    assert levels.shape[1] == len(p.steps) + 1
    assert len(best_routes(table, "CO2", "CO", top=2)) == 24
    assert {"CO(g)", "H2(g)"} <= set(product_ranking(table, "CO2")["product"])
    assert len(selectivity(table, "CO2", -0.5)) == 12
    edges = edge_table(table, "CO2", potential=-0.5, surfaces=["ALY-01"])
    ec = edges["kind"] == "electrochemical"
    zero = edge_table(table, "CO2", potential=0.0, surfaces=["ALY-01"])
    np.testing.assert_allclose(edges.loc[ec, "dG"], zero.loc[ec, "dG"] - 0.5)
    np.testing.assert_allclose(edges.loc[~ec, "dG"], zero.loc[~ec, "dG"])


def test_networkx_export_and_she_scale(table):
    net = build_network(table, "N2")
    g = net.to_networkx()
    assert g.number_of_nodes() == len(net.states) and g.number_of_edges() == len(net.edges)
    rhe = NetworkAnalysis(net, table, pH=7).best_routes("NH3")["limiting_potential"].to_numpy()
    she = NetworkAnalysis(net, table, pH=7, scale="SHE").best_routes("NH3")["limiting_potential"].to_numpy()
    # U_SHE = U_RHE - k_B T ln(10) pH / e  (0.05916 V per pH unit at 298.15 K, CRC Handbook)
    np.testing.assert_allclose(rhe - she, 7 * 0.059159, atol=2e-5)


def test_two_site_coupling_network():
    # invented energies; C2 chemistry on two sites with CO* + CO* -> OCCO* coupling
    t = EnergyTable.from_matrix(pd.DataFrame({"COOH*": [0.2], "CO*": [-0.3], "OCCO*": [0.1], "OCCOH*": [-0.2]}, index=["X"]))
    net = build_network(t, "2 CO2", sites=2, coupling=True, prune=False)  # no C2 product here: keep dead ends
    kinds = {e.kind for e in net.edges}
    assert "coupling" in kinds
    assert any(e.step.equation == "2 CO* -> OCCO* + *" for e in net.edges)
    assert net.states[net.start].label == "2 CO2(g)"


def test_network_figure_draws_route_on_given_axes(table, co2, tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ecatlab.plotting.network import plot_network

    fig, ax = plt.subplots()
    out = plot_network(co2, "SAS-03", "CH4", potential=-0.3, ax=ax)
    assert out.ax is ax and out.parts["colorbar"].ax in out.axes
    # data: the steps drawn with their dG at -0.3 V from the kernel; route 0 = the best route's steps
    route_steps = out.data[out.data["route"] == 0]
    assert len(route_steps) == len(co2.best_route("SAS-03", "CH4").steps) and out.data.attrs["potential"] == -0.3
    assert set(out.parts["states"].values()) <= set(ax.texts) and out.parts["caption"] in ax.texts
    assert len(out.parts["states"]) == len([t for t in ax.texts if t.get_text()]) - 1  # every text but the caption (arrows have none)
    assert sum(len(r) for r in out.parts["routes"]) == len([t for t in ax.texts if not t.get_text()])
    labels = [t.get_text() for t in ax.texts]
    route = co2.best_route("SAS-03", "CH4")
    assert len([t for t in labels if "CHO" in t]) >= 1
    assert "U_L" in ax.get_title(loc="left") and "-0.63" in ax.get_title(loc="left")
    full = plot_network(co2, "SAS-03", "CH4", full=True, ax=plt.subplots()[1]).ax
    assert len(full.texts) > len(ax.texts)  # the full network has more states than those on routes to CH4
    fig.savefig(tmp_path / "n.png")
    plt.close("all")
    assert len(route.steps) >= 8


def test_network_figure_marks_the_stuck_state_without_covering_its_label(table, co2):
    # the state before the bottleneck step is marked on its own label box; no marker is drawn over
    # any state label (a ring over the label used to hide its text)
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.collections import PathCollection

    from ecatlab.plotting.network import plot_network
    from ecatlab.plotting.style import PALETTE

    out = plot_network(co2, "SAS-03", "CH4", potential=-0.3, ax=plt.subplots()[1])
    stuck = out.parts["stuck"]
    assert stuck in out.parts["states"].values()
    assert matplotlib.colors.same_color(stuck.get_bbox_patch().get_edgecolor(), PALETTE[3])
    out.figure.canvas.draw()
    boxes = [t.get_window_extent() for t in out.parts["states"].values()]
    for coll in (c for c in out.ax.collections if isinstance(c, PathCollection)):
        centres = out.ax.transData.transform(coll.get_offsets())
        assert not any(b.contains(*xy) for b in boxes for xy in centres), "a marker sits on a state label"
    plt.close("all")
