"""Property tests of the route search (hypothesis), with networkx as the outside reference.

Energies are random numbers (not physical data); the reference is networkx's generic simple-path
enumeration (networkx.all_simple_paths) evaluated surface by surface.
"""

from __future__ import annotations

import networkx as nx
import pytest
import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ecatlab import che
from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.network import BLOCKED_OFFSET, NetworkAnalysis, build_network
from ecatlab.pathways import REACTION_FAMILIES, resolve

SPECIES = demo_energies().species
C1 = [s for s in SPECIES if "C" in s or s in ("O*", "OH*")]
N_SPECIES = [s for s in SPECIES if "N" in s]
SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _table(values: np.ndarray, species) -> EnergyTable:
    frame = pd.DataFrame(values, columns=list(species), index=[f"S{i}" for i in range(values.shape[0])])
    return EnergyTable.from_matrix(frame)


energy_arrays = st.integers(min_value=1, max_value=4).flatmap(
    lambda n: st.lists(st.floats(-1.5, 1.5, allow_nan=False), min_size=n * len(SPECIES), max_size=n * len(SPECIES)).map(
        lambda xs: np.array(xs).reshape(n, len(SPECIES))
    )
)


@SETTINGS
@given(energy_arrays)
def test_network_never_worse_than_builtin_linear_pathways(values):
    table = _table(values, SPECIES)
    for reactant, family in (("CO2", "CO2RR"), ("N2", "NRR")):
        an = NetworkAnalysis(build_network(table, reactant), table)
        fixed = che.limiting_potentials(table, list(REACTION_FAMILIES[family]))
        best = {}
        for _, row in fixed.iterrows():
            product = [sp.key for sp, c in resolve(row["pathway"]).overall_net().items() if c > 0 and sp.is_molecule and sp.key != "H2O(l)"][0]
            if product not in best:
                best[product] = an.best_routes(product).set_index("surface")
            mine = best[product].loc[row["surface"]]
            # kernel order (unblocked first): an open pathway is never beaten by a blocked best route,
            # and among open ones the network's U_L is at least the pathway's
            if not row["blocked"]:
                assert not mine["blocked"]
                assert mine["limiting_potential"] >= row["limiting_potential"] - 1e-9
            elif mine["blocked"]:
                assert mine["max_chemical_dG"] <= row["max_chemical_dG"] + 1e-9


def _brute_force(an: NetworkAnalysis, product: str) -> np.ndarray:
    """Per surface: min over networkx simple paths of the max step cost (eV): a_e/n_e for
    electrochemical steps, 1000 eV + dG for uphill chemical steps (see ecatlab.network.routes)."""
    net = an.network
    g = net.to_networkx()
    target = net.product_state(product)
    out = []
    for i in range(len(an.surfaces)):
        best = np.inf
        for edge_path in nx.all_simple_edge_paths(g, net.start, target):
            worst = -np.inf
            for _u, _v, key in edge_path:
                w = an.weight[i, key]
                worst = max(worst, w)
            best = min(best, worst)
        out.append(best)
    return np.array(out)


@SETTINGS
@given(
    st.lists(st.sampled_from(C1), min_size=2, max_size=len(C1), unique=True),
    st.lists(st.floats(-1.5, 1.5, allow_nan=False), min_size=3 * len(C1), max_size=3 * len(C1)),
    st.one_of(st.none(), st.floats(-0.5, 0.5)),
)
def test_minimax_equals_brute_force_on_random_subnetworks(allowed, numbers, chemical_limit):
    table = _table(np.array(numbers).reshape(3, len(C1)), C1)
    net = build_network(table, "CO2", allow=allowed)
    if not net.products:
        return
    an = NetworkAnalysis(net, table, chemical_limit=chemical_limit)
    relaxed = an.bottleneck()
    for product in net.products:
        brute = _brute_force(an, product)
        best = an.best_routes(product)
        blocked = best["blocked"].to_numpy(dtype=bool)
        finite = np.isfinite(brute)
        assert np.array_equal(finite, np.isfinite(best["limiting_potential"].to_numpy()))
        assert np.array_equal(blocked[finite], brute[finite] >= 500)
        open_ = finite & ~blocked
        np.testing.assert_allclose(-best["limiting_potential"].to_numpy()[open_], brute[open_], atol=1e-12)
        np.testing.assert_allclose(BLOCKED_OFFSET + best["max_chemical_dG"].to_numpy()[finite & blocked], brute[finite & blocked], atol=1e-9)
        label = net.states[net.product_state(product)].label
        np.testing.assert_allclose(relaxed[label].to_numpy()[finite], brute[finite], atol=1e-12)
        # the route returned reproduces its limiting potential through the CHE engine
        for i, s in enumerate(an.surfaces):
            if finite[i]:
                p = an.best_route(s, product)
                lp = che.limiting_potentials(table, p, surfaces=[s]).iloc[0]["limiting_potential"]
                assert abs(lp - best["limiting_potential"].iloc[i]) < 1e-12
                if chemical_limit is not None and not np.isnan(best["max_chemical_dG"].iloc[i]):
                    assert best["max_chemical_dG"].iloc[i] <= chemical_limit + 1e-12


@SETTINGS
@given(st.lists(st.floats(-1.5, 1.5, allow_nan=False), min_size=2 * len(N_SPECIES), max_size=2 * len(N_SPECIES)))
def test_ties_are_deterministic_and_ranked(numbers):
    # rounded energies make ties frequent
    values = np.round(np.array(numbers).reshape(2, len(N_SPECIES)), 1)
    table = _table(values, N_SPECIES)
    an1 = NetworkAnalysis(build_network(table, "N2"), table)
    an2 = NetworkAnalysis(build_network(table, "N2"), table)
    r1 = an1.best_routes("NH3", top=4)
    r2 = an2.best_routes("NH3", top=4)
    pd.testing.assert_frame_equal(r1, r2)
    for _, grp in r1.groupby("surface"):
        lp = grp["limiting_potential"].to_numpy()
        cost = np.where(grp["blocked"].to_numpy(dtype=bool), BLOCKED_OFFSET + grp["max_chemical_dG"].to_numpy(), -lp)
        assert np.all(np.diff(cost) >= -1e-9)  # rank k+1 avoids rank k's bottleneck: never cheaper
        # every alternative costs at least the best route (the search minimises the bottleneck)
        costs = an1.route_costs("NH3").loc[grp["surface"].iloc[0]].to_numpy()
        if not grp["blocked"].iloc[0]:
            assert -lp[0] == pytest.approx(costs.min(), abs=1e-9)
