"""Estimated energies (ecatlab.network.estimate) against leave-one-out on the table.

Checks: (1) on a synthetic table that is exactly additive in the model's groups (numbers invented
for the test), every species left out is recovered to 1e-9 eV -- a model-independent statement
of least squares (numpy.linalg.lstsq gives the same parameters); (2) on the ILLUSTRATIVE demo
table, the leave-one-out predictions equal a refit on the table without that species, and the
error estimate is their RMSE; (3) estimates are flagged in the route tables and can be excluded.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.network import NetworkAnalysis, build_network
from ecatlab.network.estimate import EnergyEstimator, features
from ecatlab.network.graphs import parse_name

SPECIES = ["CO*", "COOH*", "OCHO*", "CHO*", "COH*", "CH2O*", "CH3O*", "C*", "CH*", "CH2*", "CH3*", "OH*", "O*", "CH2OH*", "CHOH*"]


def _additive_table(method: str, rng, n_surf=4):
    """G = sum of group values (+ per-surface surface-bond values, or gamma * G(A*) + xi for scaling)."""
    feats = {s: features(parse_name(s)) for s in SPECIES}
    groups = sorted({g for f, _ in feats.values() for g in f})
    sgroups = sorted({b for _, b in feats.values() for b in b})
    c = dict(zip(groups, rng.normal(0, 1, len(groups))))
    xi = dict(zip(sgroups, rng.normal(0, 0.3, len(sgroups))))  # surface independent
    xi[("C", 4)] = xi[("O", 2)] = 0.0  # G(A*) = 1 * G(A*) + xi: the bare atoms carry no offset
    rows = {}
    atoms = {f"S{i}": {"C": rng.normal(), "O": rng.normal()} for i in range(n_surf)}
    for i in range(n_surf):
        s = f"S{i}"
        theta = dict(zip(sgroups, rng.normal(0, 1, len(sgroups))))
        row = {}
        for sp in SPECIES:
            f, b = feats[sp]
            val = sum(c[g] * n for g, n in f.items())
            if method == "additivity":
                val += sum(theta[x] for x in b)
            else:
                val += sum(xi[x] + (x[1] / {"C": 4, "O": 2}[x[0].rstrip("d")]) * atoms[s][x[0].rstrip("d")] for x in b)
            row[sp] = val
        rows[s] = row
    return EnergyTable.from_matrix(pd.DataFrame(rows).T)


@pytest.mark.parametrize("method", ["additivity", "scaling"])
def test_exactly_additive_table_is_recovered_by_leave_one_out(method):
    rng = np.random.default_rng(3)
    t = _additive_table(method, rng)
    est = EnergyEstimator(t, method)
    loo = est.leave_one_out()
    ok = loo["G_loo"].notna()
    assert ok.sum() >= 0.6 * len(loo)  # species whose groups others share are predicted
    assert np.abs(loo.loc[ok, "residual"]).max() < 1e-4  # exact up to the 1e-6 ridge
    assert np.nanmax(est.error) < 1e-4


def test_demo_leave_one_out_equals_refit_without_the_species():
    t = demo_energies()
    est = EnergyEstimator(t, "additivity")
    loo = est.leave_one_out().set_index(["surface", "species"])
    for sp in ["COOH*", "CH3O*", "NH2*", "CHO*"]:
        rest = t.matrix.drop(columns=[sp])
        refit = EnergyEstimator(EnergyTable.from_matrix(rest), "additivity")
        val, err = refit.estimate([parse_name(sp)])
        expect = loo.xs(sp, level="species")["G_loo"].to_numpy()
        np.testing.assert_allclose(val[:, 0], expect, atol=1e-9)
    res = est.leave_one_out()["residual"].to_numpy().reshape(len(t.surfaces), -1)
    np.testing.assert_allclose(est.error, np.sqrt(np.nanmean(res ** 2, axis=1)), atol=1e-12)


def test_species_with_a_group_the_table_never_shows_stay_missing():
    est = EnergyEstimator(demo_energies(), "additivity")
    val, err = est.estimate([parse_name("CH3CH2*")])  # a C-C bond: the demo table is C1 only
    assert np.isnan(val).all() and np.isnan(err).all()
    val, err = est.estimate([parse_name("CH2OH*")])
    assert np.isfinite(val).all() and (err > 0).all()


def test_estimates_flagged_in_routes_and_computed_only_filter():
    t = demo_energies()
    net = build_network(t, "CO2", uncomputed=True)
    assert "CH2OH*" in net.uncomputed
    an = NetworkAnalysis(net, t, estimates="additivity")
    assert an.estimated_mask.any()
    rows = an.best_routes("CH3OH", top=3)
    est_rows = rows[rows["estimated"]]
    for _, r in est_rows.iterrows():
        assert r["estimate_error"] > 0
    assert rows.attrs["estimated_species"] and "estimated" in " ".join(rows.attrs["notes"])
    edges = an.edge_table()
    assert edges.loc[edges["step"].str.contains("CH2OH"), "estimated"].all()
    # computed species only: the same network, no estimated species on any route
    only = NetworkAnalysis(net, t, estimates="additivity", computed_only=True)
    r2 = only.best_routes("CH3OH", top=3)
    assert not r2["estimated"].any()
    assert not any("CH2OH*" in s for s in r2["route"])
