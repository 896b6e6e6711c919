"""Tests of ecatlab.uncertainty: error models, the seeded sampler and propagation through the kernel.

Monte-Carlo tolerances: an estimate from N independent samples is compared with the exact value
within 5 standard errors (common practice, no source): SE(mean) = s/sqrt(N),
SE(variance) = sqrt((m4 - s^4)/N) with m4 the sample fourth central moment, SE(p) = sqrt(p(1-p)/N).
With the fixed seeds below each check is deterministic; 5 SE makes a false failure for a new seed
a ~6e-7 event per check.
"""

from __future__ import annotations

import os

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import ecatlab
from ecatlab.che import limiting_potentials, step_free_energies
from ecatlab.energies import EnergyTable
from ecatlab.errors import EcatlabError, UncertaintyError
from ecatlab.pathways import BUILTIN_PATHWAYS
from ecatlab.uncertainty import CovarianceErrors, DescriptorErrors, EnsembleErrors, GaussianErrors, binding_atom, propagate
from ecatlab.uncertainty import sampler

N_SE = 5.0  # tolerance in standard errors (common practice, no source)


def _se_mean(x):
    return x.std(ddof=1) / np.sqrt(len(x))


def _se_var(x):
    m4 = np.mean((x - x.mean()) ** 4)
    return np.sqrt(max(m4 - x.var() ** 2, 1e-30) / len(x))


# -- outside references ---------------------------------------------------------------------------
def test_one_step_free_energy_is_normal_as_scipy_says():
    """A single step dG_1 = G(H*) of HER with G(H*) ~ N(mu, s^2) is N(mu, s^2) (scipy.stats.norm)."""
    from scipy import stats

    mu, s, n = 0.12, 0.2, 20_000
    table = EnergyTable.from_matrix(pd.DataFrame({"H*": [mu]}, index=["X"]))
    res = propagate(table, "her-volmer-heyrovsky", GaussianErrors({"H*": s}), n_samples=n, seed=11)
    dg1 = np.diff(res.state_samples("her-volmer-heyrovsky", "X", potential=0.0), axis=1)[:, 0]
    assert abs(dg1.mean() - mu) < N_SE * s / np.sqrt(n)
    assert abs(dg1.var(ddof=1) - s**2) < N_SE * _se_var(dg1)
    # Kolmogorov-Smirnov against scipy's normal distribution (seeded: deterministic p-value)
    assert stats.kstest(dg1, stats.norm(mu, s).cdf).pvalue > 1e-3


def test_her_limiting_potential_is_minus_a_folded_normal():
    """HER (two steps dG = G_H, -G_H at 0 V RHE): U_L = -|G_H|. Reference: scipy.stats.foldnorm
    (the folded normal |X|, X ~ N(mu, s^2), as foldnorm(c=mu/s, scale=s)). Determining step 1 exactly
    when G_H > 0: P = Phi(mu/s) (scipy.stats.norm)."""
    from scipy import stats

    mu, s, n = 0.08, 0.15, 20_000
    table = EnergyTable.from_matrix(pd.DataFrame({"H*": [mu]}, index=["X"]))
    res = propagate(table, "her-volmer-heyrovsky", GaussianErrors({"H*": s}), n_samples=n, seed=3)
    u = res.results["her-volmer-heyrovsky"].limiting_potential[:, 0]
    fold = stats.foldnorm(c=mu / s, scale=s)
    assert abs(-u.mean() - fold.mean()) < N_SE * _se_mean(u)
    assert abs(u.var(ddof=1) - fold.var()) < N_SE * _se_var(u)
    assert stats.kstest(-u, fold.cdf).pvalue > 1e-3
    steps = res.determining_steps()
    p1 = steps.loc[steps["step_index"] == 1, "probability"].iloc[0]
    p_exact = stats.norm.cdf(mu / s)
    assert abs(p1 - p_exact) < N_SE * np.sqrt(p_exact * (1 - p_exact) / n)


