"""Explorer: best-route choices (ecatlab.network) and the volcano tab (ecatlab.volcano), driven by `.value`.

Cross-checks outside the explorer: the route and its limiting potentials are compared with
`ecatlab.network.best_route` + `ecatlab.che.limiting_potentials`, the volcano apex with
`ecatlab.volcano.volcano_summary`; the live-view PNG is decoded with Pillow (an independent PNG
decoder) and compared pixel for pixel with the canvas buffer.
"""

from __future__ import annotations

import io

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

from ecatlab import che  # noqa: E402
from ecatlab.demo import demo_energies  # noqa: E402
from ecatlab.energies import EnergyTable  # noqa: E402
from ecatlab.explorer import explore  # noqa: E402
from ecatlab.explorer.model import route_key  # noqa: E402
from ecatlab.network import best_route  # noqa: E402
from ecatlab.volcano import volcano_summary  # noqa: E402

CH4 = route_key("CH4(g)")


@pytest.fixture(scope="module")
def table():
    return demo_energies()


def _route_ex(table, focus="ALY-01", **kw):
    kw.setdefault("surfaces", table.surfaces[:10])
    ex = explore(table, reaction="CO2RR", render="inline", **kw)
    ex.focus.value = focus
    ex.pathway.value = CH4
    assert ex.errors == []
    return ex


# -- best route ----------------------------------------------------------------------------------------
def test_best_route_to_ch4_equals_the_network_and_the_engine(table):
    ex = _route_ex(table, "ALY-01")
    labels = dict((k, lab) for lab, k in ex.pathway.options)
    assert labels[CH4] == "best route to CH4"
    route = best_route(table, "ALY-01", "CO2", "CH4")
    assert ex.state.pathway == route
    expected = che.limiting_potentials(table, route, surfaces=ex.state.surfaces)
    np.testing.assert_allclose(ex.state.readout()["limiting_potential"].to_numpy(), expected["limiting_potential"].to_numpy(), atol=1e-12)
    assert list(ex.state.readout()["determining_step"]) == list(expected["determining_step"])
    # drawn levels are the engine's state free energies along the route, for every surface
    levels = che.state_free_energies(table, route, potential=ex.state.potential, surfaces=ex.state.surfaces).to_numpy()
    np.testing.assert_allclose(np.vstack([d.levels for d in ex.view.drawings]), levels, atol=1e-12)
    # read-out and title say whose route it is; best and runner-up limiting potentials listed
    assert "best route to CH4 on ALY-01" in ex.readout.value and "runner-up" in ex.readout.value
    assert "best route to CH4 on ALY-01" in ex.view.ax.get_title(loc="left")
    ranked = ex.state.route.ranked
    assert ranked[0].limiting_potential == pytest.approx(expected.set_index("surface").loc["ALY-01", "limiting_potential"], abs=1e-12)
    assert ranked[1].limiting_potential <= ranked[0].limiting_potential + 1e-12


def test_focus_change_changes_the_route_when_the_network_says_so(table):
    a, b = best_route(table, "ALY-01", "CO2", "CH4"), best_route(table, "SAS-03", "CO2", "CH4")
    assert a != b  # demo data: SAS-03 releases CH4 from CH3O* (via O*, OH*), ALY-01 goes via CH*
    assert "CH3O*" in [s.key for s in b.adsorbates] and "CH3O*" not in [s.key for s in a.adsorbates]
    ex = _route_ex(table, "ALY-01")
    assert ex.state.pathway == a
    ex.focus.value = "SAS-03"
    assert ex.errors == []
    assert ex.state.pathway == b
    assert "best route to CH4 on SAS-03" in ex.view.ax.get_title(loc="left")
    np.testing.assert_allclose(ex.state.readout()["limiting_potential"].to_numpy(),
                               che.limiting_potentials(table, b, surfaces=ex.state.surfaces)["limiting_potential"].to_numpy(), atol=1e-12)
    assert [d.n_states for d in ex.view.drawings] == [len(b.labels)] * len(ex.state.surfaces)


def test_route_is_searched_again_for_new_conditions(table):
    ex = _route_ex(table, "SAS-03")
    ex.pH.value = 7.0
    ex.scale.value = "SHE"
    assert ex.errors == []
    assert ex.state.route.pH == 7.0 and ex.state.route.scale == "SHE"
    route = best_route(table, "SAS-03", "CO2", "CH4", pH=7.0, scale="SHE")
    assert ex.state.pathway == route
    lim = che.limiting_potentials(table, route, pH=7.0, scale="SHE", surfaces=ex.state.surfaces)
    np.testing.assert_allclose(ex.state.readout()["limiting_potential"].to_numpy(), lim["limiting_potential"].to_numpy(), atol=1e-12)


