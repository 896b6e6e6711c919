"""Tests of the uncertainty report section (ecatlab.uncertainty.report_section) and its hook in build_report."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import ecatlab  # noqa: E402
from ecatlab.report import build_report  # noqa: E402
from ecatlab.uncertainty import GaussianErrors, propagate  # noqa: E402
from ecatlab.uncertainty.report_section import uncertainty_section  # noqa: E402


def test_section_numbers_equal_propagate():
    table = ecatlab.demo_energies()
    model = GaussianErrors(0.1, 0.5)
    sec = uncertainty_section(table, "orr-4e", model, n_samples=200, seed=3)
    ref = propagate(table, "orr-4e", model, n_samples=200, seed=3).ranking("orr-4e")
    best = ref.index[0]
    assert f"<td>{best}</td>" in sec.html or best in sec.html
    assert f"{ref['p_best'].iloc[0]:.3f}" in sec.html
    assert "ILLUSTRATIVE" in sec.html and "Theoretical estimates" in sec.html and "<svg" in sec.html
    assert sec.title == "Uncertainty: orr-4e"


def test_build_report_includes_the_section():
    html = build_report(ecatlab.demo_energies(), ["orr-4e"], uncertainty=[("orr-4e", GaussianErrors(0.1), 100)])
    assert 'id="uncertainty-orr-4e"' in html and "Ranking per sample" in html
