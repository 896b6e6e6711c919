"""Selectivity maps on the best routes of the reaction network (ecatlab.volcano, basis="network").

Demo energies are ILLUSTRATIVE invented numbers; the scaling relations are fitted to them. The
checks compare the vectorised map with independent one-surface network searches and with the
CHE engine on the same synthetic energies (internal consistency; the network search itself is
checked against networkx in tests/test_network.py).
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
import pytest  # noqa: E402

from ecatlab import che  # noqa: E402
from ecatlab.demo import demo_energies  # noqa: E402
from ecatlab.energies import EnergyTable  # noqa: E402
from ecatlab.errors import ScalingError  # noqa: E402
from ecatlab.network import NetworkAnalysis, build_network  # noqa: E402
from ecatlab.notation import Step  # noqa: E402
from ecatlab.pathways import pathway  # noqa: E402
from ecatlab.scaling import ScalingRelation as R  # noqa: E402
from ecatlab.volcano import selectivity_map  # noqa: E402

BUILTIN = ("co2rr-co", "co2rr-hcooh", "co2rr-ch4", "co2rr-ch3oh", "her-volmer-heyrovsky")


@pytest.fixture(scope="module")
def demo():
    return demo_energies()


@pytest.fixture(scope="module")
def smap(demo):
    return selectivity_map(demo, ("CO*", "OH*"), points=(41, 37))


#: With the concerted releases of CO(g) (from COOH* and from CO2(g) with OH*) left out, CO(g) leaves only by
#: desorption of CO*, uphill on strong-CO-binding surfaces: every CO route there is blocked, so CO,
#: whose onset is the best there, must not win (kernel ranking rule: unblocked first).
DESORB_ONLY = {"forbid": ["COOH* + H+ + e- -> * + CO(g) + H2O(l)", "CO2(g) + * + H+ + e- -> OH* + CO(g)"]}


@pytest.fixture(scope="module")
def smap_desorb(demo):
    return selectivity_map(demo, ("CO*", "OH*"), points=(41, 37), network_options=DESORB_ONLY)


def _one_surface(smap, i, j):
    D = np.array([[smap.x[j], smap.y[i]]])
    return EnergyTable.from_matrix(smap.space.frame(D, index=["point"]))


def test_default_basis_is_network_with_all_products(smap):
    assert smap.basis == "network" and smap.network is not None and smap.excluded == ()
    assert smap.products == ("CO(g)", "HCOOH(aq)", "CH2O(g)", "CH3OH(aq)", "CH4(g)", "H2(g)")
    assert smap.product_labels[-1] == "H2" and smap.onset.shape == (6, 37, 41)
    assert "best network routes" in smap.basis_note and smap.conditions["basis"] == "network"
    assert smap.area_fractions().sum() == pytest.approx(1.0)
    assert np.all(smap.margin >= 0)


def test_random_points_equal_direct_network_ranking(demo, smap):
    rng = np.random.default_rng(7)
    for _ in range(12):
        i, j = int(rng.integers(len(smap.y))), int(rng.integers(len(smap.x)))
        table = _one_surface(smap, i, j)
        ranking = NetworkAnalysis(build_network(table, "CO2"), table).product_ranking()
        top = ranking.iloc[0]
        assert smap.products[smap.winner[i, j]] == top["product"]
        assert smap.onset[smap.winner[i, j], i, j] == pytest.approx(top["onset_potential"], abs=1e-12)
        # every product's onset, not only the winner's
        by_product = ranking.set_index("product")["onset_potential"]
        for k, p in enumerate(smap.products):
            assert smap.onset[k, i, j] == pytest.approx(by_product[p], abs=1e-12)
        # the best route to the winner is the one the direct search reports
        assert smap.winner_route()[i, j] == top["route"]


def test_surfaces_are_exact_network_values(demo, smap):
    ranking = NetworkAnalysis(build_network(demo, "CO2"), demo).product_ranking()
    s = smap.surfaces.set_index("surface")
    assert len(s) == 12
    for surface, rows in ranking.groupby("surface"):
        for _, row in rows.iterrows():
            label = row["product"].split("(")[0]
            assert s.loc[surface, f"onset {label}"] == pytest.approx(row["onset_potential"], abs=1e-12)
        assert s.loc[surface, "winner"] == rows.iloc[0]["product"].split("(")[0]


def _net(step):
    return frozenset((sp.key, round(c, 9)) for sp, c in step.net().items())


def _restricted(ads, forbid):
    """Network on ``ads`` without the steps in ``forbid`` (those that no longer occur are dropped)."""
    from ecatlab.errors import PathwayError

    keep = list(forbid)
    while True:
        try:
            return build_network(ads, "CO2", forbid=keep), keep
        except PathwayError as exc:
            gone = [f for f in keep if f in str(exc)]
            if not gone:
                raise
            keep = [f for f in keep if f not in gone]


def _same_steps(route_pathway, builtin):
    return [_net(s) for s in route_pathway.steps] == [_net(s) for s in builtin.steps]


def test_restricted_network_agrees_with_builtin_pathways(demo):
    # network restricted to the adsorbates and steps of the built-in pathways
    ads = sorted({a.key for k in BUILTIN[:-1] for a in pathway(k).adsorbates})
    builtin_steps = {_net(s) for k in BUILTIN[:-1] for s in pathway(k).steps}
    net = build_network(ads, "CO2")
    forbid: list[str] = []
    while extra := [e.step.equation for e in net.edges if _net(e.step) not in builtin_steps]:
        forbid += extra  # forbidding steps can cut states off; repeat until only built-in steps are left
        net, forbid = _restricted(ads, forbid)
    assert forbid and {_net(e.step) for e in net.edges} <= builtin_steps
    opts = {"allow": ads, "forbid": forbid}
    kw = dict(points=(25, 21), x=(-1.2, 0.6), y=(-0.2, 1.6))
    net_map = selectivity_map(demo, ("CO*", "OH*"), ["CO", "HCOOH", "CH4", "CH3OH", "H2"], basis="network", network_options=opts, **kw)
    path_map = selectivity_map(demo, ("CO*", "OH*"), list(BUILTIN), basis="pathways", **kw)
    assert net_map.basis == "network" and path_map.basis == "pathways"
    assert [p.split("(")[0] for p in net_map.products] == list(path_map.product_labels)
    net = net_map.network
    routes = {}
    for k, key in enumerate(BUILTIN[:-1]):
        builtin = pathway(key)
        # the built-in pathway is one of the network's routes, so the network is never worse
        names = [net.route_name(r) for r in net.routes(net_map.products[k]) if _same_steps(net.route_pathway(r), builtin)]
        assert len(names) == 1, key
        routes[k] = names[0]
        assert np.all(net_map.onset[k] >= path_map.onset[k] - 1e-12)
        where = net_map.routes[k] == names[0]
        assert where.any(), key
        np.testing.assert_allclose(net_map.onset[k][where], path_map.onset[k][where], atol=1e-12)
    # HER is the same engine pathway in both
    np.testing.assert_allclose(net_map.onset[-1], path_map.onset[-1], atol=1e-12)
    # where every product's best route is the built-in one, the winners agree
    all_builtin = np.all([net_map.routes[k] == routes[k] for k in routes], axis=0)
    assert all_builtin.any()
    same = net_map.winner[all_builtin] == path_map.winner[all_builtin]
    tied = net_map.margin[all_builtin] < 1e-9  # tie rules differ (alphabetical vs listed order)
    assert np.all(same | tied)


def test_her_onset_is_engine_pathway(smap):
    D = np.column_stack([np.repeat(smap.x[:5], 1), np.full(5, smap.y[3])])
    table = EnergyTable.from_matrix(smap.space.frame(D, index=[f"p{i}" for i in range(5)]))
    lp = che.limiting_potentials(table, "her-volmer-heyrovsky")
    np.testing.assert_allclose(smap.onset[-1, 3, :5], lp["limiting_potential"].to_numpy(), atol=1e-12)


def test_missing_relation_auto_excludes_with_note_and_network_raises():
    # relations only (invented numbers): the network is built from what the relations cover
    rels = [R.given("COOH*", "CO*", 1.0, 0.5), R.given("H*", (), (), 0.3)]
    s = selectivity_map(None, ("CO*", "OH*"), relations=rels, points=(21, 11), x=(-1.5, 0.5), y=(0.0, 1.0))
    assert s.basis == "network" and s.products == ("CO(g)", "HCOOH(aq)", "H2(g)")  # HCOOH via COOH* + H+ + e- -> * + HCOOH(aq)
    # a table with an adsorbate whose relation cannot be fitted (present on one surface only)
    frame = demo_energies().matrix[["CO*", "OH*", "COOH*", "H*", "CHO*"]].copy()
    frame.loc[frame.index[1:], "CHO*"] = np.nan
    table = EnergyTable.from_matrix(frame)
    with pytest.warns(Warning):
        s = selectivity_map(table, ("CO*", "OH*"), points=(15, 11))
    assert s.basis == "network" and s.excluded == ("CHO*",)
    assert "CHO*" in s.basis_note and "left out" in s.basis_note
    assert "CHO*" not in s.network.adsorbates
    with pytest.raises(ScalingError, match=r"CHO\*.*no scaling relation"):
        selectivity_map(table, ("CO*", "OH*"), basis="network", points=(15, 11))
    # auto falls back to the pathways when a requested product is lost, and says why
    with pytest.warns(Warning):
        with pytest.raises(ScalingError, match=r"network routes not possible.*CH4.*built-in pathways not possible either"):
            selectivity_map(table, ("CO*", "OH*"), ["CO", "CH4", "H2"], points=(15, 11))


def test_fallback_to_pathways_when_network_cannot_be_used():
    # relations for CO*, COOH*, H* only (invented numbers): the network reaches CO and HCOOH, not CH4
    rels = [R.given("H*", (), (), 0.3), R.given("COOH*", "CO*", 1.0, 0.5)]
    s = selectivity_map(None, ("CO*", "OH*"), ["co2rr-co", "her-volmer-heyrovsky"], rels, points=(11, 5))
    assert s.basis == "pathways" and "products given as pathways" in s.basis_note
    with pytest.raises(ScalingError, match=r"network routes.*CH4"):
        selectivity_map(None, ("CO*", "OH*"), ["CO", "CH4", "H2"], rels, basis="network", points=(11, 5))
    s = selectivity_map(None, ("CO*", "OH*"), ["CO", "HCOOH", "H2"], rels + [R.given("OCHO*", "CO*", 1.0, 0.1)], basis="auto", points=(11, 5))
    assert s.basis == "network"
    with pytest.raises(ScalingError, match="basis must be one of"):
        selectivity_map(None, ("CO*", "OH*"), None, rels, basis="graph")


def test_plot_caption_names_basis(demo, smap, tmp_path):
    from ecatlab.plotting.volcano import plot_selectivity_map

    ax = plot_selectivity_map(smap).ax
    texts = " ".join(t.get_text() for t in ax.texts)
    assert "best network routes" in ax.get_title()
    assert "reaction network" in texts and "22 states" in texts.replace("\n", " ")
    ax.figure.savefig(tmp_path / "net.png", bbox_inches="tight")
    p = selectivity_map(demo, ("CO*", "OH*"), basis="pathways", points=31)
    ax = plot_selectivity_map(p).ax
    assert "built-in pathways" in ax.get_title()
    assert "Basis: built-in pathways co2rr-co" in " ".join(t.get_text() for t in ax.texts)


# -- chemical steps of the winner's route, chemical_limit, overlay -------------------------------------
def test_winner_chemical_dG_equals_direct_network_and_engine(demo, smap, smap_desorb):
    # full network: no winner needs an uphill chemical step (open routes are preferred)
    assert not np.any(smap.winner_max_chemical_dG > 0)
    smap = smap_desorb
    w = smap.winner_max_chemical_dG
    assert w.shape == smap.winner.shape
    # the demo's strong-CO-binding corner: CO has the best onset there, but CO* -> * + CO(g) is uphill,
    # so CO is blocked and ranks last; HER (never blocked) wins
    strong = smap.x < -1.0
    co, h2 = smap.products.index("CO(g)"), smap.products.index("H2(g)")
    assert np.all(smap.max_chemical_dG[co][:, strong] > 0.5)
    assert np.all(smap.onset[co][:, strong] >= smap.onset.max(axis=0)[:, strong])  # onset alone would pick CO
    assert np.all(smap.winner[:, strong] == h2) and not smap.winner_blocked.any()
    # a blocked winner only where every available product is blocked
    blocked = (smap.max_chemical_dG > 0) & np.isfinite(smap.onset)
    open_exists = (np.isfinite(smap.onset) & ~blocked).any(axis=0)
    assert not np.any(smap.winner_blocked & open_exists)
    rng = np.random.default_rng(11)
    for _ in range(8):
        i, j = int(rng.integers(len(smap.y))), int(rng.integers(len(smap.x)))
        table = _one_surface(smap, i, j)
        product = smap.products[smap.winner[i, j]]
        if product == "H2(g)":
            expect = che.limiting_potentials(table, "her-volmer-heyrovsky")["max_chemical_dG"].iloc[0]
        else:
            expect = NetworkAnalysis(build_network(table, "CO2", **DESORB_ONLY), table).best_routes(product).iloc[0]["max_chemical_dG"]
        if np.isnan(expect):
            assert np.isnan(w[i, j])
        else:
            assert w[i, j] == pytest.approx(expect, abs=1e-12)
    frame = smap.to_frame()
    np.testing.assert_array_equal(frame["winner_max_chemical_dG"].to_numpy(), w.ravel())
    # pathways basis: the engine's max_chemical_dG of the winning pathway
    p = selectivity_map(demo, ("CO*", "OH*"), basis="pathways", points=(23, 19))
    for _ in range(6):
        i, j = int(rng.integers(len(p.y))), int(rng.integers(len(p.x)))
        table = _one_surface(p, i, j)
        lp = che.limiting_potentials(table, p.products[p.winner[i, j]])
        expect = lp["max_chemical_dG"].iloc[0]
        assert (np.isnan(p.winner_max_chemical_dG[i, j]) and np.isnan(expect)) or p.winner_max_chemical_dG[i, j] == pytest.approx(expect, abs=1e-12)


def test_chemical_limit_excludes_uphill_routes(demo, smap_desorb):
    smap = smap_desorb
    limit = 0.3
    assert np.nanmax(smap.max_chemical_dG) > limit  # without the limit some best routes have such a step
    s = selectivity_map(demo, ("CO*", "OH*"), points=(41, 37), chemical_limit=limit, network_options=DESORB_ONLY)
    assert s.conditions["chemical_limit"] == limit and "chemical_limit = 0.3 eV" in s.conditions["rule"]
    assert not np.any(s.winner_max_chemical_dG > limit)  # NaN: no chemical step at all
    assert not np.any(s.max_chemical_dG > limit)
    # the limit only removes routes the ranking rule already puts last (HER stays open): same winners
    np.testing.assert_array_equal(s.winner, smap.winner)
    assert np.isnan(s.onset).sum() > np.isnan(smap.onset).sum()
    rng = np.random.default_rng(5)
    carbon_won = np.argwhere(s.winner != s.products.index("H2(g)"))
    assert len(carbon_won)  # CO still wins somewhere, by a route without a large chemical step
    points = [tuple(carbon_won[k]) for k in rng.choice(len(carbon_won), 4, replace=False)]
    points += [(int(rng.integers(len(s.y))), int(rng.integers(len(s.x)))) for _ in range(3)]
    checked_routes = 0
    for i, j in points:
        table = _one_surface(s, i, j)
        an = NetworkAnalysis(build_network(table, "CO2", **DESORB_ONLY), table, chemical_limit=limit)
        top = an.product_ranking().iloc[0]
        assert s.products[s.winner[i, j]] == top["product"]
        assert s.onset[s.winner[i, j], i, j] == pytest.approx(top["onset_potential"], abs=1e-12)
        assert s.winner_route()[i, j] == top["route"]
        if top["product"] != "H2(g)":  # the route's chemical steps, from the engine step by step
            route = an.best_route("point", top["product"])
            dG = che.step_free_energies(table, route).iloc[0].to_numpy()
            chemical = [g for g, st in zip(dG, route.steps) if not st.is_electrochemical]
            assert all(g <= limit + 1e-12 for g in chemical)
            checked_routes += 1
    assert checked_routes >= 4
    # the computed surfaces stay on the map (blocked routes do not count as missing data)
    assert len(s.surfaces) == len(smap.surfaces) == 12
    # pathways basis: a pathway with a chemical step above the limit does not compete there
    p = selectivity_map(demo, ("CO*", "OH*"), basis="pathways", points=(23, 19), chemical_limit=limit)
    assert not np.any(p.winner_max_chemical_dG > limit)
    for _ in range(6):
        i, j = int(rng.integers(len(p.y))), int(rng.integers(len(p.x)))
        lp = che.limiting_potentials(_one_surface(p, i, j), list(p.products)).set_index("pathway").loc[list(p.products)]
        ok = ~(lp["max_chemical_dG"].to_numpy() > limit)
        u = np.where(ok, lp["limiting_potential"].to_numpy(), -np.inf)
        assert p.winner[i, j] == int(np.argmax(u))
        np.testing.assert_allclose(p.onset[:, i, j], np.where(ok, u, np.nan), atol=1e-12)
    with pytest.raises(ScalingError, match="chemical_limit must be a finite number"):
        selectivity_map(demo, ("CO*", "OH*"), points=5, chemical_limit="high")


def test_plot_marks_uphill_chemical_step(demo, tmp_path):
    # every product blocked on part of the map (invented relations): Volmer-Tafel HER with H* = -0.3 eV
    # (Tafel dG = +0.6 eV) and CO with CO* < 0.21 eV (desorption uphill); there H2 wins at +0.3 V, blocked
    rels = [R.given("H*", (), (), -0.3), R.given("COOH*", "CO*", 1.0, 0.1)]
    smap = selectivity_map(None, ("CO*", "OH*"), ["co2rr-co", "her-volmer-tafel"], rels, x=(-0.6, 0.6), y=(0.0, 1.0), points=(25, 5))
    from ecatlab.plotting.volcano import CHEMICAL_OVERLAY_GID, plot_selectivity_map

    def overlay(ax):
        return [a for a in ax.get_children() if a.get_gid() == CHEMICAL_OVERLAY_GID]

    drawn = plot_selectivity_map(smap)
    ax = drawn.ax
    assert len(drawn.parts["overlay"]) == 3 and all(a.get_gid() == CHEMICAL_OVERLAY_GID for a in drawn.parts["overlay"])
    assert np.any(smap.winner_max_chemical_dG > 0.5) and len(overlay(ax)) == 3  # stipple, dotted outline, legend
    assert smap.winner_blocked.any() and not smap.winner_blocked.all()
    texts = " ".join(t.get_text() for t in ax.texts).replace("\n", " ")
    assert "chemical step uphill by more than 0.5 eV" in texts
    assert "0.5 eV" in ax.get_legend().get_texts()[0].get_text()
    ax.figure.savefig(tmp_path / "chem.png", bbox_inches="tight")
    assert overlay(plot_selectivity_map(smap, chemical_threshold=None).ax) == []
    s = selectivity_map(demo, ("CO*", "OH*"), points=(41, 37), chemical_limit=0.3, network_options=DESORB_ONLY)
    ax = plot_selectivity_map(s).ax  # no winner above 0.5 eV: no overlay, the caption names the limit
    assert overlay(ax) == [] and "above 0.3 eV excluded" in " ".join(t.get_text() for t in ax.texts).replace("\n", " ")
