"""Tests of the Jupyter explorer (ecatlab.explorer), driven without a browser by setting `.value`.

Reference values from outside the project:
* O2 + 4 H+ + 4 e- -> 2 H2O: E0 = 1.229 V vs SHE; O2 + 2 H2O + 4 e- -> 4 OH-: E0 = 0.401 V vs SHE
  (CRC Handbook of Chemistry and Physics, "Electrochemical Series").
* Nernst slope k_B T ln(10)/e = 0.05916 V per pH unit at 298.15 K (Bard & Faulkner, Electrochemical
  Methods, 2nd ed.; also from scipy.constants below).
"""

from __future__ import annotations

import base64
import logging
import math
import sys

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
import pytest  # noqa: E402
import scipy.constants as sc  # noqa: E402

from ecatlab import che  # noqa: E402
from ecatlab.demo import demo_energies  # noqa: E402
from ecatlab.energies import EnergyTable  # noqa: E402
from ecatlab.explorer import Explorer, ExplorerSnapshot, ExplorerState, explore, pathway_options  # noqa: E402
from ecatlab.explorer.view import FIGURE_HEIGHT_PX  # noqa: E402
from ecatlab.explorer.widget import readout_html  # noqa: E402
from ecatlab.pathways import REACTION_FAMILIES  # noqa: E402


@pytest.fixture(scope="module")
def table():
    return demo_energies()


@pytest.fixture(autouse=True)
def no_logged_widget_errors(caplog):
    """ipywidgets logs (instead of raising) exceptions from button callbacks outside IPython; fail on any."""
    caplog.set_level(logging.WARNING)
    yield
    bad = [r for r in caplog.records if "Exception in callback" in r.getMessage() or r.levelno >= logging.ERROR]
    assert not bad, f"widget callbacks logged errors: {[r.getMessage() for r in bad]}"


@pytest.fixture
def ex(table):
    explorer = explore(table, pathway="orr-4e", potential=0.5, surfaces=table.surfaces[:10], render="inline")
    yield explorer
    assert explorer.view.figure is not None


def _step_row(ex: Explorer, surface: str) -> np.ndarray:
    return ex.state.step_table().loc[surface].to_numpy(dtype=float)


# -- limiting potential: determining step at zero, every other electrochemical step downhill -----------
@pytest.mark.parametrize("key", ["orr-4e", "oer-4e", "co2rr-ch4", "nrr-distal", "orr-4e-dissociative"])
def test_slider_at_limiting_potential_zeroes_the_determining_step(table, key):
    ex = explore(table, pathway=key, surfaces=table.surfaces, render="inline")
    engine = che.limiting_potentials(table, key).set_index("surface")
    ec = ex.state.electrochemical
    for surface in table.surfaces:
        u_l = float(engine.loc[surface, "limiting_potential"])
        ex.potential.value = u_l
        assert ex.state.potential == u_l
        dG = _step_row(ex, surface)
        k = int(engine.loc[surface, "determining_step_index"]) - 1
        assert abs(dG[k]) < 1e-9
        others = np.delete(np.arange(len(dG)), k)
        assert np.all(dG[others][ec[others]] <= 1e-9), (surface, dG)
        # the table does not mark it, the read-out names it
        assert str(k + 1) not in ex.state.readout().loc[surface, "uphill_steps_now"].split(", ")
        assert ex.state.readout().loc[surface, "determining_step"] == engine.loc[surface, "determining_step"]
    assert ex.errors == []


def test_limiting_potential_matches_a_brute_force_scan(table):
    """Independent check: scan U on a fine grid with the engine's step_free_energies."""
    st = ExplorerState(table, pathway="orr-4e", surfaces=table.surfaces)
    grid = np.round(np.arange(0.0, 1.3, 0.001), 6)
    for surface in table.surfaces[:4]:
        ok = [
            bool(np.all(che.step_free_energies(table, "orr-4e", potential=u, surfaces=[surface]).to_numpy() <= 1e-12))
            for u in grid
        ]
        highest_ok = grid[np.flatnonzero(ok)].max()
        assert st.limiting_potential_of(surface) == pytest.approx(highest_ok, abs=1.01e-3)