def _clark_max(mu1, mu2, s1, s2, rho):
    """Mean and variance of max(X1, X2) for a bivariate normal: Clark, Operations Research 9, 145 (1961), eqs. 2-3."""
    from scipy.stats import norm

    a = np.sqrt(s1**2 + s2**2 - 2 * rho * s1 * s2)
    alpha = (mu1 - mu2) / a
    m1 = mu1 * norm.cdf(alpha) + mu2 * norm.cdf(-alpha) + a * norm.pdf(alpha)
    m2 = (mu1**2 + s1**2) * norm.cdf(alpha) + (mu2**2 + s2**2) * norm.cdf(-alpha) + (mu1 + mu2) * a * norm.pdf(alpha)
    return m1, m2 - m1**2


def _clark_min(mu1, mu2, s1, s2, rho):
    """min(X1, X2) = -max(-X1, -X2) (the negated pair has the same correlation)."""
    m, v = _clark_max(-mu1, -mu2, s1, s2, rho)
    return -m, v


def test_limiting_potential_and_gmax_vs_clark_formulas():
    """co2rr-co: U_L = min(-dG1, -dG2) over the two electrochemical steps, with dG1 = G(COOH*) + c1,
    dG2 = G(CO*) - G(COOH*) + c2. Independent errors s_COOH, s_CO make (dG1, dG2) bivariate normal with
    var1 = s_COOH^2, var2 = s_COOH^2 + s_CO^2, cov = -s_COOH^2. Reference: Clark (1961)."""
    s_cooh, s_co, n = 0.15, 0.1, 40_000
    table = EnergyTable.from_matrix(pd.DataFrame({"COOH*": [0.3], "CO*": [-0.25]}, index=["X"]))
    det = step_free_energies(table, "co2rr-co", potential=0.0).to_numpy()[0]
    mu1, mu2 = det[0], det[1]
    v1, v2, cov = s_cooh**2, s_cooh**2 + s_co**2, -(s_cooh**2)
    rho = cov / np.sqrt(v1 * v2)
    res = propagate(table, "co2rr-co", GaussianErrors({"COOH*": s_cooh, "CO*": s_co}, groups="none"), n_samples=n, seed=5)
    u = res.results["co2rr-co"].limiting_potential[:, 0]
    m_exact, v_exact = _clark_min(-mu1, -mu2, np.sqrt(v1), np.sqrt(v2), rho)
    assert abs(u.mean() - m_exact) < N_SE * _se_mean(u)
    assert abs(u.var(ddof=1) - v_exact) < N_SE * _se_var(u)
    # the max form of Clark on the same pair: -U_L = max(dG1, dG2)
    mx, vx = _clark_max(mu1, mu2, np.sqrt(v1), np.sqrt(v2), rho)
    assert abs(-u.mean() - mx) < N_SE * _se_mean(u)
    assert abs(u.var(ddof=1) - vx) < N_SE * _se_var(u)


def _oxygen_table(oh_values):
    """ORR-4e surfaces whose step 4 (OH* -> H2O) carries G_max by a wide margin (invented numbers).

    At U_eq (1.229 V RHE) step 4 is dG4 = -G_OH + U_eq; steps 1-3 are set to equal shares of -dG4.
    """
    rows = {}
    u_eq = ecatlab.equilibrium_potential("orr-4e")
    g_o2 = 4 * u_eq  # O2 + 4(H+ + e-) -> 2 H2O is -4 e U_eq
    for name, g_oh in oh_values.items():
        d4 = -g_oh + u_eq
        d_other = -d4 / 3.0
        g_o = g_oh - (d_other - u_eq)
        g_ooh = g_o - (d_other - u_eq)
        rows[name] = {"OH*": g_oh, "O*": g_o, "OOH*": g_ooh}
        assert abs((g_ooh - g_o2 + u_eq) - d_other) < 1e-9
    return EnergyTable.from_matrix(pd.DataFrame(rows).T)


