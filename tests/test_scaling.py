"""Tests of ecatlab.scaling: least-squares scaling relations, their statistics and descriptors.

Reference libraries: scipy.stats.linregress / scipy.stats.sem, numpy.polyfit, numpy.linalg.lstsq.
Synthetic data are generated here with a seeded RNG (no literature values involved except the
bond-counting slopes, Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007)).
"""

import json
import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from ecatlab.energies import EnergyTable
from ecatlab.errors import EcatlabError, MissingDataWarning, NotationError, ScalingError
from ecatlab.scaling import (
    Descriptor,
    ScalingRelation,
    bond_counting_slope,
    fit_scaling,
    fit_scaling_relations,
    residual_table,
    scaling_table,
)


def _table(columns: dict, n: int) -> EnergyTable:
    frame = pd.DataFrame(columns, index=[f"S{i:03d}" for i in range(n)])
    return EnergyTable.from_matrix(frame)


@pytest.fixture(scope="module")
def noisy():
    rng = np.random.default_rng(7)
    n = 40
    x = rng.uniform(-0.5, 2.0, n)
    y = 0.8 * x + 1.5 + rng.normal(0, 0.08, n)
    return x, y, _table({"OH*": x, "OOH*": y}, n)


def test_fit_matches_linregress_and_polyfit(noisy):
    x, y, table = noisy
    rel = fit_scaling(table, "OOH*", "OH*")
    ref = stats.linregress(x, y)
    assert rel.slopes[0] == pytest.approx(ref.slope, rel=1e-10)
    assert rel.intercept == pytest.approx(ref.intercept, rel=1e-10)
    assert rel.slope_stderr[0] == pytest.approx(ref.stderr, rel=1e-8)
    assert rel.intercept_stderr == pytest.approx(ref.intercept_stderr, rel=1e-8)
    assert rel.r_squared == pytest.approx(ref.rvalue**2, rel=1e-10)
    p = np.polyfit(x, y, 1)
    assert (rel.slopes[0], rel.intercept) == pytest.approx(tuple(p), rel=1e-10)
    res = y - np.polyval(p, x)
    assert rel.rmse == pytest.approx(np.sqrt(np.mean(res**2)), rel=1e-10)
    assert rel.residual_std_error == pytest.approx(np.sqrt(np.sum(res**2) / (len(x) - 2)), rel=1e-10)
    got = rel.residual_frame().set_index("surface")["residual"].to_numpy()
    np.testing.assert_allclose(got, res, atol=1e-12)
    assert rel.n_surfaces == 40 and rel.is_fitted


def test_fit_recovers_generating_parameters(noisy):
    _, _, table = noisy
    rel = fit_scaling(table, "OOH*", "OH*")
    # the true values (0.8, 1.5) lie within 3 standard errors
    assert abs(rel.slopes[0] - 0.8) < 3 * rel.slope_stderr[0]
    assert abs(rel.intercept - 1.5) < 3 * rel.intercept_stderr
    assert rel.rmse == pytest.approx(0.08, rel=0.3)


def test_fixed_slope_has_one_free_parameter(noisy):
    x, y, table = noisy
    rel = fit_scaling(table, "OOH*", "OH*", slope=1.0)
    shifted = y - x
    assert rel.slopes == (1.0,) and rel.fixed == (True,) and rel.slope_stderr == (0.0,)
    assert rel.intercept == pytest.approx(shifted.mean(), rel=1e-12)
    # s / sqrt(n) with n-1 degrees of freedom is the standard error of the mean (scipy.stats.sem)
    assert rel.intercept_stderr == pytest.approx(stats.sem(shifted), rel=1e-10)
    ssr = np.sum((shifted - shifted.mean()) ** 2)
    assert rel.r_squared == pytest.approx(1 - ssr / np.sum((y - y.mean()) ** 2), rel=1e-12)
    # the wrong slope fits worse than the free fit
    assert rel.rmse > fit_scaling(table, "OOH*", "OH*").rmse


def test_two_descriptor_fit_against_lstsq_and_monte_carlo():
    rng = np.random.default_rng(11)
    n = 200
    x1 = rng.uniform(-1.5, 0.5, n)
    x2 = rng.uniform(0.0, 1.5, n)
    sigma = 0.05
    y = 0.6 * x1 + 0.3 * x2 + 0.2 + rng.normal(0, sigma, n)
    table = _table({"CO*": x1, "OH*": x2, "COOH*": y}, n)
    rel = fit_scaling(table, "COOH*", ["CO*", "OH*"])
    X = np.column_stack([x1, x2, np.ones(n)])
    beta, ssr, *_ = np.linalg.lstsq(X, y, rcond=None)
    assert rel.slopes + (rel.intercept,) == pytest.approx(tuple(beta), rel=1e-9)
    assert rel.rmse == pytest.approx(np.sqrt(ssr[0] / n), rel=1e-9)
    # standard errors: compare with the spread of estimates over fresh noise (Monte Carlo)
    draws = rng.normal(0, sigma, (400, n)) + (X @ np.array([0.6, 0.3, 0.2]))[None, :]
    est = np.linalg.lstsq(X, draws.T, rcond=None)[0]
    empirical = est.std(axis=1, ddof=1)
    reported = np.array(rel.slope_stderr + (rel.intercept_stderr,))
    np.testing.assert_allclose(reported, empirical, rtol=0.2)
    # partly fixed: slope on OH* fixed, on CO* fitted
    rel2 = fit_scaling(table, "COOH*", ["CO*", "OH*"], slope=[None, 0.3])
    b2 = np.polyfit(x1, y - 0.3 * x2, 1)
    assert (rel2.slopes[0], rel2.intercept) == pytest.approx(tuple(b2), rel=1e-9)
    assert rel2.fixed == (False, True)


