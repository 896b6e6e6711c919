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


# -- batched forms for many rows (uncertainty samples) -----------------------------------------------
_STACK_CASES = [  # (electrons consumed per step, direction)
    (np.array([1.0, 1.0, 1.0, 1.0]), "reduction"),  # ORR 4e-
    (np.array([0.0, 1.0, 1.0, 1.0, 1.0]), "reduction"),  # chemical step first (dissociative ORR)
    (np.array([-1.0, -1.0, -1.0, -1.0]), "oxidation"),  # OER
    (np.array([1.0, 1.0, 0.0]), "reduction"),  # Volmer-Tafel: chemical step last
    (np.array([2.0, 1.0, 0.0, 3.0]), "reduction"),  # several electrons: the division path
    (np.array([-1.0, 0.0, -2.0]), "oxidation"),
    (np.array([1.0, 0.0, 1.0]), "reduction"),  # chemical step in the middle
    (np.array([1.0, -1.0, 1.0]), "reduction"),  # an electrochemical step against the direction
]


def _stacked_reference(a_rows, n, direction, u_eq):
    """The single-pathway kernel functions on the same numbers (steps moved to the last axis)."""
    a = np.moveaxis(a_rows, 0, -1)
    u_b = u_eq if np.ndim(u_eq) == 0 else np.asarray(u_eq)[..., None]
    return kernel.envelope(a, n, direction), kernel.gmax(a, n, u_b), kernel.chemical_obstacle(a, n)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_stacked_measures_equal_envelope_gmax_and_chemical_obstacle_bit_for_bit(seed):
    # the batched function must give the very numbers of the single-pathway functions (exactness, not a tolerance)
    rng = np.random.default_rng(seed)
    ns = [c[0] for c in _STACK_CASES]
    dirs = [c[1] for c in _STACK_CASES]
    n = np.concatenate(ns)
    bounds = np.concatenate([[0], np.cumsum([len(x) for x in ns])])
    a = rng.normal(0.0, 1.0, (len(n), 6, 40))
    a[:, 2, 3] = np.nan  # a missing surface: NaN in every step
    a[:, 4, 5] = 0.25  # ties: every step equal, the first step must win as with argmin/argmax
    u_eqs = [1.23, np.full((6, 1), 0.5), 1.23, 0.0, 0.3, -0.2, np.linspace(0, 1, 6)[:, None], 0.7]
    results = kernel.stacked_measures(a, n, bounds, dirs, u_eqs)
    for j, (nj, d) in enumerate(zip(ns, dirs)):
        (u, i), (g, gi), (c, ci) = _stacked_reference(a[bounds[j]:bounds[j + 1]], nj, d, u_eqs[j])
        r = results[j]
        ok = ~np.isnan(u)
        assert np.array_equal(u, r["U_L"], equal_nan=True)
        assert np.array_equal(i[ok], r["step"][ok])
        assert np.array_equal(g, r["G_max"], equal_nan=True)
        assert np.array_equal(gi[ok], r["G_max_step"][ok])
        if (nj == 0).any():
            assert np.array_equal(c, r["max_chemical_dG"], equal_nan=True)
            assert np.array_equal(ci[ok], r["chemical_step"][ok])
        else:
            assert r["max_chemical_dG"] is None
        assert r["G_max_is_overpotential"] == bool(np.all(nj == (1.0 if d == "reduction" else -1.0)))