@pytest.mark.parametrize("rho_s", [0.0, 0.6])
def test_a_beats_b_is_the_normal_cdf_of_the_difference(rho_s):
    """G_max = dG4(U_eq) = U_eq - G_OH on both surfaces; with sigma on OH* only and surface
    correlation rho_s, G_max,A - G_max,B ~ N(mu_A - mu_B, 2 s^2 (1 - rho_s)), so
    P(A beats B) = Phi((mu_B - mu_A) / sqrt(2 s^2 (1 - rho_s))) (scipy.stats.norm)."""
    from scipy.stats import norm

    s, n = 0.05, 20_000
    table = _oxygen_table({"A": 0.789, "B": 0.829})  # G_max 0.44 and 0.40 eV: B is better
    res = propagate(table, "orr-4e", GaussianErrors({"OH*": s, "O*": 0.0, "OOH*": 0.0}, surface_correlation=rho_s),
                    n_samples=n, seed=17)
    ps = res.results["orr-4e"]
    assert (ps.G_max_step == 3).all()  # step 4 always carries G_max (the construction's margin)
    det = res.deterministic.set_index("surface")["G_max"]
    p_exact = norm.cdf((det["B"] - det["A"]) / np.sqrt(2 * s**2 * (1 - rho_s)))
    pw = res.pairwise("orr-4e")
    assert abs(pw.loc["A", "B"] - p_exact) < N_SE * np.sqrt(p_exact * (1 - p_exact) / n)
    assert pw.loc["A", "B"] + pw.loc["B", "A"] == pytest.approx(1.0, abs=1e-12)
    rank = res.ranking("orr-4e", top=1)
    assert rank.loc["A", "p_best"] == pytest.approx(pw.loc["A", "B"], abs=1e-12)


@pytest.mark.filterwarnings("ignore::ecatlab.errors.EcatlabWarning")
def test_zero_variance_reproduces_limiting_potentials_exactly():
    table = ecatlab.demo_energies()
    keys = list(BUILTIN_PATHWAYS)
    for model in (GaussianErrors(0.0), DescriptorErrors("OH*", 0.0, default_slope=1.0)):
        res = propagate(table, keys, model, n_samples=20, seed=1, pH=3.0, temperature=320.0)
        det = limiting_potentials(table, keys, pH=3.0, temperature=320.0)
        for key in keys:
            part = det[(det["pathway"] == key).to_numpy()]
            ps = res.results[key]
            for q in ("limiting_potential", "overpotential", "G_max", "max_chemical_dG"):
                expected = np.broadcast_to(part[q].to_numpy(dtype=float), (20, len(part)))
                assert np.array_equal(ps.quantity(q), expected, equal_nan=True), (key, q)
            assert np.array_equal(ps.determining_step[0] + 1, part["determining_step_index"].to_numpy())
            assert np.array_equal(ps.blocked[5], part["blocked"].to_numpy())
        summary = res.summary()
        # the mean of equal numbers is that number up to summation round-off
        np.testing.assert_allclose(summary["mean"].to_numpy(), summary["deterministic"].to_numpy(), rtol=0, atol=1e-13)
        assert np.array_equal(summary["median"].to_numpy(), summary["deterministic"].to_numpy(), equal_nan=True)
        assert np.nanmax(summary["std"].to_numpy()) < 1e-14  # numpy std of equal numbers: round-off only


def test_zero_ensemble_reproduces_limiting_potentials_exactly():
    table = ecatlab.demo_energies()
    dev = np.zeros((4, len(table.surfaces), len(table.species)))
    ens = EnsembleErrors(dev, table.surfaces, table.species, source="zeros")
    res = propagate(table, ["orr-4e", "co2rr-co"], ens)
    det = limiting_potentials(table, ["orr-4e", "co2rr-co"])
    for key in ("orr-4e", "co2rr-co"):
        part = det[(det["pathway"] == key).to_numpy()]
        assert np.array_equal(res.results[key].limiting_potential[3], part["limiting_potential"].to_numpy(dtype=float))