# -- outputs equal the engine's ---------------------------------------------------------------------------
def test_tables_and_levels_equal_the_engine(table):
    ex = explore(table, pathway="co2rr-hcooh", potential=-0.3, pH=7.0, scale="SHE", surfaces=table.surfaces[:10], render="inline")
    engine_steps = che.step_free_energies(table, "co2rr-hcooh", potential=-0.3, pH=7.0, scale="SHE", surfaces=ex.state.surfaces)
    pd.testing.assert_frame_equal(ex.state.step_table(), engine_steps, check_exact=False, atol=1e-12, rtol=0)
    levels = che.state_free_energies(table, "co2rr-hcooh", potential=-0.3, pH=7.0, scale="SHE", surfaces=ex.state.surfaces)
    np.testing.assert_allclose(ex.state.levels(), levels.to_numpy(), atol=1e-12)
    drawn = np.vstack([d.levels for d in ex.view.drawings])
    np.testing.assert_allclose(drawn, levels.to_numpy(), atol=1e-12)
    lim = che.limiting_potentials(table, "co2rr-hcooh", pH=7.0, scale="SHE", surfaces=ex.state.surfaces)
    np.testing.assert_allclose(ex.state.readout()["limiting_potential"].to_numpy(), lim["limiting_potential"].to_numpy(), atol=1e-12)
    np.testing.assert_allclose(ex.state.readout()["overpotential"].to_numpy(), lim["overpotential"].to_numpy(), atol=1e-12)


def test_uphill_steps_are_marked_in_table_html(ex):
    ex.potential.value = 1.0  # above every ORR limiting potential of the demo: some step uphill on each surface
    up = ex.state.uphill()
    assert up.any(axis=1).all()
    assert ex.table.value.count('class="uphill"') == int(up.sum())
    ex.potential.value = 0.0  # below every U_L: all electrochemical steps downhill
    assert not ex.state.uphill().any()
    assert 'class="uphill"' not in ex.table.value


# -- reaction / product switching ----------------------------------------------------------------------------
def test_switch_reaction_and_product_updates_pathway_table_and_figure(ex, table):
    ex.reaction.value = "CO2RR"
    builtin = [k for _, k in ex.pathway.options if not k.startswith("best route:")]
    assert builtin == list(REACTION_FAMILIES["CO2RR"])
    assert [k for _, k in ex.pathway.options][: len(builtin)] == builtin  # built-in pathways first, then best routes
    labels = [lab for lab, _ in ex.pathway.options]
    for wanted in ("CO", "HCOOH", "CH4 via CHO*", "CH4 via COH*", "CH3OH"):
        assert wanted in labels
    assert ex.state.pathway.name == "co2rr-co"
    ex.pathway.value = "co2rr-ch3oh"
    path = ex.state.pathway
    assert path.name == "co2rr-ch3oh"
    assert list(ex.state.step_table().columns) == list(path.step_names)
    for step in path.steps:
        assert step.equation.replace(">", "&gt;") in ex.table.value
    assert len(ex.view.drawings) == len(ex.state.surfaces)
    assert all(d.n_states == len(path.labels) and len(d.levels) == len(path.labels) for d in ex.view.drawings)
    assert len(ex.view.ax.get_xticks()) == len(path.labels)
    assert "co2rr-ch3oh" in ex.view.ax.get_title(loc="left")
    np.testing.assert_allclose(np.vstack([d.levels for d in ex.view.drawings]), ex.state.levels(), atol=1e-12)
    ex.reaction.value = "NRR"
    assert [k for _, k in ex.pathway.options] == ["nrr-distal", "nrr-alternating", "best route:N2H4(g)", "best route:NH3(g)"]
    ex.pathway.value = "nrr-alternating"
    assert ex.state.pathway.name == "nrr-alternating"
    assert "NHNH*" in ex.state.pathway.labels
    assert ex.errors == []


def test_orr_options_are_4e_2e_dissociative():
    assert [k for _, k in pathway_options("ORR")] == ["orr-4e", "orr-2e", "orr-4e-dissociative"]


