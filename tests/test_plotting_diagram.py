"""Free-energy diagram plotter: the drawn geometry must equal the CHE engine's numbers."""

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt
import numpy as np
import pytest

from ecatlab.che import limiting_potentials, state_free_energies
from ecatlab.demo import demo_energies
from ecatlab.plotting import diagram as dg
from ecatlab.plotting.style import HIGHLIGHT, PALETTE, preset


@pytest.fixture(scope="module")
def table():
    return demo_energies()


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    plt.close("all")


def _drawn_levels(drawn, series=0):
    return drawn.parts["series"][series].levels


def _level_lines(ax):
    return [ln for ln in ax.lines if ln.get_gid() == "ecatlab-level"]


@pytest.mark.parametrize("potential", [0.0, 0.5, -0.3])
def test_levels_equal_engine_state_energies(table, potential):
    surfaces = ["ALY-01", "SAS-03", "ALY-05"]
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", surfaces, potential=potential, pH=3, scale="RHE")
    ax = drawn.ax
    expected = state_free_energies(table, "orr-4e", potential=potential, pH=3, scale="RHE", surfaces=surfaces).to_numpy()
    for j in range(len(surfaces)):
        np.testing.assert_allclose(_drawn_levels(drawn, j), expected[j], atol=1e-12)
    # the y data of the Line2D artists themselves (not only the handle's view of them): one level
    # artist per series, each bar a NaN-separated segment
    lines = _level_lines(ax)
    assert len(lines) == len(surfaces)
    for j, ln in enumerate(lines):
        x, y = np.asarray(ln.get_xdata(), float), np.asarray(ln.get_ydata(), float)
        assert x.shape == y.shape == (5 * 3,)
        assert np.isnan(x[2::3]).all() and np.isnan(y[2::3]).all()
        np.testing.assert_allclose(y[0::3], expected[j], atol=1e-12)
        np.testing.assert_allclose(y[1::3], expected[j], atol=1e-12)  # levels are flat bars ...
        np.testing.assert_allclose((x[0::3] + x[1::3]) / 2, np.arange(5), atol=1e-12)  # ... centred on x = 0, 1, 2, ...
        assert np.all(x[1::3] - x[0::3] == pytest.approx(2 * dg.LEVEL_HALF_WIDTH))
    for k in range(5):
        bx, by = drawn.parts["series"][0].level_xy(k)
        assert bx.mean() == pytest.approx(k) and np.ptp(by) == 0 and by[0] == pytest.approx(expected[0][k])
    # connectors join the right end of level i to the left end of level i + 1
    d = drawn.parts["series"][1]
    for i in range(4):
        cx, cy = d.connector_xy(i)
        np.testing.assert_allclose(cx, [i + dg.LEVEL_HALF_WIDTH, i + 1 - dg.LEVEL_HALF_WIDTH])
        np.testing.assert_allclose(cy, expected[1][i : i + 2], atol=1e-12)


def test_equilibrium_potential_closes_the_cycle(table):
    # At U = U_eq the overall reaction has dG = 0, so the last level returns to 0 eV.
    # U_eq(ORR, 4e-) = 1.229 V vs RHE at 298.15 K (Bard, Parsons & Jordan, Standard Potentials
    # in Aqueous Solution, 1985); the engine's molecular data give it within 2 mV.
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", "ALY-02", potential="equilibrium")
    data = drawn.data
    assert data.equilibrium_potential == pytest.approx(1.229, abs=0.002)
    assert _drawn_levels(drawn)[-1] == pytest.approx(0.0, abs=1e-9)


def test_limiting_potential_makes_determining_step_flat(table):
    lp = limiting_potentials(table, "orr-4e", surfaces=["SAS-01"])
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", "SAS-01", potential="limiting")
    levels = _drawn_levels(drawn)
    steps = np.diff(levels)
    pds = int(lp["determining_step_index"].iloc[0]) - 1
    assert drawn.data.series[0].potential == pytest.approx(lp["limiting_potential"].iloc[0])
    assert steps[pds] == pytest.approx(0.0, abs=1e-9)
    assert np.all(steps <= 1e-9)  # reduction at U_L: every electrochemical step downhill


@pytest.mark.parametrize("key", ["orr-4e", "oer-4e", "co2rr-ch4", "nrr-distal"])
def test_highlight_is_the_determining_step(table, key):
    surfaces = ["ALY-03", "SAS-02"]
    lp = limiting_potentials(table, key, surfaces=surfaces)
    drawn = dg.plot_free_energy_diagram(table, key, surfaces, potential=0.0)
    for j, drawing in enumerate(drawn.parts["series"]):
        pds = int(lp["determining_step_index"].iloc[j]) - 1
        assert drawing.highlight_index == pds
        hl = drawing.highlight_line
        # several surfaces: each band in its own surface's colour (one colour for all hid which is which)
        assert hl.get_visible() and hl.get_color() == PALETTE[j % len(PALETTE)]
        # the highlight runs exactly along the connector of step pds
        cx, cy = drawing.connector_xy(pds)
        np.testing.assert_allclose(hl.get_xdata(), cx)
        np.testing.assert_allclose(hl.get_ydata(), cy)
        np.testing.assert_allclose(hl.get_ydata(), drawing.levels[pds : pds + 2])