def test_perfectly_correlated_shifts_cancel_in_a_step():
    """OOH*, O*, OH* all bind through O; with correlation 1 and equal sigma they move together, so
    the steps between two adsorbates (2: OOH* -> O*, 3: O* -> OH*) do not spread; steps 1 and 4 do."""
    table = ecatlab.demo_energies()
    res = propagate(table, "orr-4e", GaussianErrors(0.2, correlation=1.0), n_samples=400, seed=2)
    assert binding_atom("OOH*") == binding_atom("O*") == binding_atom("OH*") == "O"
    dG = np.diff(res.state_samples("orr-4e", "ALY-01", potential=0.0), axis=1)
    spread = dG.std(axis=0)
    assert spread[1] < 1e-6 and spread[2] < 1e-6  # zero up to the rounding of the float64 products
    assert spread[0] > 0.15 and spread[3] > 0.15
    # the same with an ensemble whose members shift every species alike: exactly zero
    k = 50
    shift = np.random.default_rng(0).normal(0, 0.2, k)
    dev = np.broadcast_to(shift[:, None, None], (k, len(table.surfaces), len(table.species))).copy()
    res2 = propagate(table, "orr-4e", EnsembleErrors(dev, table.surfaces, table.species))
    dG2 = np.diff(res2.state_samples("orr-4e", "SAS-02"), axis=1)
    assert dG2[:, 1].std() < 1e-12 and dG2[:, 2].std() < 1e-12


def test_descriptor_errors_covariance_by_hand():
    """Sigma_ij = s_i s_j sigma_D^2 + delta_ij sigma_r,i^2 (the model's definition), and sampled
    covariance within 5 SE of it."""
    model = DescriptorErrors("OH*", 0.1, slopes={"O*": 2.0, "OOH*": 1.0}, residual_sigma={"O*": 0.05, "OOH*": 0.02})
    cov = model.species_covariance(["OH*", "O*", "OOH*"])
    expected = np.array([[0.01, 0.02, 0.01], [0.02, 0.04 + 0.0025, 0.02], [0.01, 0.02, 0.01 + 0.0004]])
    np.testing.assert_allclose(cov, expected, atol=1e-15)
    p = sampler.plan(model, ["s"], ["OH*", "O*", "OOH*"], n_samples=20_000, seed=4)
    x = np.concatenate([c.adsorbates[:, 0, :] for c in sampler.chunks(p)]).astype(float)
    emp = np.cov(x.T)
    se = np.sqrt((expected**2 + np.outer(np.diag(expected), np.diag(expected))) / len(x))  # normal-theory SE of a covariance
    assert np.all(np.abs(emp - expected) < N_SE * se)


def test_scaling_residuals_as_error_source():
    from ecatlab.scaling import fit_scaling

    table = ecatlab.demo_energies()
    rel_o = fit_scaling(table, "O*", "OH*")
    rel_ooh = fit_scaling(table, "OOH*", "OH*")
    model = DescriptorErrors.from_relations([rel_o, rel_ooh], descriptor_sigma=0.0)
    cov = model.species_covariance(["OH*", "O*", "OOH*"])
    assert cov[0, 0] == 0.0
    assert cov[1, 1] == pytest.approx(rel_o.residual_std_error**2)
    assert cov[2, 2] == pytest.approx(rel_ooh.residual_std_error**2)
    res = propagate(table, "orr-4e", model, n_samples=200, seed=0)
    assert res.summary()["std"].max() > 0


def test_molecule_error_moves_the_equilibrium_potential():
    """U_eq of ORR-4e = -(sum a)/(-4)... depends on G(O2) with weight 1/4: sd(U_eq) = s_O2 / 4."""
    n, s = 4000, 0.2
    table = ecatlab.demo_energies()
    res = propagate(table, "orr-4e", GaussianErrors(0.0, molecule_sigma={"O2(g)": s}), n_samples=n, seed=9)
    u_eq = np.asarray(res.results["orr-4e"].equilibrium_potential)
    assert u_eq.shape == (n,)
    assert abs(u_eq.std(ddof=1) - s / 4) < N_SE * _se_var(u_eq) / (2 * u_eq.std())  # delta method for sd
    assert abs(u_eq.mean() - ecatlab.equilibrium_potential("orr-4e")) < N_SE * _se_mean(u_eq)