def test_surface_multiselect_changes_series_and_focus(ex, table):
    ex.surfaces.value = ("SAS-02", "ALY-03")
    assert ex.state.surfaces == ["SAS-02", "ALY-03"]
    assert list(ex.focus.options) == ["SAS-02", "ALY-03"]
    assert len(ex.view.drawings) == 2
    assert list(ex.state.readout().index) == ["SAS-02", "ALY-03"]
    ex.surfaces.value = ()  # nothing selected: rejected visibly, last valid selection kept
    assert ex.errors and "select at least one surface" in ex.error.value
    assert ex.surfaces.value == ("SAS-02", "ALY-03")


# -- one figure, artists moved ---------------------------------------------------------------------------------
def test_no_figure_is_created_per_update(ex):
    figs_before = plt.get_fignums()
    fig = ex.view.figure
    n_lines = len(ex.view.ax.lines)
    n_texts = len(ex.view.ax.texts)
    renders = ex.view.renders
    for u in np.linspace(-0.5, 1.5, 60):
        ex.potential.value = float(u)
    for p in (3.0, 7.0, 11.0):
        ex.pH.value = p
    assert plt.get_fignums() == figs_before
    assert ex.view.figure is fig
    assert len(ex.view.ax.lines) == n_lines and len(ex.view.ax.texts) == n_texts
    assert ex.view.renders == renders + 63


def test_inline_output_is_fixed_height_and_holds_one_current_image(ex):
    assert ex.view.widget.layout.height == f"{FIGURE_HEIGHT_PX}px"
    ex.potential.value = 0.2
    first = ex.view.widget.outputs
    assert len(first) == 1 and "image/png" in first[0]["data"]
    png = base64.b64decode(first[0]["data"]["image/png"])
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    ex.potential.value = 0.7
    second = ex.view.widget.outputs
    assert len(second) == 1 and second[0]["data"]["image/png"] != first[0]["data"]["image/png"]


def test_fast_redraw_equals_full_redraw(ex):
    """The cached-background path must give the same pixels as drawing everything."""
    ex.potential.value = 0.41
    ex.potential.value = 0.42  # background cached: fast path
    fast = np.asarray(ex.view.figure.canvas.buffer_rgba()).copy()
    ex.view.render_png()  # full draw
    full = np.asarray(ex.view.figure.canvas.buffer_rgba())
    assert np.array_equal(fast, full)


# -- clamps, validation, errors ------------------------------------------------------------------------------------
def test_slider_clamp_is_reported(ex):
    ex.pH.value = 20.0  # the slider spans ecatlab.che.conditions.PH_RANGE, -2 to 16
    assert ex.state.pH == 16.0
    assert any("pH 20" in m and "clamped to 16" in m for m in ex.messages)
    assert "clamped" in ex.status.value
    ex.potential_entry.value = 9.0
    assert ex.potential.value == ex.potential.max and ex.state.potential == ex.potential.max
    assert ex.potential_entry.value == ex.potential.max
    assert any("U (V) 9" in m for m in ex.messages)


def test_callback_errors_are_shown_not_raised(ex):
    before = ex.state.step_table()
    ex.temperature.value = -5.0
    assert ex.errors and type(ex.errors[-1]).__name__ == "ConditionError"
    assert "temperature" in ex.error.value and "Not applied" in ex.error.value
    assert ex.temperature.value == pytest.approx(298.15)  # control back to what is shown
    pd.testing.assert_frame_equal(ex.state.step_table(), before)
    ex.potential.value = 0.3  # next good change clears the error line
    assert ex.error.value == ""


def test_button_error_is_routed_to_the_error_area(caplog):
    wide = demo_energies().matrix.copy()
    wide.loc["ALY-01", "OOH*"] = np.nan  # ALY-01 cannot do associative ORR
    ex = explore(EnergyTable.from_matrix(wide), pathway="orr-4e", surfaces=list(wide.index[:10]), render="inline")
    assert ex.state.readout().loc["ALY-01", "missing_species"] == "OOH*"
    ex.focus.value = "ALY-01"
    ex.snap_limiting_button.click()
    assert ex.errors and "ALY-01" in ex.error.value and "OOH*" in ex.error.value


def test_temperature_warning_is_shown(ex):
    ex.temperature.value = 320.0
    assert ex.state.temperature == 320.0
    # the table is re-evaluated at 320 K (reference corrections and molecules at that temperature)
    assert "re-evaluated at 320 K" in ex.status.value
    assert "at 320 K" in ex.state.scheme.describe()


