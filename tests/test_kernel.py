"""The CHE kernel (ecatlab.che.kernel): primitives, G_max, the ranking rule, and the defects it fixed.

Outside references:
* G_max at zero overpotential: Exner, ACS Catal. 10, 12607 (2020) — for one-electron steps
  G_max(eta = 0) = e * eta_TD; chemical steps count with their own free energy.
* HER volcano peaks at dG(H*) = 0 (Norskov et al., J. Electrochem. Soc. 152, J23 (2005)).
* ORR/OER scaling-limited overpotential 0.37 V with dG(OOH*) = dG(OH*) + 3.2 eV (Man et al.,
  ChemCatChem 3, 1159 (2011)).
* CO2 -> CO volcano has a CO-binding (desorption) leg (Hansen et al., J. Phys. Chem. Lett. 4, 388
  (2013)).
"""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ecatlab import che
from ecatlab.che import kernel
from ecatlab.energies import EnergyTable
from ecatlab.tables import rank_surfaces


# -- primitives ----------------------------------------------------------------------------------------
def test_envelope_equals_brute_force_scan():
    # brute force: the least extreme potential on a fine grid at which every electrochemical step is downhill
    rng = np.random.default_rng(1)
    a = rng.normal(0, 1, (50, 5))
    n = np.array([1.0, 1.0, 0.0, 2.0, 1.0])
    u_l, idx = kernel.envelope(a, n, "reduction")
    grid = np.linspace(-6, 6, 240001)
    ec = n != 0
    ok = np.all((a[:, None, ec] + n[ec] * grid[None, :, None]) <= 1e-12, axis=2)
    brute = np.array([grid[row].max() for row in ok])
    assert np.allclose(u_l, brute, atol=1e-4)
    assert np.allclose(kernel.step_free_energy(a, n, u_l)[np.arange(50), idx], 0.0, atol=1e-12)


@given(st.lists(st.floats(-3, 3), min_size=2, max_size=6), st.floats(-1, 2))
@settings(max_examples=60, deadline=None)
def test_gmax_is_e_eta_for_one_electron_steps(dgs, u_eq_shift):
    # Exner 2020: for steps of one electron each, G_max at U_eq equals e * eta (reduction and oxidation)
    a = np.array(dgs)
    for sign, direction in ((1.0, "reduction"), (-1.0, "oxidation")):
        n = np.full(len(a), sign)
        u_eq = float(kernel.equilibrium_potential_from_affine(a, n))
        u_l, _ = kernel.envelope(a, n, direction)
        eta = kernel.signed_overpotential(u_l, u_eq, direction)
        g, _ = kernel.gmax(a, n, u_eq)
        assert g == pytest.approx(eta, abs=1e-12)
        assert kernel.effective_limiting_potential(g, u_eq, direction) == pytest.approx(u_l, abs=1e-12)


def test_chemical_step_counts_in_gmax_and_blocks():
    a = np.array([[-0.5, 1.0]])  # Volmer downhill by 0.5 eV at 0 V, Tafel uphill by 1 eV
    n = np.array([1.0, 0.0])
    g, idx = kernel.gmax(a, n, 0.0)
    assert g[0] == pytest.approx(1.0) and idx[0] == 1
    m, j = kernel.chemical_obstacle(a, n)
    assert m[0] == pytest.approx(1.0) and j[0] == 1
    assert kernel.is_blocked(m)[0]
    assert not kernel.is_blocked(m, tolerance=1.5)[0]
    with pytest.raises(ValueError):
        kernel.is_blocked(m, tolerance=float("nan"))


def test_ranking_order_puts_blocked_last_then_lower_gmax():
    g = np.array([0.3, 0.05, np.nan, 0.2, 0.9])
    blocked = np.array([False, True, False, False, False])
    order = kernel.ranking_order(g, blocked)
    assert list(order) == [3, 0, 4, 1, 2]


# -- the defects: rankings reward blocked pathways ------------------------------------------------------
def _table(rows: dict) -> EnergyTable:
    return EnergyTable.from_matrix(pd.DataFrame(rows).T)


def test_volmer_tafel_strongest_binder_is_not_rank_one():
    # invented dG(H*) values: STRONG binds H by 0.6 eV -> Tafel 2H* -> H2 uphill by 1.2 eV
    t = _table({"STRONG": {"H*": -0.6}, "GOOD": {"H*": 0.05}, "WEAK": {"H*": 0.35}})
    lp = che.limiting_potentials(t, "her-volmer-tafel")
    strong = lp.set_index("surface").loc["STRONG"]
    assert strong["overpotential"] < 0  # the electrochemical measure alone rewards it
    assert bool(strong["blocked"]) and strong["G_max"] == pytest.approx(1.2, abs=1e-9)
    ranked = rank_surfaces(lp)
    assert list(ranked["surface"]) == ["GOOD", "WEAK", "STRONG"]  # blocked STRONG last, then by G_max
    assert "2 H* -> 2 * + H2(g)" in ranked.set_index("surface").loc["STRONG", "why"]