def test_surfaces_lacking_a_route_adsorbate_are_reported_not_rejected(table):
    wide = table.matrix.copy()
    wide.loc["ALY-02", "CH*"] = np.nan  # ALY-02 cannot follow ALY-01's route via CH*
    small = EnergyTable.from_matrix(wide)
    ex = _route_ex(small, "ALY-01")
    assert ex.errors == []
    assert ex.state.readout().loc["ALY-02", "missing_species"] == "CH*"
    assert "ALY-02 (missing CH*)" in ex.readout.value
    assert np.isnan(ex.state.readout().loc["ALY-02", "limiting_potential"])


def test_focus_without_any_route_goes_to_the_error_line(table):
    wide = table.matrix.copy()
    wide.loc["SAS-01", ["COOH*", "OCHO*", "OH*"]] = np.nan  # no first reduction step on SAS-01: no route at all
    ex = _route_ex(EnergyTable.from_matrix(wide), "ALY-01")
    before = ex.state.pathway
    ex.focus.value = "SAS-01"
    assert ex.errors and "SAS-01" in ex.error.value and "Not applied" in ex.error.value
    assert ex.focus.value == "ALY-01" and ex.state.pathway == before


def test_orr_and_nrr_offer_best_routes(table):
    ex = explore(table, pathway="orr-4e", render="inline")
    ex.pathway.value = route_key("H2O(l)")
    assert ex.errors == []
    route = best_route(table, ex.state.focus, "O2", "H2O(l)")
    assert ex.state.pathway == route
    ex.reaction.value = "NRR"
    ex.pathway.value = route_key("NH3(g)")
    assert ex.state.pathway == best_route(table, ex.state.focus, "N2", "NH3")
    ex.reaction.value = "OER"
    assert not [k for _, k in ex.pathway.options if k.startswith("best route:")]


def test_route_export_has_a_safe_file_name(table, tmp_path):
    ex = _route_ex(table, "ALY-01")
    files = ex.export(tmp_path)
    assert ex.errors == []
    for p in files:
        assert p.exists() and not any(c in p.name for c in "*> ")
    assert "best route to CH4 on ALY-01" in next(p for p in files if p.name.endswith("_steps.csv")).read_text(encoding="utf-8")


# -- volcano tab ------------------------------------------------------------------------------------------
def test_volcano_tab_is_second_and_drawn_only_when_visible(table):
    ex = explore(table, pathway="orr-4e", render="inline")
    assert ex.tabs.selected_index == 0 and ex.tabs.children[0] is ex.main
    assert ex.tabs.titles == ("diagram", "volcano", "network", "kinetics")  # network third, kinetics fourth
    assert ex.volcano.draws == 0  # hidden: not drawn
    ex.tabs.selected_index = 1
    assert ex.volcano.draws == 1 and ex.volcano.descriptor.value == "OH*"
    assert ex.volcano.image.value[:8] == b"\x89PNG\r\n\x1a\n"


def test_volcano_apex_equals_volcano_summary(table):
    ex = explore(table, pathway="co2rr-ch4", pH=3.0, render="inline")
    ex.tabs.selected_index = 1
    assert ex.volcano.descriptor.value == "CO*"
    expected = volcano_summary(table, "co2rr-ch4", "CO*", pH=3.0, scale="RHE").set_index("quantity")["value"]
    apex = ex.volcano.curve.apex
    assert apex.descriptor[0] == pytest.approx(expected["optimal descriptor"], abs=1e-12)
    assert apex.limiting_potential == pytest.approx(expected["best limiting potential"], abs=1e-12)
    assert apex.overpotential == pytest.approx(expected["minimum overpotential"], abs=1e-12)
    shown = ex.volcano.curve.summary().set_index("quantity")["value"]
    assert shown["minimum overpotential"] == pytest.approx(expected["minimum overpotential"], abs=1e-12)
    text = f"{expected['minimum overpotential']:+.3f}".replace("-", "\N{MINUS SIGN}")
    assert text in ex.volcano.summary.value and "R²" in ex.volcano.summary.value


def test_oer_default_descriptor_is_the_difference(table):
    ex = explore(table, pathway="oer-4e", render="inline")
    ex.tabs.selected_index = 1
    assert ex.errors == []
    assert ex.volcano.descriptor.value == "O* - OH*"
    expected = volcano_summary(table, "oer-4e", "O* - OH*", fit_against="OH*").set_index("quantity")["value"]
    assert ex.volcano.curve.apex.overpotential == pytest.approx(expected["minimum overpotential"], abs=1e-12)