def test_same_seed_same_numbers_any_chunking():
    table = ecatlab.demo_energies()
    model = GaussianErrors(0.15, correlation=0.4, surface_correlation=0.2)
    r1 = propagate(table, ["orr-4e", "co2rr-ch4"], model, n_samples=230, seed=42)
    r2 = propagate(table, ["orr-4e", "co2rr-ch4"], model, n_samples=230, seed=42, chunk_size=20)
    r3 = propagate(table, ["orr-4e", "co2rr-ch4"], model, n_samples=230, seed=43)
    for key in ("orr-4e", "co2rr-ch4"):
        assert np.array_equal(r1.results[key].limiting_potential, r2.results[key].limiting_potential)
        assert np.array_equal(r1.results[key].G_max, r2.results[key].G_max)
        assert not np.array_equal(r1.results[key].limiting_potential, r3.results[key].limiting_potential)
    pd.testing.assert_frame_equal(r1.summary(), r2.summary())


def test_bootstrap_members_are_seeded_and_drawn_from_the_ensemble():
    table = ecatlab.demo_energies()
    rng = np.random.default_rng(1)
    dev = rng.normal(0, 0.1, (30, len(table.surfaces), len(table.species)))
    ens = EnsembleErrors(dev, table.surfaces, table.species)
    a = propagate(table, "orr-4e", ens, n_samples=100, members="bootstrap", seed=3)
    b = propagate(table, "orr-4e", ens, n_samples=100, members="bootstrap", seed=3, chunk_size=10)
    allm = propagate(table, "orr-4e", ens)
    assert np.array_equal(a.results["orr-4e"].limiting_potential, b.results["orr-4e"].limiting_potential)
    rows = {tuple(r) for r in allm.results["orr-4e"].limiting_potential}
    assert all(tuple(r) in rows for r in a.results["orr-4e"].limiting_potential)


def test_tables_have_units_and_conditions():
    res = propagate(ecatlab.demo_energies(), ["orr-4e", "co2rr-co"], GaussianErrors(0.1), n_samples=100, seed=0, scale="SHE", pH=7)
    s = res.summary()
    assert set(s["unit"]) == {"V vs SHE", "V", "eV"}
    assert s.attrs["scale"] == "SHE" and s.attrs["pH"] == 7.0 and "ILLUSTRATIVE" not in s.attrs["model"]
    assert "interval" in s.attrs and "columns" in s.attrs
    finite = s["median"].notna()  # max_chemical_dG of a pathway without chemical steps is NaN
    assert finite.sum() == 3 * 2 * 12 + 12
    assert (s.loc[finite, "low"] <= s.loc[finite, "median"]).all() and (s.loc[finite, "median"] <= s.loc[finite, "high"]).all()
    co = s[(s["pathway"] == "co2rr-co") & (s["quantity"] == "max_chemical_dG")]
    assert co["p_blocked"].between(0, 1).all()
    r = res.ranking("co2rr-co", top=3)
    assert r.attrs["ranking_rule"].startswith("kernel.ranking_order")
    assert r["p_top3"].sum() == pytest.approx(3.0)


def test_ranking_puts_blocked_surfaces_last_in_every_sample():
    res = propagate(ecatlab.demo_energies(), "co2rr-co", GaussianErrors(0.2), n_samples=300, seed=8)
    ps = res.results["co2rr-co"]
    ranks = ps.ranks()
    n_unblocked = (~ps.blocked).sum(axis=1)
    worst_unblocked = np.where(~ps.blocked, ranks, -1).max(axis=1)
    assert np.all(worst_unblocked < n_unblocked)


def test_volcano_points_need_the_descriptor_kept():
    table = ecatlab.demo_energies()
    res = propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=100, seed=0, keep_species=["OH*"])
    pts = res.volcano_points("orr-4e", "OH*")
    assert (pts["x_low"] <= pts["x_high"]).all()
    np.testing.assert_allclose(pts["x_mean"], table.values(None, ["OH*"])[:, 0], atol=5 * 0.1 / np.sqrt(100) * 1.5)
    with pytest.raises(UncertaintyError, match="keep_species"):
        propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=10).volcano_points("orr-4e", "OH*")


