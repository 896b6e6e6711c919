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
from ecatlab.plotting.handles import Drawn  # noqa: E402
from ecatlab.scaling import ScalingRelation, fit_scaling  # noqa: E402
from ecatlab.volcano import activity_map, selectivity_map, volcano  # noqa: E402


@pytest.fixture(scope="module")
def demo():
    return demo_energies()


def _texts(ax):
    return " ".join(t.get_text() for t in ax.texts) + " " + " ".join(t.get_text() for t in ax.get_legend().get_texts() if ax.get_legend())


def _save(ax, tmp_path, name):
    ax = getattr(ax, "ax", ax)
    path = tmp_path / name
    ax.figure.savefig(path, dpi=60, bbox_inches="tight")
    assert path.stat().st_size > 5000
    plt.close(ax.figure)


def test_scaling_plot(demo, tmp_path):
    rel = fit_scaling(demo, "OOH*", "OH*", slope=1.0)
    drawn = plot_scaling(rel, demo)
    assert isinstance(drawn, Drawn) and drawn.data is rel and drawn.parts["points"] is not None
    ax = drawn.ax
    text = " ".join(t.get_text() for t in ax.texts)
    assert "(fixed)" in text and "RMSE" in text and "Theoretical estimate" in text
    offsets = ax.collections[-1].get_offsets()
    assert len(offsets) == 12
    np.testing.assert_allclose(sorted(offsets[:, 1]), sorted(demo.matrix["OOH*"]))
    _save(ax, tmp_path, "scaling.png")
    ax = scaling_figure(demo, "COOH*", ["CO*", "OH*"], style="single").ax
    assert "predicted" in ax.get_xlabel()
    _save(ax, tmp_path, "parity.png")
    ax = plot_scaling(ScalingRelation.given("OOH*", "OH*", 1.0, 3.2, source="Man et al. 2011")).ax
    assert "given relation" in " ".join(t.get_text() for t in ax.texts)
    _save(ax, tmp_path, "given.png")


def test_volcano_plot(demo, tmp_path):
    c = volcano(demo, "orr-4e", "OH*", fixed_slopes={"OOH*": 1.0})
    fig, ax = plt.subplots()
    out = plot_volcano(c, ax=ax)
    assert isinstance(out, Drawn) and out.ax is ax and out.figure is fig and out.data is c
    np.testing.assert_array_equal(out.parts["envelope"].get_ydata(), c.limiting_potential)  # the curve computed, not recomputed
    assert len(out.parts["steps"]) == 4 and len(out.parts["labels"]) == len(c.surfaces)
    assert "pH 0" in ax.get_title() and "RHE" in ax.get_ylabel()
    legend = " ".join(t.get_text() for t in ax.get_legend().get_texts())
    assert f"{c.apex.overpotential:.2f} V" in legend and "step 1" in legend
    # the surface markers sit at their exact limiting potentials
    pts = [col for col in ax.collections if len(col.get_offsets()) == len(c.surfaces)][0].get_offsets()
    np.testing.assert_allclose(pts[:, 1], c.surfaces["limiting_potential"])
    names = {t.get_text() for t in ax.texts}
    assert set(c.surfaces["surface"]) <= names
    _save(ax, tmp_path, "volcano.png")
    ax = volcano_figure(demo, "oer-4e", "O* - OH*", style="single", fit_against="OH*").ax
    assert "lower is better" in ax.get_title()
    _save(ax, tmp_path, "volcano_single.png")


def test_map_plots(demo, tmp_path):
    m = activity_map(demo, "co2rr-ch4", ("CO*", "OH*"), points=41)
    drawn = plot_activity_map(m)
    ax = drawn.ax
    assert drawn.data is m and drawn.parts["colorbar"].ax in drawn.axes and len(drawn.axes) == 2
    assert "co2rr-ch4" in ax.get_title()
    _save(ax, tmp_path, "map.png")
    ax = plot_activity_map(m, quantity="overpotential").ax
    _save(ax, tmp_path, "map_eta.png")
    ax = plot_determining_steps(m).ax
    region_labels = [t.get_text() for t in ax.texts if t.get_text().startswith("step ")]
    assert len(region_labels) == len(np.unique(m.determining_step_index))
    _save(ax, tmp_path, "steps.png")
    s = selectivity_map(demo, ("CO*", "OH*"), points=41)
    drawn = plot_selectivity_map(s)
    ax = drawn.ax
    assert drawn.data is s and drawn.parts["overlay"] == []
    assert "unblocked routes first, then least negative onset" in ax.get_title()
    assert "blocked product wins only where all are blocked" in drawn.parts["caption"].get_text().replace("\n", " ")
    _save(ax, tmp_path, "selectivity.png")
    with pytest.raises(ValueError, match="quantity"):
        plot_activity_map(m, quantity="current")