# -- snap buttons over pure functions ------------------------------------------------------------------------------
def test_snap_buttons_use_the_engine_values(ex, table):
    ex.focus.value = "SAS-03"
    ex.snap_limiting_button.click()
    expected = che.limiting_potentials(table, "orr-4e", surfaces=["SAS-03"])["limiting_potential"].iloc[0]
    assert ex.state.potential == pytest.approx(expected, abs=1e-12)
    assert ex.potential.value == ex.state.potential
    ex.snap_equilibrium_button.click()
    assert ex.state.potential == pytest.approx(che.equilibrium_potential("orr-4e"), abs=1e-12)
    assert ex.state.potential == pytest.approx(1.229, abs=0.002)  # CRC electrochemical series


def test_equilibrium_on_she_at_ph14_matches_the_alkaline_couple(table):
    st = ExplorerState(table, pathway="orr-4e", pH=14.0, scale="SHE")
    assert st.equilibrium_potential() == pytest.approx(0.401, abs=0.003)  # CRC: O2 + 2 H2O + 4 e- -> 4 OH-


def test_snap_extends_slider_range_when_needed(table):
    ex = explore(table, pathway="co2rr-ch4", pH=14.0, scale="SHE", render="inline")
    ex.potential.min = -1.0
    target = ex.snap_to_limiting(ex.state.surfaces[0])
    assert target < -1.0
    assert ex.potential.value == target and ex.potential.min <= target
    assert any("range extended" in m for m in ex.messages)


def test_scale_switch_keeps_the_physical_potential(ex):
    ex.pH.value = 7.0
    ex.potential.value = 0.8
    ex.scale.value = "SHE"
    slope = sc.k * 298.15 * math.log(10) / sc.e
    assert slope == pytest.approx(0.05916, abs=1e-5)  # Bard & Faulkner
    assert ex.state.potential == pytest.approx(0.8 - 7 * slope, abs=1e-9)
    assert ex.potential.value == pytest.approx(ex.state.potential)
    before = ex.state.step_energies()
    ex.scale.value = "RHE"
    assert ex.state.potential == pytest.approx(0.8, abs=1e-12)
    np.testing.assert_allclose(ex.state.step_energies(), before, atol=1e-12)


# -- export ---------------------------------------------------------------------------------------------------------------
def test_export_writes_figure_and_tables(ex, tmp_path):
    ex.export_folder.value = str(tmp_path)
    ex.potential.value = 0.6
    ex.export_button.click()
    assert ex.errors == []
    names = sorted(p.name for p in ex.exported)
    assert any(n.endswith(".png") for n in names) and any(n.endswith(".svg") for n in names)
    steps_csv = next(p for p in ex.exported if p.name.endswith("_steps.csv"))
    text = steps_csv.read_text(encoding="utf-8")
    assert "U = +0.600 V vs RHE" in text and "references" in text and "safety" in text
    back = pd.read_csv(steps_csv, comment="#", index_col=0)
    np.testing.assert_allclose(back.to_numpy(), ex.state.step_table().to_numpy(), atol=1e-9)
    svg = next(p for p in ex.exported if p.suffix == ".svg").read_text(encoding="utf-8")
    # moving artists are in the saved file: one level path per surface with one bar (M ... L) per state
    groups = svg.split('<g id="ecatlab-level">')[1:]
    assert len(groups) == len(ex.state.surfaces)
    for group in groups:
        path = group[: group.index("/>")]
        assert path.count("M ") == path.count("L ") == len(ex.state.pathway.labels)
    assert all(a.get_animated() for a in ex.view._dynamic)


# -- display and degradation -------------------------------------------------------------------------------------------------
def test_mimebundle_has_widget_view_and_a_clear_fallback(ex):
    bundle = ex._repr_mimebundle_()
    assert "application/vnd.jupyter.widget-view+json" in bundle
    assert "ipywidgets" in bundle["text/plain"]
    assert "data:image/png;base64," in bundle["text/html"]


