"""Route search (ecatlab.network.routes) against brute force, and the analysis read-outs built on it.

Outside reference: networkx's simple-path enumeration (all_simple_edge_paths), minimum over paths
of the largest step cost, surface by surface, on small random networks (hypothesis). Energies are
random numbers or ILLUSTRATIVE demo data, not physical results.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ecatlab import che
from ecatlab.che import kernel
from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.network import NetworkAnalysis, build_network
from ecatlab.network.routes import BLOCKED_OFFSET, RouteSearch, step_costs

SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def random_networks(draw):
    """Layered random graphs: electrochemical edges go up one layer, chemical edges stay in theirs
    (including 2-cycles like adsorption/desorption)."""
    layers = draw(st.integers(2, 5))
    per = draw(st.lists(st.integers(1, 3), min_size=layers, max_size=layers))
    per[0] = 1
    nodes, layer_of = [], []
    for L, k in enumerate(per):
        for _ in range(k):
            layer_of.append(L)
            nodes.append(len(nodes))
    edges = []
    for u in nodes:
        for v in nodes:
            if u == v:
                continue
            if layer_of[v] == layer_of[u] + 1 and draw(st.booleans()):
                edges.append((u, v))
            elif layer_of[v] == layer_of[u] and u != 0 and v != 0 and draw(st.integers(0, 3)) == 0:
                edges.append((u, v))
    if not edges:
        edges = [(0, nodes[-1])] if layer_of[-1] > 0 else [(0, 0)]
    S = draw(st.integers(1, 3))
    costs = draw(st.lists(st.sampled_from([-np.inf, np.inf, -1.0, -0.5, 0.0, 0.2, 0.5, 1.0, 1000.3, 1000.7]) | st.floats(-2, 2),
                          min_size=S * len(edges), max_size=S * len(edges)))
    return np.array(layer_of), edges, np.array(costs, dtype=float).reshape(S, len(edges))


def _brute(n_nodes, edges, cost_row, target):
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(n_nodes))
    for k, (u, v) in enumerate(edges):
        g.add_edge(u, v, key=k)
    best = np.inf
    if target == 0:
        return -np.inf
    for path in nx.all_simple_edge_paths(g, 0, target):
        best = min(best, max(cost_row[k] for _, _, k in path))
    return best


@SETTINGS
@given(random_networks())
def test_bottleneck_search_equals_brute_force(case):
    layer, edges, cost = case
    if any(u == v for u, v in edges):
        return
    V = len(layer)
    src = [u for u, _ in edges]
    tgt = [v for _, v in edges]
    search = RouteSearch(src, tgt, layer, V, 0)
    d, pred = search.run(cost)
    for s in range(cost.shape[0]):
        for t in range(1, V):
            brute = _brute(V, edges, cost[s], t)
            assert d[s, t] == brute or np.isclose(d[s, t], brute, atol=1e-12)
            route = search.routes(pred[s:s + 1], t)[0]
            route = route[route >= 0]
            if brute < np.inf:
                # the route read back is a simple path start -> t whose largest cost is the minimum
                assert src[route[0]] == 0 and tgt[route[-1]] == t
                assert all(tgt[a] == src[b] for a, b in zip(route[:-1], route[1:]))
                visited = [0] + [tgt[e] for e in route]
                assert len(set(visited)) == len(visited)
                assert max(cost[s, route]) == d[s, t]
            else:
                assert route.size == 0


def test_generic_relaxation_when_not_layered():
    # an edge that goes down a layer forces the generic fixed point; same answers as brute force
    layer = np.array([0, 1, 2, 1])
    edges = [(0, 1), (1, 2), (2, 3), (3, 1), (0, 3)]
    cost = np.array([[0.5, 0.1, -1.0, 0.2, 0.9]])
    search = RouteSearch([u for u, _ in edges], [v for _, v in edges], layer, 4, 0)
    assert not search.layered
    d, _ = search.run(cost)
    for t in (1, 2, 3):
        assert d[0, t] == _brute(4, edges, cost[0], t)


def test_step_costs_use_kernel_onsets():
    a = np.array([[0.3, -0.2, 0.4, np.nan]])
    n = np.array([1.0, 0.0, 0.0, 1.0])
    c = step_costs(a, n)
    assert c[0, 0] == pytest.approx(-kernel.onset_potentials(a, n)[0, 0])  # a/n = 0.3 eV
    assert c[0, 1] == -np.inf  # downhill chemical step: never the bottleneck
    assert c[0, 2] == pytest.approx(BLOCKED_OFFSET + 0.4)  # uphill chemical step: blocks
    assert c[0, 3] == np.inf  # missing data
    assert step_costs(a, n, chemical_limit=0.3)[0, 2] == np.inf


# -- analysis read-outs on the demo network ---------------------------------------------------------
@pytest.fixture(scope="module")
def demo():
    return demo_energies()


@pytest.fixture(scope="module")
def co2(demo):
    return NetworkAnalysis(build_network(demo, "CO2"), demo)


def test_best_route_numbers_come_from_the_kernel_via_the_engine(demo, co2):
    for product in co2.network.products:
        rows = co2.best_routes(product, top=2)
        for _, row in rows.iterrows():
            p = co2.ranked_routes(row["surface"], product, top=2)[row["rank"] - 1].pathway
            ref = che.limiting_potentials(demo, p, surfaces=[row["surface"]]).iloc[0]
            assert ref["limiting_potential"] == pytest.approx(row["limiting_potential"], abs=1e-12)
            assert bool(ref["blocked"]) == bool(row["blocked"])
            assert ref["G_max"] == pytest.approx(row["G_max"], abs=1e-12)
            assert (np.isnan(ref["max_chemical_dG"]) and np.isnan(row["max_chemical_dG"])) or ref["max_chemical_dG"] == pytest.approx(row["max_chemical_dG"])


def test_alternatives_avoid_the_better_ranks_bottlenecks(co2):
    rows = co2.best_routes("CH4", top=3)
    for s, grp in rows.groupby("surface"):
        steps = [set(t.split("; ")) for t in grp["route_steps"]]
        dets = grp["determining_step"].tolist()
        for k in range(1, len(grp)):
            assert len(set(grp["route"].iloc[: k + 1])) == k + 1  # distinct routes
            # a later rank does not use an earlier rank's bottleneck step (electrochemical here)
            assert dets[k - 1] not in steps[k] or grp["blocked"].iloc[k - 1]


def test_stuck_points_and_pruned_network(co2):
    stuck = co2.stuck_points("CH4", potential=-0.5)
    best = co2.best_routes("CH4").set_index("surface")
    for _, row in stuck.iterrows():
        b = best.loc[row["surface"]]
        assert row["stuck_at"] == b["stuck_at"]
        assert row["reachable"] == (b["limiting_potential"] >= -0.5 - 1e-9 and not b["blocked"])
        if not b["blocked"]:
            assert row["bottleneck_step"] == b["determining_step"]
            # dG of the bottleneck step at U, from the kernel: a + nU
            assert row["bottleneck_dG"] == pytest.approx(-b["limiting_potential"] - 0.5, abs=1e-9)
    s = best.index[0]
    U = float(best.loc[s, "limiting_potential"])
    pr = co2.pruned(U, surface=s)
    assert "CH4(g)" in pr.products  # reachable exactly at its limiting potential
    pr2 = co2.pruned(U + 0.05, surface=s)
    assert "CH4(g)" not in pr2.products and len(pr2.states) < len(pr.states)
    # every step kept is downhill at U on that surface (kernel dG = a + nU <= 0)
    an2 = NetworkAnalysis(pr, co2.table, surfaces=[s])
    assert (kernel.step_free_energy(an2.a, an2.n, U) <= 1e-9).all()


def test_product_ranking_puts_blocked_products_last(co2):
    rank = co2.product_ranking()
    for s, grp in rank.groupby("surface"):
        blocked = grp["blocked"].to_numpy(dtype=bool)
        assert not np.any(np.diff(blocked.astype(int)) < 0)  # unblocked first
        order = kernel.ranking_order(-grp["onset_potential"].to_numpy(), blocked)
        assert list(order) == list(range(len(grp)))
        assert grp["rank"].tolist() == list(range(1, len(grp) + 1))


def test_uphill_desorption_route_loses_to_open_route():
    # invented energies: CO* binds strongly (desorption +0.8 eV), the concerted release is open
    t = EnergyTable.from_matrix(pd.DataFrame({"COOH*": [0.2], "CO*": [-1.0]}, index=["X"]))
    an = NetworkAnalysis(build_network(t, "CO2"), t)
    row = an.best_routes("CO").iloc[0]
    assert not row["blocked"] and "CO* -> * + CO(g)" not in row["route_steps"]
    # the old electrochemical-only cost would have taken CO* (both routes limited by CO2 -> COOH*)
    costs = an.route_costs("CO")
    assert (costs.iloc[0] > BLOCKED_OFFSET / 2).sum() >= 1