def test_missing_surfaces_are_named_and_left_out():
    frame = pd.DataFrame({"OH*": [0.1, 0.5, 0.9, 1.3, np.nan], "O*": [0.4, 1.2, 2.0, 2.9, 1.0]}, index=list("ABCDE"))
    table = EnergyTable.from_matrix(frame)
    with pytest.warns(MissingDataWarning, match="E"):
        rel = fit_scaling(table, "O*", "OH*")
    assert rel.n_surfaces == 4 and [s for s, _ in rel.residuals] == list("ABCD")


def test_fit_errors_are_clear():
    table = _table({"OH*": [0.1, 0.2], "O*": [0.3, 0.5]}, 2)
    with pytest.raises(ScalingError, match="need at least 3"):
        fit_scaling(table, "O*", "OH*")
    with pytest.raises(ScalingError, match="no energies of OOH"):
        fit_scaling(table, "OOH*", "OH*")
    flat = _table({"OH*": [0.5, 0.5, 0.5, 0.5], "O*": [1.0, 1.1, 1.2, 1.3]}, 4)
    with pytest.raises(ScalingError, match="no spread"):
        fit_scaling(flat, "O*", "OH*")
    assert issubclass(ScalingError, EcatlabError) and issubclass(ScalingError, ValueError)


def test_bond_counting_slopes():
    # Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007): gamma = (x_max - x) / x_max
    assert bond_counting_slope("OH*", "O*") == 0.5
    assert bond_counting_slope("CH3*", "C*") == 0.25
    assert bond_counting_slope("NH*", "N*") == pytest.approx(2 / 3)
    assert bond_counting_slope("SH*", "S*") == 0.5
    with pytest.raises(ScalingError, match="pattern"):
        bond_counting_slope("OOH*", "O*")
    with pytest.raises(ScalingError, match="saturated"):
        bond_counting_slope("CH4*", "C*")


def test_relation_round_trip_and_tables(noisy):
    _, _, table = noisy
    rels = fit_scaling_relations(table, ["OOH*", "OH*"], "OH*", fixed_slopes={"OOH*": 1.0})
    assert len(rels) == 1  # the descriptor itself is skipped
    rel = rels[0]
    data = json.loads(json.dumps(rel.to_dict()))
    assert ScalingRelation.from_dict(data) == rel
    given = ScalingRelation.given("OOH*", "OH*", 1.0, 3.2, source="Man et al., ChemCatChem 3, 1159 (2011)")
    assert ScalingRelation.from_dict(given.to_dict()) == given
    assert given.predict({"OH*": np.array([0.0, 1.0])}) == pytest.approx([3.2, 4.2])
    tab = scaling_table([rel, given])
    assert list(tab["target"]) == ["OOH*", "OOH*"]
    assert tab.loc[0, "n_surfaces"] == 40 and np.isnan(tab.loc[1, "r_squared"])
    assert tab.loc[0, "fixed_slopes"] == "OH*"
    res = residual_table([rel])
    assert res.shape == (40, 1) and abs(res["OOH*"].mean()) < 1e-12  # fixed slope: residuals have zero mean
    with pytest.raises(ScalingError, match="schema"):
        ScalingRelation.from_dict({"schema": "other"})


def test_relation_validation():
    with pytest.raises(ScalingError, match="own descriptor"):
        ScalingRelation.given("OH*", "OH*", 1.0, 0.0)
    with pytest.raises(ScalingError, match="one slope per descriptor"):
        ScalingRelation("O*", ("OH*",), (1.0, 2.0), 0.0)
    assert ScalingRelation.given("H*", (), (), 0.1).predict(np.zeros((3, 0))) == pytest.approx([0.1] * 3)


def test_descriptor_parsing_and_evaluation():
    d = Descriptor.parse("O* - OH*")
    assert d.terms == (("O*", 1.0), ("OH*", -1.0)) and d.text == "O* - OH*"
    assert Descriptor.parse("2 OH* - O*").terms == (("OH*", 2.0), ("O*", -1.0))
    assert Descriptor.parse("OH*").is_single
    assert "ΔG" in d.label()
    table = EnergyTable.from_matrix(pd.DataFrame({"OH*": [0.5, np.nan], "O*": [2.0, 1.0]}, index=["A", "B"]))
    v = d.evaluate(table)
    assert v["A"] == pytest.approx(1.5) and np.isnan(v["B"])
    for bad in ("", "OH", "O* OH*", "O* - O*"):
        with pytest.raises(NotationError):
            Descriptor.parse(bad)


def test_demo_relations_are_reasonable():
    from ecatlab.demo import demo_energies

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        rel = fit_scaling(demo_energies(), "OOH*", "OH*")
    assert rel.n_surfaces == 12 and 0.0 < rel.r_squared <= 1.0