def test_without_ipywidgets_a_static_snapshot_and_a_message(table, monkeypatch):
    monkeypatch.setitem(sys.modules, "ipywidgets", None)
    with pytest.warns(UserWarning, match="needs ipywidgets"):
        snap = explore(table, pathway="her-volmer-heyrovsky")
    assert isinstance(snap, ExplorerSnapshot)
    page = snap._repr_html_()
    assert "pip install ipywidgets" in page and "data:image/png;base64," in page
    assert "H* + H+ + e- -&gt; * + H2(g)" in page


def test_state_rejects_bad_values_without_changing(table):
    st = ExplorerState(table, pathway="orr-4e")
    with pytest.raises(ValueError):
        st.set_pH(17.0)  # outside the aqueous range -2 to 16 (ecatlab.che.conditions.PH_RANGE)
    with pytest.raises(ValueError):
        st.set_potential(float("nan"))
    with pytest.raises(ValueError):
        st.set_reaction("ORR", "nrr-distal")
    assert st.pH == 0.0 and st.pathway.name == "orr-4e"


def test_default_selection_is_the_best_ranked_surfaces(table):
    # with no surfaces given, the explorer shows the ten best-ranked surfaces of the first pathway by
    # the kernel's rule (unblocked first, then lowest G_max), not the first ten of the file
    from ecatlab.tables import rank_surfaces

    st = ExplorerState(table, pathway="her-volmer-tafel")
    ranked = rank_surfaces(che.limiting_potentials(table, "her-volmer-tafel"))
    assert st.surfaces == list(ranked["surface"].astype(str))[:10]
    html_rows = readout_html(st).split("<tbody>")[1]
    order = [s for s in st.surfaces if s in html_rows]
    positions = [html_rows.index(f">{s}<") for s in order]
    shown = [s for _, s in sorted(zip(positions, order))]
    assert shown == list(ranked["surface"].astype(str))[:10]  # read-out is best-ranked first


def test_snap_sets_the_exact_limiting_potential_and_ignores_the_slider_rounding(table):
    ex = explore(table, pathway="orr-4e", surfaces=table.surfaces[:4], render="inline")
    ex.focus.value = ex.state.surfaces[0]
    target = ex.snap_to_limiting()
    assert ex.state.potential == target  # exact, not rounded to the 0.01 V slider step
    ex.potential.value = round(target, 2)  # the browser echoes the slider's rounded position
    assert ex.state.potential == target
    row = ex.state.step_table().loc[ex.state.focus]
    assert float(np.max(row.to_numpy(dtype=float))) <= 1e-9  # nothing uphill at U_L (ORR has no chemical step)
    ex.potential.value = target + 0.2  # a real move is applied
    assert ex.state.potential == pytest.approx(target + 0.2)


def test_switching_reaction_starts_at_its_equilibrium_potential(table):
    ex = explore(table, pathway="oer-4e", potential=1.85, surfaces=table.surfaces[:4], render="inline")
    ex.reaction.value = "HER"
    assert ex.state.potential == pytest.approx(che.equilibrium_potential(ex.state.pathway), abs=1e-12)
    assert "equilibrium potential" in ex.status.value


# -- redraw speed-ups draw the same picture ---------------------------------------------------------------------------------
def _full_draw_pixels(figure, canvas_class) -> np.ndarray:
    canvas_class(figure)
    figure.canvas.draw()
    return np.asarray(figure.canvas.buffer_rgba()).copy()