def test_co_desorption_blocked_surface_is_not_rank_one():
    # invented: BIND holds CO* 1.2 eV below CO(g) (desorption uphill by ~1.2 eV), FREE releases CO
    t = _table({"BIND": {"COOH*": -0.6, "CO*": -1.3}, "FREE": {"COOH*": 0.3, "CO*": 0.1}})
    lp = che.limiting_potentials(t, "co2rr-co").set_index("surface")
    assert lp.loc["BIND", "blocked"] and lp.loc["BIND", "max_chemical_dG"] > 1.0
    ranked = rank_surfaces(che.limiting_potentials(t, "co2rr-co"))
    assert ranked["surface"].iloc[0] == "FREE"


def test_dissociative_orr_with_uphill_o2_splitting_is_not_rank_one():
    # invented: SPLITLESS binds O* weakly so O2 splitting (O2 + 2* -> 2 O*) is uphill; BALANCED is fine
    t = _table({"SPLITLESS": {"O*": 3.2, "OH*": 1.5}, "BALANCED": {"O*": 1.6, "OH*": 0.8}})
    lp = che.limiting_potentials(t, "orr-4e-dissociative").set_index("surface")
    assert lp.loc["SPLITLESS", "blocked"]
    assert rank_surfaces(che.limiting_potentials(t, "orr-4e-dissociative"))["surface"].iloc[0] == "BALANCED"


def test_report_and_demo_rankings_never_put_blocked_ahead():
    from ecatlab.demo import demo_energies

    lp = che.limiting_potentials(demo_energies(), ["her-volmer-tafel", "co2rr-co", "orr-4e-dissociative"])
    ranked = rank_surfaces(lp)
    for _, group in ranked.groupby("pathway", sort=False, observed=True):
        b = group["blocked"].to_numpy(dtype=bool)
        assert not np.any(b[:-1] & ~b[1:])
        assert np.all(group.loc[group["blocked"].astype(bool), "why"].str.contains("blocked at every potential"))


# -- volcanoes include chemical steps ---------------------------------------------------------------------
def test_volmer_tafel_volcano_peaks_at_zero():
    from ecatlab.volcano import volcano

    curve = volcano(None, "her-volmer-tafel", "H*", span=(-1.0, 1.0))
    assert curve.includes_chemical
    assert curve.apex.descriptor[0] == pytest.approx(0.0, abs=1e-9)  # Norskov et al. 2005
    assert curve.apex.limiting_potential == pytest.approx(0.0, abs=1e-9)
    assert curve.apex.overpotential == pytest.approx(0.0, abs=1e-9) and not curve.apex.at_boundary
    ec_only = volcano(None, "her-volmer-tafel", "H*", span=(-1.0, 1.0), chemical_steps=False)
    assert ec_only.apex.at_boundary  # the purely electrochemical curve has no peak inside the range


def test_co2_to_co_volcano_has_a_desorption_leg_and_signed_apex():
    from ecatlab.demo import demo_energies
    from ecatlab.volcano import volcano

    curve = volcano(demo_energies(), "co2rr-co", "CO*")
    assert curve.includes_chemical and not curve.apex.at_boundary
    assert any("CO* → CO" in s for s in curve.apex.determining_steps)  # desorption leg at the apex
    # signed apex overpotential, consistent with the tables: U_eq - U_L for a reduction
    assert curve.apex.overpotential == pytest.approx(curve.equilibrium_potential - curve.apex.limiting_potential, abs=1e-12)
    assert curve.apex.G_max == pytest.approx(curve.apex.overpotential, abs=1e-9)  # one-electron steps


def test_orr_apex_is_unchanged_by_the_chemical_option():
    from ecatlab.scaling import ScalingRelation
    from ecatlab.volcano import volcano

    rels = [ScalingRelation.given("OOH*", "OH*", 1.0, 3.2), ScalingRelation.given("O*", "OH*", 2.0, 0.0)]
    a = volcano(None, "orr-4e", "OH*", relations=rels).apex
    b = volcano(None, "orr-4e", "OH*", relations=rels, chemical_steps=False).apex
    assert a.overpotential == pytest.approx(b.overpotential) == pytest.approx(0.371, abs=2e-3)  # Man et al. 2011: 0.37 V


def test_no_module_outside_the_kernel_rederives_the_primitives():
    # a grep, as the issue asks: no other module computes onsets (-a/n) or the overpotential sign rule itself
    import pathlib
    import re

    root = pathlib.Path(che.__file__).resolve().parents[1]
    patterns = [r"-\s*self\.a\s*/", r"-\s*a\s*/\s*n\b", r"-a\s*/\s*np\.where", r"u_eq\s*-\s*u_l\b", r"u_l\s*-\s*u_eq\b",
                r"self\._a\s*\+\s*self\._n"]
    offenders = []
    for path in root.rglob("*.py"):
        if path.name == "kernel.py":
            continue
        text = path.read_text(encoding="utf-8")
        for pat in patterns:
            if re.search(pat, text):
                offenders.append(f"{path.relative_to(root)}: {pat}")
    assert offenders == []