def test_labels_present_with_chemical_formatting(table):
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", "ALY-01", potential=0.0)
    ax = drawn.ax
    texts = [t.get_text() for t in ax.texts]
    for label in ("O₂(g)", "OOH\u2217", "O\u2217", "OH\u2217", "2\u2009H₂O(l)"):  # site mark: ecatlab.chemtext
        assert label in texts
    values = [t.get_text() for t in drawn.parts["series"][0].value_texts]
    expected = state_free_energies(table, "orr-4e", surfaces=["ALY-01"]).to_numpy()[0]
    assert values == [f"{v:.2f}".replace("-", "\N{MINUS SIGN}") for v in expected]
    title = ax.get_title(loc="left")
    # a reader's title (the pathway's description, not the internal key) and the conditions
    assert "oxygen reduction" in title and "orr-4e" not in title
    assert "V vs RHE" in title and "pH 0" in title and "298.15 K" in title
    legend_texts = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any(t.startswith("potential-determining step") for t in legend_texts)
    assert drawn.parts["legend"] is ax.get_legend()


def test_overlay_uses_distinct_colours_and_dashes_and_axis_labels(table):
    surfaces = ["ALY-01", "ALY-02", "SAS-01", "SAS-03"]
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", surfaces, potential=0.0)
    ax = drawn.ax
    colours = [d.level_line.get_color() for d in drawn.parts["series"]]
    assert colours == list(PALETTE[:4])
    assert len({str(d.level_line._dash_pattern) for d in drawn.parts["series"]}) == 4
    assert len({str(d.linestyle) for d in drawn.parts["series"]}) == 4  # the handle records each series' dashes
    assert [t.get_text() for t in ax.get_xticklabels()] == ["O₂(g)", "OOH\u2217", "O\u2217", "OH\u2217", "2\u2009H₂O(l)"]
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    lp = limiting_potentials(table, "orr-4e", surfaces=surfaces).set_index("surface")
    for text, s in zip(legend[:4], surfaces):  # each entry names the surface and its U_L
        assert text.startswith(s) and f"{lp.loc[s, 'limiting_potential']:.2f}".replace("-", "\N{MINUS SIGN}") in text


def test_update_moves_existing_artists_only(table):
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", "ALY-01", potential=0.0)
    ax = drawn.ax
    drawing = drawn.parts["series"][0]
    n_lines, n_texts = len(ax.lines), len(ax.texts)
    ids = [id(a) for a in drawing.artists]
    new = state_free_energies(table, "orr-4e", potential=0.9, surfaces=["ALY-01"]).to_numpy()[0]
    drawing.update(new, highlight_index=2, title="U = 0.90 V vs RHE")
    assert len(ax.lines) == n_lines and len(ax.texts) == n_texts
    assert [id(a) for a in drawing.artists] == ids
    np.testing.assert_allclose(drawing.levels, new)
    np.testing.assert_allclose(drawing.highlight_line.get_ydata(), new[2:4])
    assert drawing.state_texts[3].get_position() == pytest.approx((3, new[3]))
    np.testing.assert_allclose(drawing.level_xy(3)[1], [new[3], new[3]])
    np.testing.assert_allclose(drawing.connector_xy(3)[1], new[3:5])
    assert ax.get_title() == "U = 0.90 V vs RHE"
    assert "ΔG" in drawing.highlight_text.get_text() and "step 3" in drawing.highlight_text.get_text()
    lo, hi = ax.get_ylim()
    assert lo < new.min() and hi > new.max()
    drawing.update(new, highlight_index=None)
    assert not drawing.highlight_line.get_visible()
    from ecatlab.errors import EcatlabError, OptionError

    with pytest.raises(OptionError, match="must hold 5 values") as err:
        drawing.update(new[:3])
    assert isinstance(err.value, EcatlabError) and isinstance(err.value, ValueError)


def test_given_axes_is_used_and_returned(table):
    fig, ax = plt.subplots()
    out = dg.plot_free_energy_diagram(table, "her-volmer-heyrovsky", "SAS-04", ax=ax)
    assert out.ax is ax and out.figure is fig and out.axes == (ax,)
    assert len(fig.axes) == 1
    # nothing is attached to matplotlib objects any more: the handle carries what was drawn
    assert not hasattr(ax, "ecatlab_drawings") and not hasattr(ax, "ecatlab_data")