def test_glyph_cache_draws_the_same_pixels_as_plain_agg(table):
    """Cached glyph bitmaps (moved by whole pixels) must give matplotlib's own text rendering, pixel
    for pixel: plain text, rotated tick labels (co2rr-ch4 has crowded state labels) and mathtext
    (the legend's U_L)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from ecatlab.explorer import textcache

    if not textcache.supported():
        pytest.skip("this matplotlib lacks the glyph-level Agg calls; the plain canvas is used")
    ex = explore(table, pathway="co2rr-ch4", surfaces=table.surfaces[:6], render="inline")
    fig = ex.view.figure
    for artist in ex.view._dynamic:  # draw the moving artists in the ordinary pass too
        artist.set_animated(False)
    rotated = [t for t in ex.view.ax.get_xticklabels() if t.get_rotation() != 0]
    assert rotated, "expected rotated state labels in this figure"
    assert any("$" in t.get_text() for t in fig.findobj(matplotlib.text.Text))  # mathtext is exercised
    plain = _full_draw_pixels(fig, FigureCanvasAgg)
    textcache.clear()
    first = _full_draw_pixels(fig, textcache.GlyphCachingCanvas)  # fills the cache
    cached = len(textcache._GLYPHS)
    second = _full_draw_pixels(fig, textcache.GlyphCachingCanvas)  # served from the cache
    assert cached > 50 and len(textcache._GLYPHS) == cached  # the second draw rendered no glyph
    joined = sum(len(placed) == 1 for placed in textcache._RUNS.values())
    third = _full_draw_pixels(fig, textcache.GlyphCachingCanvas)  # strings composited as kept runs
    assert joined > 10  # most strings are one joined bitmap from here on
    assert np.array_equal(first, plain)
    assert np.array_equal(second, plain)
    assert np.array_equal(third, plain)
    assert (plain[:, :, :3] < 128).any()  # the picture has dark text in it, not a blank canvas


def test_glyph_cache_falls_back_to_plain_agg_when_its_calls_fail(table, monkeypatch):
    """A matplotlib whose private glyph calls changed must not break the explorer: the first failing
    draw warns, switches to the plain renderer and still gives matplotlib's own picture."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from ecatlab.explorer import textcache

    if not textcache.supported():
        pytest.skip("this matplotlib lacks the glyph-level Agg calls; the plain canvas is used")
    ex = explore(table, pathway="orr-4e", surfaces=table.surfaces[:4], render="inline")
    fig = ex.view.figure
    for artist in ex.view._dynamic:
        artist.set_animated(False)
    plain = _full_draw_pixels(fig, FigureCanvasAgg)

    def broken(self, *args, **kwargs):
        raise AttributeError("'FT2Font' object has no attribute '_render_glyph'")

    monkeypatch.setattr(textcache._CachingRenderer, "_glyph_run", broken)
    monkeypatch.setattr(textcache, "_DISABLED", False)
    textcache.clear()
    with pytest.warns(RuntimeWarning, match="plain Agg renderer"):
        fallback = _full_draw_pixels(fig, textcache.GlyphCachingCanvas)
    assert np.array_equal(fallback, plain)
    assert not textcache.supported()  # new explorers take the plain canvas (monkeypatch restores the flag)


def test_joined_glyph_bitmaps_blend_like_one_glyph_at_a_time():
    """A string's glyphs joined into few bitmaps must give Agg's per-glyph compositing, pixel for
    pixel, also where glyphs ink the same pixels (those keep their order in later layers).
    Synthetic coverage bitmaps; the reference is matplotlib's own ``draw_text_image`` per glyph."""
    from matplotlib.backends.backend_agg import RendererAgg

    from ecatlab.explorer import textcache

    rng = np.random.default_rng(7)
    glyphs = []
    for i in range(12):  # 6 px apart and 8-10 px wide: neighbours overlap by a few columns
        b = rng.integers(0, 256, size=(int(rng.integers(5, 11)), int(rng.integers(8, 11))), dtype=np.uint8)
        b[rng.random(b.shape) < 0.4] = 0  # partly uninked, as glyph bitmaps are
        glyphs.append((b, 3 + 6 * i, 20 + int(rng.integers(0, 6)), int(np.count_nonzero(b))))
    glyphs.insert(3, (np.zeros((0, 0), dtype=np.uint8), 25, 20, 0))  # a space
    glyphs.insert(5, (np.zeros((4, 4), dtype=np.uint8), 30, 22, 0))  # a bitmap with nothing inked
    layers = textcache._join(glyphs)
    assert 1 < len(layers) < len(glyphs)  # overlaps made layers, yet fewer calls than glyphs

    def composite(items):
        renderer = RendererAgg(90, 40, 72)
        gc = renderer.new_gc()
        gc.set_foreground((0.2, 0.4, 0.8, 1.0), isRGBA=True)
        gc.set_alpha(0.7)
        for b, left, bottom, *_ in items:
            renderer._renderer.draw_text_image(b, left, bottom, 0, gc)
        return np.asarray(renderer.buffer_rgba()).copy()

    one_by_one = composite(glyphs)
    assert np.array_equal(composite(layers), one_by_one)
    assert len(np.unique(one_by_one.reshape(-1, 4), axis=0)) > 50  # a real blend, not a blank canvas