# -- bad input: one clear error ---------------------------------------------------------------------
@pytest.mark.parametrize(
    "make, match",
    [
        (lambda: GaussianErrors({"OH*": 0.1}), "no standard deviation for OOH"),
        (lambda: GaussianErrors(0.1, correlation=1.5), "correlation must lie"),
        (lambda: GaussianErrors(-0.1), ">= 0 eV"),
        (lambda: GaussianErrors(0.1, molecule_sigma={"H2(g)": 0.1}), "reference molecule"),
        (lambda: CovarianceErrors(("OH*", "O*", "OOH*"), [[1, 2, 0], [2, 1, 0], [0, 0, 1]]), "not positive semidefinite"),
    ],
)
def test_bad_models_are_refused(make, match):
    with pytest.raises(UncertaintyError, match=match):
        propagate(ecatlab.demo_energies(), "orr-4e", make(), n_samples=10)


def test_bad_requests_are_refused():
    table = ecatlab.demo_energies()
    with pytest.raises(UncertaintyError, match="seed"):
        propagate(table, "orr-4e", GaussianErrors(0.1), seed=-1)
    with pytest.raises(UncertaintyError, match="n_samples"):
        propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=0)
    ens = EnsembleErrors(np.zeros((3, 1, 1)), ["ALY-01"], ["OH*"])
    with pytest.raises(UncertaintyError, match="lacks surfaces"):
        propagate(table, "orr-4e", ens)
    with pytest.raises(UncertaintyError, match="members='bootstrap'"):
        propagate(table, "orr-4e", EnsembleErrors(np.zeros((3, 12, 24)), table.surfaces, table.species), n_samples=10)
    assert issubclass(UncertaintyError, EcatlabError) and issubclass(UncertaintyError, ValueError)


# -- invariants (hypothesis) --------------------------------------------------------------------------
@settings(max_examples=15, deadline=None)
@given(
    sigma=st.floats(0.0, 0.4),
    corr=st.floats(0.0, 1.0),
    rho_s=st.floats(0.0, 1.0),
    seed=st.integers(0, 2**31),
    top=st.integers(1, 12),
)
def test_probabilities_are_consistent(sigma, corr, rho_s, seed, top):
    res = propagate(ecatlab.demo_energies(), ["orr-4e", "co2rr-co"], GaussianErrors(sigma, correlation=corr, surface_correlation=rho_s),
                    n_samples=60, seed=seed)
    for key in ("orr-4e", "co2rr-co"):
        r = res.ranking(key, top=top)
        assert r["p_best"].sum() == pytest.approx(1.0)
        assert r[f"p_top{top}"].sum() == pytest.approx(float(top))
        assert (r["p_best"] <= r[f"p_top{top}"] + 1e-12).all()
        pw = res.pairwise(key).to_numpy()
        off = ~np.eye(len(pw), dtype=bool)
        np.testing.assert_allclose((pw + pw.T)[off], 1.0, atol=1e-12)
    steps = res.determining_steps()
    sums = steps.groupby(["pathway", "surface"])["probability"].sum()
    np.testing.assert_allclose(sums.to_numpy(), 1.0)
    s = res.summary()
    ok = s["std"].notna()
    assert (s.loc[ok, "std"] >= 0).all() and (s.loc[ok, "low"] <= s.loc[ok, "high"]).all()


@pytest.mark.filterwarnings("ignore::ecatlab.errors.MissingDataWarning")
def test_missing_adsorbate_gives_nan_and_ranks_last():
    wide = pd.DataFrame({"OH*": [0.8, 1.0, 0.9], "O*": [1.9, 2.2, np.nan], "OOH*": [4.0, 4.2, 4.1]}, index=["A", "B", "C"])
    table = EnergyTable.from_matrix(wide)
    res = propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=100, seed=0)
    ps = res.results["orr-4e"]
    assert np.isnan(ps.limiting_potential[:, 2]).all() and (ps.determining_step[:, 2] == -1).all()
    rank = res.ranking("orr-4e")
    assert rank.loc["C", "p_best"] == 0.0 and rank.loc["C", "mean_rank"] == 3.0
    assert rank["p_best"].sum() == pytest.approx(1.0)
    steps = res.determining_steps()
    assert steps.loc[steps["surface"] == "C", "probability"].sum() == 0.0


