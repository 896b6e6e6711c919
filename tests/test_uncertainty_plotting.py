"""Tests of ecatlab.plotting.uncertainty and ecatlab.uncertainty.volcano (figures take ax=, return Axes)."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

import ecatlab  # noqa: E402
from ecatlab.plotting.uncertainty import (  # noqa: E402
    plot_determining_step_probabilities,
    plot_diagram_bands,
    plot_ranking_probabilities,
    plot_volcano_intervals,
)
from ecatlab.uncertainty import GaussianErrors, propagate  # noqa: E402
from ecatlab.uncertainty.volcano import volcano_band  # noqa: E402
from ecatlab.volcano import volcano  # noqa: E402


@pytest.fixture(scope="module")
def result():
    return propagate(ecatlab.demo_energies(), ["orr-4e", "co2rr-co"], GaussianErrors(0.1, 0.5), n_samples=200, seed=0, keep_species=["OH*"])


def test_figures_take_and_return_axes(result):
    for draw in (
        lambda ax: plot_diagram_bands(result, "orr-4e", ["ALY-01", "SAS-01"], potential=0.5, ax=ax),
        lambda ax: plot_volcano_intervals(result, "orr-4e", "OH*", ax=ax),
        lambda ax: plot_ranking_probabilities(result, "co2rr-co", top=2, ax=ax),
        lambda ax: plot_determining_step_probabilities(result, "orr-4e", ax=ax),
    ):
        fig, ax = plt.subplots()
        drawn = draw(ax)
        assert drawn.ax is ax and drawn.data is not None and drawn.parts["caption"] is not None
        assert "ILLUSTRATIVE" in ax.get_title()
        texts = " ".join(t.get_text() for t in ax.texts).replace("\n", " ")
        assert "Theoretical estimates" in texts and "200 samples" in texts
        plt.close(fig)


def test_diagram_band_contains_the_deterministic_level(result):
    fig, ax = plt.subplots()
    drawn = plot_diagram_bands(result, "orr-4e", "ALY-01", potential=0.0, ax=ax)
    assert drawn.parts["levels"]["ALY-01"] == [l for l in ax.lines if l.get_linewidth() > 2]
    d = drawn.data
    assert ((d["low"] <= d["level"] + 1e-12) & (d["level"] <= d["high"] + 1e-12)).all() and len(d) == 5
    bars = [l for l in ax.lines if l.get_linewidth() > 2]
    bands = ax.collections
    assert len(bars) == 5 and len(bands) == 5
    for bar, band in zip(bars, bands):
        y = bar.get_ydata()[0]
        verts = band.get_paths()[0].vertices[:, 1]
        assert verts.min() - 1e-12 <= y <= verts.max() + 1e-12
    plt.close(fig)


def test_volcano_band_without_errors_is_the_volcano_line():
    """A zero-variance model reproduces the volcano's own U_L on its grid (ecatlab.volcano)."""
    from ecatlab.uncertainty import DescriptorErrors

    table = ecatlab.demo_energies()
    curve = volcano(table, "orr-4e", "OH*")
    band = volcano_band(curve, table, model=DescriptorErrors("OH*", 0.0, default_slope=0.0), n_samples=10)
    np.testing.assert_array_equal(band.median, curve.limiting_potential)
    default = volcano_band(curve, table, n_samples=200, seed=1)
    assert (default.low <= default.high).all()
    summary = default.apex_summary()
    assert summary.loc["apex_descriptor", "low"] <= curve.apex.descriptor[0] + 0.05
    fig, ax = plt.subplots()
    res = propagate(table, "orr-4e", GaussianErrors(0.1), n_samples=100, keep_species=["OH*"])
    drawn = plot_volcano_intervals(res, "orr-4e", "OH*", curve=curve, band=default, ax=ax)
    assert drawn.ax is ax and drawn.parts["volcano"].data is curve and drawn.parts["band"] is not None
    plt.close(fig)