def test_first_draw_after_a_rebuild_finds_its_text_prepared(table):
    """The rebuild prepares the new texts (layouts, glyph bitmaps at their places): the first full
    draw renders no glyph and lays out no string, and its picture equals a draw with every text
    cache emptied first."""
    from ecatlab.explorer import textcache

    if not textcache.supported():
        pytest.skip("this matplotlib lacks the glyph-level Agg calls; the plain canvas is used")
    ex = explore(table, pathway="orr-4e", surfaces=table.surfaces[:8], render="inline")
    view = ex.view
    ex.reaction.value = "CO2RR"  # a pathway not drawn before in this test: new title, legend, state labels
    ex.pathway.value = "co2rr-ch4"
    view.rebuild(ex.state, "a heading never drawn before")
    view.update(ex.state)
    glyphs, layouts = len(textcache._GLYPHS), len(textcache._LAYOUTS)
    view.redraw()
    assert (len(textcache._GLYPHS), len(textcache._LAYOUTS)) == (glyphs, layouts)
    warmed = np.asarray(view.figure.canvas.buffer_rgba()).copy()
    textcache.clear()
    view._legend_pixels = None
    view.render_png()
    assert len(textcache._GLYPHS) > 50  # this draw rendered every glyph afresh
    assert np.array_equal(np.asarray(view.figure.canvas.buffer_rgba()), warmed)


def test_pasted_legend_equals_a_drawn_legend(table):
    """A full draw for new y-limits pastes the legend's pixels from the first full draw; the
    picture must equal one where the legend is drawn again."""
    ex = explore(table, pathway="orr-4e", surfaces=table.surfaces[:12], potential=0.0, render="inline")
    view = ex.view
    ylim = view.ax.get_ylim()
    ex.potential.value = 2.5  # levels far outside: new y-limits, a full draw with the legend pasted
    assert view.ax.get_ylim() != ylim and view._legend_pixels is not None
    pasted = np.asarray(view.figure.canvas.buffer_rgba()).copy()
    view._legend_pixels = None  # forget the legend's pixels: the next full draw draws it
    view.render_png()
    drawn = np.asarray(view.figure.canvas.buffer_rgba()).copy()
    assert np.array_equal(pasted, drawn)
    legend_box = view._legend_box(view._legend)
    x0, x1 = int(legend_box.x0), int(legend_box.x1)
    assert (drawn[:, x0:x1, :3] < 128).any()  # the legend region holds the legend's text


def test_explorer_lines_keep_each_surfaces_colour_dashes_and_band(ex):
    """The shared collections draw each surface as the diagram does: its colour, its dash pattern, the
    potential-determining-step band in its own colour."""
    from matplotlib.colors import to_rgba

    from ecatlab.plotting.style import DASHES, PALETTE

    n = len(ex.state.surfaces)
    assert n == 10
    levels = ex.view._levels
    assert [tuple(c) for c in levels.get_colors()] == [to_rgba(PALETTE[j % len(PALETTE)]) for j in range(n)]
    assert len({str(s) for s in levels.get_linestyles()}) == min(n, len(DASHES))
    bands = ex.view._highlights.get_colors()
    assert len({tuple(c[:3]) for c in bands}) == n and np.allclose(bands[:, 3], 0.35)
    det = ex.state.determining_steps() - 1
    for j, drawing in enumerate(ex.view.drawings):
        assert drawing.highlight_index == det[j]


def test_readout_uphill_column_follows_the_potential(ex):
    """The read-out rebuilds only its "uphill now" cells per move; they must equal the state's table."""
    import re

    for u in (0.0, 0.6, 0.85, 1.1):
        ex.potential.value = u
        html_rows = readout_html(ex.state).split("<tbody>")[1].split("</tbody>")[0].split("</tr>")[:-1]
        r = ex.state.readout()
        order = che.kernel.ranking_order(r["G_max"].to_numpy(), r["blocked"].to_numpy())
        assert len(html_rows) == len(order)
        for row_html, j in zip(html_rows, order):
            assert f">{r.index[j]}<" in row_html
            last_cell = re.findall(r"<td[^>]*>([^<]*)</td>$", row_html)[0]
            assert last_cell == (r["uphill_steps_now"].iloc[j] or "none")