def test_several_potentials_of_one_surface(table):
    drawn = dg.plot_diagram_at_potentials(table, "oer-4e", "ALY-03", (0.0, "equilibrium", "limiting"))
    ax = drawn.ax
    data = drawn.data
    lp = limiting_potentials(table, "oer-4e", surfaces=["ALY-03"])
    us = [s.potential for s in data.series]
    assert us == pytest.approx([0.0, lp["equilibrium_potential"].iloc[0], lp["limiting_potential"].iloc[0]])
    for j, u in enumerate(us):
        expected = state_free_energies(table, "oer-4e", potential=u, surfaces=["ALY-03"]).to_numpy()[0]
        np.testing.assert_allclose(_drawn_levels(drawn, j), expected, atol=1e-12)
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert legend[0] == "U = 0.00 V" and "eq" in legend[1] and "L" in legend[2]


def test_grid_and_product_comparison(table):
    grid = dg.plot_diagram_grid(table, "nrr-distal", ["ALY-01", "ALY-02", "SAS-01"], ncols=2, style="double")
    visible = [a for a in grid.figure.axes if a.get_visible()]
    assert len(grid.axes) == len(visible) == 3 and set(grid.axes) == set(visible)  # the fourth grid cell is hidden
    assert [p.ax for p in grid.parts["panels"]] == list(grid.axes)
    expected = state_free_energies(table, "nrr-distal", surfaces=["ALY-01", "ALY-02", "SAS-01"]).to_numpy()
    assert len(grid.parts["series"]) == 3
    for drawing, a, row in zip(grid.parts["series"], grid.axes, expected):
        assert drawing.ax is a
        np.testing.assert_allclose(drawing.levels, row, atol=1e-12)
    np.testing.assert_allclose(grid.data.levels, expected, atol=1e-12)
    keys = ["co2rr-co", "co2rr-hcooh", "co2rr-ch4"]
    comparison = dg.plot_product_comparison(table, keys, "SAS-02", style="double")
    panels = list(comparison.axes)
    assert [d.pathway.name for d in comparison.data] == keys
    lp = limiting_potentials(table, keys, surfaces=["SAS-02"])
    for a, drawing, (_, row) in zip(panels, comparison.parts["series"], lp.iterrows()):
        assert drawing.ax is a
        assert drawing.highlight_index == row["determining_step_index"] - 1
        assert f"{row['limiting_potential']:.2f}".replace("-", "\N{MINUS SIGN}") in a.get_title(loc="left")
    assert len({a.get_ylim() for a in panels}) == 1  # shared energy axis


def test_too_few_axes_is_a_clear_error(table):
    from ecatlab.errors import EcatlabError, OptionError

    fig, axes = plt.subplots(1, 2)
    with pytest.raises(OptionError, match="3 panels .* 2 Axes were given") as err:
        dg.plot_diagram_grid(table, "orr-4e", ["ALY-01", "ALY-02", "SAS-01"], ax=axes)
    assert isinstance(err.value, EcatlabError)
    with pytest.raises(OptionError, match="3 pathways need 3 Axes"):
        dg.plot_product_comparison(table, ["co2rr-co", "co2rr-hcooh", "co2rr-ch4"], "SAS-02", ax=axes)


def test_presets_set_journal_widths(table):
    drawn = dg.plot_free_energy_diagram(table, "orr-4e", "ALY-01", style="single")
    w, h = drawn.figure.get_size_inches()
    assert w * 25.4 == pytest.approx(preset("single").width_mm)
    assert drawn.parts["series"][0].level_line.get_linewidth() == pytest.approx(preset("single").level_width_pt)


def test_state_label_text():
    # the site mark is U+2217 on the baseline (ecatlab.chemtext), never a raised footnote-like "*"
    assert dg.state_label_text("NH2NH2*") == "NH₂NH₂\u2217"
    assert dg.state_label_text("H+ + e-") == "H⁺ + e⁻"
    assert dg.state_label_text("O* + OH*") == "O\u2217 + OH\u2217"
    assert dg.state_label_text("2 H*") == "2\N{THIN SPACE}H\u2217"
    assert dg.state_label_text("CO2(g)") == "CO₂(g)"
    assert dg.state_label_mathtext("OOH*") == r"$\mathrm{OOH}{\ast}$"


def test_missing_species_and_bad_potential_give_clear_errors(table):
    from ecatlab.energies import EnergyTable
    from ecatlab.errors import ConditionError, EcatlabError, MissingSpeciesError

    small = EnergyTable.from_matrix({"OH*": {"X": 1.0}, "O*": {"X": 2.4}})
    with pytest.raises(MissingSpeciesError, match="OOH"):
        dg.plot_free_energy_diagram(small, "orr-4e", "X")
    with pytest.raises(ConditionError, match="'zero', 'equilibrium', 'limiting'"):
        dg.plot_free_energy_diagram(table, "orr-4e", "ALY-01", potential="onsett")
    assert issubclass(ConditionError, EcatlabError)
