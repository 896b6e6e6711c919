"""Smoke-and-content tests of the scaling/volcano plotters (Agg backend): every figure renders to
PNG, carries its conditions in the title and the caution in the caption, and draws the computed
surfaces at their exact values."""

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

from ecatlab.demo import demo_energies  # noqa: E402
from ecatlab.plotting.scaling import plot_scaling, scaling_figure  # noqa: E402
from ecatlab.plotting.volcano import (  # noqa: E402
    plot_activity_map,
    plot_determining_steps,
    plot_selectivity_map,
    plot_volcano,
    volcano_figure,
)
from ecatlab.scaling import ScalingRelation, fit_scaling  # noqa: E402
from ecatlab.volcano import activity_map, selectivity_map, volcano  # noqa: E402


@pytest.fixture(scope="module")
def demo():
    return demo_energies()


def _texts(ax):
    return " ".join(t.get_text() for t in ax.texts) + " " + " ".join(t.get_text() for t in ax.get_legend().get_texts() if ax.get_legend())


def _save(ax, tmp_path, name):
    path = tmp_path / name
    ax.figure.savefig(path, dpi=60, bbox_inches="tight")
    assert path.stat().st_size > 5000
    plt.close(ax.figure)


def test_scaling_plot(demo, tmp_path):
    rel = fit_scaling(demo, "OOH*", "OH*", slope=1.0)
    ax = plot_scaling(rel, demo)
    text = " ".join(t.get_text() for t in ax.texts)
    assert "(fixed)" in text and "RMSE" in text and "Theoretical estimate" in text
    offsets = ax.collections[-1].get_offsets()
    assert len(offsets) == 12
    np.testing.assert_allclose(sorted(offsets[:, 1]), sorted(demo.matrix["OOH*"]))
    _save(ax, tmp_path, "scaling.png")
    ax = scaling_figure(demo, "COOH*", ["CO*", "OH*"], style="single")
    assert "predicted" in ax.get_xlabel()
    _save(ax, tmp_path, "parity.png")
    ax = plot_scaling(ScalingRelation.given("OOH*", "OH*", 1.0, 3.2, source="Man et al. 2011"))
    assert "given relation" in " ".join(t.get_text() for t in ax.texts)
    _save(ax, tmp_path, "given.png")


def test_volcano_plot(demo, tmp_path):
    c = volcano(demo, "orr-4e", "OH*", fixed_slopes={"OOH*": 1.0})
    fig, ax = plt.subplots()
    out = plot_volcano(c, ax=ax)
    assert out is ax
    assert "pH 0" in ax.get_title() and "RHE" in ax.get_ylabel()
    legend = " ".join(t.get_text() for t in ax.get_legend().get_texts())
    assert f"{c.apex.overpotential:.2f} V" in legend and "step 1" in legend
    # the surface markers sit at their exact limiting potentials
    pts = [col for col in ax.collections if len(col.get_offsets()) == len(c.surfaces)][0].get_offsets()
    np.testing.assert_allclose(pts[:, 1], c.surfaces["limiting_potential"])
    names = {t.get_text() for t in ax.texts}
    assert set(c.surfaces["surface"]) <= names
    _save(ax, tmp_path, "volcano.png")
    ax = volcano_figure(demo, "oer-4e", "O* - OH*", style="single", fit_against="OH*")
    assert "lower is better" in ax.get_title()
    _save(ax, tmp_path, "volcano_single.png")


def test_map_plots(demo, tmp_path):
    m = activity_map(demo, "co2rr-ch4", ("CO*", "OH*"), points=41)
    ax = plot_activity_map(m)
    assert "co2rr-ch4" in ax.get_title()
    _save(ax, tmp_path, "map.png")
    ax = plot_activity_map(m, quantity="overpotential")
    _save(ax, tmp_path, "map_eta.png")
    ax = plot_determining_steps(m)
    region_labels = [t.get_text() for t in ax.texts if t.get_text().startswith("step ")]
    assert len(region_labels) == len(np.unique(m.determining_step_index))
    _save(ax, tmp_path, "steps.png")
    s = selectivity_map(demo, ("CO*", "OH*"), points=41)
    ax = plot_selectivity_map(s)
    assert "least negative onset" in ax.get_title()
    _save(ax, tmp_path, "selectivity.png")
    with pytest.raises(ValueError, match="quantity"):
        plot_activity_map(m, quantity="current")