def test_volcano_not_redrawn_on_potential_moves_but_on_input_changes(table):
    ex = explore(table, pathway="orr-4e", render="inline")
    ex.tabs.selected_index = 1
    draws = ex.volcano.draws
    for u in np.linspace(0.0, 1.2, 15):
        ex.potential.value = float(u)
    ex.snap_equilibrium_button.click()
    assert ex.volcano.draws == draws
    ex.pH.value = 5.0
    assert ex.volcano.draws == draws + 1
    ex.volcano.descriptor.value = "OOH*"
    assert ex.volcano.draws == draws + 2
    ex.tabs.selected_index = 0
    ex.pathway.value = "orr-2e"  # hidden: not drawn now ...
    assert ex.volcano.draws == draws + 2
    ex.tabs.selected_index = 1  # ... but when the tab is opened
    assert ex.volcano.draws == draws + 3
    ex.tabs.selected_index = 0
    ex.tabs.selected_index = 1  # nothing changed: no redraw
    assert ex.volcano.draws == draws + 3
    assert ex.errors == []


def test_open_figure_count_constant_across_tabs_and_updates(table):
    ex = explore(table, pathway="orr-4e", render="inline")
    figs = list(plt.get_fignums())
    own = (ex.view.figure, ex.volcano.figure)
    for i in range(3):
        ex.tabs.selected_index = 1
        ex.potential.value = 0.1 * i
        ex.reaction.value = ["CO2RR", "NRR", "ORR"][i]
        ex.volcano.descriptor.value = ex.volcano.descriptor.options[-1]
        ex.tabs.selected_index = 0
        ex.pH.value = float(i)
    assert plt.get_fignums() == figs
    assert (ex.view.figure, ex.volcano.figure) == own
    assert len(ex.volcano.figure.axes) == 1


def test_volcano_errors_go_to_the_error_line(table):
    # NNH* on one surface only: no scaling relation can be fitted for it -> the volcano reports why
    wide = table.matrix[["N*", "NNH*", "NNH2*", "NH*", "NH2*", "NH3*", "NHNH*", "NHNH2*", "NH2NH2*"]].copy()
    wide.loc[wide.index[1:], "NNH*"] = np.nan
    ex = explore(EnergyTable.from_matrix(wide), pathway="nrr-distal", surfaces=list(wide.index[:2]), render="inline")
    ex.tabs.selected_index = 1
    assert ex.errors, "expected a volcano error"
    assert "volcano tab" in ex.error.value and type(ex.errors[-1]).__name__ in ex.error.value
    assert ex.volcano.curve is None and "No volcano" in ex.volcano.summary.value
    assert ex.state.pathway.name == "nrr-distal"  # the diagram tab keeps its inputs


def test_fast_png_is_lossless(table):
    from PIL import Image

    ex = explore(table, pathway="co2rr-ch4", render="inline")
    png = ex.view.last_png
    decoded = np.asarray(Image.open(io.BytesIO(png)).convert("RGB"))
    np.testing.assert_array_equal(decoded, np.asarray(ex.view.figure.canvas.buffer_rgba())[:, :, :3])


def test_volcano_tab_summary_shows_conditions_unsigned_with_two_decimals():
    # pH and T are conditions, not signed quantities: "0.00" and "298.15", never "+0.000" / "+298.150"
    import ecatlab
    from ecatlab.explorer.volcano_tab import summary_html

    from ecatlab.volcano import volcano

    curve = volcano(ecatlab.demo_energies(), "orr-4e", "OH*", pH=1.0, temperature=310.0)
    text = summary_html(curve.summary(), "caption")
    assert ">1.00<" in text and ">310.00<" in text
    assert "+298" not in text and "+1.000" not in text and "+310" not in text
    best = float(curve.summary().set_index("quantity").loc["best limiting potential", "value"])
    assert f">{best:+.3f}<".replace("-", "\N{MINUS SIGN}") in text  # potentials stay signed, 3 decimals


def test_png_after_moves_is_the_canvas_picture(table):
    """After a move only the band of moving rows is deflated again; the PNG must still decode to the
    whole canvas, for several moves on one background and after a new background."""
    from PIL import Image

    ex = explore(table, pathway="orr-4e", surfaces=table.surfaces[:8], potential=0.3, render="inline")
    for u in (0.31, 0.45, 0.62, 2.9, 2.8):  # 2.9: new y-limits, a full draw and a new background
        ex.potential.value = u
        decoded = np.asarray(Image.open(io.BytesIO(ex.view.last_png)).convert("RGBA"))
        np.testing.assert_array_equal(decoded, np.asarray(ex.view.figure.canvas.buffer_rgba()))
    assert ex.view._png_key is not None  # the banded writer was used