# -- label placement: no label over another label or a marker; lines avoided --------------------------------
def _marker_centres(drawn, curve):
    """Display coordinates of every marker centre: the surfaces and the apex star."""
    ax = drawn.ax
    pts = drawn.parts["surfaces"].get_offsets()
    apex = np.column_stack([drawn.parts["apex"].get_xdata(), drawn.parts["apex"].get_ydata()])
    return ax.transData.transform(np.vstack([pts, apex]))


@pytest.mark.parametrize("style", ["notebook", "single", "double"])
@pytest.mark.parametrize("pathway,descriptor", [("orr-4e", "OH*"), ("oer-4e", "O* - OH*"), ("co2rr-co", "CO*"), ("her-volmer-heyrovsky", "H*")])
def test_demo_volcano_labels_do_not_overlap(demo, pathway, descriptor, style):
    from ecatlab.plotting.volcano import _as_array, _boxes_hit_segments, _line_segments

    c = volcano(demo, pathway, descriptor)
    drawn = plot_volcano(c, style=style)
    fig = drawn.figure
    try:
        fig.canvas.draw()
        r = fig.canvas.get_renderer()
        labels = drawn.parts["labels"]
        assert sorted(t.get_text() for t in labels) == sorted(c.surfaces["surface"])
        boxes = [t.get_window_extent(r) for t in labels]
        pairs = [(labels[i].get_text(), labels[j].get_text()) for i in range(len(boxes)) for j in range(i + 1, len(boxes)) if boxes[i].overlaps(boxes[j])]
        assert pairs == []
        centres = _marker_centres(drawn, c)
        on_marker = [t.get_text() for t, b in zip(labels, boxes)
                     if np.any((centres[:, 0] >= b.x0) & (centres[:, 0] <= b.x1) & (centres[:, 1] >= b.y0) & (centres[:, 1] <= b.y1))]
        assert on_marker == []
        # the U_eq annotation is avoided too
        eq = drawn.parts["equilibrium_label"].get_window_extent(r)
        assert not any(b.overlaps(eq) for b in boxes)
        # lines: the placement avoids them when it can; on the demo at most one label in twelve touches a line
        lines = [np.column_stack([ln.get_xdata(), ln.get_ydata()]) for ln in drawn.parts["steps"] + [drawn.parts["envelope"]]]
        touching = int(_boxes_hit_segments(_as_array(boxes), _line_segments(drawn.ax, lines)).sum())
        assert touching <= 1
    finally:
        plt.close(fig)


def test_label_placement_has_teeth():
    # crowded points: the first-offset placement (every label up and to the right) collides; the greedy one does not
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from ecatlab.plotting.volcano import _label_points

    xs = np.array([0.0, 0.02, 0.04, 0.5, 0.52, 1.0])
    ys = np.array([0.0, 0.01, 0.02, 0.5, 0.49, 1.0])
    names = [f"surface-{k}" for k in range(len(xs))]

    def overlaps(texts, ax):
        r = ax.figure.canvas.get_renderer()
        b = [t.get_window_extent(r) for t in texts]
        return sum(b[i].overlaps(b[j]) for i in range(len(b)) for j in range(i + 1, len(b)))

    fig = Figure(figsize=(6, 4))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    ax.scatter(xs, ys)
    ax.set_xlim(-0.3, 1.3), ax.set_ylim(-0.3, 1.3)
    naive = [ax.annotate(n, (x, y), xytext=(4, 4), textcoords="offset points", fontsize=8) for n, x, y in zip(names, xs, ys)]
    assert overlaps(naive, ax) > 0
    for t in naive:
        t.remove()
    placed = _label_points(ax, names, xs, ys, 8)
    assert overlaps(placed, ax) == 0


def test_box_segment_crossing_cases():
    # hand-made cases for the clipping test used by the label placement (box 0..10 x 0..10)
    from ecatlab.plotting.volcano import _boxes_hit_segments

    box = np.array([[0.0, 0.0, 10.0, 10.0]])
    cases = {
        ((-5, 5), (15, 5)): True,     # straight through, both ends outside
        ((2, 2), (3, 3)): True,       # inside
        ((11, -5), (30, 10)): False,  # to the right
        ((-1, -1), (-1, 20)): False,  # vertical, left of the box
        ((5, -3), (5, -1)): False,    # vertical, below, pointing at it
        ((5, -3), (5, 1)): True,      # vertical, reaching in
        ((-4, 9), (9, 22)): False,    # diagonal passing above the top-left corner (y - x = 13 > 10)
        ((-4, 6), (4, 14)): True,     # diagonal through the top-left corner (y - x = 10 at (0, 10))
    }
    for (p0, p1), expect in cases.items():
        seg = np.array([[p0, p1]], dtype=float)
        assert bool(_boxes_hit_segments(box, seg)[0]) is expect, (p0, p1)
    # vectorised over boxes: the same answers box by box
    boxes = np.array([[0, 0, 10, 10], [20, 20, 30, 30], [-10, -10, -5, -5]], dtype=float)
    segs = np.array([[(-5, 5), (15, 5)], [(25, 0), (25, 40)]], dtype=float)
    assert list(_boxes_hit_segments(boxes, segs)) == [True, True, False]