def test_threads_give_the_same_numbers():
    table = ecatlab.demo_energies()
    keys = list(BUILTIN_PATHWAYS)
    model = GaussianErrors(0.1, 0.5)
    one = propagate(table, keys, model, n_samples=200, seed=6, keep_species=["OH*"], workers=1, chunk_size=10)
    two = propagate(table, keys, model, n_samples=200, seed=6, keep_species=["OH*"], workers=3, chunk_size=10)
    assert (one.workers, two.workers) == (1, 3)
    for key in keys:
        for q in ("limiting_potential", "G_max", "max_chemical_dG"):
            assert np.array_equal(one.results[key].quantity(q), two.results[key].quantity(q), equal_nan=True)
        assert np.array_equal(one.results[key].blocked, two.results[key].blocked)
        # the tables split pathways and samples between the threads: the same tables
        pd.testing.assert_frame_equal(one.ranking(key, top=2), two.ranking(key, top=2))
    assert np.array_equal(one.species_samples["OH*"], two.species_samples["OH*"])
    pd.testing.assert_frame_equal(one.summary(), two.summary())
    pd.testing.assert_frame_equal(one.determining_steps(), two.determining_steps())
    # the default uses the cores this process may run on, at most MAX_DEFAULT_WORKERS
    from ecatlab.uncertainty.propagate import MAX_DEFAULT_WORKERS, default_workers

    assert propagate(table, "orr-4e", model, n_samples=10).workers == default_workers()
    assert 1 <= default_workers() <= min(MAX_DEFAULT_WORKERS, os.cpu_count())
    with pytest.raises(UncertaintyError, match="workers"):
        propagate(table, "orr-4e", model, n_samples=10, workers=0)


@settings(max_examples=30, deadline=None)
@given(
    sig=st.lists(st.floats(0.0, 0.5), min_size=1, max_size=6),
    rho=st.floats(0.0, 1.0),
)
def test_covariance_factor_reproduces_the_covariance(sig, rho):
    """L L^T = Sigma for every model covariance (equicorrelated blocks are PSD for 0 <= rho <= 1)."""
    species = ["OH*", "O*", "OOH*", "H*", "CO*", "NNH*"][: len(sig)]
    model = GaussianErrors(dict(zip(species, sig)), correlation=rho)
    cov = model.species_covariance(species)
    L = sampler.covariance_factor(cov)
    np.testing.assert_allclose(L @ L.T, cov, atol=1e-12)