def test_stacked_measures_writes_into_given_arrays_and_checks_its_input():
    n = np.array([1.0, 1.0, 0.0])
    a = np.array([[0.1, -0.2], [0.4, 0.3], [0.2, -0.1]])
    out = [{"U_L": np.empty(2), "step": np.empty(2, dtype=np.int8), "max_chemical_dG": np.empty(2)}]
    res = kernel.stacked_measures(a, n, [0, 3], ["reduction"], [0.0], out=out)
    assert res[0]["U_L"] is out[0]["U_L"] and res[0]["max_chemical_dG"] is out[0]["max_chemical_dG"]
    np.testing.assert_array_equal(out[0]["U_L"], [-0.4, -0.3])  # U_L = min(-a_i/n_i) over the electrochemical steps
    np.testing.assert_array_equal(out[0]["step"], [1, 1])
    np.testing.assert_array_equal(out[0]["max_chemical_dG"], [0.2, -0.1])
    with pytest.raises(ValueError, match="bounds"):
        kernel.stacked_measures(a, n, [0, 2], ["reduction"], [0.0])
    with pytest.raises(ValueError, match="direction"):
        kernel.stacked_measures(a, n, [0, 3], ["sideways"], [0.0])
    with pytest.raises(ValueError, match="electrochemical"):
        kernel.stacked_measures(a, np.zeros(3), [0, 3], ["reduction"], [0.0])


def test_stacked_measures_on_the_scaling_limited_orr_optimum():
    # Man et al., ChemCatChem 3, 1159 (2011): with dG(OOH*) = dG(OH*) + 3.2 eV the best ORR catalyst has
    # dG(OH*) = 0.86 eV and overpotential ~0.37 V (U_eq 1.23 V); here dG(O*) = 2 dG(OH*) puts the O* step on the line
    oh = np.linspace(0.0, 2.0, 2001)
    o, ooh = 2 * oh, oh + 3.2
    g_o2 = 4 * 1.23  # O2 + 4 (H+ + e-) -> 2 H2O at U = 0 V vs RHE, eV (U_eq = 1.23 V, textbook value)
    a = np.stack([ooh - g_o2, o - ooh, oh - o, -oh])  # steps O2 -> OOH* -> O* -> OH* -> H2O
    (res,) = kernel.stacked_measures(a, np.ones(4), [0, 4], ["reduction"], [1.23])
    eta = res["G_max"]  # one-electron steps: G_max = e * eta (Exner 2020)
    assert eta.min() == pytest.approx(0.37, abs=0.005)
    assert oh[eta.argmin()] == pytest.approx(0.86, abs=0.011)


def test_ranking_order_rows_equals_ranking_order():
    # same positions as the lexicographic rule, including exact ties, -0.0 and +0.0, missing data,
    # and values closer than the packed key can tell apart (1e-15 eV apart)
    rng = np.random.default_rng(3)
    for trial in range(150):
        N, S = int(rng.integers(1, 25)), int(rng.integers(1, 40))
        kind = trial % 3
        if kind == 0:
            g = rng.normal(0.0, 1.0, (N, S))
        elif kind == 1:
            g = rng.integers(-3, 3, (N, S)).astype(float)  # many exact ties
        else:
            g = 1.0 + rng.integers(0, 3, (N, S)) * 1e-15  # cut ties: re-ranked exactly
        g[rng.random((N, S)) < 0.1] = np.nan
        g[rng.random((N, S)) < 0.05] = -0.0
        b = rng.random((N, S)) < 0.3
        np.testing.assert_array_equal(kernel.ranking_order_rows(g, b), kernel.ranking_order(g, b))
    one = kernel.ranking_order_rows(np.array([0.3, np.nan, 0.1, 0.2]), np.array([False, False, False, True]))
    assert list(one) == [2, 0, 3, 1]  # unblocked by G_max, then blocked, missing last
    # more rows than one block of keys (rows are ranked a block at a time), also with a leading axis
    S = 7
    N = 3 * (kernel._RANK_BLOCK_KEYS // S) + 5
    g = rng.integers(-3, 3, (N, S)).astype(float) + rng.integers(0, 2, (N, S)) * 1e-15
    g[rng.random((N, S)) < 0.1] = np.nan
    b = rng.random((N, S)) < 0.3
    np.testing.assert_array_equal(kernel.ranking_order_rows(g, b), kernel.ranking_order(g, b))
    g3, b3 = g[: 2 * (N // 2)].reshape(2, N // 2, S), b[: 2 * (N // 2)].reshape(2, N // 2, S)
    np.testing.assert_array_equal(kernel.ranking_order_rows(g3, b3), kernel.ranking_order(g3, b3))
