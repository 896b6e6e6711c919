"""Kinetics outputs: G_max descriptor, CLI ``ecatlab currents``, plots, report section, explorer tab,
and hypothesis property tests of the model's invariants."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

import ecatlab
from ecatlab.che import limiting_potentials
from ecatlab.cli import main
from ecatlab.energies import EnergyTable
from ecatlab.kinetics import BarrierSettings, build_model, solve_steady_state
from ecatlab.kinetics import analysis as A

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")


@pytest.fixture(scope="module")
def demo():
    return ecatlab.demo_energies()


def test_gmax_descriptor_at_equilibrium_equals_kernel_gmax(demo):
    model = build_model(demo, "orr-4e")
    u_eq = model.pathways[0].equilibrium_potential
    ss = solve_steady_state(model, [u_eq, u_eq - 0.3])
    g = A.gmax_descriptor(ss)
    che = limiting_potentials(demo, "orr-4e").set_index("surface")
    at_eq = g[np.isclose(g["potential"], u_eq)].set_index("surface")
    assert np.allclose(at_eq["G_max"], che.loc[at_eq.index, "G_max"], atol=1e-12)  # Exner descriptor via the CHE kernel
    assert np.allclose(at_eq["overpotential"], 0.0)
    # transition states included: never below the thermodynamic value nor below 0
    assert (g["G_max_TS"] >= np.maximum(g["G_max"], 0) - 1e-12).all()
    lower = g[np.isclose(g["potential"], u_eq - 0.3)]
    assert np.allclose(lower["G_max"].to_numpy(), at_eq["G_max"].to_numpy() - 0.3, atol=1e-12)  # one-electron steps: slope 1 eV/V


def test_cli_currents_writes_tables_and_refuses_overwrite(tmp_path, capsys):
    energies = ecatlab.demo_path() if callable(getattr(ecatlab, "demo_path", None)) else None
    out = tmp_path / "pol.csv"
    cov = tmp_path / "cov.csv"
    fig = tmp_path / "pol.png"
    args = ["currents", str(energies), "-p", "orr-4e", "--surface", "ALY-01", "SAS-01", "--potentials", "0.4", "1.2", "0.05",
            "-o", str(out), "--coverages", str(cov), "--figure", str(fig)]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "ESTIMATED barriers" in text and "ALY-01" in text
    frame = pd.read_csv(out, comment="#")
    assert set(frame["surface"]) == {"ALY-01", "SAS-01"} and len(frame) == 2 * 17
    assert frame["converged"].all()
    assert out.read_text().startswith("# polarization curve; ESTIMATED")
    c = pd.read_csv(cov, comment="#")
    assert np.allclose(c.groupby(["surface", "potential"])["coverage"].sum(), 1.0)
    assert fig.stat().st_size > 1000
    before = out.read_text()
    assert main(args) == 2
    assert "--force" in capsys.readouterr().err
    assert out.read_text() == before
    assert main(["currents", str(energies), "-p", "orr-4e", "--activity", "O2(g)=abc"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "O2(g)=abc" in err[0]
    assert main(["currents", str(energies), "-p", "orr-4e", "--barriers", str(tmp_path / "none.csv")]) == 2
    assert "not found" in capsys.readouterr().err


def test_plots_take_axes_and_return_drawn(demo):
    import matplotlib.pyplot as plt

    from ecatlab.plotting.handles import Drawn
    from ecatlab.plotting.kinetics import plot_coverages, plot_faradaic_efficiency, plot_polarization, plot_tafel

    model = build_model(demo, ["orr-4e", "orr-2e"], surfaces=["ALY-01", "SAS-02"], activities={"H2O2(aq)": 1e-6})
    ss = solve_steady_state(model, np.linspace(0.3, 1.0, 15))
    fig, axs = plt.subplots(2, 2)
    try:
        d = plot_polarization(ss, ax=axs[0, 0], current_limit=100)
        assert isinstance(d, Drawn) and d.ax is axs[0, 0] and d.figure is fig
        assert axs[0, 0].get_ylim() == (-100, 100)
        assert set(d.parts["lines"]) == {"ALY-01", "SAS-02"} and d.parts["caption"] is not None
        # the lines drawn are the frame's converged currents
        f = d.data[d.data["surface"] == "SAS-02"].sort_values("potential")
        np.testing.assert_allclose(d.parts["lines"]["SAS-02"].get_ydata(), np.where(f["converged"], f["current_density"], np.nan))
        assert plot_tafel(A.polarization_curve(ss), ax=axs[0, 1]).ax is axs[0, 1]
        cov = plot_coverages(ss, "SAS-02", ax=axs[1, 0])
        assert cov.ax is axs[1, 0] and len(axs[1, 0].get_lines()) == model.n_species == len(cov.parts["lines"])
        fe = plot_faradaic_efficiency(ss, "ALY-01", ax=axs[1, 1], caption=False)
        assert fe.ax is axs[1, 1] and fe.parts["caption"] is None
        assert "pH 0" in axs[1, 1].get_title()
    finally:
        plt.close(fig)
    with pytest.raises(ecatlab.errors.KineticsInputError, match="unknown surface"):
        plot_coverages(ss, "nope")


def _text_boxes(fig):
    """(text, window extent) of every text drawn: titles, axis labels, offset texts, tick labels inside the view,
    legend entries, figure-level texts (the caption)."""
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    texts = list(fig.texts) + [a for a in fig.artists if isinstance(a, matplotlib.text.Text)]
    for ax in fig.axes:
        texts += [ax.title, ax._left_title, ax._right_title, ax.xaxis.label, ax.yaxis.label, ax.xaxis.offsetText, ax.yaxis.offsetText]
        texts += list(ax.texts)
        for axis in (ax.xaxis, ax.yaxis):
            lo, hi = sorted(axis.get_view_interval())
            texts += [t.label1 for t in axis.get_major_ticks() if lo - 1e-9 <= t.get_loc() <= hi + 1e-9 and t.label1.get_visible()]
        if ax.get_legend() is not None:
            texts += list(ax.get_legend().get_texts())
    return [(t.get_text(), t.get_window_extent(r)) for t in texts if t.get_visible() and t.get_text().strip()]


def test_two_panel_polarization_tafel_caption_overlaps_nothing(demo):
    # bbox non-intersection of the one caption with every other text of the two-panel figure
    import matplotlib.pyplot as plt

    from ecatlab.plotting.kinetics import plot_polarization, plot_polarization_tafel, plot_tafel

    model = build_model(demo, "orr-4e", surfaces=["ALY-01", "SAS-02", "SAS-05"])
    ss = solve_steady_state(model, np.linspace(0.3, 1.2, 19))
    pol = A.polarization_curve(ss)
    d = plot_polarization_tafel(pol)
    try:
        assert len(d.axes) == 2 and d.parts["polarization"].ax is d.axes[0] and d.parts["tafel"].ax is d.axes[1]
        cap = d.parts["caption"]
        boxes = _text_boxes(d.figure)
        captions = [b for text, b in boxes if text == cap.get_text()]
        assert len(captions) == 1  # one caption for both panels
        others = [(text, b) for text, b in boxes if text != cap.get_text()]
        assert not [text for text, b in others if b.overlaps(captions[0])]
        r = d.figure.canvas.get_renderer()
        assert captions[0].y1 < min(ax.xaxis.label.get_window_extent(r).y0 for ax in d.axes)  # under both x labels
        # no two texts of the figure overlap (titles, offset texts, labels, ticks, legends, caption)
        clashes = [(a, b) for i, (a, ba) in enumerate(boxes) for b, bb in boxes[i + 1:] if ba.overlaps(bb)]
        assert clashes == []
    finally:
        plt.close(d.figure)
    # the check has teeth: the two per-panel captions of the same figure drawn panel by panel do overlap
    fig, axs = plt.subplots(1, 2, figsize=(11.0, 4.5))
    try:
        c1 = plot_polarization(pol, ax=axs[0]).parts["caption"]
        c2 = plot_tafel(pol, ax=axs[1]).parts["caption"]
        fig.canvas.draw()
        r = fig.canvas.get_renderer()
        assert c1.get_window_extent(r).overlaps(c2.get_window_extent(r))
    finally:
        plt.close(fig)


def test_cli_currents_figure_has_one_caption(tmp_path, monkeypatch):
    import matplotlib.pyplot as plt

    from ecatlab.plotting import kinetics as K

    made = []
    original = K.plot_polarization_tafel

    def spy(*args, **kwargs):
        made.append(original(*args, **kwargs))
        return made[-1]

    monkeypatch.setattr(K, "plot_polarization_tafel", spy)
    before = set(plt.get_fignums())
    code = main(["currents", str(ecatlab.demo_path()), "-p", "orr-4e", "--surface", "ALY-01", "SAS-01", "--potentials", "0.4", "1.1", "0.1",
                 "-o", str(tmp_path / "j.csv"), "--figure", str(tmp_path / "j.png")])
    assert code == 0 and (tmp_path / "j.png").stat().st_size > 5000
    assert len(made) == 1 and made[0].parts["caption"] is not None and len(made[0].axes) == 2
    assert set(plt.get_fignums()) == before  # closed after writing


def test_report_section_included(demo):
    from ecatlab.report import build_report

    html = build_report(demo, ["orr-4e"], surfaces=["ALY-01", "SAS-01"], kinetics={"pathways": "orr-4e", "potentials": np.linspace(0.5, 1.2, 15)})
    assert 'id="kinetics-orr-4e"' in html
    part = html[html.index('id="kinetics-orr-4e"'):]
    assert "ESTIMATED" in part and "theoretical estimates" in part
    assert "<svg" in part and "Onset potential at 10 mA/cm" in part


def test_explorer_kinetics_tab_draws_when_visible_only(demo):
    pytest.importorskip("ipywidgets")
    from ecatlab.explorer import Explorer

    ex = Explorer(demo, surfaces=["ALY-01", "SAS-01"])
    assert ex.kinetics.draws == 0  # hidden: nothing computed
    from ecatlab.explorer.widget import KINETICS_TAB

    ex.tabs.selected_index = KINETICS_TAB
    assert ex.kinetics.draws == 1 and ex.kinetics.last_error is None
    assert "ESTIMATED" in ex.kinetics.info.value and "ALY-01" in ex.kinetics.summary.value
    ex.potential.value = 0.4  # the curves do not depend on the applied potential
    assert ex.kinetics.draws == 1
    ex.kinetics.intrinsic_barrier.value = 0.5
    assert ex.kinetics.draws == 2
    assert ex.kinetics.result.model.settings.intrinsic_barrier == 0.5


# ------------------------------------------------------------------------------------------------
# property tests: random surfaces, random conditions
_energy = st.floats(min_value=-1.5, max_value=2.5, allow_nan=False)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(oh=_energy, o=st.floats(min_value=-0.5, max_value=4.0), ooh=st.floats(min_value=2.5, max_value=5.5),
       g0=st.floats(min_value=0.0, max_value=0.8), beta=st.floats(min_value=0.2, max_value=0.8), pH=st.floats(min_value=0, max_value=14))
@example(oh=0.0, o=0.5, ooh=5.0, g0=0.0, beta=0.5, pH=0.0)  # found by hypothesis: net currents far below the exchange flux
def test_invariants_on_random_orr_surfaces(oh, o, ooh, g0, beta, pH):
    table = EnergyTable.from_matrix(pd.DataFrame({"OH*": [oh], "O*": [o], "OOH*": [ooh]}, index=["R"]))
    model = build_model(table, ["orr-4e", "orr-2e"], settings=BarrierSettings(intrinsic_barrier=g0, symmetry_factor=beta), pH=pH,
                        activities={"H2O2(aq)": 1e-3})
    u = np.linspace(0.0, 1.3, 14)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ss = solve_steady_state(model, u)
    assert ss.converged.all()
    assert np.allclose(ss.coverages.sum(axis=-1), 1.0, atol=1e-12)  # site balance
    fe = A.faradaic_efficiencies(ss)
    ok = fe["faradaic_efficiency"].notna()
    if ok.any():
        assert np.allclose(fe.loc[ok, "fe_unassigned"], 0.0, atol=1e-6)
    # detailed balance of the rate constants: ln kf - ln kb = -dG/kT exactly
    from ecatlab.kinetics.rates import rate_constants

    rc = rate_constants(ss.dG, model.raw_offset[:, None], model.raw_slope[:, None], model.ln_prefactor[:, None], model.temperature)
    assert np.allclose(rc.ln_kf - rc.ln_kb, -ss.dG / model.kT, atol=1e-9)


def test_whole_network_with_her_competitor(demo):
    from ecatlab.network import build_network

    net = build_network(demo, "CO2")
    model = build_model(demo, [net, "her-volmer-heyrovsky"], surfaces=["ALY-01", "SAS-03"])
    assert "CH4(g)" in model.products and "H2(g)" in model.products
    z = dict(zip(model.products, model.electrons_per_product))
    assert z["CH4(g)"] == 8 and z["CO(g)"] == 2 and z["H2(g)"] == 2  # CO2 + 8 (H+ + e-) -> CH4 + 2 H2O
    info = {p.name: p for p in model.pathways}
    assert info["CO2(g)->CH4(g)"].equilibrium_potential == pytest.approx(ecatlab.equilibrium_potential("co2rr-ch4"), abs=1e-12)
    ss = solve_steady_state(model, np.linspace(-1.0, -0.3, 8))
    assert ss.converged.all()
    fe = A.faradaic_efficiencies(ss)
    sums = fe.groupby(["surface", "potential"])["faradaic_efficiency"].sum()
    assert np.allclose(sums, 1.0, atol=1e-8)


def test_onset_flags_a_grid_that_starts_past_the_onset(demo):
    model = build_model(demo, "orr-4e", surfaces=["SAS-05"])
    far = A.onset_potentials(solve_steady_state(model, np.linspace(0.5, 0.9, 5)))
    assert far["reached"].all() and far["at_grid_edge"].all()  # the true onset lies between U_eq and 0.9 V
    full = A.onset_potentials(solve_steady_state(model, np.linspace(0.5, 1.2, 71)))
    assert full["reached"].all() and not full["at_grid_edge"].any()
    assert 0.9 < full["onset_potential"].iloc[0] < 1.2


def test_explorer_onset_table_flags_currents_beyond_mass_transport():
    # kinetic currents above 1 A/cm^2 (common practice, no source) are flagged with a note, smaller ones not
    from ecatlab.explorer.kinetics_tab import TRANSPORT_NOTE_MA_CM2, onset_table_html

    summary = pd.DataFrame({"surface": ["A", "B"], "onset_potential": [0.8, 0.7], "onset_overpotential": [0.43, 0.53],
                            "reached": [True, True], "max_abs_current_density": [9.95e11, 50.0],
                            "barriers": ["estimated", "estimated"], "all_converged": [True, True]})
    text = onset_table_html(summary, "caption")
    assert TRANSPORT_NOTE_MA_CM2 == 1000.0
    assert 'title="beyond mass transport" style="padding:1px 6px;text-align:right;font-style:italic;color:#7A5A00">9.95e+11</td>' in text
    assert text.count("ecatlab-beyond-transport") == 1 and ">5.00e+01</td>" in text  # 50 mA/cm2 is not flagged
    assert "no transport model" in text
    assert "ecatlab-beyond-transport" not in onset_table_html(summary.iloc[1:], "caption")