# -- the fast tables against plain numpy on the same samples --------------------------------------
@pytest.mark.filterwarnings("ignore::ecatlab.errors.MissingDataWarning")
@pytest.mark.parametrize("molecule_error", [False, True])
def test_tables_equal_plain_numpy_reductions_of_the_samples(molecule_error):
    """summary / determining_steps / ranking use one sort per array, mapped overpotentials, packed-key
    ranks and per-step counts; they must equal np.percentile (method "linear"), np.mean, np.std(ddof=1),
    (index == k).mean(0) and ranks from kernel.ranking_order (the definitions) on the same samples."""
    from ecatlab.che import kernel

    demo = ecatlab.demo_energies()
    wide = pd.DataFrame(demo.values(None, demo.species), index=demo.surfaces, columns=demo.species)
    wide.iloc[1, wide.columns.get_loc("O*")] = np.nan  # one surface lacks O*: NaN statistics, ranked last
    table = EnergyTable.from_matrix(wide)
    keys = ["orr-4e", "orr-4e-dissociative", "oer-4e", "her-volmer-tafel", "co2rr-co"]
    keys = [k for k in keys if all(a.key in wide.columns for a in ecatlab.pathway(k).adsorbates)]
    model = GaussianErrors(0.15, correlation=0.4, surface_correlation=0.2,
                           molecule_sigma={"O2(g)": 0.1} if molecule_error else {})
    res = propagate(table, keys, model, n_samples=301, seed=5)
    summ = res.summary(interval=0.8)
    for key in keys:
        ps = res.results[key]
        for q in ("limiting_potential", "overpotential", "G_max", "max_chemical_dG"):
            x = ps.quantity(q)
            part = summ[(summ["pathway"] == key).to_numpy() & (summ["quantity"] == q).to_numpy()]
            with np.errstate(invalid="ignore"):
                want = {"low": np.percentile(x, 10, axis=0), "median": np.percentile(x, 50, axis=0),
                        "high": np.percentile(x, 90, axis=0), "mean": x.mean(axis=0), "std": x.std(axis=0, ddof=1)}
            for col, ref in want.items():
                np.testing.assert_allclose(part[col].to_numpy(), ref, rtol=1e-12, atol=1e-12, equal_nan=True, err_msg=f"{key} {q} {col}")
        steps = res.determining_steps()
        mine = steps[(steps["pathway"] == key).to_numpy()]
        k = np.arange(len(ps.pathway.steps))
        np.testing.assert_array_equal(mine["probability"].to_numpy(), (ps.determining_step[..., None] == k).mean(axis=0).ravel())
        np.testing.assert_array_equal(mine["p_G_max_step"].to_numpy(), (ps.G_max_step[..., None] == k).mean(axis=0).ravel())
        order = kernel.ranking_order(ps.G_max, ps.blocked)
        ranks = np.empty_like(order)
        np.put_along_axis(ranks, order, np.broadcast_to(np.arange(order.shape[-1]), order.shape), axis=-1)
        np.testing.assert_array_equal(ps.ranks(), ranks)
        table_r = res.ranking(key, top=2).reindex(list(res.surfaces))
        np.testing.assert_array_equal(table_r["p_best"].to_numpy(), (ranks == 0).mean(axis=0))
        np.testing.assert_array_equal(table_r["p_top2"].to_numpy(), (ranks < 2).mean(axis=0))
        np.testing.assert_allclose(table_r["mean_rank"].to_numpy(), ranks.mean(axis=0) + 1.0, rtol=1e-14)


def test_ensemble_holes_touch_only_the_pathways_that_use_the_species():
    """An ensemble without members for O* on one surface makes that surface NaN for O*-pathways only."""
    table = ecatlab.demo_energies()
    rng = np.random.default_rng(2)
    dev = rng.normal(0.0, 0.1, (40, len(table.surfaces), len(table.species)))
    j = list(table.species).index("O*")
    dev[:, 0, j] = np.nan
    res = propagate(table, ["orr-4e", "her-volmer-heyrovsky"], EnsembleErrors(dev, table.surfaces, table.species))
    assert np.isnan(res.results["orr-4e"].limiting_potential[:, 0]).all()
    assert (res.results["orr-4e"].determining_step[:, 0] == -1).all()
    assert np.isfinite(res.results["orr-4e"].limiting_potential[:, 1:]).all()
    her = res.results["her-volmer-heyrovsky"].limiting_potential
    assert np.isfinite(her).all()
    # and the numbers are the engine's on the perturbed table, member by member
    h = list(table.species).index("H*")
    for k in (0, 17):
        wide = pd.DataFrame({"H*": table.values(None, ["H*"])[:, 0] + dev[k, :, h]}, index=table.surfaces)
        det = limiting_potentials(EnergyTable.from_matrix(wide), "her-volmer-heyrovsky")
        np.testing.assert_allclose(her[k], det["limiting_potential"].to_numpy(), rtol=0, atol=1e-12)


def test_a_run_whose_results_cannot_fit_in_memory_is_refused_before_drawing(monkeypatch):
    """1e8 samples x 12 surfaces of orr-4e need 19 bytes per (sample, surface): 22.8 GB; with 1 GB
    available the call is refused with the numbers and the number of samples that would fit."""
    import importlib

    mod = importlib.import_module("ecatlab.uncertainty.propagate")  # the module (the package exports the function)
    monkeypatch.setattr(mod, "_available_memory_bytes", lambda: 10**9)
    table = ecatlab.demo_energies()
    with pytest.raises(UncertaintyError, match=r"22\.8 GB \(19 bytes per sample and surface\).*at most about 2192982 samples"):
        propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=10**8)
    # a run that fits is not affected
    assert propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=20).n_samples == 20