def test_rebuild_keeps_no_stale_content(table):
    """A rebuild reuses the Axes (and its tick objects): no old line, text or legend may survive, and
    state labels rotated for a crowded pathway stand upright again for a short one."""
    ex = explore(table, pathway="orr-4e", surfaces=table.surfaces[:3], render="inline")
    counts = (len(ex.view.ax.lines), len(ex.view.ax.collections), len(ex.view.ax.texts), len(ex.view.ax.artists))
    upright = [t.get_rotation() for t in ex.view.ax.get_xticklabels()]
    ex.reaction.value = "CO2RR"
    ex.pathway.value = "co2rr-ch4"  # long state labels: rotated
    assert any(t.get_rotation() != 0 for t in ex.view.ax.get_xticklabels())
    ex.reaction.value = "ORR"
    assert ex.state.pathway.name == "orr-4e"
    assert (len(ex.view.ax.lines), len(ex.view.ax.collections), len(ex.view.ax.texts), len(ex.view.ax.artists)) == counts
    assert [t.get_rotation() for t in ex.view.ax.get_xticklabels()] == upright
    assert [t.get_text() for t in ex.view.ax.get_xticklabels()] == ["O₂(g)", "OOH\u2217", "O\u2217", "OH\u2217", "2\u2009H₂O(l)"]
    assert len(ex.view.ax.artists) == 1 and ex.view._legend in ex.view.ax.artists  # one legend, the current one
    labels = [t.get_text() for t in ex.view._legend.texts]
    assert labels[0] == r"surface   $U_\mathrm{L}$ (V vs RHE)"
    assert [lab.split()[0] for lab in labels[1:-2]] == ex.state.surfaces
    lim = ex.state.readout()["limiting_potential"]
    for lab, surface in zip(labels[1:-2], ex.state.surfaces):  # each row: the engine's U_L, 2 decimals
        assert lab.endswith(f"{lim[surface]:.2f} V".replace("-", "\N{MINUS SIGN}"))
    assert labels[-2:] == ["potential-determining step", "(band in each surface's colour)"]
    renderer = ex.view.figure.canvas.get_renderer()
    assert ex.view._legend.get_window_extent(renderer).x1 <= ex.view.figure.bbox.x1  # no label runs off the figure


@pytest.mark.parametrize("key", ["co2rr-ch4", "orr-4e"])
def test_state_labels_do_not_reach_into_the_footnote(table, key):
    """Crowded (rotated) state labels get room: after a full draw the lowest label ends above the
    footnote's top (boxes in display pixels)."""
    ex = explore(table, pathway=key, surfaces=table.surfaces[:6], render="inline")
    ex.view.render_png()
    renderer = ex.view.figure.canvas.get_renderer()
    labels = [t.get_window_extent(renderer) for t in ex.view.ax.get_xticklabels() if t.get_text()]
    assert labels and ex.view._footnote.get_text()
    assert min(b.y0 for b in labels) > ex.view._footnote.get_window_extent(renderer).y1
    assert ex.view.ax.get_position().y1 == pytest.approx(0.85)  # the top (legend, title, conditions line) stays


def test_long_legend_is_cut_and_stays_in_the_figure(table):
    big = pd.concat([table.matrix.rename(index=lambda s, k=k: f"{s}-{k}") for k in range(2)])  # 24 ILLUSTRATIVE surfaces
    ex = explore(EnergyTable.from_matrix(big, source="ILLUSTRATIVE demo table, twice"), pathway="orr-4e",
                 surfaces=list(big.index), render="inline")
    labels = [t.get_text() for t in ex.view._legend.texts]
    from ecatlab.explorer.view import MAX_LEGEND_SURFACES

    assert len(labels) == 1 + MAX_LEGEND_SURFACES + 2
    assert labels[MAX_LEGEND_SURFACES] == f"... {len(big) - MAX_LEGEND_SURFACES + 1} more (see read-out)"
    renderer = ex.view.figure.canvas.get_renderer()
    assert ex.view._legend.get_window_extent(renderer).x1 <= ex.view.figure.bbox.x1
    assert ex.view._legend.rows_box().y0 > ex.view._footnote.get_window_extent(renderer).y1  # above the footnote
