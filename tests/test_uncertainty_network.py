"""Tests of ecatlab.uncertainty.network: product and route probabilities over the network's routes."""

from __future__ import annotations

import numpy as np
import pytest

import ecatlab
from ecatlab.network import NetworkAnalysis, build_network
from ecatlab.uncertainty import GaussianErrors
from ecatlab.uncertainty.network import network_uncertainty


@pytest.fixture(scope="module")
def table():
    return ecatlab.demo_energies()


def test_zero_variance_gives_the_network_onsets_exactly(table):
    nu = network_uncertainty(table, "N2", GaussianErrors(0.0), n_samples=5)
    onsets = NetworkAnalysis(build_network(table, "N2"), table).onset_potentials()
    mine = nu.onset_samples()
    assert set(mine) == set(onsets.columns)
    for key in onsets.columns:
        assert np.array_equal(mine[key][3], onsets[key].to_numpy(dtype=float), equal_nan=True), key
    probs = nu.product_probabilities()
    winners = onsets.idxmax(axis=1)
    for surface, product in winners.items():
        assert probs.loc[surface, product] == 1.0


def test_probabilities_sum_to_one_and_tied_routes_share(table):
    nu = network_uncertainty(table, "N2", GaussianErrors(0.15, correlation=0.5), n_samples=200, seed=4)
    probs = nu.product_probabilities()
    np.testing.assert_allclose(probs.sum(axis=1).to_numpy(), 1.0)
    routes = nu.route_probabilities("NH3", top=None)
    np.testing.assert_allclose(routes.groupby("surface")["probability"].sum().to_numpy(), 1.0)
    assert "share" in routes.attrs["ties"]
    # the same seed gives the same table
    again = network_uncertainty(table, "N2", GaussianErrors(0.15, correlation=0.5), n_samples=200, seed=4)
    assert again.product_probabilities().equals(probs)
