"""Tests of ecatlab.descriptors (PCA of the adsorption-energy matrix, low-rank imputation, stand-ins)
and of the automatic scaling relations in ecatlab.scaling (best 1-/2-descriptor model, LOO errors,
flagged estimates).

Outside references: numpy.linalg.svd and scikit-learn's PCA (explained variance, components),
scipy.linalg.subspace_angles (recovered subspace), scipy.stats.linregress and numpy.linalg.lstsq
(fits), brute-force leave-one-out refits with numpy.polyfit (PRESS identity, Allen, Technometrics 16,
125 (1974)). Synthetic data of known rank are generated here with seeded RNGs; the bond-counting
slope 1/2 of OH* vs O* is from Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007).
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import linalg, stats

from ecatlab.descriptors import analyse_descriptors, greedy_descriptor_set, imputation_cv, impute_low_rank
from ecatlab.energies import EnergyTable
from ecatlab.errors import DescriptorError, EstimatedValueWarning, MissingDataWarning, ScalingError
from ecatlab.scaling import auto_scaling, estimated_species_column, fill_missing_energies

# adsorbate names used as plain column labels of the synthetic matrices
NAMES = ["OH*", "O*", "OOH*", "H*", "CO*", "COOH*", "OCHO*", "CHO*", "COH*", "CH2O*", "CH3O*", "C*", "CH*", "CH2*", "CH3*", "N*", "NH*", "NH2*"]


def _low_rank(n, m, rank, noise, seed):
    rng = np.random.default_rng(seed)
    scores = rng.normal(0, 1.0, (n, rank)) * np.linspace(1.5, 0.6, rank)
    basis, _ = np.linalg.qr(rng.normal(size=(m, rank)))
    x = scores @ basis.T + rng.normal(0, 1.0, m) + rng.normal(0, noise, (n, m))
    return x, basis


def _table(x, names=None):
    names = names or NAMES[: x.shape[1]]
    return EnergyTable.from_matrix(pd.DataFrame(x, index=[f"S{i:03d}" for i in range(x.shape[0])], columns=names))


# ------------------------------------------------------------------------------------------------
# PCA against numpy and scikit-learn
# ------------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def rank3():
    x, basis = _low_rank(30, 12, 3, 0.01, seed=11)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingDataWarning)
        an = analyse_descriptors(_table(x), scaling=False, greedy_steps=3, cross_validate=False)
    return x, basis, an


def test_pca_matches_numpy_svd_and_sklearn(rank3):
    from sklearn.decomposition import PCA

    x, _, an = rank3
    xc = x - x.mean(axis=0)
    s = np.linalg.svd(xc, compute_uv=False)
    np.testing.assert_allclose(an.singular_values, s, rtol=1e-10, atol=1e-12)
    ref = PCA().fit(x)
    ev = an.explained_variance()
    np.testing.assert_allclose(ev["explained_variance_ratio"], ref.explained_variance_ratio_, rtol=1e-9, atol=1e-14)
    np.testing.assert_allclose(ev["explained_variance"], ref.explained_variance_, rtol=1e-9, atol=1e-14)
    # components agree up to sign (sklearn fixes signs its own way); the three leading ones matter
    for k in range(3):
        ours, theirs = an.loadings_matrix[k], ref.components_[k]
        assert min(np.abs(ours - theirs).max(), np.abs(ours + theirs).max()) < 1e-8
    scores = ref.transform(x)[:, :3]
    for k in range(3):
        assert min(np.abs(an.scores_matrix[:, k] - scores[:, k]).max(), np.abs(an.scores_matrix[:, k] + scores[:, k]).max()) < 1e-8


def test_standardized_pca_matches_sklearn_on_scaled_data(rank3):
    from sklearn.decomposition import PCA
    from sklearn.preprocessing import StandardScaler

    x, _, _ = rank3
    an = analyse_descriptors(_table(x), scaling=False, greedy_steps=1, cross_validate=False, standardize=True)
    ref = PCA().fit(StandardScaler().fit_transform(x))
    np.testing.assert_allclose(an.explained_variance()["explained_variance_ratio"], ref.explained_variance_ratio_, rtol=1e-9, atol=1e-14)
    # reconstructions stay in eV: all components give back the matrix
    np.testing.assert_allclose(an.reconstruction(an.n_components), x, atol=1e-9)


def test_pca_recovers_rank_and_subspace(rank3):
    x, basis, an = rank3
    # with 0.01 eV noise, three components reach 0.02 eV; two do not
    assert an.components_for_error(0.02) == 3
    assert an.reconstruction_rmse()[2] > 0.1
    angles = linalg.subspace_angles(an.loadings_matrix[:3].T, basis)
    assert np.max(angles) < 0.02  # radians; noise/signal ~ 0.01
    # the explained variance beyond rank 3 is noise only
    assert an.explained_variance()["cumulative_ratio"].iloc[2] > 0.999


def test_signs_make_loadings_sum_positive(rank3):
    _, _, an = rank3
    assert np.all(an.loadings_matrix.sum(axis=1) >= 0)


@settings(max_examples=25, deadline=None)
@given(st.integers(4, 9), st.integers(3, 7), st.integers(0, 10_000))
def test_reconstruction_error_identity(n, m, seed):
    """Complete matrix: RMSE of the rank-k reconstruction = sqrt(sum_{j>k} s_j^2 / (n m)) (Eckart-Young), non-increasing in k."""
    x = np.random.default_rng(seed).normal(size=(n, m))
    an = analyse_descriptors(_table(x), scaling=False, greedy_steps=1, cross_validate=False)
    s = np.linalg.svd(x - x.mean(axis=0), compute_uv=False)
    expect = [np.sqrt(np.sum(s[k:] ** 2) / (n * m)) for k in range(len(s) + 1)]
    np.testing.assert_allclose(an.reconstruction_rmse(), expect, atol=1e-10)
    assert np.all(np.diff(an.reconstruction_rmse()) <= 1e-12)


# ------------------------------------------------------------------------------------------------
# imputation
# ------------------------------------------------------------------------------------------------
def test_imputation_error_on_held_out_entries():
    """Rank-2 data (noise 0.02 eV), 15 % of the entries hidden: rank-2 imputation recovers them within
    0.05 eV RMSE (bound: a few times the noise; common practice, no source), far better than column means."""
    x, _ = _low_rank(40, 15, 2, 0.02, seed=5)
    rng = np.random.default_rng(1)
    hide = rng.random(x.shape) < 0.15
    trial = np.where(hide, np.nan, x)
    filled, it, ok = impute_low_rank(trial, 2)
    assert ok and it > 1
    np.testing.assert_array_equal(filled[~hide], x[~hide])  # computed entries untouched
    err = np.sqrt(np.mean((filled[hide] - x[hide]) ** 2))
    mean_only, _, _ = impute_low_rank(trial, 0)
    err0 = np.sqrt(np.mean((mean_only[hide] - x[hide]) ** 2))
    assert err < 0.05
    assert err < 0.1 * err0
    cv = imputation_cv(trial, ranks=[0, 1, 2, 3, 4])
    assert int(cv.loc[cv["cv_rmse"].idxmin(), "rank"]) == 2


def test_analysis_with_missing_entries_imputes_and_flags():
    x, basis = _low_rank(25, 10, 2, 0.01, seed=9)
    hide = np.zeros_like(x, dtype=bool)
    hide[[1, 4, 7, 12, 20], [0, 3, 5, 8, 9]] = True
    an = analyse_descriptors(_table(np.where(hide, np.nan, x)), scaling=False, greedy_steps=2)
    assert an.imputation_rank == 2
    np.testing.assert_array_equal(an.missing, hide)
    assert np.sqrt(np.mean((an.values[hide] - x[hide]) ** 2)) < 0.05
    assert np.max(linalg.subspace_angles(an.loadings_matrix[:2].T, basis)) < 0.05
    assert "5 imputed entries" in an.summary()


def test_impute_rejects_empty_columns_and_bad_rank():
    x = np.ones((4, 3))
    x[:, 1] = np.nan
    with pytest.raises(DescriptorError, match="no computed entry"):
        impute_low_rank(x, 1)
    with pytest.raises(DescriptorError, match="rank"):
        impute_low_rank(np.ones((4, 3)), 5)


def test_too_small_table_is_refused():
    with pytest.raises(DescriptorError, match="at least 3 surfaces"):
        analyse_descriptors(_table(np.ones((2, 3)) + np.arange(3)), scaling=False)
    with pytest.raises(DescriptorError, match="no energies of"):
        analyse_descriptors(_table(np.random.default_rng(0).normal(size=(5, 3))), species=["NNH*", "OH*"], scaling=False)


# ------------------------------------------------------------------------------------------------
# stand-ins and the greedy descriptor set
# ------------------------------------------------------------------------------------------------
def test_greedy_set_finds_the_generating_columns_and_exact_loo():
    rng = np.random.default_rng(3)
    n = 20
    a, b = rng.normal(0, 1, n), rng.normal(0, 0.7, n)
    cols = [a, b] + [c1 * a + c2 * b + c0 + rng.normal(0, 1e-3, n) for c1, c2, c0 in rng.normal(size=(6, 3))]
    x = np.column_stack(cols)
    names = NAMES[:8]
    g = greedy_descriptor_set(x, names, 2)
    assert g["rmse"].iloc[1] < 2e-3 and g["rmse"].iloc[0] > 0.05
    # leave-one-out of the chosen set vs brute-force refits (numpy.linalg.lstsq)
    chosen = [names.index(k) for k in g["set"].iloc[1].split(", ")]
    others = [j for j in range(8) if j not in chosen]
    loo = []
    for i in range(n):
        keep = np.arange(n) != i
        X = np.column_stack([x[keep][:, chosen], np.ones(n - 1)])
        beta, *_ = np.linalg.lstsq(X, x[keep][:, others], rcond=None)
        loo.append(x[i, others] - np.append(x[i, chosen], 1.0) @ beta)
    assert g["loo_rmse"].iloc[1] == pytest.approx(np.sqrt(np.mean(np.square(loo))), rel=1e-9)


def test_stand_in_is_the_column_that_carries_the_component():
    rng = np.random.default_rng(4)
    n = 30
    z = rng.normal(0, 1.0, n)
    x = np.column_stack([2.0 * z] + [0.3 * z + rng.normal(0, 0.05, n) for _ in range(5)])
    an = analyse_descriptors(_table(x), scaling=False, greedy_steps=1, cross_validate=False)
    st_ = an.stand_ins(1)
    assert st_["adsorbate"].iloc[0] == NAMES[0]
    assert abs(st_["correlation"].iloc[0]) > 0.999


def test_pca_is_never_worse_in_sample_than_the_chosen_energies():
    x, _ = _low_rank(20, 10, 3, 0.05, seed=21)
    an = analyse_descriptors(_table(x), greedy_steps=3)
    cmp_ = an.comparison()
    for k in (1, 2, 3):
        pca = cmp_[(cmp_["descriptors"] == k) & cmp_["model"].str.startswith("PCA")]["rmse"].iloc[0]
        energies = cmp_[(cmp_["descriptors"] == k) & cmp_["model"].str.contains("adsorption energies")]["rmse"].iloc[0]
        # PCA error is over all entries, the energy sets' over the other columns; scale to the same total
        assert pca * np.sqrt(10) <= energies * np.sqrt(10 - k) + 1e-12
    assert "automatic scaling relations" in set(cmp_["model"])


def test_demo_table_runs():
    from ecatlab.demo import demo_energies

    an = analyse_descriptors(demo_energies())
    ev = an.explained_variance()
    assert ev["explained_variance_ratio"].sum() == pytest.approx(1.0)
    k = an.components_for_error(0.1)
    assert 1 <= k <= an.n_components and an.reconstruction_rmse()[k] <= 0.1
    assert len(an.comparison()) >= 3


# ------------------------------------------------------------------------------------------------
# automatic scaling relations
# ------------------------------------------------------------------------------------------------
def _brute_loo(x, y):
    errs = []
    for i in range(len(y)):
        keep = np.arange(len(y)) != i
        p = np.polyfit(x[keep], y[keep], 1)
        errs.append(y[i] - np.polyval(p, x[i]))
    return np.array(errs)


def test_auto_single_descriptor_matches_linregress_and_brute_force_loo():
    rng = np.random.default_rng(8)
    n = 15
    co = rng.uniform(-1.5, 0.5, n)
    cho = 0.7 * co + 0.5 + rng.normal(0, 0.05, n)
    noise = rng.normal(0, 1.0, n)
    auto = auto_scaling(_table(np.column_stack([co, cho, noise]), ["CO*", "CHO*", "N*"]), max_descriptors=1)
    m = auto.best("CHO*")
    assert m.kind == "one-descriptor" and m.relation.descriptors == ("CO*",)
    ref = stats.linregress(co, cho)
    assert m.relation.slopes[0] == pytest.approx(ref.slope, rel=1e-10)
    assert m.relation.intercept == pytest.approx(ref.intercept, rel=1e-10)
    assert m.relation.slope_stderr[0] == pytest.approx(ref.stderr, rel=1e-8)
    assert m.relation.r_squared == pytest.approx(ref.rvalue**2, rel=1e-10)
    loo = _brute_loo(co, cho)
    assert m.loo_rmse == pytest.approx(np.sqrt(np.mean(loo**2)), rel=1e-9)
    assert m.loo_max_abs == pytest.approx(np.abs(loo).max(), rel=1e-9)


def test_bond_counting_prior_wins_unless_data_disagree():
    rng = np.random.default_rng(2)
    n = 14
    o = rng.uniform(0.5, 3.0, n)
    # OH* follows the bond-counting slope 1/2 (Abild-Pedersen et al. 2007) with 0.05 eV noise
    oh = 0.5 * o + 0.1 + rng.normal(0, 0.05, n)
    auto = auto_scaling(_table(np.column_stack([oh, o]), ["OH*", "O*"]))
    m = auto.best("OH*")
    assert m.kind == "bond-counting" and m.relation.slopes == (0.5,) and m.relation.fixed == (True,)
    assert m.relation.intercept == pytest.approx(np.mean(oh - 0.5 * o), rel=1e-10)
    # with a clearly different slope (0.9) the free fit beats the prior by far more than the margin
    oh2 = 0.9 * o - 0.3 + rng.normal(0, 0.02, n)
    m2 = auto_scaling(_table(np.column_stack([oh2, o]), ["OH*", "O*"])).best("OH*")
    assert m2.kind == "one-descriptor" and m2.relation.slopes[0] == pytest.approx(stats.linregress(o, oh2).slope, rel=1e-10)


def test_two_descriptor_model_is_found_and_matches_lstsq():
    rng = np.random.default_rng(6)
    n = 25
    a, b = rng.normal(0, 1, n), rng.normal(0, 1, n)
    y = 0.6 * a + 0.4 * b + 0.2 + rng.normal(0, 0.01, n)
    x = np.column_stack([y, a, b, rng.normal(size=n)])
    m = auto_scaling(_table(x, ["COOH*", "CO*", "OH*", "N*"])).best("COOH*")
    assert m.kind == "two-descriptor" and set(m.relation.descriptors) == {"CO*", "OH*"}
    X = np.column_stack([x[:, [1 + ["CO*", "OH*"].index(d) for d in m.relation.descriptors]], np.ones(n)])
    beta, *_ = np.linalg.lstsq(X, y, rcond=None)
    np.testing.assert_allclose(list(m.relation.slopes) + [m.relation.intercept], beta, rtol=1e-9)
    assert m.loo_rmse < 0.02


def test_fill_missing_energies_flags_estimates():
    rng = np.random.default_rng(12)
    n = 16
    oh = rng.uniform(0.3, 1.5, n)
    ooh = oh + 3.2 + rng.normal(0, 0.05, n)
    o = 2 * oh + rng.normal(0, 0.05, n)
    x = np.column_stack([oh, o, ooh])
    truth = x[3, 2], x[7, 1]
    x[3, 2] = np.nan  # OOH* on S003
    x[7, 1] = np.nan  # O* on S007
    table = _table(x, ["OH*", "O*", "OOH*"])
    with pytest.warns(EstimatedValueWarning, match="2 missing adsorption energies ESTIMATED"):
        filled, prov = fill_missing_energies(table)
    est = prov[prov["status"] == "estimated"].set_index(["surface", "species"])
    assert set(est.index) == {("S003", "OOH*"), ("S007", "O*")}
    auto = auto_scaling(table)
    for (s, k), t in zip([("S003", "OOH*"), ("S007", "O*")], truth):
        m = auto.best(k)
        desc = table.values([s], m.relation.descriptors)
        assert est.loc[(s, k), "G"] == pytest.approx(float(m.relation.predict(desc)[0]), abs=1e-12)
        assert est.loc[(s, k), "estimate_error"] == pytest.approx(m.loo_rmse)
        assert abs(est.loc[(s, k), "G"] - t) < 4 * m.loo_rmse + 0.05
    # computed values unchanged; estimates marked in the new table
    np.testing.assert_array_equal(filled.values(table.surfaces, table.species)[np.isfinite(x)], x[np.isfinite(x)])
    origin = filled.frame.set_index(["surface", "species"])["G_origin"].astype(str)
    assert origin[("S003", "OOH*")] == "estimated from scaling relation" and origin[("S000", "OOH*")] == "G given"
    assert any("ESTIMATED" in n for n in filled.notes)
    # and the limiting-potential table names the estimated adsorbates per row
    from ecatlab.che.engine import limiting_potentials

    lp = estimated_species_column(limiting_potentials(filled, "orr-4e"), prov).set_index("surface")
    assert lp.loc["S003", "estimated_species"] == "OOH*" and lp.loc["S007", "estimated_species"] == "O*"
    assert lp.loc["S000", "estimated_species"] == ""


def test_no_gap_no_warning_and_unknown_species_error():
    x, _ = _low_rank(8, 3, 1, 0.01, seed=1)
    table = _table(x, ["OH*", "O*", "OOH*"])
    with warnings.catch_warnings():
        warnings.simplefilter("error", EstimatedValueWarning)
        filled, prov = fill_missing_energies(table)
    assert (prov["status"] == "computed").all()
    with pytest.raises(ScalingError, match="no energies of NNH"):
        auto_scaling(table, targets=["NNH*"])


# ------------------------------------------------------------------------------------------------
# command line
# ------------------------------------------------------------------------------------------------
def test_cli_descriptors_fill_writes_flagged_table(tmp_path, capsys):
    from ecatlab.cli import main
    from ecatlab.energies import read_energies

    x, _ = _low_rank(10, 4, 1, 0.02, seed=3)
    frame = pd.DataFrame(x, index=[f"S{i}" for i in range(10)], columns=["OH*", "O*", "OOH*", "CO*"]).stack().rename("G").reset_index()
    frame.columns = ["surface", "species", "G"]
    frame = frame[~((frame["surface"] == "S2") & (frame["species"] == "OOH*"))]
    src = tmp_path / "e.csv"
    frame.to_csv(src, index=False)
    out = tmp_path / "filled.csv"
    assert main(["descriptors", str(src), "--fill", "-o", str(out), "--scree", str(tmp_path / "s.png")]) == 0
    text = capsys.readouterr()
    assert "components needed" in text.out and "ESTIMATED" in text.err
    back = read_energies(out)
    row = back.frame[(back.frame["surface"] == "S2") & (back.frame["species"] == "OOH*")].iloc[0]
    assert row["status"] == "estimated" and float(row["estimate_error"]) > 0
    assert (tmp_path / "s.png").read_bytes()[:4] == b"\x89PNG"
    assert main(["descriptors", str(src), "--fill", "-o", str(out)]) == 2  # exists, no --force
    assert main(["descriptors", str(src), "--fill", "-o", str(src), "--force"]) == 2  # the input itself
